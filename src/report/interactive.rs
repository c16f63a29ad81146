//! The interactive embedding view of `report.html`: plain inline JavaScript and SVG, no network.
//!
//! In: an [`Analysis`]. Out: an HTML fragment holding a JSON data block (escaped for `<script>`
//! by [`json_for_script`]), an SVG scatter of two diffusion coordinates, a beat-waveform panel,
//! a time-range selector and the script that joins them. Clicking or hovering a point shows that
//! beat's waveform (the conditioned lead from 0.25 s before to 0.45 s after the R peak, thinned
//! to about 100 Hz and quantised to 8 bits for display) and its time; choosing a time range
//! (two number inputs, or dragging across the timeline strip) highlights the beats inside it.
//!
//! Size: at most [`MAX_POINTS`] beats are shown; longer records are subsampled with a seeded
//! random draw ([`SUBSAMPLE_SEED`], ChaCha8), so the same analysis always shows the same beats.
//! The page says so. Coordinates are quantised to 1/10 000 of their range and waveforms are
//! base64 of signed bytes, which keeps a 24 h record's view near 1 MB.
//!
//! A self-check runs when the page is opened with `#selftest`: it clicks a point other than the
//! beat already shown, checks that the click moved the selection to it and that its waveform and
//! time were drawn, selects a time range and checks that beats were
//! highlighted, counts the figures, and writes `PASS …` or `FAIL …` into the element
//! `#selftest-result` and the page title (read by `scripts/browser-check.sh`).

use super::figures::colouring::row_beats;
use super::{html_escape, json_for_script};
use crate::pipeline::Analysis;
use rand::SeedableRng;
use serde_json::{json, Value};

/// Most beats shown in the interactive view.
pub(crate) const MAX_POINTS: usize = 4000;
/// Seed of the random subsample of beats shown when there are more than [`MAX_POINTS`].
pub(crate) const SUBSAMPLE_SEED: u64 = 20_240_601;
/// Waveform window before the R peak, seconds.
const PRE_S: f64 = 0.25;
/// Waveform window after the R peak, seconds.
const POST_S: f64 = 0.45;
/// Target sampling rate of the displayed waveforms, Hz.
const WAVE_HZ: f64 = 100.0;
/// Levels of the coordinate quantisation.
const Q_LEVELS: f64 = 10_000.0;

/// Rows of the embedding shown: all, or a seeded random subset of [`MAX_POINTS`] in row order.
pub(crate) fn shown_rows(n: usize) -> Vec<usize> {
    if n <= MAX_POINTS {
        return (0..n).collect();
    }
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(SUBSAMPLE_SEED);
    let mut v = rand::seq::index::sample(&mut rng, n, MAX_POINTS).into_vec();
    v.sort_unstable();
    v
}

/// Standard base64 (RFC 4648, with padding) of `bytes`.
pub(crate) fn base64(bytes: &[u8]) -> String {
    const A: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = [
            chunk.first().copied().unwrap_or(0),
            chunk.get(1).copied().unwrap_or(0),
            chunk.get(2).copied().unwrap_or(0),
        ];
        let n = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        for k in 0..4 {
            if k <= chunk.len() {
                out.push(A[((n >> (18 - 6 * k)) & 63) as usize] as char);
            } else {
                out.push('=');
            }
        }
    }
    out
}

/// Quantise `v` into `0..=Q_LEVELS` over `(lo, hi)`; non-finite → `null`.
fn quant(v: f64, lo: f64, hi: f64) -> Value {
    if !v.is_finite() {
        return Value::Null;
    }
    let span = if hi > lo { hi - lo } else { 1.0 };
    json!(((v - lo) / span * Q_LEVELS).round().clamp(0.0, Q_LEVELS) as i64)
}

/// Display range of a coordinate: its 0.5 % and 99.5 % quantiles (points beyond sit on the
/// edge, so one far outlier cannot squash the rest into a corner), or (0, 1) when empty.
fn range(vals: impl Iterator<Item = f64>) -> (f64, f64) {
    let mut v: Vec<f64> = vals.filter(|v| v.is_finite()).collect();
    if v.is_empty() {
        return (0.0, 1.0);
    }
    v.sort_by(f64::total_cmp);
    let at = |q: f64| v[((q * (v.len() - 1) as f64).round() as usize).min(v.len() - 1)];
    let (lo, hi) = (at(0.005), at(0.995));
    if hi > lo {
        (lo, hi)
    } else {
        (lo - 0.5, lo + 0.5)
    }
}

