//! Figures of an [`Analysis`], drawn with plotters into SVG (text) and PNG (1800 × 1000 px).
//!
//! Text in PNGs is rendered with the DejaVu Sans font compiled into the binary
//! (`assets/fonts/DejaVuSans.ttf`, Bitstream Vera licence), so figures need no system font.
//! Colours are the hues of Okabe & Ito (2008), "Color Universal Design — how to make figures and
//! presentations that are friendly to colorblind people"; the time colour scale runs between two
//! of them (blue → yellow), an axis that stays ordered under red–green colour-vision deficiencies.
//!
//! Everything here is display only: values that are not finite are skipped, long series are
//! thinned (min/max per pixel column for lines, a regular stride for point clouds), and a figure
//! that has nothing to show says why instead of failing.

use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::fmt::Display;
use std::path::Path;
use std::sync::OnceLock;

/// Figure size in pixels (SVG user units and PNG pixels).
pub(crate) const SIZE: (u32, u32) = (1800, 1000);
/// Height of the strip at the bottom that carries the notice.
const FOOT_PX: u32 = 48;
/// Font family name the embedded font is registered under.
pub(crate) const FONT: &str = "sans-serif";

const TITLE_PX: u32 = 40;
const DESC_PX: u32 = 34;
const LABEL_PX: u32 = 28;
const NOTICE_PX: u32 = 24;
/// Width of the legend glyph area; glyphs are drawn within `x .. x + GLYPH_PX`.
const LEGEND_PX: i32 = 64;
const GLYPH_PX: i32 = 44;

/// Okabe & Ito (2008) hues used by the figures.
const OI_BLACK: RGBColor = RGBColor(0, 0, 0);
const OI_ORANGE: RGBColor = RGBColor(230, 159, 0);
const OI_SKY: RGBColor = RGBColor(86, 180, 233);
const OI_GREEN: RGBColor = RGBColor(0, 158, 115);
const OI_YELLOW: RGBColor = RGBColor(240, 228, 66);
const OI_BLUE: RGBColor = RGBColor(0, 114, 178);
const OI_VERMILLION: RGBColor = RGBColor(213, 94, 0);
const GREY: RGBColor = RGBColor(90, 90, 90);

/// Longest trace shown, seconds.
const TRACE_S: f64 = 10.0;
/// Most beat windows overlaid.
const MAX_OVERLAY: usize = 200;
/// Most points drawn in a scatter plot.
const MAX_SCATTER: usize = 5000;
/// Columns of min/max thinning for line plots (two points per column).
const LINE_BINS: usize = 1800;

/// The figures of a report, in the order they appear.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Figure {
    /// First seconds of the conditioned lead with beats marked.
    Trace,
    /// Overlay of beat windows with the median template.
    Beats,
    /// Diffusion coordinates 1 vs 2 coloured by time.
    Embedding,
    /// k-means quantization scaling and local dimension against scale.
    Dimension,
    /// RR tachogram.
    Rr,
}

impl Figure {
    /// All figures, in report order.
    pub(crate) const ALL: [Figure; 5] = [
        Figure::Trace,
        Figure::Beats,
        Figure::Embedding,
        Figure::Dimension,
        Figure::Rr,
    ];

    /// File name without extension.
    pub(crate) fn file_stem(self) -> &'static str {
        match self {
            Figure::Trace => "trace",
            Figure::Beats => "beats",
            Figure::Embedding => "embedding",
            Figure::Dimension => "dimension",
            Figure::Rr => "rr",
        }
    }

    /// One-sentence caption for the HTML page.
    pub(crate) fn caption(self) -> &'static str {
        match self {
            Figure::Trace => "Conditioned lead, first 10 s, with detected beats (circles) and reference beats (triangles) where available.",
            Figure::Beats => "Up to 200 beat windows aligned on the R peak (thin lines) and their median (bold; display only).",
            Figure::Embedding => "Diffusion coordinates 1 and 2 of every beat (up to 5000 shown), coloured by time.",
            Figure::Dimension => "Left: k-means quantization distortion against k with the fitted line. Right: local dimension against scale; the shaded band is the noise-dominated regime.",
            Figure::Rr => "RR tachogram: each RR interval at the time of the beat that ends it.",
        }
    }
}

