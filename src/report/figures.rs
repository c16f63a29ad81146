//! Figures of an [`Analysis`], drawn with plotters into SVG (text) and PNG (1800 × 1000 px, which
//! is 6 × 3.3 inches at 300 dpi).
//!
//! Seven figures, in report order: 1 `trace` (conditioned lead of a chosen time range with
//! detected beats by class, quality flags, screen episodes and reference rhythm intervals),
//! 2 `beats` (aligned beat windows with the median template per beat class), 3 `embedding`
//! (diffusion coordinates ψ1–ψ2, ψ1–ψ3 and ψ2–ψ3, coloured by time, RR, beat class or rhythm
//! label), 4 `trajectory` (successive beats joined in diffusion coordinates over a chosen
//! interval), 5 `dimension` (k-means quantization scaling and local dimension against scale),
//! 6 `recurrence` (recurrence plot of one window of the embedded trajectory, Marwan et al. 2007,
//! and the recurrence-measure timeline), 7 `rr` (RR tachogram with the irregular-rhythm research
//! screen shaded, and the Poincaré plot of Brennan et al. 2001).
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

use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::fmt::Display;
use std::path::Path;
use std::sync::OnceLock;

/// Figure size in pixels (SVG user units and PNG pixels): 6 × 3.33 inches at 300 dpi.
pub(crate) const SIZE: (u32, u32) = (1800, 1000);
/// Height of the strip at the bottom that carries the notice.
const FOOT_PX: u32 = 48;
/// Font family name the embedded font is registered under.
pub(crate) const FONT: &str = "sans-serif";

pub(super) const TITLE_PX: u32 = 40;
pub(super) const DESC_PX: u32 = 34;
pub(super) const LABEL_PX: u32 = 28;
const NOTICE_PX: u32 = 24;
/// Width of the legend glyph area; glyphs are drawn within `x .. x + GLYPH_PX`.
const LEGEND_PX: i32 = 64;
pub(super) const GLYPH_PX: i32 = 44;

/// Okabe & Ito (2008) hues used by the figures.
pub(super) const OI_BLACK: RGBColor = RGBColor(0, 0, 0);
pub(super) const OI_ORANGE: RGBColor = RGBColor(230, 159, 0);
pub(super) const OI_SKY: RGBColor = RGBColor(86, 180, 233);
pub(super) const OI_GREEN: RGBColor = RGBColor(0, 158, 115);
pub(super) const OI_YELLOW: RGBColor = RGBColor(240, 228, 66);
pub(super) const OI_BLUE: RGBColor = RGBColor(0, 114, 178);
pub(super) const OI_VERMILLION: RGBColor = RGBColor(213, 94, 0);
pub(super) const OI_PURPLE: RGBColor = RGBColor(204, 121, 167);
pub(super) const GREY: RGBColor = RGBColor(90, 90, 90);

/// Trace length shown when no time range is chosen, seconds.
pub(crate) const TRACE_S: f64 = 10.0;
/// Trajectory interval shown when no time range is chosen, seconds.
pub(crate) const TRAJECTORY_S: f64 = 60.0;
/// Most beat windows overlaid (shared among the classes).
const MAX_OVERLAY: usize = 240;
/// Most points drawn in one scatter panel.
pub(super) const MAX_SCATTER: usize = 3000;
/// Columns of min/max thinning for line plots (two points per column).
pub(super) const LINE_BINS: usize = 1800;

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
}

impl Figure {
    /// All figures, in report order.
    pub const ALL: [Figure; 7] = [
        Figure::Trace,
        Figure::Beats,
        Figure::Embedding,
        Figure::Trajectory,
        Figure::Dimension,
        Figure::Recurrence,
        Figure::Rr,
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
        }
    }

    /// Parse a comma-separated list of figure names (`trace,rr`), or `all`. Numbers 1–7 (the
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

/// What colours the points of the embedding figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ColourBy {
    /// Time of the beat, seconds (continuous).
    #[default]
    Time,
    /// RR interval ending at the beat, seconds (continuous).
    Rr,
    /// Beat class label (`N`, `V`, `A`, `Q`).
    Class,
    /// Reference rhythm label where the record has one, else the irregular-rhythm screen flag.
    Rhythm,
}