/// Round to `dec` decimals for JSON (non-finite → `null`).
fn round(v: f64, dec: i32) -> Value {
    if v.is_finite() {
        let p = 10f64.powi(dec);
        json!((v * p).round() / p)
    } else {
        Value::Null
    }
}

/// The data of the interactive view, or `None` when there is no embedding to show.
pub(crate) fn data(a: &Analysis) -> Option<Value> {
    let e = &a.embedding;
    let k = e.components;
    if e.n < 2 || k < 2 || e.coords.len() != e.n * k || !(a.fs_hz > 0.0) {
        return None;
    }
    let beats = row_beats(a)?;
    let rows = shown_rows(e.n);
    let dims = k.min(3);
    let coord = |i: usize, c: usize| e.coords.get(i * k + c).copied().unwrap_or(f64::NAN);
    let mut coords = Vec::with_capacity(dims);
    let mut ranges = Vec::with_capacity(dims);
    for c in 0..dims {
        let (lo, hi) = range(rows.iter().map(|&i| coord(i, c)));
        ranges.push(json!([lo, hi]));
        coords.push(Value::Array(
            rows.iter().map(|&i| quant(coord(i, c), lo, hi)).collect(),
        ));
    }
    let fs = a.fs_hz;
    let step = (fs / WAVE_HZ).round().max(1.0) as usize;
    let pre = (PRE_S * fs).round() as usize;
    let post = (POST_S * fs).round() as usize;
    let len = (pre + post) / step + 1;
    let sig = &a.conditioned;
    let window = |s: usize| -> Vec<f64> {
        (0..len)
            .map(|j| {
                (s + j * step)
                    .checked_sub(pre)
                    .and_then(|x| sig.get(x))
                    .copied()
                    .unwrap_or(f64::NAN)
            })
            .collect()
    };
    let waves: Vec<Vec<f64>> = rows
        .iter()
        .map(|&i| {
            beats
                .get(i)
                .and_then(|&b| a.beat_samples.get(b))
                .map_or_else(|| vec![f64::NAN; len], |&s| window(s))
        })
        .collect();
    let amp = waves
        .iter()
        .flatten()
        .filter(|v| v.is_finite())
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let amp = if amp > 0.0 { amp } else { 1.0 };
    let wave_b64: Vec<Value> = waves
        .iter()
        .map(|w| {
            let bytes: Vec<u8> = w
                .iter()
                .map(|&v| {
                    if v.is_finite() {
                        ((v / amp * 127.0).round().clamp(-127.0, 127.0) as i8) as u8
                    } else {
                        (-128i8) as u8
                    }
                })
                .collect();
            Value::String(base64(&bytes))
        })
        .collect();
    let times: Vec<Value> = rows
        .iter()
        .map(|&i| {
            let t = beats
                .get(i)
                .and_then(|&b| a.beat_samples.get(b))
                .map_or(f64::NAN, |&s| s as f64 / fs);
            round(t, 2)
        })
        .collect();
    let rr: Vec<Value> = rows
        .iter()
        .map(|&i| {
            let v = beats
                .get(i)
                .and_then(|&b| b.checked_sub(1))
                .and_then(|b| a.rr_s.get(b))
                .copied()
                .unwrap_or(f64::NAN);
            round(v, 3)
        })
        .collect();
    let local_d = super::figures::colouring::row_local_dimension(a);
    let ld: Vec<Value> = rows
        .iter()
        .map(|&i| round(local_d.get(i).copied().unwrap_or(f64::NAN), 2))
        .collect();
    // Colour range of the local dimension: its 2–98 % range over the shown rows.
    let mut fin: Vec<f64> = rows
        .iter()
        .filter_map(|&i| local_d.get(i).copied())
        .filter(|v| v.is_finite())
        .collect();
    fin.sort_by(f64::total_cmp);
    let ld_range = if fin.len() >= 2 {
        let q = |f: f64| fin[((fin.len() - 1) as f64 * f).round() as usize];
        json!([round(q(0.02), 2), round(q(0.98), 2)])
    } else {
        Value::Null
    };
    let classes: String = rows
        .iter()
        .map(|&i| {
            beats
                .get(i)
                .and_then(|&b| a.beat_labels.get(b))
                .copied()
                .filter(|c| c.is_ascii_alphanumeric())
                .unwrap_or('?')
        })
        .collect();
    Some(json!({
        "record": a.record_name,
        "lead": a.raw.name,
        "unit": a.raw.unit,
        "n_total": e.n,
        "n_shown": rows.len(),
        "seed": SUBSAMPLE_SEED,
        "duration_s": round(a.duration_s, 2),
        "dims": dims,
        "coords": coords,
        "ranges": ranges,
        "q_levels": Q_LEVELS,
        "t": times,
        "rr": rr,
        "ld": ld,
        "ld_range": ld_range,
        "cls": classes,
        "wave": {
            "pre_s": pre as f64 / fs,
            "dt_s": step as f64 / fs,
            "len": len,
            "amp": amp,
            "b64": wave_b64,
        },
    }))
}