/// Register the embedded font once; plotters looks fonts up by family name.
pub(crate) fn ensure_font() -> std::result::Result<(), String> {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    let ok = *REGISTERED.get_or_init(|| {
        plotters::style::register_font(
            FONT,
            FontStyle::Normal,
            include_bytes!("../../assets/fonts/DejaVuSans.ttf"),
        )
        .is_ok()
    });
    if ok {
        Ok(())
    } else {
        Err("embedded font could not be loaded".to_string())
    }
}

/// Map any displayable error to a message.
trait Ctx<T> {
    fn ctx(self) -> std::result::Result<T, String>;
}

impl<T, E: Display> Ctx<T> for std::result::Result<T, E> {
    fn ctx(self) -> std::result::Result<T, String> {
        self.map_err(|e| format!("drawing failed: {e}"))
    }
}

type Area<DB> = DrawingArea<DB, Shift>;
type DrawResult = std::result::Result<(), String>;

/// Draw `fig` as an SVG document.
pub(crate) fn render_svg(fig: Figure, a: &Analysis) -> std::result::Result<String, String> {
    ensure_font()?;
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
        draw(fig, a, &root)?;
        root.present().ctx()?;
    }
    Ok(s)
}

/// Draw `fig` as a PNG file at `path` (through a temporary sibling, then `fsync` and rename).
pub(crate) fn write_png(fig: Figure, a: &Analysis, path: &Path) -> Result<()> {
    ensure_font().map_err(|m| Error::output(path, m))?;
    // The PNG encoder picks the format from the extension, so the temporary name ends in `.png`.
    let tmp = super::temp_sibling(path, ".png")?;
    let drawn = (|| {
        let root = BitMapBackend::new(&tmp, SIZE).into_drawing_area();
        draw(fig, a, &root)?;
        root.present().ctx()
    })();
    if let Err(m) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::output(path, m));
    }
    super::commit_temp(&tmp, path)
}

/// Background, notice strip, then the figure body.
fn draw<DB: DrawingBackend>(fig: Figure, a: &Analysis, root: &Area<DB>) -> DrawResult {
    root.fill(&WHITE).ctx()?;
    let (body, foot) = root.split_vertically(SIZE.1 - FOOT_PX);
    foot.draw(&Text::new(
        crate::NOTICE_SHORT,
        (24, 8),
        (FONT, NOTICE_PX).into_font().color(&GREY),
    ))
    .ctx()?;
    match fig {
        Figure::Trace => draw_trace(a, &body),
        Figure::Beats => draw_beats(a, &body),
        Figure::Embedding => draw_embedding(a, &body),
        Figure::Dimension => draw_dimension(a, &body),
        Figure::Rr => draw_rr(a, &body),
    }
}

/// A figure with only a title and a message in the middle.
fn draw_message<DB: DrawingBackend>(area: &Area<DB>, title: &str, msg: &str) -> DrawResult {
    area.draw(&Text::new(
        title.to_string(),
        (40, 30),
        (FONT, TITLE_PX).into_font().color(&OI_BLACK),
    ))
    .ctx()?;
    let (w, h) = area.dim_in_pixel();
    let style = TextStyle::from((FONT, 48).into_font())
        .color(&OI_VERMILLION)
        .pos(Pos::new(HPos::Center, VPos::Center));
    area.draw(&Text::new(
        msg.to_string(),
        (w as i32 / 2, h as i32 / 2),
        style,
    ))
    .ctx()
}

/// Finite (min, max) of values, widened when empty of spread and padded by 5 %.
fn axis_range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    let (lo, hi) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        });
    if !lo.is_finite() || !hi.is_finite() {
        return None;
    }
    let span = hi - lo;
    if span.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) || !span.is_finite() {
        let w = if lo.abs() > 0.0 { lo.abs() * 0.1 } else { 1.0 };
        return Some((lo - w, hi + w));
    }
    Some((lo - 0.05 * span, hi + 0.05 * span))
}

