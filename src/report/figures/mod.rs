//! Figures of an [`Analysis`], drawn with plotters into SVG (text) and PNG (1800 × 1000 px, which
//! is 6 × 3.3 inches at 300 dpi).
//!
//! Eight figures, in report order: 1 `trace` (conditioned lead of a chosen time range with
//! detected beats by class, quality flags, screen episodes and reference rhythm intervals),
//! 2 `beats` (aligned beat windows with the median template per beat class), 3 `embedding`
//! (diffusion coordinates ψ1–ψ2, ψ1–ψ3 and ψ2–ψ3, coloured by time, RR, beat class or rhythm
//! label), 4 `trajectory` (successive beats joined in diffusion coordinates over a chosen
//! interval), 5 `dimension` (k-means quantization scaling and local dimension against scale),
//! 6 `recurrence` (recurrence plot of one window of the embedded trajectory, Marwan et al. 2007,
//! and the recurrence-measure timeline), 7 `rr` (RR tachogram with the irregular-rhythm research
//! screen shaded, and the Poincaré plot of Brennan et al. 2001), 8 `rhythm` (the whole record:
//! windowed indices, episodes and the verdict).
//!
//! Text in PNGs is rendered with the DejaVu Sans font compiled into the binary
//! (`assets/fonts/DejaVuSans.ttf`, Bitstream Vera licence), so figures need no system font.
//! Palette: the eight hues of Okabe & Ito (2008), "Color Universal Design — how to make figures
//! and presentations that are friendly to colorblind people", in a fixed role each: beats and
//! the signal blue (0,114,178), ectopic `V` vermillion (213,94,0), `A` bluish green (0,158,115),
//! `Q` reddish purple (204,121,167), the irregular-rhythm screen orange (230,159,0), reference
//! intervals sky blue (86,180,233), quality flags grey. Continuous values (time, RR) run from
//! blue to yellow (240,228,66), an axis that stays ordered under red–green colour-vision
//! deficiencies and in greyscale.
//!
//! Everything here is display only: values that are not finite are skipped, long series are
//! thinned (min/max per pixel column for lines, a regular stride for point clouds), and a figure
//! that has nothing to show says why instead of failing.

mod beats;
pub(crate) mod colouring;
pub(crate) mod dimension_suite;
mod embedding;
mod kmeans_dimension;
mod recurrence;
mod rhythm;
mod rr;
pub(crate) mod style;
mod trace;
mod trajectory;
pub(crate) mod view;

pub use colouring::ColourBy;
#[cfg(test)]
pub(crate) use style::minmax_thin;
pub(crate) use style::{ensure_font, FONT, SIZE};
pub(crate) use view::View;

use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use plotters::prelude::*;
use std::path::Path;
use style::{Area, Ctx, DrawResult, FOOT_PX, GREY, NOTICE_PX};

/// The figures of a report, in the order they appear.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Figure {
    /// 1. The conditioned lead over a time range with beats, quality flags and rhythm episodes.
    Trace,
    /// 2. Overlay of beat windows with the median template per beat class.
    Beats,
    /// 3. Diffusion coordinates in three 2-D projections, coloured by a chosen value.
    Embedding,
    /// 4. Successive beats joined in diffusion coordinates over a time range.
    Trajectory,
    /// 5. k-means quantization scaling and local dimension against scale.
    Dimension,
    /// 6. Recurrence plot of one window and the recurrence-measure timeline.
    Recurrence,
    /// 7. RR tachogram with the irregular-rhythm screen, and the Poincaré plot.
    Rr,
    /// 8. The rhythm over the whole record: windowed indices, episodes and the verdict.
    Rhythm,
}

impl Figure {
    /// All figures, in report order.
    pub const ALL: [Figure; 8] = [
        Figure::Trace,
        Figure::Beats,
        Figure::Embedding,
        Figure::Trajectory,
        Figure::Dimension,
        Figure::Recurrence,
        Figure::Rr,
        Figure::Rhythm,
    ];