const CSS: &str = "#bf-view{display:flex;flex-wrap:wrap;gap:1em;align-items:flex-start}\
#bf-view svg{border:1px solid #ccc;background:#fff}\
#bf-controls{margin:0.5em 0;display:flex;flex-wrap:wrap;gap:1em;align-items:center}\
#bf-controls input[type=number]{width:7em}\
#bf-info{font-variant-numeric:tabular-nums;min-height:1.5em}\
#bf-scatter circle{cursor:pointer}#bf-scatter circle.sel{stroke:#000;stroke-width:2}\
#bf-scatter circle.dim{opacity:0.15}";

/// The script of the view (reads the JSON block `#bf-data`).
const SCRIPT: &str = r#"(function(){
'use strict';
var errors=[];
window.addEventListener('error',function(ev){errors.push(String(ev.message));});
var D=JSON.parse(document.getElementById('bf-data').textContent);
var NS='http://www.w3.org/2000/svg';
var PAL={N:'#0072B2',V:'#D55E00',A:'#009E73',Q:'#CC79A7'};
var W=560,H=560,PAD=40;
var sc=document.getElementById('bf-scatter');
var wv=document.getElementById('bf-wave');
var tl=document.getElementById('bf-timeline');
var info=document.getElementById('bf-info');
var projSel=document.getElementById('bf-proj');
var colSel=document.getElementById('bf-colour');
var fromIn=document.getElementById('bf-from');
var toIn=document.getElementById('bf-to');
var countOut=document.getElementById('bf-count');
var n=D.n_shown, circles=[], selected=-1;
function el(name,attrs,parent){var e=document.createElementNS(NS,name);for(var k in attrs){e.setAttribute(k,attrs[k]);}if(parent){parent.appendChild(e);}return e;}
function coord(c,i){var q=D.coords[c][i];return q===null?null:q/D.q_levels;}
function lerp(a,b,f){return Math.round(a+(b-a)*f);}
function timeColour(f){f=Math.max(0,Math.min(1,f));return 'rgb('+lerp(0,240,f)+','+lerp(114,228,f)+','+lerp(178,66,f)+')';}
function colourOf(i){
  if(colSel.value==='class'){return PAL[D.cls.charAt(i)]||'#5A5A5A';}
  if(colSel.value==='ld'){var v=D.ld[i];if(v===null||!D.ld_range){return '#5A5A5A';}return timeColour((v-D.ld_range[0])/Math.max(D.ld_range[1]-D.ld_range[0],1e-9));}
  var t=D.t[i];return t===null?'#5A5A5A':timeColour(t/Math.max(D.duration_s,1e-9));
}
function projection(){var p=projSel.value.split('-');return [parseInt(p[0],10),parseInt(p[1],10)];}
function place(){
  var p=projection();
  for(var i=0;i<n;i++){
    var x=coord(p[0],i),y=coord(p[1],i),c=circles[i];
    if(x===null||y===null){c.setAttribute('display','none');continue;}
    c.removeAttribute('display');
    c.setAttribute('cx',(PAD+x*(W-2*PAD)).toFixed(1));
    c.setAttribute('cy',(H-PAD-y*(H-2*PAD)).toFixed(1));
    c.setAttribute('fill',colourOf(i));
  }
  document.getElementById('bf-xlab').textContent='\u03c8'+(p[0]+1)+' (scaled to the shown range)';
  document.getElementById('bf-ylab').textContent='\u03c8'+(p[1]+1);
}
function decode(i){
  var s=atob(D.wave.b64[i]),out=[];
  for(var k=0;k<s.length;k++){var b=s.charCodeAt(k);if(b>127){b-=256;}out.push(b===-128?null:b/127*D.wave.amp);}
  return out;
}
function showBeat(i){
  if(i<0||i>=n){return;}
  if(selected>=0){circles[selected].classList.remove('sel');}
  selected=i;circles[i].classList.add('sel');
  var w=decode(i),pts=[],x0=50,x1=390,y0=200,y1=20;
  for(var k=0;k<w.length;k++){
    if(w[k]===null){continue;}
    var x=x0+(x1-x0)*k/Math.max(w.length-1,1);
    var y=(y0+y1)/2-(w[k]/D.wave.amp)*(y0-y1)/2;
    pts.push(x.toFixed(1)+','+y.toFixed(1));
  }
  document.getElementById('bf-wave-line').setAttribute('points',pts.join(' '));
  var rr=D.rr[i]===null?'n/a':D.rr[i].toFixed(3)+' s';
  var t=D.t[i]===null?'n/a':D.t[i].toFixed(2)+' s';
  info.textContent='Beat shown: t = '+t+', class '+D.cls.charAt(i)+', RR before it '+rr+' (point '+(i+1)+' of '+n+' shown)';
}
function highlight(){
  var a=parseFloat(fromIn.value),b=parseFloat(toIn.value),k=0;
  var on=isFinite(a)&&isFinite(b)&&b>a;
  for(var i=0;i<n;i++){
    var t=D.t[i],inside=on&&t!==null&&t>=a&&t<=b;
    if(inside){k++;}
    if(on&&!inside){circles[i].classList.add('dim');}else{circles[i].classList.remove('dim');}
  }
  countOut.textContent=on?(k+' of '+n+' shown beats in '+a+'\u2013'+b+' s'):'no range chosen';
  var r=document.getElementById('bf-brush');
  if(on){var tw=TW-2*TP;r.setAttribute('x',(TP+tw*Math.max(0,a)/D.duration_s).toFixed(1));r.setAttribute('width',Math.max(1,tw*(Math.min(b,D.duration_s)-Math.max(a,0))/D.duration_s).toFixed(1));r.removeAttribute('display');}
  else{r.setAttribute('display','none');}
  return k;
}
var TW=900,TP=10;
function buildTimeline(){
  var tw=TW-2*TP;
  var path='';
  for(var i=0;i<n;i++){var t=D.t[i];if(t===null){continue;}var x=TP+tw*t/Math.max(D.duration_s,1e-9);path+='M'+x.toFixed(1)+' 14V36';}
  el('path',{d:path,stroke:'#0072B2','stroke-opacity':'0.35','stroke-width':'1'},tl);
  el('rect',{id:'bf-brush',y:'4',height:'42',fill:'#E69F00','fill-opacity':'0.35',display:'none'},tl);
  var start=null;
  function tAt(ev){var r=tl.getBoundingClientRect();var f=(ev.clientX-r.left)/r.width*TW;return Math.max(0,Math.min(1,(f-TP)/tw))*D.duration_s;}
  tl.addEventListener('mousedown',function(ev){start=tAt(ev);ev.preventDefault();});
  window.addEventListener('mousemove',function(ev){if(start===null){return;}var t=tAt(ev);fromIn.value=Math.min(start,t).toFixed(2);toIn.value=Math.max(start,t).toFixed(2);highlight();});
  window.addEventListener('mouseup',function(){start=null;});
}
function build(){
  for(var i=0;i<n;i++){
    var c=el('circle',{r:'3.2','data-i':String(i)},sc);
    circles.push(c);
  }
  sc.addEventListener('click',function(ev){var i=ev.target.getAttribute&&ev.target.getAttribute('data-i');if(i!==null&&i!==undefined){showBeat(parseInt(i,10));}});
  sc.addEventListener('mouseover',function(ev){var i=ev.target.getAttribute&&ev.target.getAttribute('data-i');if(i!==null&&i!==undefined){showBeat(parseInt(i,10));}});
  projSel.addEventListener('change',place);
  colSel.addEventListener('change',place);
  fromIn.addEventListener('input',highlight);
  toIn.addEventListener('input',highlight);
  buildTimeline();
  place();highlight();
}
function selftest(){
  var msgs=[],ok=true;
  function check(c,m){msgs.push((c?'ok ':'FAILED ')+m);if(!c){ok=false;}}
  // Click a point other than the one shown, then check the click's own effect.
  var shown=selected,j=n>1?(shown===n-1?0:n-1):-1;
  check(j>=0&&j!==shown,'a point other than the shown one exists');
  var target=j>=0?circles[j]:null,before=info.textContent;
  if(target){target.dispatchEvent(new MouseEvent('click',{bubbles:true}));}
  check(j>=0&&selected===j,'clicked point '+(j+1)+' is now the shown beat');
  check(!!target&&target.classList.contains('sel')&&(shown<0||!circles[shown].classList.contains('sel')),'selection mark moved to the clicked point');
  var line=document.getElementById('bf-wave-line').getAttribute('points')||'';
  var np=line.trim()===''?0:line.trim().split(/\s+/).length;
  check(np>=10,'waveform drawn with '+np+' points');
  var tj=j>=0&&D.t[j]!==null?'t = '+D.t[j].toFixed(2)+' s':'t = n/a';
  check(info.textContent!==before&&info.textContent.indexOf(tj)>=0&&info.textContent.indexOf('point '+(j+1)+' of')>=0,'info line shows the clicked beat ('+tj+')');
  var t0=D.t[0]===null?0:D.t[0];
  fromIn.value=String(Math.max(0,t0-1));toIn.value=String(t0+30);
  var k=highlight();
  check(k>0,k+' beats highlighted in a range');
  var figs=document.querySelectorAll('figure.bf-figure svg').length;
  var want=parseInt(document.body.getAttribute('data-figures')||'0',10);
  check(figs===want,figs+' of '+want+' figures present');
  check(errors.length===0,'no script errors'+(errors.length?': '+errors.join('; '):''));
  var res=(ok?'PASS':'FAIL')+': '+msgs.join('; ');
  var out=document.getElementById('selftest-result');
  out.textContent=res;out.setAttribute('data-status',ok?'pass':'fail');
  document.title='SELFTEST '+res;
}
function start(){
  build();
  if(n>0){showBeat(0);}
  if(location.hash==='#selftest'){selftest();}
}
if(document.readyState==='loading'){document.addEventListener('DOMContentLoaded',start);}else{start();}
})();"#;