/// Thin a line series to at most two points (min and max, in order) per bin of `bins`, keeping
/// extremes visible; non-finite points split nothing and are dropped.
pub(crate) fn minmax_thin(pts: &[(f64, f64)], bins: usize) -> Vec<(f64, f64)> {
    let pts: Vec<(f64, f64)> = pts
        .iter()
        .copied()
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .collect();
    if pts.len() <= 2 * bins.max(1) {
        return pts;
    }
    let per = pts.len().div_ceil(bins.max(1));
    let mut out = Vec::with_capacity(2 * bins);
    for chunk in pts.chunks(per) {
        let mut imin = 0;
        let mut imax = 0;
        for (i, p) in chunk.iter().enumerate() {
            if p.1 < chunk[imin].1 {
                imin = i;
            }
            if p.1 > chunk[imax].1 {
                imax = i;
            }
        }
        let (first, second) = if imin <= imax {
            (imin, imax)
        } else {
            (imax, imin)
        };
        out.push(chunk[first]);
        if second != first {
            out.push(chunk[second]);
        }
    }
    out
}

/// Indices `0..n` thinned to at most `max` with a regular stride.
fn stride_indices(n: usize, max: usize) -> impl Iterator<Item = usize> {
    let step = n.div_ceil(max.max(1)).max(1);
    (0..n).step_by(step)
}

fn line_style(c: RGBColor, width: u32) -> ShapeStyle {
    ShapeStyle {
        color: c.to_rgba(),
        filled: false,
        stroke_width: width,
    }
}

fn configure<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    x_desc: &str,
    y_desc: &str,
) -> DrawResult {
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .axis_desc_style((FONT, DESC_PX))
        .label_style((FONT, LABEL_PX))
        .light_line_style(RGBColor(235, 235, 235))
        .x_labels(8)
        .y_labels(8)
        .draw()
        .ctx()
}

fn draw_legend<'a, DB: DrawingBackend + 'a, CT: CoordTranslate>(
    chart: &mut ChartContext<'a, DB, CT>,
    pos: SeriesLabelPosition,
) -> DrawResult {
    chart
        .configure_series_labels()
        .position(pos)
        .background_style(WHITE.mix(0.85))
        .border_style(GREY)
        .label_font((FONT, LABEL_PX))
        .legend_area_size(LEGEND_PX)
        .margin(12)
        .draw()
        .ctx()
}

/// Tick label of a length scale: plain decimals in 0.01..1000, scientific otherwise.
fn scale_label(v: f64) -> String {
    let a = v.abs();
    if (0.01..1000.0).contains(&a) {
        format!("{v:.3}")
    } else {
        format!("{v:.2e}")
    }
}

/// Amplitude axis description from the lead's unit.
fn amplitude_desc(a: &Analysis, what: &str) -> String {
    if a.raw.unit.trim().is_empty() {
        format!("{what} (unknown unit)")
    } else {
        format!("{what} ({})", a.raw.unit.trim())
    }
}

