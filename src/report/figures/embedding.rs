//! Figure 3, `embedding`: diffusion coordinates ψ1–ψ2, ψ1–ψ3 and ψ2–ψ3, coloured as chosen.
//! Coloured by local dimension, a strip below shows that dimension against the beat's time
//! with its running median over [`TRACE_WINDOW`] beats (the dimension-over-time trace).

use super::colouring::{colouring, draw_colour_key, row_times, ColourBy, Colouring};
use super::style::{
    axis_range, draw_message, stride_indices, time_colour, with_title, Area, Ctx, DrawResult,
    DESC_PX, FONT, GREY, LABEL_PX, MAX_SCATTER,
};
use super::view::View;
use crate::pipeline::Analysis;
use plotters::prelude::*;

pub(crate) fn draw_embedding<DB: DrawingBackend>(
    a: &Analysis,
    view: &View,
    area: &Area<DB>,
) -> DrawResult {
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
    let (w, h) = body.dim_in_pixel();
    let (panels, key) = body.split_horizontally(w.saturating_sub(320));
    let trace_rows = match (&colouring, view.colour_by) {
        (Colouring::Continuous(v, _), ColourBy::LocalDimension) => row_times(a).map(|t| (t, v)),
        _ => None,
    };
    let (panels, strip) = if trace_rows.is_some() {
        let (top, bottom) = panels.split_vertically(h * 62 / 100);
        (top, Some(bottom))
    } else {
        (panels, None)
    };
    if let (Some(strip), Some((t, v))) = (strip, trace_rows) {
        draw_dimension_trace(&strip, &t, v, &colour_of)?;
    }
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

/// Beats in the running median of the dimension-over-time trace.
pub const TRACE_WINDOW: usize = 25;

/// Local dimension against time (points coloured as in the scatter) with a running median.
fn draw_dimension_trace<DB: DrawingBackend>(
    area: &Area<DB>,
    t: &[f64],
    v: &[f64],
    colour_of: &dyn Fn(usize) -> RGBColor,
) -> DrawResult {
    let mut rows: Vec<usize> = (0..t.len().min(v.len()))
        .filter(|&i| t[i].is_finite() && v[i].is_finite())
        .collect();
    if rows.len() < 2 {
        return draw_message(area, "", "no local dimension to draw against time");
    }
    rows.sort_by(|&a, &b| t[a].total_cmp(&t[b]));
    let (t0, t1) = (t[rows[0]], t[rows[rows.len() - 1]]);
    let (t0, t1) = if t1 > t0 {
        (t0, t1)
    } else {
        (t0 - 1.0, t0 + 1.0)
    };
    let (d0, d1) = axis_range(rows.iter().map(|&i| v[i])).unwrap_or((0.0, 1.0));
    let mut chart = ChartBuilder::on(area)
        .caption(
            format!("Local dimension against time (running median over {TRACE_WINDOW} beats)"),
            (FONT, DESC_PX - 8),
        )
        .margin(16)
        .x_label_area_size(80)
        .y_label_area_size(160)
        .build_cartesian_2d(t0..t1, d0..d1)
        .ctx()?;
    chart
        .configure_mesh()
        .x_desc("Time (s)")
        .y_desc("Local dimension")
        .axis_desc_style((FONT, DESC_PX))
        .label_style((FONT, LABEL_PX - 4))
        .light_line_style(RGBColor(235, 235, 235))
        .x_labels(8)
        .y_labels(4)
        .y_label_formatter(&|x| format!("{x:.1}"))
        .draw()
        .ctx()?;
    let shown: Vec<usize> = stride_indices(rows.len(), MAX_SCATTER)
        .map(|j| rows[j])
        .collect();
    chart
        .draw_series(
            shown
                .iter()
                .map(|&i| Circle::new((t[i], v[i]), 3, colour_of(i).mix(0.7).filled())),
        )
        .ctx()?;
    let half = TRACE_WINDOW / 2;
    let med: Vec<(f64, f64)> = stride_indices(rows.len(), MAX_SCATTER)
        .map(|j| {
            let lo = j.saturating_sub(half);
            let hi = (j + half + 1).min(rows.len());
            let mut w: Vec<f64> = rows[lo..hi].iter().map(|&i| v[i]).collect();
            (t[rows[j]], crate::stats::median_of_finite(&mut w))
        })
        .collect();
    chart
        .draw_series(LineSeries::new(med, BLACK.stroke_width(3)))
        .ctx()?;
    Ok(())
}
