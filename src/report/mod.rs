//! Report: turns a finished [`Analysis`] into files — figures (PNG and SVG), a self-contained HTML
//! page, a JSON summary and an HDF5 results file.
//!
//! In: an [`Analysis`] (read only) and an output folder. Out: `report.html`, `summary.json`,
//! `results.h5` and `figures/{trace,beats,embedding,trajectory,dimension,recurrence,rr}.{png,svg}`
//! (the selection of [`ReportOptions::select`]), each written
//! atomically by [`write_atomic`] (temporary sibling, `fsync`, rename), so a reader never sees a
//! half-written file. The report computes nothing new: it only lays out what the pipeline found.
//! Display conveniences (axis ranges, decimation of long series, a median beat template for the
//! overlay figure) are for the figures only and are never written as results.
//!
//! Every output carries the research-use notice ([`crate::NOTICE`], [`crate::NOTICE_SHORT`] on
//! figures). Every piece of user-controlled text that reaches the HTML page goes through
//! [`html_escape`] (and text inside the page's embedded JSON through [`json_for_script`]). The
//! page's interactive embedding view is plain inline JavaScript and SVG (see `interactive.rs`).
//! The figure palette uses the hues of Okabe & Ito (2008), "Color Universal
//! Design", chosen to stay distinguishable under the common colour-vision deficiencies.
//! The HDF5 layout is documented in `docs/results-format.md`.

mod figures;
pub mod json_views;
/// The embedded figure font, shared with other figure writers (e.g. the cohort's).
pub(crate) use figures::{ensure_font, FONT};
mod h5;
mod h5_dimension;
mod html;
mod interactive;
mod summary;
#[cfg(test)]
mod tests;

use crate::error::{Error, Result};
use crate::params::Checked;
use crate::pipeline::Analysis;
use std::fs;
use std::path::{Path, PathBuf};

pub use figures::dimension_suite::{render_suite_svg, write_suite_figure};
pub use figures::{ColourBy, Figure};
pub use h5::write_results_h5;
pub use summary::summary_json;

/// Which outputs [`write_all`] produces besides the HTML page, the JSON summary and the HDF5 file,
/// and the display choices of the figures.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportOptions {
    /// Draw figures at all (default true). When false, no `figures/` files are written and the
    /// HTML page has no figures.
    pub figures: bool,
    /// Write `figures/*.png` (1800 × 1000 px: 6 × 3.3 inches at 300 dpi) (default true).
    pub png: bool,
    /// Write `figures/*.svg` (default true). The HTML page embeds the SVG drawings inline either
    /// way.
    pub svg: bool,
    /// Which figures to draw, in report order (default: all of [`Figure::ALL`]).
    pub select: Vec<Figure>,
    /// Start of the time range of the trace, trajectory and recurrence figures, seconds from the
    /// record start (default: the start).
    pub from_s: Option<f64>,
    /// End of that time range, seconds (default: 10 s after the start for the trace, 60 s for
    /// the trajectory, one recurrence window for the recurrence plot).
    pub to_s: Option<f64>,
    /// What colours the embedding scatter (default: time).
    pub colour_by: ColourBy,
    /// Add the interactive embedding view to `report.html` (default true).
    pub interactive: bool,
}

impl Default for ReportOptions {
    fn default() -> Self {
        ReportOptions {
            figures: true,
            png: true,
            svg: true,
            select: Figure::ALL.to_vec(),
            from_s: None,
            to_s: None,
            colour_by: ColourBy::Time,
            interactive: true,
        }
    }
}