fn draw_trace<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
    let title = "Conditioned lead with detected beats";
    let fs = a.fs_hz;
    if !fs.is_finite() || fs <= 0.0 || a.conditioned.is_empty() {
        return draw_message(area, title, "no signal to show");
    }
    let n_show = ((TRACE_S * fs).ceil() as usize).min(a.conditioned.len());
    let raw_pts: Vec<(f64, f64)> = a.conditioned[..n_show]
        .iter()
        .enumerate()
        .map(|(i, &y)| (i as f64 / fs, y))
        .collect();
    let pts = minmax_thin(&raw_pts, LINE_BINS);
    let Some((y0, y1)) = axis_range(pts.iter().map(|p| p.1)) else {
        return draw_message(
            area,
            title,
            "signal has no finite samples in the first 10 s",
        );
    };
    let t_end = n_show as f64 / fs;
    // Room above the trace for the reference row.
    let y_ref = y1 + 0.06 * (y1 - y0);
    let y_top = y1 + 0.12 * (y1 - y0);
    let mut chart = ChartBuilder::on(area)
        .caption(title, (FONT, TITLE_PX))
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(140)
        .build_cartesian_2d(0.0..t_end.max(1.0 / fs), y0..y_top)
        .ctx()?;
    configure(&mut chart, "Time (s)", &amplitude_desc(a, "Amplitude"))?;
    chart
        .draw_series(LineSeries::new(pts, line_style(OI_BLUE, 2)))
        .ctx()?
        .label("conditioned lead")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_BLUE, 3)));
    let detected: Vec<(f64, f64)> = a
        .beat_samples
        .iter()
        .filter(|&&s| s < n_show)
        .filter_map(|&s| {
            let y = *a.conditioned.get(s)?;
            y.is_finite().then_some((s as f64 / fs, y))
        })
        .collect();
    chart
        .draw_series(
            detected
                .iter()
                .map(|&p| Circle::new(p, 9, line_style(OI_VERMILLION, 3))),
        )
        .ctx()?
        .label("detected beat")
        .legend(|(x, y)| Circle::new((x + GLYPH_PX / 2, y), 9, line_style(OI_VERMILLION, 3)));
    let reference: Vec<(f64, f64)> = a
        .reference
        .beats
        .iter()
        .filter(|r| r.sample < n_show)
        .map(|r| (r.sample as f64 / fs, y_ref))
        .collect();
    if !reference.is_empty() {
        chart
            .draw_series(
                reference
                    .iter()
                    .map(|&p| TriangleMarker::new(p, 11, OI_ORANGE.filled())),
            )
            .ctx()?
            .label("reference beat")
            .legend(|(x, y)| TriangleMarker::new((x + GLYPH_PX / 2, y), 11, OI_ORANGE.filled()));
    }
    draw_legend(&mut chart, SeriesLabelPosition::LowerRight)
}

/// Offset in seconds encoded in a window column name such as `w-0.200s`.
fn window_offset_s(name: &str) -> Option<f64> {
    name.strip_prefix('w')?
        .strip_suffix('s')?
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

fn draw_beats<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
    let title = "Aligned beat windows";
    let p = &a.features.points;
    if p.n == 0 || p.dim == 0 || p.data.len() != p.n * p.dim {
        return draw_message(area, title, "not enough beats");
    }
    // Window columns and their offsets from the R peak.
    let cols: Vec<(usize, f64)> = a
        .features
        .names
        .iter()
        .enumerate()
        .filter(|(j, _)| *j < p.dim)
        .filter_map(|(j, name)| window_offset_s(name).map(|x| (j, x)))
        .collect();
    if cols.is_empty() {
        return draw_message(area, title, "no beat-window columns in the features");
    }
    let rows: Vec<usize> = stride_indices(p.n, MAX_OVERLAY).collect();
    let value = |i: usize, j: usize| p.data.get(i * p.dim + j).copied().unwrap_or(f64::NAN);
    let template: Vec<(f64, f64)> = cols
        .iter()
        .map(|&(j, x)| (x, crate::stats::median((0..p.n).map(|i| value(i, j)))))
        .filter(|(_, m)| m.is_finite())
        .collect();
    let Some((x0, x1)) = axis_range(cols.iter().map(|c| c.1)) else {
        return draw_message(area, title, "not enough beats");
    };
    let Some((y0, y1)) = axis_range(
        rows.iter()
            .flat_map(|&i| cols.iter().map(move |&(j, _)| (i, j)))
            .map(|(i, j)| value(i, j)),
    ) else {
        return draw_message(area, title, "beat windows hold no finite values");
    };
    let mut chart = ChartBuilder::on(area)
        .caption(
            format!("Aligned beat windows ({} of {} shown)", rows.len(), p.n),
            (FONT, TITLE_PX),
        )
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(140)
        .build_cartesian_2d(x0..x1, y0..y1)
        .ctx()?;
    configure(
        &mut chart,
        "Time from R peak (s)",
        &amplitude_desc(a, "Amplitude"),
    )?;
    let thin = ShapeStyle {
        color: OI_SKY.mix(0.35),
        filled: false,
        stroke_width: 1,
    };
    for (k, &i) in rows.iter().enumerate() {
        let pts: Vec<(f64, f64)> = cols
            .iter()
            .map(|&(j, x)| (x, value(i, j)))
            .filter(|q| q.1.is_finite())
            .collect();
        let series = chart.draw_series(LineSeries::new(pts, thin)).ctx()?;
        if k == 0 {
            series.label("beat window").legend(|(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_SKY, 3))
            });
        }
    }
    if !template.is_empty() {
        chart
            .draw_series(LineSeries::new(template, line_style(OI_BLACK, 5)))
            .ctx()?
            .label("median template")
            .legend(|(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_BLACK, 5))
            });
    }
    draw_legend(&mut chart, SeriesLabelPosition::UpperRight)
}