impl ColourBy {
    /// Parse `time`, `rr`, `class` or `rhythm`.
    pub fn parse(s: &str) -> Result<ColourBy> {
        match s.trim().to_ascii_lowercase().as_str() {
            "time" => Ok(ColourBy::Time),
            "rr" => Ok(ColourBy::Rr),
            "class" => Ok(ColourBy::Class),
            "rhythm" => Ok(ColourBy::Rhythm),
            other => Err(Error::param(
                "colour-by",
                format!("`{other}`; choose time, rr, class or rhythm"),
            )),
        }
    }
}

/// Display choices shared by the figures: a time range (seconds from the record start) and the
/// colouring of the embedding.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct View {
    /// Start of the chosen time range, seconds; `None` = the record start.
    pub from_s: Option<f64>,
    /// End of the chosen time range, seconds; `None` = each figure's default length after the
    /// start.
    pub to_s: Option<f64>,
    /// Colouring of the embedding scatter.
    pub colour_by: ColourBy,
}

impl View {
    /// True when the user chose a start or an end.
    pub(super) fn chosen(&self) -> bool {
        self.from_s.is_some() || self.to_s.is_some()
    }

    /// The chosen range, the missing end `default_len_s` after the start, clipped to the record.
    pub(super) fn range_or(&self, a: &Analysis, default_len_s: f64) -> (f64, f64) {
        let dur = if a.duration_s.is_finite() && a.duration_s > 0.0 {
            a.duration_s
        } else {
            a.conditioned.len() as f64 / a.fs_hz.max(f64::MIN_POSITIVE)
        };
        let t0 = self.from_s.unwrap_or(0.0).max(0.0);
        let t1 = self.to_s.unwrap_or(t0 + default_len_s).min(dur);
        (t0, t1.max(t0))
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
pub(super) trait Ctx<T> {
    fn ctx(self) -> std::result::Result<T, String>;
}

impl<T, E: Display> Ctx<T> for std::result::Result<T, E> {
    fn ctx(self) -> std::result::Result<T, String> {
        self.map_err(|e| format!("drawing failed: {e}"))
    }
}

pub(super) type Area<DB> = DrawingArea<DB, Shift>;
pub(super) type DrawResult = std::result::Result<(), String>;

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
    let tmp = super::temp_sibling(path, ".png")?;
    let drawn = (|| {
        let root = BitMapBackend::new(&tmp, SIZE).into_drawing_area();
        draw(fig, a, view, &root)?;
        root.present().ctx()
    })();
    if let Err(m) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::output(path, m));
    }
    super::commit_temp(&tmp, path)
}

/// Background, notice strip, then the figure body.
fn draw<DB: DrawingBackend>(fig: Figure, a: &Analysis, view: &View, root: &Area<DB>) -> DrawResult {
    // With the estimator suite computed, the dimension figure shows every estimator.
    if let (Figure::Dimension, Some(s)) = (fig, a.dimension_suite.as_ref()) {
        return super::dimension_figure::draw_suite(s, root);
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
        Figure::Trace => draw_trace(a, view, &body),
        Figure::Beats => draw_beats(a, &body),
        Figure::Embedding => draw_embedding(a, view, &body),
        Figure::Trajectory => super::figures_more::draw_trajectory(a, view, &body),
        Figure::Dimension => draw_dimension(a, &body),
        Figure::Recurrence => super::figures_more::draw_recurrence(a, view, &body),
        Figure::Rr => super::figures_more::draw_rr(a, &body),
    }
}

/// Shade time bands `[s, e]` across the full height `y0..y1` of a chart, with one legend entry
/// (`label`); `fill` and `legend` are the alphas of the bands and of the legend swatch. Nothing
/// is drawn (and no legend entry made) when there is no band.
pub(super) fn shade_bands<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    bands: &[(f64, f64)],
    (y0, y1): (f64, f64),
    colour: RGBColor,
    (fill, legend): (f64, f64),
    label: &str,
) -> DrawResult {
    if bands.is_empty() {
        return Ok(());
    }
    chart
        .draw_series(
            bands
                .iter()
                .map(|&(s, e)| Rectangle::new([(s, y0), (e, y1)], colour.mix(fill).filled())),
        )
        .ctx()?
        .label(label)
        .legend(move |(x, y)| {
            Rectangle::new(
                [(x, y - 10), (x + GLYPH_PX, y + 10)],
                colour.mix(legend).filled(),
            )
        });
    Ok(())
}