    /// File name without extension (also the name used by `--figures`).
    pub fn file_stem(self) -> &'static str {
        match self {
            Figure::Trace => "trace",
            Figure::Beats => "beats",
            Figure::Embedding => "embedding",
            Figure::Trajectory => "trajectory",
            Figure::Dimension => "dimension",
            Figure::Recurrence => "recurrence",
            Figure::Rr => "rr",
            Figure::Rhythm => "rhythm",
        }
    }

    /// One-sentence caption for the HTML page.
    pub fn caption(self) -> &'static str {
        match self {
            Figure::Trace => "Conditioned lead over the chosen time range (default: the first 10 s) with detected beats by class, quality-flagged segments (grey), irregular-rhythm screen episodes (orange) and reference rhythm intervals (top strip).",
            Figure::Beats => "Beat windows aligned on the R peak (thin lines, at most 240 shown) and the median template of each beat class (bold; display only).",
            Figure::Embedding => "Diffusion coordinates ψ1–ψ2, ψ1–ψ3 and ψ2–ψ3 of every beat (at most 3000 per panel, regular stride), coloured as chosen.",
            Figure::Trajectory => "Successive beats joined in diffusion coordinates over the chosen time range (default: the first 60 s), and the coordinates against time.",
            Figure::Dimension => "Local dimension against scale for every estimator (k-means quantization scaling, TwoNN, MLE, correlation dimension, local PCA) with 95 % bootstrap intervals at the right; the shaded band is the noise-dominated regime. Without the estimator suite: k-means distortion against k (left) and its local dimension against scale (right).",
            Figure::Recurrence => "Left: recurrence plot of one window of the beat trajectory in diffusion coordinates. Right: recurrence rate, determinism and laminarity in sliding windows; the shaded band is the window on the left.",
            Figure::Rr => "Left: RR tachogram with irregular-rhythm research-screen episodes shaded (not a diagnosis). Right: Poincaré plot of successive RR intervals.",
            Figure::Rhythm => "The whole record: RR with the episodes found (orange) and the reference's irregular intervals (top strip); the screen's windowed nRMSSD (long and short windows) against its threshold; the coefficient of sample entropy per segment of consecutive intervals against the verdict's threshold, with the segments whose P waves match the record's template (green strip). The title gives the record's verdict (a research label, not a diagnosis).",
        }
    }

    /// Parse a comma-separated list of figure names (`trace,rr`), or `all`. Numbers 1–8 (the
    /// report order) are accepted as well.
    pub fn parse_list(list: &str) -> Result<Vec<Figure>> {
        let mut out: Vec<Figure> = Vec::new();
        for word in list.split(',').map(str::trim).filter(|w| !w.is_empty()) {
            let word = word.to_ascii_lowercase();
            if word == "all" {
                return Ok(Figure::ALL.to_vec());
            }
            let found = Figure::ALL
                .iter()
                .enumerate()
                .find(|(i, f)| f.file_stem() == word || word.parse::<usize>().ok() == Some(i + 1));
            match found {
                Some((_, &f)) if !out.contains(&f) => out.push(f),
                Some(_) => {}
                None => {
                    let names: Vec<&str> = Figure::ALL.iter().map(|f| f.file_stem()).collect();
                    return Err(Error::param(
                        "figures",
                        format!(
                            "unknown figure `{word}`; choose from {} or all",
                            names.join(", ")
                        ),
                    ));
                }
            }
        }
        if out.is_empty() {
            return Err(Error::param("figures", "empty list; give names or `all`"));
        }
        // Report order, whatever the order given.
        out.sort_by_key(|f| Figure::ALL.iter().position(|g| g == f));
        Ok(out)
    }
}

/// Draw `fig` as an SVG document.
#[cfg_attr(not(test), allow(dead_code))]
pub(crate) fn render_svg(fig: Figure, a: &Analysis) -> std::result::Result<String, String> {
    render_svg_view(fig, a, &View::default())
}

/// Draw `fig` as an SVG document with the display choices of `view`.
pub(crate) fn render_svg_view(
    fig: Figure,
    a: &Analysis,
    view: &View,
) -> std::result::Result<String, String> {
    ensure_font()?;
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
        draw(fig, a, view, &root)?;
        root.present().ctx()?;
    }
    Ok(s)
}

/// Draw `fig` as a PNG file at `path` (through a temporary sibling, then `fsync` and rename).
pub(crate) fn write_png(fig: Figure, a: &Analysis, view: &View, path: &Path) -> Result<()> {
    ensure_font().map_err(|m| Error::output(path, m))?;
    // The PNG encoder picks the format from the extension, so the temporary name ends in `.png`.
    let tmp = crate::report::temp_sibling(path, ".png")?;
    let drawn = (|| {
        let root = BitMapBackend::new(&tmp, SIZE).into_drawing_area();
        draw(fig, a, view, &root)?;
        root.present().ctx()
    })();
    if let Err(m) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::output(path, m));
    }
    crate::report::commit_temp(&tmp, path)
}

/// Background, notice strip, then the figure body.
fn draw<DB: DrawingBackend>(fig: Figure, a: &Analysis, view: &View, root: &Area<DB>) -> DrawResult {
    // With the estimator suite computed, the dimension figure shows every estimator.
    if let (Figure::Dimension, Some(s)) = (fig, a.dimension_suite.as_ref()) {
        return dimension_suite::draw_suite(s, root);
    }
    root.fill(&WHITE).ctx()?;
    let (body, foot) = root.split_vertically(SIZE.1 - FOOT_PX);
    foot.draw(&Text::new(
        crate::NOTICE_SHORT,
        (24, 8),
        (FONT, NOTICE_PX).into_font().color(&GREY),
    ))
    .ctx()?;
    match fig {
        Figure::Trace => trace::draw_trace(a, view, &body),
        Figure::Beats => beats::draw_beats(a, &body),
        Figure::Embedding => embedding::draw_embedding(a, view, &body),
        Figure::Trajectory => trajectory::draw_trajectory(a, view, &body),
        Figure::Dimension => kmeans_dimension::draw_dimension(a, &body),
        Figure::Recurrence => recurrence::draw_recurrence(a, view, &body),
        Figure::Rr => rr::draw_rr(a, &body),
        Figure::Rhythm => rhythm::draw_rhythm_timeline(a, &body),
    }
}