/// Colour of `f` in [0, 1] on the blue → yellow scale (Okabe–Ito endpoints, linear in sRGB).
fn time_colour(f: f64) -> RGBColor {
    let f = if f.is_finite() {
        f.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let mix = |a: u8, b: u8| (a as f64 + (b as f64 - a as f64) * f).round() as u8;
    RGBColor(
        mix(OI_BLUE.0, OI_YELLOW.0),
        mix(OI_BLUE.1, OI_YELLOW.1),
        mix(OI_BLUE.2, OI_YELLOW.2),
    )
}

fn draw_embedding<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
    let title = "Diffusion map of the beats";
    let e = &a.embedding;
    let k = e.components;
    if e.n < 2 || k < 2 || e.coords.len() != e.n * k {
        return draw_message(
            area,
            title,
            "not enough beats (or components) for an embedding",
        );
    }
    // Time of each embedded beat, when the links to the detection list are complete.
    let fs = a.fs_hz;
    let times: Option<Vec<f64>> = (0..e.n)
        .map(|i| {
            let b = *a.features.beat_index.get(i)?;
            let s = *a.beat_samples.get(b)?;
            (fs > 0.0).then_some(s as f64 / fs)
        })
        .collect();
    let (colour_values, colour_desc) = match times {
        Some(t) => (t, "Time (s)"),
        None => ((0..e.n).map(|i| i as f64).collect(), "Beat order (row)"),
    };
    let pts: Vec<(f64, f64, f64)> = stride_indices(e.n, MAX_SCATTER)
        .map(|i| (e.coords[i * k], e.coords[i * k + 1], colour_values[i]))
        .filter(|p| p.0.is_finite() && p.1.is_finite())
        .collect();
    let (Some((x0, x1)), Some((y0, y1))) = (
        axis_range(pts.iter().map(|p| p.0)),
        axis_range(pts.iter().map(|p| p.1)),
    ) else {
        return draw_message(area, title, "embedding holds no finite coordinates");
    };
    let (c0, c1) = axis_range(pts.iter().map(|p| p.2)).unwrap_or((0.0, 1.0));
    let (w, _) = area.dim_in_pixel();
    let (left, right) = area.split_horizontally(w.saturating_sub(300));
    let mut chart = ChartBuilder::on(&left)
        .caption(
            format!("{title} ({} of {} beats shown)", pts.len(), e.n),
            (FONT, TITLE_PX),
        )
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(160)
        .build_cartesian_2d(x0..x1, y0..y1)
        .ctx()?;
    configure(
        &mut chart,
        "Diffusion coordinate 1 (dimensionless)",
        "Diffusion coordinate 2 (dimensionless)",
    )?;
    chart
        .draw_series(pts.iter().map(|&(x, y, c)| {
            let f = (c - c0) / (c1 - c0);
            Circle::new((x, y), 5, time_colour(f).mix(0.85).filled())
        }))
        .ctx()?;
    // Colour bar.
    let mut bar = ChartBuilder::on(&right)
        .margin_top(90)
        .margin_bottom(24)
        .margin_right(24)
        .x_label_area_size(90)
        .y_label_area_size(170)
        .build_cartesian_2d(0.0..1.0, c0..c1)
        .ctx()?;
    bar.configure_mesh()
        .disable_x_mesh()
        .disable_y_mesh()
        .disable_x_axis()
        .y_desc(colour_desc)
        .axis_desc_style((FONT, DESC_PX))
        .label_style((FONT, LABEL_PX))
        .y_labels(6)
        .draw()
        .ctx()?;
    let steps = 100;
    bar.draw_series((0..steps).map(|s| {
        let lo = c0 + (c1 - c0) * s as f64 / steps as f64;
        let hi = c0 + (c1 - c0) * (s + 1) as f64 / steps as f64;
        Rectangle::new(
            [(0.0, lo), (1.0, hi)],
            time_colour((s as f64 + 0.5) / steps as f64).filled(),
        )
    }))
    .ctx()?;
    Ok(())
}