/// A figure with only a title and a message in the middle.
pub(super) fn draw_message<DB: DrawingBackend>(
    area: &Area<DB>,
    title: &str,
    msg: &str,
) -> DrawResult {
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
pub(super) fn axis_range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
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
pub(super) fn stride_indices(n: usize, max: usize) -> impl Iterator<Item = usize> {
    let step = n.div_ceil(max.max(1)).max(1);
    (0..n).step_by(step)
}

pub(super) fn line_style(c: RGBColor, width: u32) -> ShapeStyle {
    ShapeStyle {
        color: c.to_rgba(),
        filled: false,
        stroke_width: width,
    }
}

pub(super) fn configure<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    x_desc: &str,
    y_desc: &str,
) -> DrawResult {
    let xr = chart.x_range();
    let yr = chart.y_range();
    let (xd, yd) = (
        tick_decimals(xr.end - xr.start),
        tick_decimals(yr.end - yr.start),
    );
    let fx = move |v: &f64| tick_label(*v, xd);
    let fy = move |v: &f64| tick_label(*v, yd);
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .axis_desc_style((FONT, DESC_PX))
        .label_style((FONT, LABEL_PX))
        .light_line_style(RGBColor(235, 235, 235))
        .x_labels(8)
        .y_labels(8)
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .draw()
        .ctx()
}

/// Decimals for tick labels of an axis spanning `span` (about 8 ticks).
fn tick_decimals(span: f64) -> usize {
    if !(span.is_finite() && span > 0.0) {
        return 2;
    }
    (1.0 - (span / 8.0).log10().floor()).clamp(0.0, 8.0) as usize
}

/// Tick label with `dec` decimals and no negative zero.
fn tick_label(v: f64, dec: usize) -> String {
    let s = format!("{v:.dec$}");
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        s.trim_start_matches('-').to_string()
    } else {
        s
    }
}