impl ReportOptions {
    /// Validate the time range: `from_s` ≥ 0 s, `to_s` > 0 s and `to_s` > `from_s`, both finite.
    pub fn check(&self) -> Result<()> {
        if let Some(t) = self.from_s {
            if !(t.is_finite() && t >= 0.0) {
                return Err(Error::param(
                    "view-start",
                    format!("{t} s; must be a finite time ≥ 0 s"),
                ));
            }
        }
        if let Some(t) = self.to_s {
            if !(t.is_finite() && t > 0.0) {
                return Err(Error::param(
                    "view-end",
                    format!("{t} s; must be a finite time > 0 s"),
                ));
            }
            if let Some(f) = self.from_s {
                if t <= f {
                    return Err(Error::param(
                        "view-end",
                        format!("{t} s; must be later than --view-start ({f} s)"),
                    ));
                }
            }
        }
        Ok(())
    }

    fn view(&self) -> figures::View {
        figures::View {
            from_s: self.from_s,
            to_s: self.to_s,
            colour_by: self.colour_by,
        }
    }
}

/// What [`write_all`] wrote.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Written {
    /// The output folder.
    pub dir: PathBuf,
    /// Every file written, in the order written.
    pub files: Vec<PathBuf>,
}

/// Write the whole report of `a` into `out_dir` (created if needed, with `out_dir/figures`):
/// figures, `summary.json`, `results.h5` and `report.html`.
///
/// Degenerate analyses (no beats, constant or non-finite values) still give every file; figures
/// that cannot be drawn say why instead.
pub fn write_all(a: &Analysis, out_dir: &Path, opts: &Checked<ReportOptions>) -> Result<Written> {
    let view = opts.view();
    fs::create_dir_all(out_dir).map_err(|e| Error::io(out_dir, e))?;
    let mut files = Vec::new();
    let mut svgs: Vec<(figures::Figure, String)> = Vec::new();
    if opts.figures {
        let fig_dir = out_dir.join("figures");
        fs::create_dir_all(&fig_dir).map_err(|e| Error::io(&fig_dir, e))?;
        for &fig in &opts.select {
            let svg_path = fig_dir.join(format!("{}.svg", fig.file_stem()));
            let svg =
                figures::render_svg_view(fig, a, &view).map_err(|m| Error::output(&svg_path, m))?;
            if opts.svg {
                write_atomic(&svg_path, svg.as_bytes())?;
                files.push(svg_path);
            }
            if opts.png {
                let png_path = fig_dir.join(format!("{}.png", fig.file_stem()));
                figures::write_png(fig, a, &view, &png_path)?;
                files.push(png_path);
            }
            svgs.push((fig, svg));
        }
    }

    let summary_path = out_dir.join("summary.json");
    let mut text = serde_json::to_string_pretty(&summary_json(a))
        .map_err(|e| Error::output(&summary_path, e.to_string()))?;
    text.push('\n');
    write_atomic(&summary_path, text.as_bytes())?;
    files.push(summary_path);

    let h5_path = out_dir.join("results.h5");
    write_results_h5(a, &h5_path)?;
    files.push(h5_path);

    let html_path = out_dir.join("report.html");
    let page = html::render(a, &svgs, opts);
    write_atomic(&html_path, page.as_bytes())?;
    files.push(html_path);

    Ok(Written {
        dir: out_dir.to_path_buf(),
        files,
    })
}

pub use crate::io::write_atomic;
use crate::io::{commit_temp, temp_sibling};

/// Escape text for HTML element content and attribute values: `&`, `<`, `>`, `"` and `'`.
pub fn html_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + s.len() / 8);
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// Serialise `v` as JSON that is safe inside an HTML `<script>` element: `<`, `>` and `&` are
/// written as `\u003c`, `\u003e` and `\u0026` (still the same JSON value), and so are the
/// line separators U+2028 and U+2029, so no text can close the element or open a comment.
pub fn json_for_script(v: &serde_json::Value) -> String {
    let text = v.to_string();
    let mut out = String::with_capacity(text.len() + 16);
    for c in text.chars() {
        match c {
            '<' => out.push_str("\\u003c"),
            '>' => out.push_str("\\u003e"),
            '&' => out.push_str("\\u0026"),
            '\u{2028}' => out.push_str("\\u2028"),
            '\u{2029}' => out.push_str("\\u2029"),
            _ => out.push(c),
        }
    }
    out
}
