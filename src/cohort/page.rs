//! `cohort.html`: one self-contained page (no network, no script or font from elsewhere) for a
//! cohort of up to tens of thousands of records.
//!
//! In: the table rows, the shared embedding's per-record positions, the notes and, when a labels
//! file was given, the verdicts scored against the labels. Out: the page text. Parts, in order:
//! the research-use notice; counts per verdict, per group and per label; the confusion matrix
//! and per-class Se, +P and F1 (the measures of `rhythm::label_score`); the shared embedding,
//! one point a record (its beats' mean shared coordinates), coloured by verdict, label or group,
//! with the record's name on hover and its report opened on click where one was written;
//! distributions of heart rate, variability and dimension per label (or group, or verdict)
//! drawn here as box plots; and the table, which sorts on a header click and filters by text,
//! verdict, group, label and status in the browser. The table data travel as JSON inside the
//! page ([`crate::report::json_for_script`]) and every cell is set as text, so record text
//! cannot inject markup. Loaded with `#selftest`, the page exercises its own sort, filter,
//! colouring and hover and writes PASS or FAIL into `#selftest-result` (used by
//! `scripts/ci-cohort-browser.sh`).

use super::shared::SharedEmbeddingSummary;
use super::table::{Row, Status};
use crate::report::{html_escape, json_for_script};
use crate::rhythm::label_score::LabelScore;
use crate::rhythm::verdict::VerdictClass;
use serde_json::{json, Value};
use std::collections::BTreeMap;

/// Columns of the page's table: (key, heading, decimals; `None` for text).
const PAGE_COLUMNS: [(&str, &str, Option<usize>); 17] = [
    ("record", "record", None),
    ("group", "group", None),
    ("label", "label", None),
    ("status", "status", None),
    ("verdict", "verdict", None),
    ("duration_s", "duration s", Some(1)),
    ("beats", "beats", Some(0)),
    ("mean_hr_bpm", "HR bpm", Some(1)),
    ("sdnn_ms", "SDNN ms", Some(1)),
    ("rmssd_ms", "RMSSD ms", Some(1)),
    ("irregular_s", "irregular s", Some(1)),
    ("det", "DET", Some(3)),
    ("dimension", "dimension", Some(2)),
    ("dimension_status", "dimension status", None),
    ("se", "Se %", Some(2)),
    ("ppv", "+P %", Some(2)),
    ("notes", "notes", None),
];

fn opt(x: Option<f64>) -> Value {
    x.filter(|v| v.is_finite())
        .map_or(Value::Null, |v| json!(v))
}

fn row_values(r: &Row) -> Vec<Value> {
    let notes = if r.status == Status::Error {
        r.error.clone()
    } else {
        r.notes_text()
    };
    vec![
        json!(r.name),
        json!(r.group),
        json!(r.label),
        json!(r.status.as_str()),
        json!(r.verdict),
        opt(r.duration_s),
        opt(r.beats.map(|b| b as f64)),
        opt(r.mean_hr_bpm),
        opt(r.sdnn_ms),
        opt(r.rmssd_ms),
        opt(r.irregular_s),
        opt(r.det),
        opt(r.dimension),
        json!(r.dimension_status),
        opt(r.se.map(|v| 100.0 * v)),
        opt(r.ppv.map(|v| 100.0 * v)),
        json!(notes),
    ]
}

/// Counts of `key` over the rows, sorted by key (empty keys as `(none)`).
fn counts<'a>(rows: &'a [Row], key: impl Fn(&'a Row) -> &'a str) -> BTreeMap<&'a str, usize> {
    let mut m = BTreeMap::new();
    for r in rows {
        *m.entry(key(r)).or_insert(0) += 1;
    }
    m
}

fn counts_table(id: &str, title: &str, m: &BTreeMap<&str, usize>) -> String {
    let mut s = format!(
        "<table class=\"counts\" id=\"{id}\"><tr><th>{}</th><th>records</th></tr>",
        html_escape(title)
    );
    for (k, n) in m {
        let k = if k.is_empty() { "(none)" } else { k };
        s.push_str(&format!(
            "<tr><td class=\"t\">{}</td><td>{n}</td></tr>",
            html_escape(k)
        ));
    }
    s.push_str("</table>\n");
    s
}