pub(super) fn draw_legend<'a, DB: DrawingBackend + 'a, CT: CoordTranslate>(
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
pub(super) fn scale_label(v: f64) -> String {
    let a = v.abs();
    if (0.01..1000.0).contains(&a) {
        format!("{v:.3}")
    } else {
        format!("{v:.2e}")
    }
}

/// Amplitude axis description from the lead's unit.
pub(super) fn amplitude_desc(a: &Analysis, what: &str) -> String {
    if a.raw.unit.trim().is_empty() {
        format!("{what} (unknown unit)")
    } else {
        format!("{what} ({})", a.raw.unit.trim())
    }
}

/// Beat classes drawn in their own colour, in legend order.
pub(super) const CLASSES: [char; 4] = ['N', 'V', 'A', 'Q'];

/// Colour of a beat class (Okabe–Ito; other labels grey).
pub(super) fn class_colour(c: char) -> RGBColor {
    match c {
        'N' => OI_BLUE,
        'V' => OI_VERMILLION,
        'A' => OI_GREEN,
        'Q' => OI_PURPLE,
        _ => GREY,
    }
}

/// Colours of categorical labels other than beat classes, in order of first appearance.
const CATEGORY_COLOURS: [RGBColor; 6] = [
    OI_BLUE,
    OI_ORANGE,
    OI_GREEN,
    OI_PURPLE,
    OI_SKY,
    OI_VERMILLION,
];

/// Time in seconds of detected beat `b`.
pub(super) fn beat_time(a: &Analysis, b: usize) -> Option<f64> {
    let s = *a.beat_samples.get(b)?;
    (a.fs_hz > 0.0).then(|| s as f64 / a.fs_hz)
}

/// Detected-beat index of every embedding row, when the links are complete.
pub(super) fn row_beats(a: &Analysis) -> Option<Vec<usize>> {
    let n = a.embedding.n;
    if a.features.beat_index.len() < n {
        return None;
    }
    let v: Vec<usize> = a.features.beat_index[..n].to_vec();
    v.iter().all(|&b| b < a.beat_samples.len()).then_some(v)
}

/// Time in seconds of every embedding row, when the links are complete.
pub(super) fn row_times(a: &Analysis) -> Option<Vec<f64>> {
    row_beats(a)?.into_iter().map(|b| beat_time(a, b)).collect()
}

/// Label of the reference rhythm interval holding time `t`, if any (intervals sorted by start).
pub(super) fn rhythm_at(sorted: &[&crate::record::RhythmInterval], t: f64) -> Option<String> {
    let k = sorted.partition_point(|r| r.start_s <= t);
    let r = sorted.get(k.checked_sub(1)?)?;
    (t < r.end_s).then(|| r.label.clone())
}

/// Shorten a user label for a legend.
pub(super) fn short_label(s: &str, max_chars: usize) -> String {
    if s.chars().count() <= max_chars {
        s.to_string()
    } else {
        let mut t: String = s.chars().take(max_chars.saturating_sub(1)).collect();
        t.push('…');
        t
    }
}

/// How the rows of the embedding are coloured.
pub(super) enum Colouring {
    /// A value per row on the blue → yellow scale, with the colour-bar title.
    Continuous(Vec<f64>, String),
    /// A category per row, with the category names and colours, and the legend heading.
    Categorical(Vec<usize>, Vec<String>, Vec<RGBColor>, String),
}

/// Colouring of the `a.embedding.n` rows by `by`.
pub(super) fn colouring(a: &Analysis, by: ColourBy) -> Colouring {
    let n = a.embedding.n;
    let beats = row_beats(a);
    let order = || {
        Colouring::Continuous(
            (0..n).map(|i| i as f64).collect(),
            "Beat order (row)".into(),
        )
    };
    let Some(beats) = beats else {
        return order();
    };
    match by {
        ColourBy::Time => match row_times(a) {
            Some(t) => Colouring::Continuous(t, "Time (s)".into()),
            None => order(),
        },
        ColourBy::Rr => Colouring::Continuous(
            beats
                .iter()
                .map(|&b| {
                    b.checked_sub(1)
                        .and_then(|k| a.rr_s.get(k))
                        .copied()
                        .unwrap_or(f64::NAN)
                })
                .collect(),
            "RR interval ending at the beat (s)".into(),
        ),
        ColourBy::Class => {
            let labels: Vec<char> = beats
                .iter()
                .map(|&b| a.beat_labels.get(b).copied().unwrap_or('?'))
                .collect();
            let mut names = Vec::new();
            let mut colours = Vec::new();
            let mut keys: Vec<Option<char>> = Vec::new();
            for c in CLASSES {
                if labels.contains(&c) {
                    keys.push(Some(c));
                    names.push(format!("class {c}"));
                    colours.push(class_colour(c));
                }
            }
            if labels.iter().any(|c| !CLASSES.contains(c)) {
                keys.push(None);
                names.push("other label".into());
                colours.push(GREY);
            }
            let cats = labels
                .iter()
                .map(|c| {
                    keys.iter()
                        .position(|k| *k == Some(*c))
                        .or_else(|| keys.iter().position(|k| k.is_none()))
                        .unwrap_or(0)
                })
                .collect();
            Colouring::Categorical(cats, names, colours, "Beat class".into())
        }
        ColourBy::Rhythm => {
            let heading = if a.reference.rhythms.is_empty() {
                "Rhythm screen"
            } else {
                "Reference rhythm"
            };
            let labels: Vec<String> = if a.reference.rhythms.is_empty() {
                beats
                    .iter()
                    .map(|&b| {
                        let irr = b
                            .checked_sub(1)
                            .and_then(|k| a.screen.irregular.get(k))
                            .copied()
                            .unwrap_or(false);
                        if irr {
                            "screen: irregular".to_string()
                        } else {
                            "screen: not irregular".to_string()
                        }
                    })
                    .collect()
            } else {
                let mut sorted: Vec<&crate::record::RhythmInterval> =
                    a.reference.rhythms.iter().collect();
                sorted.sort_by(|x, y| x.start_s.total_cmp(&y.start_s));
                beats
                    .iter()
                    .map(|&b| {
                        beat_time(a, b)
                            .and_then(|t| rhythm_at(&sorted, t))
                            .map_or("no reference label".to_string(), |l| short_label(&l, 20))
                    })
                    .collect()
            };
            let mut names: Vec<String> = Vec::new();
            for l in &labels {
                if !names.contains(l) && names.len() < CATEGORY_COLOURS.len() {
                    names.push(l.clone());
                }
            }
            let mut colours: Vec<RGBColor> = CATEGORY_COLOURS[..names.len()].to_vec();
            let overflow = labels.iter().any(|l| !names.contains(l));
            if overflow {
                names.push("other labels".into());
                colours.push(GREY);
            }
            let cats = labels
                .iter()
                .map(|l| names.iter().position(|x| x == l).unwrap_or(names.len() - 1))
                .collect();
            Colouring::Categorical(cats, names, colours, heading.into())
        }
    }
}

fn draw_trace<DB: DrawingBackend>(a: &Analysis, view: &View, area: &Area<DB>) -> DrawResult {
    let title = "Conditioned lead with detected beats";
    let fs = a.fs_hz;
    if !fs.is_finite() || fs <= 0.0 || a.conditioned.is_empty() {
        return draw_message(area, title, "no signal to show");
    }
    let (t0, t1) = view.range_or(a, TRACE_S);
    let len = a.conditioned.len();
    let i0 = ((t0 * fs).floor().max(0.0) as usize).min(len);
    let i1 = ((t1 * fs).ceil().max(0.0) as usize).min(len);
    if i1 < i0 + 2 {
        return draw_message(area, title, "no samples in the chosen time range");
    }
    let raw_pts: Vec<(f64, f64)> = a.conditioned[i0..i1]
        .iter()
        .enumerate()
        .map(|(k, &y)| ((i0 + k) as f64 / fs, y))
        .collect();
    let pts = minmax_thin(&raw_pts, LINE_BINS);
    let Some((y0, y1)) = axis_range(pts.iter().map(|p| p.1)) else {
        return draw_message(area, title, "no finite samples in the chosen time range");
    };
    let (x0, x1) = (i0 as f64 / fs, (i1 - 1) as f64 / fs);
    let span = y1 - y0;
    // Rows above the trace: reference beats, then the reference rhythm strip.
    let y_ref = y1 + 0.03 * span;
    let (strip0, strip1) = (y1 + 0.07 * span, y1 + 0.14 * span);
    let y_top = y1 + 0.16 * span;
    let mut chart = ChartBuilder::on(area)
        .caption(
            format!("{title}, {} to {} s", f1(x0), f1(x1)),
            (FONT, TITLE_PX),
        )
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(140)
        .build_cartesian_2d(x0..x1, y0..y_top)
        .ctx()?;
    configure(&mut chart, "Time (s)", &amplitude_desc(a, "Amplitude"))?;
    let clip = |s: f64, e: f64| (s.max(x0), e.min(x1));
    let flagged: Vec<(f64, f64)> = a
        .quality
        .iter()
        .filter(|q| !q.is_clean() && q.end_s > x0 && q.start_s < x1)
        .map(|q| clip(q.start_s, q.end_s))
        .collect();
    shade_bands(
        &mut chart,
        &flagged,
        (y0, y1),
        GREY,
        (0.18, 0.3),
        "quality flag (flat, clipped, noisy or non-finite)",
    )?;
    let episodes: Vec<(f64, f64)> = a
        .screen
        .episodes
        .iter()
        .filter(|e| e.end_s > x0 && e.start_s < x1)
        .map(|e| clip(e.start_s, e.end_s))
        .collect();
    shade_bands(
        &mut chart,
        &episodes,
        (y0, y1),
        OI_ORANGE,
        (0.22, 0.4),
        "irregular-rhythm screen episode (research)",
    )?;
    let rhythms: Vec<(f64, f64, String)> = a
        .reference
        .rhythms
        .iter()
        .filter(|r| r.end_s > x0 && r.start_s < x1)
        .map(|r| {
            let (s, e) = clip(r.start_s, r.end_s);
            (s, e, short_label(&r.label, 20))
        })
        .collect();
    if !rhythms.is_empty() {
        chart
            .draw_series(rhythms.iter().map(|(s, e, _)| {
                Rectangle::new([(*s, strip0), (*e, strip1)], OI_SKY.mix(0.35).filled())
            }))
            .ctx()?
            .label("reference rhythm interval")
            .legend(|(x, y)| {
                Rectangle::new(
                    [(x, y - 10), (x + GLYPH_PX, y + 10)],
                    OI_SKY.mix(0.5).filled(),
                )
            });
        chart
            .draw_series(rhythms.iter().map(|(s, e, _)| {
                Rectangle::new([(*s, strip0), (*e, strip1)], line_style(OI_SKY, 2))
            }))
            .ctx()?;
        let style = TextStyle::from((FONT, LABEL_PX).into_font())
            .color(&OI_BLACK)
            .pos(Pos::new(HPos::Left, VPos::Center));
        chart
            .draw_series(rhythms.iter().map(|(s, _, l)| {
                Text::new(
                    l.clone(),
                    (*s + 0.005 * (x1 - x0), 0.5 * (strip0 + strip1)),
                    style.clone(),
                )
            }))
            .ctx()?;
    }
    chart
        .draw_series(LineSeries::new(pts, line_style(OI_BLUE, 2)))
        .ctx()?
        .label("conditioned lead")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_BLUE, 3)));
    let detected: Vec<(f64, f64, char)> = a
        .beat_samples
        .iter()
        .enumerate()
        .filter(|(_, &s)| s >= i0 && s < i1)
        .filter_map(|(b, &s)| {
            let y = *a.conditioned.get(s)?;
            let c = a.beat_labels.get(b).copied().unwrap_or('?');
            y.is_finite().then_some((s as f64 / fs, y, c))
        })
        .collect();
    let mut classes: Vec<char> = CLASSES.to_vec();
    classes.push('?');
    for c in classes {
        let of_class: Vec<(f64, f64)> = detected
            .iter()
            .filter(|d| {
                if c == '?' {
                    !CLASSES.contains(&d.2)
                } else {
                    d.2 == c
                }
            })
            .map(|d| (d.0, d.1))
            .collect();
        if of_class.is_empty() {
            continue;
        }
        let col = class_colour(c);
        let name = if c == '?' {
            "detected beat (other label)".to_string()
        } else {
            format!("detected beat ({c})")
        };
        chart
            .draw_series(
                of_class
                    .iter()
                    .map(|&p| Circle::new(p, 9, line_style(col, 3))),
            )
            .ctx()?
            .label(name)
            .legend(move |(x, y)| Circle::new((x + GLYPH_PX / 2, y), 9, line_style(col, 3)));
    }
    let reference: Vec<(f64, f64)> = a
        .reference
        .beats
        .iter()
        .filter(|r| r.sample >= i0 && r.sample < i1)
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

