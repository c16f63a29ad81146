//! Figure 1, `trace`: the conditioned lead over a time range with detected beats by class,
//! quality flags, screen episodes and reference rhythm intervals.

use super::colouring::short_label;
use super::style::{
    amplitude_desc, axis_range, class_colour, configure, draw_legend, draw_message, line_style,
    minmax_thin, shade_bands, Area, Ctx, DrawResult, CLASSES, FONT, GLYPH_PX, GREY, LABEL_PX,
    LINE_BINS, OI_BLACK, OI_BLUE, OI_ORANGE, OI_SKY, TITLE_PX, TRACE_S,
};
use super::view::View;
use crate::pipeline::Analysis;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

pub(crate) fn draw_trace<DB: DrawingBackend>(
    a: &Analysis,
    view: &View,
    area: &Area<DB>,
) -> DrawResult {
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
pub(crate) fn f1(x: f64) -> String {
    format!("{x:.1}")
}
