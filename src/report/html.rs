//! `report.html`: one self-contained page (no network, no external scripts, fonts or CSS) with
//! the notice at the top, a summary table, the interactive embedding view (inline JavaScript and
//! SVG, see `interactive.rs`), the figures inline as SVG, the parameters and the provenance. All
//! user-controlled text is escaped with [`html_escape`], and inside the page's JSON with
//! [`super::json_for_script`].

use super::figures::Figure;
use super::{html_escape, ReportOptions};
use crate::pipeline::Analysis;
use std::fmt::Write;

/// A number with `dec` decimals, or "n/a" when not finite.
fn f(x: f64, dec: usize) -> String {
    if x.is_finite() {
        format!("{x:.dec$}")
    } else {
        "n/a".to_string()
    }
}

const STYLE: &str =
    "body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;max-width:1100px;\
margin:1.5em auto;padding:0 1em;color:#111;line-height:1.4}\
.notice{border:3px solid #D55E00;background:#fff4e5;padding:0.8em 1em;margin:0 0 1.5em 0;\
font-size:1.05em}\
.notice strong{color:#8a3300}\
table{border-collapse:collapse;margin:0.5em 0 1.5em 0}\
th,td{border:1px solid #bbb;padding:0.25em 0.6em;text-align:left;vertical-align:top}\
th{background:#f0f0f0;font-weight:600}\
td.num{text-align:right;font-variant-numeric:tabular-nums}\
figure{margin:1.5em 0}figure svg{width:100%;height:auto;border:1px solid #ddd}\
figcaption{font-size:0.95em;color:#333}\
pre{background:#f6f6f6;border:1px solid #ddd;padding:0.8em;overflow-x:auto;font-size:0.9em}\
code{word-break:break-all}";

/// Strip an XML declaration, if any, so the SVG can sit inline in the page.
fn inline_svg(svg: &str) -> &str {
    match svg.find("<svg") {
        Some(i) => &svg[i..],
        None => svg,
    }
}

fn row(out: &mut String, key: &str, value: &str) {
    let _ = writeln!(
        out,
        "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
        html_escape(key),
        value
    );
}

