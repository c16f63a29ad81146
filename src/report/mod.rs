//! Report: turns a finished [`Analysis`] into files — figures (PNG and SVG), a self-contained HTML
//! page, a JSON summary and an HDF5 results file.
//!
//! In: an [`Analysis`] (read only) and an output folder. Out: `report.html`, `summary.json`,
//! `results.h5` and `figures/{trace,beats,embedding,dimension,rr}.{png,svg}`, each written
//! atomically by [`write_atomic`] (temporary sibling, `fsync`, rename), so a reader never sees a
//! half-written file. The report computes nothing new: it only lays out what the pipeline found.
//! Display conveniences (axis ranges, decimation of long series, a median beat template for the
//! overlay figure) are for the figures only and are never written as results.
//!
//! Every output carries the research-use notice ([`crate::NOTICE`], [`crate::NOTICE_SHORT`] on
//! figures). Every piece of user-controlled text that reaches the HTML page goes through
//! [`html_escape`]. The figure palette uses the hues of Okabe & Ito (2008), "Color Universal
//! Design", chosen to stay distinguishable under the common colour-vision deficiencies.
//! The HDF5 layout is documented in `docs/results-format.md`.

pub mod dimension_figure;
mod figures;
mod h5;
mod html;
mod summary;
#[cfg(test)]
mod tests;

use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use std::fs;
use std::path::{Path, PathBuf};

pub use h5::write_results_h5;
pub use summary::summary_json;

/// Which outputs [`write_all`] produces besides the HTML page, the JSON summary and the HDF5 file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ReportOptions {
    /// Draw figures at all (default true). When false, no `figures/` files are written and the
    /// HTML page has no figures.
    pub figures: bool,
    /// Write `figures/*.png` (1800 × 1000 px) (default true).
    pub png: bool,
    /// Write `figures/*.svg` (default true). The HTML page embeds the SVG drawings inline either
    /// way.
    pub svg: bool,
}

impl Default for ReportOptions {
    fn default() -> Self {
        ReportOptions {
            figures: true,
            png: true,
            svg: true,
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
pub fn write_all(a: &Analysis, out_dir: &Path, opts: &ReportOptions) -> Result<Written> {
    fs::create_dir_all(out_dir).map_err(|e| Error::io(out_dir, e))?;
    let mut files = Vec::new();
    let mut svgs: Vec<(figures::Figure, String)> = Vec::new();
    if opts.figures {
        let fig_dir = out_dir.join("figures");
        fs::create_dir_all(&fig_dir).map_err(|e| Error::io(&fig_dir, e))?;
        for fig in figures::Figure::ALL {
            let svg_path = fig_dir.join(format!("{}.svg", fig.file_stem()));
            let svg = figures::render_svg(fig, a).map_err(|m| Error::output(&svg_path, m))?;
            if opts.svg {
                write_atomic(&svg_path, svg.as_bytes())?;
                files.push(svg_path);
            }
            if opts.png {
                let png_path = fig_dir.join(format!("{}.png", fig.file_stem()));
                figures::write_png(fig, a, &png_path)?;
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
    let page = html::render(a, &svgs);
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