fn pct(x: f64) -> String {
    if x.is_finite() {
        format!("{:.1}", 100.0 * x)
    } else {
        "–".into()
    }
}

fn label_section(score: &LabelScore, map: &str, unlabelled: usize) -> String {
    let mut s = String::from("<h2>Verdicts against labels</h2>\n");
    s.push_str(&format!(
        "<p>{} labelled records scored (label map <code>{}</code>); {unlabelled} analysed records without a label or with a label outside the map are not scored. Rows: the class the label maps to; columns: the verdict.</p>\n",
        score.n,
        html_escape(map)
    ));
    s.push_str("<table id=\"confusion\"><tr><th>label \\ verdict</th>");
    for c in VerdictClass::ALL {
        s.push_str(&format!("<th>{}</th>", c.name()));
    }
    s.push_str("</tr>");
    for (k, c) in VerdictClass::ALL.iter().enumerate() {
        s.push_str(&format!("<tr><th>{}</th>", c.name()));
        for v in score.confusion[k] {
            s.push_str(&format!("<td>{v}</td>"));
        }
        s.push_str("</tr>");
    }
    s.push_str("</table>\n<table id=\"per-class\"><tr><th>class</th><th>labelled</th><th>given</th><th>Se %</th><th>+P %</th><th>F1</th></tr>");
    for c in &score.classes {
        let f1 = if c.f1.is_finite() {
            format!("{:.3}", c.f1)
        } else {
            "–".into()
        };
        s.push_str(&format!(
            "<tr><td class=\"t\">{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{f1}</td></tr>",
            c.class.name(),
            c.n_true,
            c.n_predicted,
            pct(c.se),
            pct(c.ppv)
        ));
    }
    s.push_str(&format!(
        "</table>\n<p>Irregular against every other class: Se {} %, Sp {} %.</p>\n",
        pct(score.irregular_se),
        pct(score.irregular_sp)
    ));
    s
}

/// Quartiles and extremes of finite values (linear interpolation between order statistics).
fn five_numbers(v: &mut [f64]) -> Option<[f64; 5]> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let q = |p: f64| {
        let h = p * (v.len() - 1) as f64;
        let lo = h.floor() as usize;
        let hi = h.ceil() as usize;
        v[lo] + (h - lo as f64) * (v[hi] - v[lo])
    };
    Some([v[0], q(0.25), q(0.5), q(0.75), v[v.len() - 1]])
}

/// One box plot (SVG) of a measure per category: box from the first to the third quartile,
/// the median as a line, whiskers to the extremes, and the count of values under each box.
fn box_plot(title: &str, cats: &[String], values: &[Vec<f64>]) -> String {
    let (w, h, left, bottom, top) = (420.0, 260.0, 50.0, 40.0, 28.0);
    let mut all: Vec<f64> = values.iter().flatten().copied().collect();
    let mut s = format!(
        "<svg class=\"dist\" width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" role=\"img\" aria-label=\"{t}\"><text x=\"8\" y=\"18\" font-size=\"14\">{t}</text>",
        t = html_escape(title)
    );
    let Some(range) = five_numbers(&mut all) else {
        s.push_str("<text x=\"60\" y=\"120\" font-size=\"12\">no values above their minimum support</text></svg>");
        return s;
    };
    let (lo, hi) = (range[0], range[4]);
    let span = if hi > lo { hi - lo } else { 1.0 };
    let y = |v: f64| top + (h - top - bottom) * (1.0 - (v - lo) / span);
    for v in [lo, hi] {
        s.push_str(&format!(
            "<text x=\"4\" y=\"{:.1}\" font-size=\"11\">{}</text>",
            y(v) + 4.0,
            format_tick(v)
        ));
    }
    let slot = (w - left - 10.0) / cats.len().max(1) as f64;
    for (k, (cat, vals)) in cats.iter().zip(values).enumerate() {
        let cx = left + slot * (k as f64 + 0.5);
        let bw = (slot * 0.5).min(40.0);
        let mut v = vals.clone();
        if let Some([mn, q1, md, q3, mx]) = five_numbers(&mut v) {
            s.push_str(&format!(
                "<line x1=\"{cx:.1}\" x2=\"{cx:.1}\" y1=\"{:.1}\" y2=\"{:.1}\" stroke=\"#555\"/><rect x=\"{:.1}\" y=\"{:.1}\" width=\"{bw:.1}\" height=\"{:.1}\" fill=\"#56b4e9\" stroke=\"#0072b2\"/><line x1=\"{:.1}\" x2=\"{:.1}\" y1=\"{:.1}\" y2=\"{:.1}\" stroke=\"#000\" stroke-width=\"2\"/>",
                y(mx),
                y(mn),
                cx - bw / 2.0,
                y(q3),
                (y(q1) - y(q3)).max(1.0),
                cx - bw / 2.0,
                cx + bw / 2.0,
                y(md),
                y(md)
            ));
        }
        let name = if cat.is_empty() { "(none)" } else { cat };
        s.push_str(&format!(
            "<text x=\"{cx:.1}\" y=\"{:.1}\" font-size=\"11\" text-anchor=\"middle\">{} (n={})</text>",
            h - bottom + 16.0,
            html_escape(&truncate(name, 14)),
            vals.len()
        ));
    }
    s.push_str("</svg>");
    s
}