/// A number with one decimal.
fn f1(x: f64) -> String {
    format!("{x:.1}")
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
    let value = |i: usize, j: usize| p.data.get(i * p.dim + j).copied().unwrap_or(f64::NAN);
    // Rows grouped by beat class (other labels together, drawn grey).
    let label_of = |i: usize| {
        a.features
            .beat_index
            .get(i)
            .and_then(|&b| a.beat_labels.get(b))
            .copied()
            .filter(|c| CLASSES.contains(c))
            .unwrap_or('?')
    };
    let mut groups: Vec<(char, Vec<usize>)> = Vec::new();
    for c in CLASSES.iter().copied().chain(std::iter::once('?')) {
        let rows: Vec<usize> = (0..p.n).filter(|&i| label_of(i) == c).collect();
        if !rows.is_empty() {
            groups.push((c, rows));
        }
    }
    let per_group = (MAX_OVERLAY / groups.len().max(1)).max(1);
    let shown: Vec<(char, Vec<usize>)> = groups
        .iter()
        .map(|(c, rows)| {
            (
                *c,
                stride_indices(rows.len(), per_group)
                    .filter_map(|k| rows.get(k).copied())
                    .collect(),
            )
        })
        .collect();
    let n_shown: usize = shown.iter().map(|g| g.1.len()).sum();
    let Some((x0, x1)) = axis_range(cols.iter().map(|c| c.1)) else {
        return draw_message(area, title, "not enough beats");
    };
    let Some((y0, y1)) = axis_range(
        shown
            .iter()
            .flat_map(|g| g.1.iter().copied())
            .flat_map(|i| cols.iter().map(move |&(j, _)| (i, j)))
            .map(|(i, j)| value(i, j)),
    ) else {
        return draw_message(area, title, "beat windows hold no finite values");
    };
    let mut chart = ChartBuilder::on(area)
        .caption(
            format!("Aligned beat windows ({n_shown} of {} shown)", p.n),
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
    for (c, rows) in &shown {
        let thin = ShapeStyle {
            color: class_colour(*c).mix(0.25),
            filled: false,
            stroke_width: 1,
        };
        for &i in rows {
            let pts: Vec<(f64, f64)> = cols
                .iter()
                .map(|&(j, x)| (x, value(i, j)))
                .filter(|q| q.1.is_finite())
                .collect();
            chart.draw_series(LineSeries::new(pts, thin)).ctx()?;
        }
    }
    // Median template per class, drawn last so it sits on top (display only).
    for (c, rows) in &groups {
        let template: Vec<(f64, f64)> = cols
            .iter()
            .map(|&(j, x)| (x, crate::stats::median(rows.iter().map(|&i| value(i, j)))))
            .filter(|(_, m)| m.is_finite())
            .collect();
        if template.is_empty() {
            continue;
        }
        let col = class_colour(*c);
        let name = if *c == '?' {
            "other labels".to_string()
        } else {
            format!("class {c}")
        };
        chart
            .draw_series(LineSeries::new(template, line_style(col, 6)))
            .ctx()?
            .label(format!("median template, {name} (n = {})", rows.len()))
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(col, 6))
            });
    }
    draw_legend(&mut chart, SeriesLabelPosition::UpperRight)
}

