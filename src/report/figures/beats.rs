//! Figure 2, `beats`: aligned beat windows with the median template per beat class (display
//! only).

use super::style::{
    amplitude_desc, axis_range, class_colour, configure, draw_legend, draw_message, line_style,
    stride_indices, Area, Ctx, DrawResult, CLASSES, FONT, GLYPH_PX, TITLE_PX,
};
use crate::pipeline::Analysis;
use plotters::prelude::*;

/// Most beat windows overlaid (shared among the classes).
pub(crate) const MAX_OVERLAY: usize = 240;

/// Offset in seconds encoded in a window column name such as `w-0.200s`.
pub(crate) fn window_offset_s(name: &str) -> Option<f64> {
    name.strip_prefix('w')?
        .strip_suffix('s')?
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

pub(crate) fn draw_beats<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
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