fn draw_dimension<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
    let title = "Dimension from k-means quantization scaling";
    let d = &a.dimension;
    let scaling: Vec<(f64, f64)> =
        d.ks.iter()
            .zip(&d.distortion)
            .filter(|(&k, &dist)| k > 0 && dist > 0.0 && dist.is_finite())
            .map(|(&k, &dist)| ((k as f64).ln(), dist.ln()))
            .collect();
    let curve: Vec<(f64, f64)> = d
        .curve
        .iter()
        .filter(|p| p.scale > 0.0 && p.scale.is_finite() && p.d.is_finite())
        .map(|p| (p.scale, p.d))
        .collect();
    if scaling.is_empty() && curve.is_empty() {
        return draw_message(area, title, "not enough beats for a dimension estimate");
    }
    let (w, _) = area.dim_in_pixel();
    let (left, right) = area.split_horizontally(w / 2);

    // Left panel: ln D(k) against ln k with the fitted line.
    match (
        axis_range(scaling.iter().map(|p| p.0)),
        axis_range(scaling.iter().map(|p| p.1)),
    ) {
        (Some((x0, x1)), Some((y0, y1))) => {
            let mut chart = ChartBuilder::on(&left)
                .caption("Distortion against k", (FONT, TITLE_PX))
                .margin(24)
                .x_label_area_size(90)
                .y_label_area_size(130)
                .build_cartesian_2d(x0..x1, y0..y1)
                .ctx()?;
            configure(
                &mut chart,
                "ln k (k = number of centres)",
                "ln D(k) (D in squared feature units)",
            )?;
            chart
                .draw_series(scaling.iter().map(|&p| Circle::new(p, 8, OI_BLUE.filled())))
                .ctx()?
                .label("held-out distortion")
                .legend(|(x, y)| Circle::new((x + GLYPH_PX / 2, y), 8, OI_BLUE.filled()));
            if d.fit_slope.is_finite() && d.fit_intercept.is_finite() {
                let line = [x0, x1].map(|x| (x, d.fit_intercept + d.fit_slope * x));
                chart
                    .draw_series(LineSeries::new(line, line_style(OI_VERMILLION, 3)))
                    .ctx()?
                    .label(format!("fit, slope {:.3}", d.fit_slope))
                    .legend(|(x, y)| {
                        PathElement::new(
                            vec![(x, y), (x + GLYPH_PX, y)],
                            line_style(OI_VERMILLION, 3),
                        )
                    });
            }
            draw_legend(&mut chart, SeriesLabelPosition::UpperRight)?;
        }
        _ => draw_message(&left, "Distortion against k", "no distortion values")?,
    }

    // Right panel: local d against scale (log10 axis), noise regime shaded.
    let curve: Vec<(f64, f64)> = curve.iter().map(|&(s, dd)| (s.log10(), dd)).collect();
    let (Some((s0, s1)), Some((d0, d1))) = (
        axis_range(curve.iter().map(|p| p.0)),
        axis_range(
            curve
                .iter()
                .map(|p| p.1)
                .chain(std::iter::once(d.d).filter(|x| x.is_finite())),
        ),
    ) else {
        return draw_message(&right, "Local dimension against scale", "no curve values");
    };
    let d0 = d0.min(0.0);
    let mut chart = ChartBuilder::on(&right)
        .caption("Local dimension against scale", (FONT, TITLE_PX))
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(110)
        .build_cartesian_2d(s0..s1, d0..d1)
        .ctx()?;
    chart
        .configure_mesh()
        .x_desc("Scale (feature units, log axis)")
        .y_desc("Local dimension d")
        .axis_desc_style((FONT, DESC_PX))
        .label_style((FONT, LABEL_PX))
        .light_line_style(RGBColor(235, 235, 235))
        .x_labels(6)
        .y_labels(8)
        .x_label_formatter(&|v| scale_label(10f64.powf(*v)))
        .draw()
        .ctx()?;
    if let Some(ns) = d
        .noise_scale
        .filter(|x| x.is_finite() && *x > 0.0)
        .map(f64::log10)
        .filter(|&x| x > s0)
    {
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(s0, d0), (ns.min(s1), d1)],
                OI_ORANGE.mix(0.2).filled(),
            )))
            .ctx()?
            .label("noise-dominated scales")
            .legend(|(x, y)| {
                Rectangle::new(
                    [(x, y - 10), (x + GLYPH_PX, y + 10)],
                    OI_ORANGE.mix(0.4).filled(),
                )
            });
    }
    if d.d.is_finite() {
        chart
            .draw_series(LineSeries::new([(s0, d.d), (s1, d.d)], line_style(GREY, 2)))
            .ctx()?
            .label(format!("plateau d = {:.2}", d.d))
            .legend(|(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(GREY, 2))
            });
    }
    chart
        .draw_series(LineSeries::new(curve.clone(), line_style(OI_GREEN, 3)))
        .ctx()?
        .label("local dimension")
        .legend(|(x, y)| {
            PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_GREEN, 3))
        });
    chart
        .draw_series(curve.iter().map(|&p| Circle::new(p, 7, OI_GREEN.filled())))
        .ctx()?;
    draw_legend(&mut chart, SeriesLabelPosition::UpperRight)
}

