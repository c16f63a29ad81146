//! Figure 4, `trajectory`: successive beats joined in ψ1–ψ2, and ψ1…ψ3 against time, over the
//! chosen range.

use super::colouring::row_times;
use super::style::{
    axis_range, configure, draw_legend, draw_message, line_style, stride_indices, time_colour,
    with_title, Area, Ctx, DrawResult, GLYPH_PX, GREY, OI_BLUE, OI_GREEN, OI_VERMILLION,
    TRAJECTORY_S,
};
use super::view::View;
use crate::pipeline::Analysis;
use plotters::prelude::*;

/// Most trajectory points joined in one drawing.
pub(crate) const MAX_TRAJECTORY: usize = 2000;

/// Embedding rows whose beat time lies in `[t0, t1]`, in order.
pub(crate) fn rows_in(times: &[f64], t0: f64, t1: f64) -> Vec<usize> {
    times
        .iter()
        .enumerate()
        .filter(|(_, &t)| t >= t0 && t <= t1)
        .map(|(i, _)| i)
        .collect()
}

/// 4. Successive beats joined in ψ1–ψ2, and ψ1…ψ3 against time, over the chosen range.
pub(crate) fn draw_trajectory<DB: DrawingBackend>(
    a: &Analysis,
    view: &View,
    area: &Area<DB>,
) -> DrawResult {
    let title = "Beat trajectory in diffusion coordinates";
    let e = &a.embedding;
    let k = e.components;
    if e.n < 2 || k < 2 || e.coords.len() != e.n * k {
        return draw_message(
            area,
            title,
            "not enough beats (or components) for an embedding",
        );
    }
    let Some(times) = row_times(a) else {
        return draw_message(area, title, "beat times unavailable");
    };
    let (t0, t1) = view.range_or(a, TRAJECTORY_S);
    let all = rows_in(&times, t0, t1);
    let rows: Vec<usize> = stride_indices(all.len(), MAX_TRAJECTORY)
        .filter_map(|j| all.get(j).copied())
        .collect();
    let coord = |i: usize, c: usize| e.coords.get(i * k + c).copied().unwrap_or(f64::NAN);
    let pts: Vec<(f64, f64, f64)> = rows
        .iter()
        .map(|&i| {
            (
                coord(i, 0),
                coord(i, 1),
                times.get(i).copied().unwrap_or(f64::NAN),
            )
        })
        .filter(|p| p.0.is_finite() && p.1.is_finite())
        .collect();
    if pts.len() < 2 {
        return draw_message(
            area,
            title,
            &format!(
                "fewer than 2 embedded beats in {t0:.1}–{t1:.1} s (record: 0–{:.1} s)",
                a.duration_s
            ),
        );
    }
    let body = with_title(
        area,
        &format!(
            "{title}: {} beats, {t0:.1} to {t1:.1} s{}",
            pts.len(),
            if rows.len() < all.len() {
                " (regular stride)"
            } else {
                ""
            }
        ),
    )?;
    let (w, _) = body.dim_in_pixel();
    let (left, right) = body.split_horizontally(w * 9 / 20);
    let (Some((x0, x1)), Some((y0, y1))) = (
        axis_range(pts.iter().map(|p| p.0)),
        axis_range(pts.iter().map(|p| p.1)),
    ) else {
        return draw_message(&left, "", "no finite coordinates");
    };
    let mut chart = ChartBuilder::on(&left)
        .margin(20)
        .x_label_area_size(90)
        .y_label_area_size(140)
        .build_cartesian_2d(x0..x1, y0..y1)
        .ctx()?;
    configure(&mut chart, "ψ1 (dimensionless)", "ψ2 (dimensionless)")?;
    chart
        .draw_series(LineSeries::new(
            pts.iter().map(|p| (p.0, p.1)),
            ShapeStyle {
                color: GREY.mix(0.5),
                filled: false,
                stroke_width: 1,
            },
        ))
        .ctx()?
        .label("successive beats joined")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(GREY, 2)));
    let (c0, c1) = (t0, t1.max(t0 + 1e-9));
    chart
        .draw_series(
            pts.iter().map(|&(x, y, t)| {
                Circle::new((x, y), 5, time_colour((t - c0) / (c1 - c0)).filled())
            }),
        )
        .ctx()?
        .label("beat (blue early → yellow late)")
        .legend(|(x, y)| Circle::new((x + GLYPH_PX / 2, y), 6, time_colour(0.0).filled()));
    if let Some(&(x, y, _)) = pts.first() {
        chart
            .draw_series(std::iter::once(TriangleMarker::new(
                (x, y),
                14,
                OI_VERMILLION.filled(),
            )))
            .ctx()?
            .label("first beat")
            .legend(|(x, y)| {
                TriangleMarker::new((x + GLYPH_PX / 2, y), 12, OI_VERMILLION.filled())
            });
    }
    draw_legend(&mut chart, SeriesLabelPosition::UpperRight)?;

    // Right: the coordinates against time.
    let comps = k.min(3);
    let series: Vec<Vec<(f64, f64)>> = (0..comps)
        .map(|c| {
            rows.iter()
                .map(|&i| (times.get(i).copied().unwrap_or(f64::NAN), coord(i, c)))
                .filter(|p| p.0.is_finite() && p.1.is_finite())
                .collect()
        })
        .collect();
    let (Some((tx0, tx1)), Some((v0, v1))) = (
        axis_range(series.iter().flatten().map(|p| p.0)),
        axis_range(series.iter().flatten().map(|p| p.1)),
    ) else {
        return draw_message(&right, "", "no finite coordinates");
    };
    let mut chart = ChartBuilder::on(&right)
        .margin(20)
        .x_label_area_size(90)
        .y_label_area_size(140)
        .build_cartesian_2d(tx0..tx1, v0..v1)
        .ctx()?;
    configure(
        &mut chart,
        "Time (s)",
        "Diffusion coordinate (dimensionless)",
    )?;
    let colours = [OI_BLUE, OI_VERMILLION, OI_GREEN];
    for (c, s) in series.into_iter().enumerate() {
        let col = colours[c % colours.len()];
        chart
            .draw_series(LineSeries::new(s, line_style(col, 2)))
            .ctx()?
            .label(format!("ψ{}", c + 1))
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(col, 3))
            });
    }
    draw_legend(&mut chart, SeriesLabelPosition::UpperRight)
}