fn format_tick(v: f64) -> String {
    if v.abs() >= 100.0 {
        format!("{v:.0}")
    } else {
        format!("{v:.2}")
    }
}

fn truncate(s: &str, n: usize) -> String {
    if s.chars().count() <= n {
        s.to_string()
    } else {
        let mut t: String = s.chars().take(n - 1).collect();
        t.push('…');
        t
    }
}

/// Distributions of heart rate, SDNN, RMSSD and dimension per category: labels when any record
/// has one, else groups when there are several, else verdicts. At most 12 categories (the most
/// frequent) are drawn.
fn distributions(rows: &[Row]) -> String {
    let ok: Vec<&Row> = rows.iter().filter(|r| r.status == Status::Ok).collect();
    let (by, key): (&str, fn(&Row) -> &str) = if ok.iter().any(|r| !r.label.is_empty()) {
        ("label", |r| r.label.as_str())
    } else if counts(rows, |r| r.group.as_str()).len() > 1 {
        ("group", |r| r.group.as_str())
    } else {
        ("verdict", |r| r.verdict.as_str())
    };
    let mut freq: Vec<(String, usize)> = {
        let mut m: BTreeMap<String, usize> = BTreeMap::new();
        for r in &ok {
            *m.entry(key(r).to_string()).or_insert(0) += 1;
        }
        m.into_iter().collect()
    };
    freq.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
    freq.truncate(12);
    let cats: Vec<String> = freq.into_iter().map(|(c, _)| c).collect();
    let mut s = format!("<h2>Distributions per {by}</h2>\n<div class=\"dists\">");
    type Get = fn(&Row) -> Option<f64>;
    let measures: [(&str, Get); 4] = [
        ("mean heart rate, bpm", |r| r.mean_hr_bpm),
        ("SDNN, ms", |r| r.sdnn_ms),
        ("RMSSD, ms", |r| r.rmssd_ms),
        ("dimension", |r| r.dimension),
    ];
    for (title, get) in measures {
        let values: Vec<Vec<f64>> = cats
            .iter()
            .map(|c| {
                ok.iter()
                    .filter(|r| key(r) == c)
                    .filter_map(|r| get(r).filter(|v| v.is_finite()))
                    .collect()
            })
            .collect();
        s.push_str(&box_plot(title, &cats, &values));
    }
    s.push_str("</div>\n<p>Boxes: quartiles and median; whiskers: smallest and largest value; n: records with a value (cells below their minimum support are left out).</p>\n");
    s
}

/// Everything the page shows besides the rows.
pub(crate) struct PageParts<'a> {
    /// The shared embedding, when one was fitted.
    pub shared: Option<&'a SharedEmbeddingSummary>,
    /// Notes of the merge.
    pub notes: &'a [String],
    /// The verdicts scored against the labels, the label map as text and the number of
    /// analysed records left unscored.
    pub labels: Option<(&'a LabelScore, String, usize)>,
}