/// Colour of `f` in [0, 1] on the blue → yellow scale (Okabe–Ito endpoints, linear in sRGB).
pub(super) fn time_colour(f: f64) -> RGBColor {
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

/// A title line across the top of `area`; returns the area below it.
pub(super) fn with_title<DB: DrawingBackend>(
    area: &Area<DB>,
    title: &str,
) -> std::result::Result<Area<DB>, String> {
    let (top, rest) = area.split_vertically(70);
    let (w, _) = top.dim_in_pixel();
    let style = TextStyle::from((FONT, TITLE_PX).into_font())
        .color(&OI_BLACK)
        .pos(Pos::new(HPos::Center, VPos::Center));
    top.draw(&Text::new(title.to_string(), (w as i32 / 2, 40), style))
        .ctx()?;
    Ok(rest)
}

/// Colour bar (continuous) or legend (categorical) in `area`.
pub(super) fn draw_colour_key<DB: DrawingBackend>(
    area: &Area<DB>,
    colouring: &Colouring,
    range: (f64, f64),
) -> DrawResult {
    match colouring {
        Colouring::Continuous(_, desc) => {
            let (c0, c1) = range;
            let mut bar = ChartBuilder::on(area)
                .margin_top(40)
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
                .y_desc(desc.as_str())
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
        Colouring::Categorical(_, names, colours, heading) => {
            let style = TextStyle::from((FONT, LABEL_PX).into_font())
                .color(&OI_BLACK)
                .pos(Pos::new(HPos::Left, VPos::Center));
            area.draw(&Text::new(heading.clone(), (12, 36), style.clone()))
                .ctx()?;
            for (k, (name, col)) in names.iter().zip(colours).enumerate() {
                let y = 90 + 44 * k as i32;
                area.draw(&Circle::new((24, y), 10, col.filled())).ctx()?;
                area.draw(&Text::new(short_label(name, 20), (44, y), style.clone()))
                    .ctx()?;
            }
            Ok(())
        }
    }
}

fn draw_embedding<DB: DrawingBackend>(a: &Analysis, view: &View, area: &Area<DB>) -> DrawResult {
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
    let colouring = colouring(a, view.colour_by);
    let rows: Vec<usize> = stride_indices(e.n, MAX_SCATTER).collect();
    // Categorical colours: the commonest category first, so rare classes stay on top.
    let mut rows = rows;
    if let Colouring::Categorical(cats, names, ..) = &colouring {
        let mut count = vec![0usize; names.len()];
        for &c in cats {
            if let Some(x) = count.get_mut(c) {
                *x += 1;
            }
        }
        rows.sort_by_key(|&i| {
            std::cmp::Reverse(
                cats.get(i)
                    .and_then(|&c| count.get(c))
                    .copied()
                    .unwrap_or(0),
            )
        });
    }
    let crange = match &colouring {
        Colouring::Continuous(v, _) => {
            axis_range(rows.iter().filter_map(|&i| v.get(i).copied())).unwrap_or((0.0, 1.0))
        }
        Colouring::Categorical(..) => (0.0, 1.0),
    };
    let colour_of = |i: usize| -> RGBColor {
        match &colouring {
            Colouring::Continuous(v, _) => {
                let x = v.get(i).copied().unwrap_or(f64::NAN);
                if x.is_finite() {
                    time_colour((x - crange.0) / (crange.1 - crange.0))
                } else {
                    GREY
                }
            }
            Colouring::Categorical(cats, _, colours, _) => cats
                .get(i)
                .and_then(|&c| colours.get(c))
                .copied()
                .unwrap_or(GREY),
        }
    };
    let pairs: Vec<(usize, usize)> = if k >= 3 {
        vec![(0, 1), (0, 2), (1, 2)]
    } else {
        vec![(0, 1)]
    };
    let body = with_title(
        area,
        &format!("{title} ({} of {} beats shown)", rows.len(), e.n),
    )?;
    let (w, _) = body.dim_in_pixel();
    let (panels, key) = body.split_horizontally(w.saturating_sub(320));
    let cells = panels.split_evenly((1, pairs.len()));
    let coord = |i: usize, c: usize| e.coords.get(i * k + c).copied().unwrap_or(f64::NAN);
    // Robust limits: the 0.5–99.5 % quantiles of each coordinate over all beats, widened by
    // 4 %; points beyond are drawn on the edge (as hollow marks) and counted in the caption, so
    // one outlying beat cannot squeeze the rest into a corner.
    let robust = |c: usize| -> Option<(f64, f64)> {
        let mut v: Vec<f64> = (0..e.n)
            .map(|i| coord(i, c))
            .filter(|v| v.is_finite())
            .collect();
        if v.is_empty() {
            return None;
        }
        v.sort_by(f64::total_cmp);
        let at = |q: f64| v[((q * (v.len() - 1) as f64).round() as usize).min(v.len() - 1)];
        let (lo, hi) = (at(0.005), at(0.995));
        let pad = if hi > lo { 0.04 * (hi - lo) } else { 0.5 };
        Some((lo - pad, hi + pad))
    };
    for (cell, &(cx, cy)) in cells.iter().zip(&pairs) {
        let (Some((x0, x1)), Some((y0, y1))) = (robust(cx), robust(cy)) else {
            draw_message(cell, "", "no finite coordinates")?;
            continue;
        };
        let inside = |x: f64, y: f64| (x0..=x1).contains(&x) && (y0..=y1).contains(&y);
        let outside = (0..e.n)
            .filter(|&i| {
                let (x, y) = (coord(i, cx), coord(i, cy));
                x.is_finite() && y.is_finite() && !inside(x, y)
            })
            .count();
        let pts: Vec<(f64, f64, RGBColor, bool)> = rows
            .iter()
            .map(|&i| (coord(i, cx), coord(i, cy), colour_of(i)))
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .map(|(x, y, c)| (x.clamp(x0, x1), y.clamp(y0, y1), c, inside(x, y)))
            .collect();
        let caption = if outside > 0 {
            format!(
                "ψ{}–ψ{} ({outside} beat{} beyond 0.5–99.5 % drawn at the edge)",
                cx + 1,
                cy + 1,
                if outside == 1 { "" } else { "s" }
            )
        } else {
            format!("ψ{}–ψ{}", cx + 1, cy + 1)
        };
        let mut chart = ChartBuilder::on(cell)
            .caption(caption, (FONT, DESC_PX - 8))
            .margin(16)
            .x_label_area_size(80)
            .y_label_area_size(if pairs.len() > 1 { 120 } else { 160 })
            .build_cartesian_2d(x0..x1, y0..y1)
            .ctx()?;
        chart
            .configure_mesh()
            .x_desc(format!("ψ{} (dimensionless)", cx + 1))
            .y_desc(format!("ψ{} (dimensionless)", cy + 1))
            .axis_desc_style((FONT, DESC_PX))
            .label_style((FONT, LABEL_PX - 4))
            .light_line_style(RGBColor(235, 235, 235))
            .x_labels(4)
            .y_labels(6)
            .x_label_formatter(&|v| format!("{v:.2}"))
            .y_label_formatter(&|v| format!("{v:.2}"))
            .draw()
            .ctx()?;
        chart
            .draw_series(pts.iter().map(|&(x, y, c, inside)| {
                if inside {
                    Circle::new((x, y), 4, c.mix(0.85).filled())
                } else {
                    Circle::new((x, y), 6, c.stroke_width(2))
                }
            }))
            .ctx()?;
    }
    draw_colour_key(&key, &colouring, crange)
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