/// Render the page. `svgs` are the figures drawn for this analysis (possibly none).
pub(crate) fn render(a: &Analysis, svgs: &[(Figure, String)], opts: &ReportOptions) -> String {
    let mut o = String::with_capacity(64 * 1024 + svgs.iter().map(|s| s.1.len()).sum::<usize>());
    let name = html_escape(&a.record_name);
    let _ = write!(
        o,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
<title>beatfold report: {name}</title>\n<style>{STYLE}</style>\n</head>\n\
<body data-figures=\"{}\">\n",
        svgs.len()
    );
    let _ = writeln!(
        o,
        "<div class=\"notice\" role=\"note\"><strong>Research use only &mdash; not for diagnosis.</strong> \
{}</div>",
        html_escape(crate::NOTICE)
    );
    let _ = writeln!(o, "<h1>beatfold report: {name}</h1>");
    let mut nav = String::from("<a href=\"#summary\">Summary</a>");
    if opts.interactive {
        nav.push_str(" · <a href=\"#explore\">Explore the embedding</a>");
    }
    if !svgs.is_empty() {
        nav.push_str(" · <a href=\"#figures\">Figures</a>");
    }
    nav.push_str(
        " · <a href=\"#parameters\">Parameters</a> · <a href=\"#provenance\">Provenance</a>",
    );
    let _ = writeln!(o, "<nav>{nav}</nav>");

    // Summary table.
    let v = &a.variability;
    let mut t = String::new();
    row(&mut t, "Record", &name);
    row(&mut t, "Input", &html_escape(&a.input_name));
    row(&mut t, "Lead", &html_escape(&a.raw.name));
    row(&mut t, "Duration", &format!("{} s", f(a.duration_s, 1)));
    row(&mut t, "Sampling rate", &format!("{} Hz", f(a.fs_hz, 1)));
    row(&mut t, "Beats detected", &a.beat_samples.len().to_string());
    row(
        &mut t,
        "Mean heart rate",
        &format!("{} beats/min", f(v.mean_hr_bpm, 1)),
    );
    row(&mut t, "RR intervals used", &v.n_rr.to_string());
    row(&mut t, "Mean RR", &format!("{} ms", f(v.mean_rr_ms, 1)));
    row(&mut t, "SDNN", &format!("{} ms", f(v.sdnn_ms, 1)));
    row(&mut t, "RMSSD", &format!("{} ms", f(v.rmssd_ms, 1)));
    row(&mut t, "pNN50", &format!("{} %", f(100.0 * v.pnn50, 1)));
    if let Some(ag) = a.agreement {
        row(&mut t, "Detector agreement", &f(ag, 3));
    }
    row(
        &mut t,
        "Poincaré SD1 / SD2",
        &format!("{} / {} ms", f(a.poincare_ms.0, 1), f(a.poincare_ms.1, 1)),
    );
    row(
        &mut t,
        "Sample entropy (m 2, r 0.2·SD)",
        &f(a.sample_entropy, 3),
    );
    row(
        &mut t,
        "Rhythm verdict (research label, not a diagnosis)",
        &html_escape(&format!(
            "{} (irregular fraction {}, COSEn {}): {}",
            a.verdict.class.name(),
            f(a.verdict.irregular_fraction, 2),
            f(a.verdict.index, 2),
            a.verdict.reasons.join("; ")
        )),
    );
    let eps: Vec<String> = a
        .screen
        .episodes
        .iter()
        .map(|e| format!("{}–{} s", f(e.start_s, 0), f(e.end_s, 0)))
        .collect();
    row(
        &mut t,
        "Irregular-rhythm research screen (not a diagnosis)",
        &if a.screen.windows.is_empty() {
            "too few RR intervals for a window".to_string()
        } else if eps.is_empty() {
            format!("no irregular episode ({} windows)", a.screen.windows.len())
        } else {
            format!("{} episode(s): {}", eps.len(), eps.join(", "))
        },
    );
    match &a.score {
        Some(s) => row(
            &mut t,
            "Detection score (reference beats)",
            &format!(
                "Se {} %, +P {} % (TP {}, FP {}, FN {}; {} reference, {} detected; window {} ms)",
                f(100.0 * s.se, 2),
                f(100.0 * s.ppv, 2),
                s.tp,
                s.fp,
                s.fn_,
                s.reference,
                s.detected,
                f(s.match_window_ms, 0)
            ),
        ),
        None => row(&mut t, "Detection score", "no reference beats"),
    }
    let e = &a.embedding;
    let eig: Vec<String> = e.eigenvalues.iter().map(|&x| f(x, 4)).collect();
    row(
        &mut t,
        "Diffusion map",
        &format!(
            "{} beats, {} components; &epsilon; = {}, &alpha; = {}, t = {}",
            e.n,
            e.components,
            f(e.epsilon, 4),
            f(e.alpha, 2),
            f(e.t, 2)
        ),
    );
    row(&mut t, "Eigenvalues", &eig.join(", "));
    let dg = &e.diagnostics;
    row(
        &mut t,
        "Diffusion map diagnostics",
        &html_escape(&format!(
            "ε by {}; kernel-sum dimension {}; largest eigen-residual {:.1e}; largest eigengap {}; {} connected component{}{}",
            if dg.bandwidth_rule.is_empty() { "—" } else { &dg.bandwidth_rule },
            dg.kernel_sum_dimension.map_or("—".to_string(), |d| f(d, 2)),
            e.residual,
            dg.eigengap
                .map_or("—".to_string(), |(i, g)| format!("{g:.2e} after coordinate {i}")),
            dg.connected_components,
            if dg.connected_components == 1 { "" } else { "s" },
            dg.note.as_ref().map_or(String::new(), |n| format!(": {n}")),
        )),
    );
    let d = &a.dimension;
    row(&mut t, "Dimension (k-means scaling)", &f(d.d, 2));
    if let Some(c) = a
        .dimension_suite
        .as_ref()
        .and_then(|s| s.consensus.as_ref())
    {
        row(&mut t, "Dimension (consensus)", &html_escape(&c.sentence()));
    }
    row(
        &mut t,
        "Noise scale",
        &d.noise_scale.map_or("not detected".to_string(), |x| {
            format!("{} (feature units)", f(x, 4))
        }),
    );
    let flagged = a.quality.iter().filter(|q| !q.is_clean()).count();
    row(
        &mut t,
        "Signal quality",
        &format!("{flagged} of {} segments flagged", a.quality.len()),
    );
    let _ = writeln!(o, "<h2 id=\"summary\">Summary</h2>\n<table>\n{t}</table>");

    if let Some(sep) = &a.separation {
        o.push_str(&sep.html());
    }

    // Reference annotations (labels are user text).
    if !a.reference.is_empty() {
        let _ = writeln!(
            o,
            "<h2>Reference annotations</h2>\n<p>{} reference beats, {} rhythm intervals.</p>",
            a.reference.beats.len(),
            a.reference.rhythms.len()
        );
        if !a.reference.rhythms.is_empty() {
            let _ = writeln!(
                o,
                "<table>\n<tr><th>Start (s)</th><th>End (s)</th><th>Label</th></tr>"
            );
            for r in a.reference.rhythms.iter().take(50) {
                let _ = writeln!(
                    o,
                    "<tr><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{}</td></tr>",
                    f(r.start_s, 2),
                    f(r.end_s, 2),
                    html_escape(&r.label)
                );
            }
            let _ = writeln!(o, "</table>");
            if a.reference.rhythms.len() > 50 {
                let _ = writeln!(o, "<p>(first 50 intervals shown)</p>");
            }
        }
    }

    if opts.interactive {
        o.push_str(&super::interactive::section(a));
    }

    // Figures (drawn by beatfold; their text is escaped by the SVG writer).
    if !svgs.is_empty() {
        let _ = writeln!(
            o,
            "<h2 id=\"figures\">Figures</h2>\n<p>Also written as <code>figures/*.svg</code> and \
<code>figures/*.png</code> (1800 × 1000 px, 6 × 3.3 inches at 300 dpi). Colours: Okabe &amp; Ito \
(2008) colour-blind-safe hues.</p>"
        );
        for (k, (fig, svg)) in svgs.iter().enumerate() {
            let _ = writeln!(
                o,
                "<figure class=\"bf-figure\" id=\"fig-{}\">\n{}\n<figcaption>Figure {}. {}</figcaption>\n</figure>",
                fig.file_stem(),
                inline_svg(svg),
                k + 1,
                html_escape(fig.caption())
            );
        }
    }

    // Parameters and provenance.
    let params = serde_json::to_string_pretty(&a.parameters).unwrap_or_else(|e| e.to_string());
    let _ = writeln!(
        o,
        "<h2 id=\"parameters\">Parameters</h2>\n<pre><code>{}</code></pre>",
        html_escape(&params)
    );
    let mut p = String::new();
    row(&mut p, "Input name", &html_escape(&a.input_name));
    row(
        &mut p,
        "Input SHA-256",
        &format!(
            "<code>{}</code>",
            html_escape(a.input_sha256.as_deref().unwrap_or("not from a file"))
        ),
    );
    row(&mut p, "beatfold version", env!("CARGO_PKG_VERSION"));
    row(&mut p, "Analysis time", &format!("{} s", f(a.elapsed_s, 2)));
    let _ = writeln!(
        o,
        "<h2 id=\"provenance\">Provenance</h2>\n<table>\n{p}</table>"
    );
    if !a.notes.is_empty() {
        let items: String = a
            .notes
            .iter()
            .map(|n| format!("<li>{}</li>", html_escape(n)))
            .collect();
        let _ = writeln!(o, "<h2>What could not be computed</h2>\n<ul>{items}</ul>");
    }
    let _ = write!(
        o,
        "<p class=\"foot\">{}</p>\n</body>\n</html>\n",
        html_escape(crate::NOTICE)
    );
    o
}