fn draw_rr<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
    let title = "RR tachogram";
    let fs = a.fs_hz;
    // Time of the beat that ends each interval; fall back to the running sum of RR.
    let pts: Vec<(f64, f64)> = if a.beat_samples.len() == a.rr_s.len() + 1 && fs > 0.0 {
        a.rr_s
            .iter()
            .zip(&a.beat_samples[1..])
            .map(|(&rr, &s)| (s as f64 / fs, rr))
            .collect()
    } else {
        let mut t = 0.0;
        a.rr_s
            .iter()
            .map(|&rr| {
                if rr.is_finite() {
                    t += rr;
                }
                (t, rr)
            })
            .collect()
    };
    let pts = minmax_thin(&pts, LINE_BINS);
    if pts.len() < 2 {
        return draw_message(area, title, "not enough beats");
    }
    let (Some((x0, x1)), Some((y0, y1))) = (
        axis_range(pts.iter().map(|p| p.0)),
        axis_range(pts.iter().map(|p| p.1)),
    ) else {
        return draw_message(area, title, "not enough beats");
    };
    let mut chart = ChartBuilder::on(area)
        .caption(title, (FONT, TITLE_PX))
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(130)
        .build_cartesian_2d(x0..x1, y0..y1)
        .ctx()?;
    configure(&mut chart, "Time (s)", "RR interval (s)")?;
    chart
        .draw_series(LineSeries::new(pts.clone(), line_style(OI_BLUE, 2)))
        .ctx()?
        .label("RR interval")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_BLUE, 3)));
    if pts.len() <= 600 {
        chart
            .draw_series(pts.iter().map(|&p| Circle::new(p, 5, OI_BLUE.filled())))
            .ctx()?;
    }
    draw_legend(&mut chart, SeriesLabelPosition::LowerRight)
}