/// The page (see the module notes).
pub(crate) fn render(rows: &[Row], parts: &PageParts) -> String {
    let ok = rows.iter().filter(|r| r.status == Status::Ok).count();
    let mut s = String::new();
    s.push_str("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n<title>beatfold cohort</title>\n<style>");
    s.push_str(STYLE);
    s.push_str("</style></head>\n");
    s.push_str(&format!("<body data-rows=\"{}\">\n", rows.len()));
    s.push_str(&format!(
        "<p class=\"notice\"><strong>{}</strong></p>\n",
        html_escape(crate::NOTICE)
    ));
    s.push_str(&format!(
        "<h1>Cohort</h1>\n<p>{} records, {ok} analysed, {} with errors.</p>\n",
        rows.len(),
        rows.len() - ok
    ));
    for n in parts.notes {
        s.push_str(&format!("<p class=\"note\">Note: {}</p>\n", html_escape(n)));
    }
    s.push_str("<h2>Counts</h2>\n<div class=\"countrow\">");
    s.push_str(&counts_table(
        "counts-verdict",
        "verdict",
        &counts(rows, |r| {
            if r.status == Status::Error {
                "error"
            } else {
                r.verdict.as_str()
            }
        }),
    ));
    s.push_str(&counts_table(
        "counts-group",
        "group",
        &counts(rows, |r| r.group.as_str()),
    ));
    s.push_str(&counts_table(
        "counts-label",
        "label",
        &counts(rows, |r| r.label.as_str()),
    ));
    s.push_str("</div>\n");
    if let Some((score, map, unscored)) = &parts.labels {
        s.push_str(&label_section(score, map, *unscored));
    }
    s.push_str("<h2>Shared embedding</h2>\n");
    match parts.shared {
        Some(sh) => s.push_str(&format!(
            "<p>Diffusion map fitted on {} beats ({} records, at most {} each), other beats placed by Nyström extension; one point a record at the mean of its placed beats' first two shared coordinates (ψ1, ψ2; at most 8 seeded beats for a record outside the fit sample with summary outputs). Hover a point for its record; click it to open the record's report when one was written. Per-record panels: <a href=\"cohort_embedding.svg\">cohort_embedding.svg</a>.</p>\n<p><label>colour by <select id=\"colour-by\"><option value=\"verdict\">verdict</option><option value=\"label\">label</option><option value=\"group\">group</option></select></label> <span id=\"emb-info\">hover a point</span></p>\n<svg id=\"emb\" width=\"720\" height=\"480\" viewBox=\"0 0 720 480\" role=\"img\" aria-label=\"records in the shared diffusion embedding\"></svg><div id=\"emb-legend\"></div>\n",
            sh.fit_points, sh.records, sh.per_record
        )),
        None => s.push_str("<p>No shared embedding (see the notes).</p>\n"),
    }
    s.push_str(&distributions(rows));
    s.push_str("<h2>Records</h2>\n<p class=\"filters\"><input id=\"filter\" type=\"search\" placeholder=\"text in any column\" size=\"28\"> ");
    for (id, what) in [
        ("f-verdict", "verdict"),
        ("f-group", "group"),
        ("f-label", "label"),
        ("f-status", "status"),
    ] {
        s.push_str(&format!(
            "<label>{what} <select id=\"{id}\"><option value=\"\">all</option></select></label> "
        ));
    }
    s.push_str("<span id=\"shown\"></span></p>\n<table id=\"records\"><thead><tr>");
    for (key, head, dec) in PAGE_COLUMNS {
        s.push_str(&format!(
            "<th data-col=\"{key}\" data-num=\"{}\" title=\"click to sort\">{}</th>",
            u8::from(dec.is_some()),
            html_escape(head)
        ));
    }
    s.push_str("</tr></thead><tbody></tbody></table>\n<p><button id=\"more\" hidden>show all</button></p>\n");
    s.push_str("<p>Empty cells: not computed, or below the estimate's minimum support (the notes say which; docs/cohort.md gives the supports). Se and +P in percent (beat matching within the ANSI/AAMI EC57 window).</p>\n<div id=\"selftest-result\" data-status=\"not-run\"></div>\n");
    let data = json!({
        "columns": PAGE_COLUMNS.iter().map(|c| c.0).collect::<Vec<_>>(),
        "decimals": PAGE_COLUMNS.iter().map(|c| c.2).collect::<Vec<_>>(),
        "rows": rows.iter().map(row_values).collect::<Vec<_>>(),
        "report": rows.iter().map(|r| r.has_report).collect::<Vec<_>>(),
        "points": point_values(rows, parts.shared),
    });
    s.push_str(&format!(
        "<script id=\"cohort-data\" type=\"application/json\">{}</script>\n<script>{SCRIPT}</script>\n</body></html>\n",
        json_for_script(&data)
    ));
    s
}

