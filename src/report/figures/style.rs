//! The house style of the figures: size, font, the Okabe & Ito (2008) palette with a fixed role
//! per hue, axes, ticks, legends, colour keys and the display helpers every figure shares.
//! Display only: nothing here computes a result.

use crate::pipeline::Analysis;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::fmt::Display;
use std::sync::OnceLock;

/// Figure size in pixels (SVG user units and PNG pixels): 6 × 3.33 inches at 300 dpi.
pub(crate) const SIZE: (u32, u32) = (1800, 1000);

/// Height of the strip at the bottom that carries the notice.
pub(crate) const FOOT_PX: u32 = 48;

/// Font family name the embedded font is registered under.
pub(crate) const FONT: &str = "sans-serif";

pub(crate) const TITLE_PX: u32 = 40;

pub(crate) const DESC_PX: u32 = 34;

pub(crate) const LABEL_PX: u32 = 28;

pub(crate) const NOTICE_PX: u32 = 24;

/// Width of the legend glyph area; glyphs are drawn within `x .. x + GLYPH_PX`.
pub(crate) const LEGEND_PX: i32 = 64;

pub(crate) const GLYPH_PX: i32 = 44;

/// Okabe & Ito (2008) hues used by the figures.
pub(crate) const OI_BLACK: RGBColor = RGBColor(0, 0, 0);

pub(crate) const OI_ORANGE: RGBColor = RGBColor(230, 159, 0);

pub(crate) const OI_SKY: RGBColor = RGBColor(86, 180, 233);

pub(crate) const OI_GREEN: RGBColor = RGBColor(0, 158, 115);

pub(crate) const OI_YELLOW: RGBColor = RGBColor(240, 228, 66);

pub(crate) const OI_BLUE: RGBColor = RGBColor(0, 114, 178);

pub(crate) const OI_VERMILLION: RGBColor = RGBColor(213, 94, 0);

pub(crate) const OI_PURPLE: RGBColor = RGBColor(204, 121, 167);

pub(crate) const GREY: RGBColor = RGBColor(90, 90, 90);

/// Trace length shown when no time range is chosen, seconds.
pub(crate) const TRACE_S: f64 = 10.0;

/// Trajectory interval shown when no time range is chosen, seconds.
pub(crate) const TRAJECTORY_S: f64 = 60.0;

/// Most points drawn in one scatter panel.
pub(crate) const MAX_SCATTER: usize = 3000;

/// Columns of min/max thinning for line plots (two points per column).
pub(crate) const LINE_BINS: usize = 1800;

/// Register the embedded font once; plotters looks fonts up by family name.
pub(crate) fn ensure_font() -> std::result::Result<(), String> {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    let ok = *REGISTERED.get_or_init(|| {
        plotters::style::register_font(
            FONT,
            FontStyle::Normal,
            include_bytes!("../../../assets/fonts/DejaVuSans.ttf"),
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
pub(crate) trait Ctx<T> {
    fn ctx(self) -> std::result::Result<T, String>;
}

impl<T, E: Display> Ctx<T> for std::result::Result<T, E> {
    fn ctx(self) -> std::result::Result<T, String> {
        self.map_err(|e| format!("drawing failed: {e}"))
    }
}

pub(crate) type Area<DB> = DrawingArea<DB, Shift>;

pub(crate) type DrawResult = std::result::Result<(), String>;

/// Shade time bands `[s, e]` across the full height `y0..y1` of a chart, with one legend entry
/// (`label`); `fill` and `legend` are the alphas of the bands and of the legend swatch. Nothing
/// is drawn (and no legend entry made) when there is no band.
pub(crate) fn shade_bands<DB: DrawingBackend>(
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

/// The reference's irregular-rhythm intervals `[s, e]` as a strip along the top of a chart
/// (`height` of the span `y0..y1`), with one legend entry; nothing when there are none.
pub(crate) fn reference_strip<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    intervals: &[(f64, f64)],
    (y0, y1): (f64, f64),
    height: f64,
) -> DrawResult {
    if intervals.is_empty() {
        return Ok(());
    }
    let band = (y1 - height * (y1 - y0), y1);
    chart
        .draw_series(
            intervals
                .iter()
                .map(|&(s, e)| Rectangle::new([(s, band.0), (e, band.1)], OI_SKY.filled())),
        )
        .ctx()?
        .label("reference irregular rhythm")
        .legend(|(x, y)| Rectangle::new([(x, y - 6), (x + GLYPH_PX, y + 6)], OI_SKY.filled()));
    Ok(())
}

/// A figure with only a title and a message in the middle.
pub(crate) fn draw_message<DB: DrawingBackend>(
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
pub(crate) fn axis_range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
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
pub(crate) fn stride_indices(n: usize, max: usize) -> impl Iterator<Item = usize> {
    let step = n.div_ceil(max.max(1)).max(1);
    (0..n).step_by(step)
}

pub(crate) fn line_style(c: RGBColor, width: u32) -> ShapeStyle {
    ShapeStyle {
        color: c.to_rgba(),
        filled: false,
        stroke_width: width,
    }
}

pub(crate) fn configure<DB: DrawingBackend>(
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
pub(crate) fn tick_decimals(span: f64) -> usize {
    if !(span.is_finite() && span > 0.0) {
        return 2;
    }
    (1.0 - (span / 8.0).log10().floor()).clamp(0.0, 8.0) as usize
}

/// Tick label with `dec` decimals and no negative zero.
pub(crate) fn tick_label(v: f64, dec: usize) -> String {
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

pub(crate) fn draw_legend<'a, DB: DrawingBackend + 'a, CT: CoordTranslate>(
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
pub(crate) fn scale_label(v: f64) -> String {
    let a = v.abs();
    if (0.01..1000.0).contains(&a) {
        format!("{v:.3}")
    } else {
        format!("{v:.2e}")
    }
}

/// Amplitude axis description from the lead's unit.
pub(crate) fn amplitude_desc(a: &Analysis, what: &str) -> String {
    if a.raw.unit.trim().is_empty() {
        format!("{what} (unknown unit)")
    } else {
        format!("{what} ({})", a.raw.unit.trim())
    }
}

/// Beat classes drawn in their own colour, in legend order.
pub(crate) const CLASSES: [char; 4] = ['N', 'V', 'A', 'Q'];

/// Colour of a beat class (Okabe–Ito; other labels grey).
pub(crate) fn class_colour(c: char) -> RGBColor {
    match c {
        'N' => OI_BLUE,
        'V' => OI_VERMILLION,
        'A' => OI_GREEN,
        'Q' => OI_PURPLE,
        _ => GREY,
    }
}

/// Colours of categorical labels other than beat classes, in order of first appearance.
pub(crate) const CATEGORY_COLOURS: [RGBColor; 6] = [
    OI_BLUE,
    OI_ORANGE,
    OI_GREEN,
    OI_PURPLE,
    OI_SKY,
    OI_VERMILLION,
];

/// Colour of `f` in [0, 1] on the blue → yellow scale (Okabe–Ito endpoints, linear in sRGB).
pub(crate) fn time_colour(f: f64) -> RGBColor {
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
pub(crate) fn with_title<DB: DrawingBackend>(
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