/// The HTML of the interactive section, or a paragraph saying why there is none.
pub(crate) fn section(a: &Analysis) -> String {
    let Some(d) = data(a) else {
        return "<h2 id=\"explore\">Explore the embedding</h2>\n<p>No embedding to explore \
(too few beats).</p>\n<div id=\"selftest-result\" data-status=\"none\"></div>\n"
            .to_string();
    };
    let n_total = a.embedding.n;
    let n_shown = d["n_shown"].as_u64().unwrap_or(0);
    let dims = d["dims"].as_u64().unwrap_or(2);
    let sub = if (n_shown as usize) < n_total {
        format!(
            "{n_shown} of {n_total} beats are shown, a random subsample drawn with the fixed seed \
{SUBSAMPLE_SEED} (the same analysis always shows the same beats)."
        )
    } else {
        format!("All {n_total} embedded beats are shown.")
    };
    let mut proj = String::from("<option value=\"0-1\">ψ1–ψ2</option>");
    if dims >= 3 {
        proj.push_str("<option value=\"0-2\">ψ1–ψ3</option><option value=\"1-2\">ψ2–ψ3</option>");
    }
    let unit = if a.raw.unit.trim().is_empty() {
        "unknown unit".to_string()
    } else {
        html_escape(a.raw.unit.trim())
    };
    format!(
        "<h2 id=\"explore\">Explore the embedding</h2>\n<style>{CSS}</style>\n\
<p>Click or hover a point to see that beat's waveform (conditioned lead, {pre:.2} s before to \
{post:.2} s after the R peak, thinned to about {hz:.0} Hz and rounded to 8 bits for display) and \
its time. Choose a time range with the two boxes or by dragging across the timeline strip to \
highlight its beats. {sub} Each axis spans the 0.5–99.5 % range of its coordinate; points \
beyond it sit on the edge.</p>\n\
<div id=\"bf-controls\"><label>Projection <select id=\"bf-proj\">{proj}</select></label>\
<label>Colour <select id=\"bf-colour\"><option value=\"time\">time</option>\
<option value=\"class\">beat class</option>\
<option value=\"ld\">local dimension</option></select></label>\
<label>From (s) <input id=\"bf-from\" type=\"number\" step=\"any\" min=\"0\"></label>\
<label>To (s) <input id=\"bf-to\" type=\"number\" step=\"any\" min=\"0\"></label>\
<span id=\"bf-count\"></span></div>\n\
<svg id=\"bf-timeline\" viewBox=\"0 0 900 50\" width=\"900\" height=\"50\" role=\"img\" \
aria-label=\"Timeline of the shown beats; drag to choose a range\">\
<rect x=\"0\" y=\"0\" width=\"900\" height=\"50\" fill=\"#fafafa\"/>\
<text x=\"10\" y=\"48\" font-size=\"10\">0 s</text>\
<text x=\"890\" y=\"48\" font-size=\"10\" text-anchor=\"end\">{dur:.0} s</text></svg>\n\
<div id=\"bf-view\">\
<svg id=\"bf-scatter\" viewBox=\"0 0 560 560\" width=\"560\" height=\"560\" role=\"img\" \
aria-label=\"Diffusion coordinates of the beats\">\
<text id=\"bf-xlab\" x=\"280\" y=\"555\" text-anchor=\"middle\" font-size=\"13\"></text>\
<text id=\"bf-ylab\" x=\"14\" y=\"280\" text-anchor=\"middle\" font-size=\"13\" \
transform=\"rotate(-90 14 280)\"></text></svg>\
<div style=\"width:400px\"><svg id=\"bf-wave\" viewBox=\"0 0 400 240\" width=\"400\" height=\"240\" role=\"img\" \
aria-label=\"Waveform of the chosen beat\">\
<line x1=\"50\" y1=\"110\" x2=\"390\" y2=\"110\" stroke=\"#ccc\"/>\
<line x1=\"{rx:.1}\" y1=\"20\" x2=\"{rx:.1}\" y2=\"200\" stroke=\"#ccc\" stroke-dasharray=\"4 3\"/>\
<text x=\"46\" y=\"24\" text-anchor=\"end\" font-size=\"11\">{amp_txt}</text>\
<text x=\"46\" y=\"114\" text-anchor=\"end\" font-size=\"11\">0</text>\
<text x=\"46\" y=\"204\" text-anchor=\"end\" font-size=\"11\">−{amp_txt}</text>\
<polyline id=\"bf-wave-line\" fill=\"none\" stroke=\"#0072B2\" stroke-width=\"2\" points=\"\"/>\
<text x=\"220\" y=\"232\" text-anchor=\"middle\" font-size=\"12\">Time from R peak (s): \
−{pre:.2} to +{post:.2}</text>\
<text x=\"12\" y=\"110\" text-anchor=\"middle\" font-size=\"12\" transform=\"rotate(-90 12 110)\">\
Amplitude ({unit})</text></svg>\
<p id=\"bf-info\"></p></div></div>\n\
<div id=\"selftest-result\" data-status=\"not run\"></div>\n\
<script type=\"application/json\" id=\"bf-data\">{json}</script>\n\
<script>{SCRIPT}</script>\n",
        pre = PRE_S,
        post = POST_S,
        hz = a.fs_hz / (a.fs_hz / WAVE_HZ).round().max(1.0),
        dur = a.duration_s.max(0.0),
        rx = 50.0 + 340.0 * PRE_S / (PRE_S + POST_S),
        json = json_for_script(&d),
        amp_txt = format_amp(d["wave"]["amp"].as_f64().unwrap_or(1.0)),
    )
}

/// Amplitude with three significant digits.
fn format_amp(v: f64) -> String {
    if v.is_finite() && v > 0.0 {
        let dec = (2.0 - v.log10().floor()).clamp(0.0, 6.0) as usize;
        format!("{v:.dec$}")
    } else {
        "1".to_string()
    }
}