fn point_values(rows: &[Row], shared: Option<&SharedEmbeddingSummary>) -> Vec<Value> {
    rows.iter()
        .map(|r| {
            shared
                .and_then(|sh| sh.record_positions.get(&r.name))
                .map_or(Value::Null, |p| json!([p[0], p[1]]))
        })
        .collect()
}

const STYLE: &str = "body{font-family:sans-serif;margin:2em;max-width:90em}\
.notice{border:2px solid #d55e00;padding:.8em;background:#fff4ec}\
table{border-collapse:collapse;margin:.5em 1em .5em 0}td,th{border:1px solid #bbb;padding:.2em .5em;text-align:right}\
td.t{text-align:left}th[data-col]{cursor:pointer;background:#eef}th.asc:after{content:' \\25B2'}th.desc:after{content:' \\25BC'}\
tr.error td{background:#fde}.countrow,.dists{display:flex;flex-wrap:wrap;align-items:flex-start}\
svg.dist{margin:.3em;border:1px solid #ddd}#emb{border:1px solid #ddd}#emb circle{cursor:pointer}\
#emb-legend span{margin-right:1em}.filters label{margin-left:.5em}";

/// The page's script: table rendering, sorting and filtering; the embedding view; the
/// self-test. Plain JavaScript, no library.
const SCRIPT: &str = r#"
(function(){
'use strict';
var D=JSON.parse(document.getElementById('cohort-data').textContent);
var C=D.columns, N=D.rows.length, col={};
C.forEach(function(c,i){col[c]=i;});
var HUES=['#0072b2','#d55e00','#009e73','#cc79a7','#e69f00','#56b4e9','#000000','#f0e442'];
var order=[], shownRows=[], sortCol=null, sortDir=1, limit=1000;
var tbody=document.querySelector('#records tbody');
var heads=document.querySelectorAll('#records th[data-col]');
function fmt(v,k){ if(v===null||v===undefined) return ''; var d=D.decimals[k]; return d===null?String(v):Number(v).toFixed(d); }
function fill(id,k){
  var sel=document.getElementById(id), seen={};
  D.rows.forEach(function(r){ seen[r[k]]=(seen[r[k]]||0)+1; });
  Object.keys(seen).sort().forEach(function(v){
    var o=document.createElement('option'); o.value=v; o.textContent=(v===''?'(none)':v)+' ('+seen[v]+')'; sel.appendChild(o);
  });
  sel.addEventListener('change',apply);
}
fill('f-verdict',col.verdict); fill('f-group',col.group); fill('f-label',col.label); fill('f-status',col.status);
function selVal(id){ var s=document.getElementById(id); return s.selectedIndex<=0?null:s.value; }
function cmp(a,b){
  if(sortCol===null) return a-b;
  var x=D.rows[a][sortCol], y=D.rows[b][sortCol];
  var xe=(x===null||x===''), ye=(y===null||y==='');
  if(xe&&ye) return a-b; if(xe) return 1; if(ye) return -1;
  var c = (typeof x==='number') ? (x-y) : String(x).localeCompare(String(y));
  return c!==0 ? sortDir*c : a-b;
}
function apply(){
  var q=document.getElementById('filter').value.toLowerCase();
  var fv=selVal('f-verdict'), fg=selVal('f-group'), fl=selVal('f-label'), fs=selVal('f-status');
  shownRows=[];
  for(var i=0;i<N;i++){
    var r=D.rows[i];
    if(fv!==null&&r[col.verdict]!==fv) continue;
    if(fg!==null&&r[col.group]!==fg) continue;
    if(fl!==null&&r[col.label]!==fl) continue;
    if(fs!==null&&r[col.status]!==fs) continue;
    if(q){ var hit=false; for(var k=0;k<r.length;k++){ if(fmt(r[k],k).toLowerCase().indexOf(q)>=0){hit=true;break;} } if(!hit) continue; }
    shownRows.push(i);
  }
  shownRows.sort(cmp);
  draw();
}
function draw(){
  var frag=document.createDocumentFragment(), n=Math.min(limit,shownRows.length);
  for(var j=0;j<n;j++){
    var i=shownRows[j], r=D.rows[i], tr=document.createElement('tr');
    tr.dataset.i=i; if(r[col.status]==='error') tr.className='error';
    for(var k=0;k<C.length;k++){
      var td=document.createElement('td'); if(D.decimals[k]===null) td.className='t';
      if(k===col.record && D.report[i]){ var a=document.createElement('a'); a.href='records/'+encodeURIComponent(r[k])+'/report.html'; a.textContent=r[k]; td.appendChild(a); }
      else td.textContent=fmt(r[k],k);
      tr.appendChild(td);
    }
    frag.appendChild(tr);
  }
  tbody.textContent=''; tbody.appendChild(frag);
  document.getElementById('shown').textContent=shownRows.length+' of '+N+' records'+(n<shownRows.length?' (first '+n+' shown)':'');
  var more=document.getElementById('more'); more.hidden=!(n<shownRows.length); more.textContent='show all '+shownRows.length;
}
document.getElementById('more').addEventListener('click',function(){ limit=Infinity; draw(); });
document.getElementById('filter').addEventListener('input',apply);
heads.forEach(function(h){ h.addEventListener('click',function(){
  var k=col[h.dataset.col];
  if(sortCol===k) sortDir=-sortDir; else { sortCol=k; sortDir=1; }
  heads.forEach(function(o){ o.classList.remove('asc','desc'); });
  h.classList.add(sortDir>0?'asc':'desc');
  apply();
});});
apply();
// The shared embedding, one point a record.
var svg=document.getElementById('emb'), NS='http://www.w3.org/2000/svg', dots=[];
function colourBy(what){
  var k=col[what], cats={}, names=[];
  dots.forEach(function(c){ var v=D.rows[c.i][k]; if(!(v in cats)){ cats[v]=0; names.push(v);} });
  names.sort(); names.forEach(function(v,j){ cats[v]=HUES[j%HUES.length]; });
  dots.forEach(function(c){ c.el.setAttribute('fill',cats[D.rows[c.i][k]]); });
  var lg=document.getElementById('emb-legend'); lg.textContent='';
  names.forEach(function(v){ var s=document.createElement('span'); s.style.color=cats[v]; s.textContent='\u25CF '+(v===''?'(none)':v); lg.appendChild(s); });
}
if(svg){
  var pts=[]; D.points.forEach(function(p,i){ if(p) pts.push([p[0],p[1],i]); });
  var x0=Infinity,x1=-Infinity,y0=Infinity,y1=-Infinity;
  pts.forEach(function(p){ x0=Math.min(x0,p[0]); x1=Math.max(x1,p[0]); y0=Math.min(y0,p[1]); y1=Math.max(y1,p[1]); });
  var sx=(x1>x0)?(680/(x1-x0)):1, sy=(y1>y0)?(440/(y1-y0)):1;
  var info=document.getElementById('emb-info');
  pts.forEach(function(p){
    var c=document.createElementNS(NS,'circle'), i=p[2], r=D.rows[i];
    c.setAttribute('cx',(20+(p[0]-x0)*sx).toFixed(1)); c.setAttribute('cy',(460-(p[1]-y0)*sy).toFixed(1));
    c.setAttribute('r','3.5'); c.setAttribute('fill-opacity','0.75'); c.dataset.i=i;
    var t=document.createElementNS(NS,'title'); t.textContent=r[col.record]; c.appendChild(t);
    c.addEventListener('mouseover',function(){ info.textContent=r[col.record]+' \u2014 verdict '+(r[col.verdict]||'\u2013')+', label '+(r[col.label]||'\u2013')+', group '+(r[col.group]||'\u2013')+(D.report[i]?' (click for its report)':''); });
    c.addEventListener('click',function(){ if(D.report[i]) window.location.href='records/'+encodeURIComponent(r[col.record])+'/report.html'; });
    svg.appendChild(c); dots.push({el:c,i:i});
  });
  var sel=document.getElementById('colour-by');
  sel.addEventListener('change',function(){ colourBy(sel.value); });
  colourBy('verdict');
}
// Self-test (page loaded with #selftest): sort, filter, colour and hover; PASS or FAIL below.
if(window.location.hash==='#selftest'){
  var out=document.getElementById('selftest-result'), fails=[];
  function shownValues(k){ return Array.prototype.map.call(tbody.rows,function(tr){ return D.rows[+tr.dataset.i][k]; }); }
  function numbersOf(v){ return v.filter(function(x){ return x!==null; }); }
  var hr=document.querySelector('#records th[data-col="mean_hr_bpm"]');
  hr.click();
  var up=numbersOf(shownValues(col.mean_hr_bpm));
  for(var j=1;j<up.length;j++) if(up[j]<up[j-1]) { fails.push('ascending sort broken at row '+j); break; }
  hr.click();
  var down=numbersOf(shownValues(col.mean_hr_bpm));
  for(j=1;j<down.length;j++) if(down[j]>down[j-1]) { fails.push('descending sort broken at row '+j); break; }
  if(up.length<2) fails.push('fewer than 2 heart rates to sort');
  var fsel=document.getElementById('f-verdict');
  if(fsel.options.length<2) fails.push('no verdict to filter by');
  else {
    fsel.selectedIndex=1; fsel.dispatchEvent(new Event('change'));
    var want=fsel.value, expect=D.rows.filter(function(r){ return r[col.verdict]===want; }).length;
    var got=shownValues(col.verdict);
    if(got.length!==Math.min(expect,limit)) fails.push('verdict filter shows '+got.length+' rows, expected '+expect);
    if(got.some(function(v){ return v!==want; })) fails.push('verdict filter lets other verdicts through');
  }
  if(svg){
    if(dots.length===0) fails.push('no embedding point');
    else {
      dots[0].el.dispatchEvent(new MouseEvent('mouseover'));
      if(document.getElementById('emb-info').textContent.indexOf(D.rows[dots[0].i][col.record])!==0) fails.push('hover does not name the record');
      var before=dots.map(function(c){ return c.el.getAttribute('fill'); }).join();
      var csel=document.getElementById('colour-by'); csel.value='group'; csel.dispatchEvent(new Event('change'));
      if(!dots.every(function(c){ return /^#[0-9a-f]{6}$/.test(c.el.getAttribute('fill')); })) fails.push('colouring left points without a colour');
      csel.value='verdict'; csel.dispatchEvent(new Event('change'));
      if(dots.map(function(c){ return c.el.getAttribute('fill'); }).join()!==before) fails.push('colouring by verdict is not repeatable');
    }
  }
  out.dataset.status=fails.length?'FAIL':'PASS';
  out.dataset.filter=fsel.value; out.dataset.sort='mean_hr_bpm desc';
  out.textContent='self-test '+out.dataset.status+(fails.length?': '+fails.join('; '):'');
}
})();
"#;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn page_escapes_record_text_and_carries_the_notice() {
        let mut r = Row::error("<script>x</script>", "<g>", "bad</script><b>");
        r.label = "</script>".into();
        let page = render(
            &[r],
            &PageParts {
                shared: None,
                notes: &["<i>note</i>".into()],
                labels: None,
            },
        );
        // Only the page's own two script elements may close.
        assert_eq!(page.matches("</script>").count(), 2, "{page}");
        assert!(!page.contains("<g>") && !page.contains("<i>note"));
        assert!(page.contains("Research use only"));
    }

    #[test]
    fn five_numbers_interpolate_between_order_statistics() {
        // Common practice: linear interpolation of the empirical quantile (numpy's default);
        // quartiles of 1..5 are 2 and 4, the median 3.
        let mut v = vec![5.0, 1.0, 4.0, 2.0, 3.0];
        assert_eq!(five_numbers(&mut v), Some([1.0, 2.0, 3.0, 4.0, 5.0]));
        let mut w = vec![1.0, 2.0];
        assert_eq!(five_numbers(&mut w).map(|f| f[2]), Some(1.5));
    }
}
