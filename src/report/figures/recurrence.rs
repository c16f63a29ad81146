//! Figure 6, `recurrence`: the recurrence plot of one window of the beat trajectory and the
//! recurrence-measure timeline (Marwan, Romano, Thiel & Kurths 2007). The plot recomputes the
//! matrix of one display window with the analysis's own recurrence parameters only to show it.

use super::colouring::row_times;
use super::style::{
    axis_range, configure, draw_legend, draw_message, line_style, minmax_thin, with_title, Area,
    Ctx, DrawResult, GLYPH_PX, LINE_BINS, OI_BLUE, OI_GREEN, OI_SKY, OI_VERMILLION,
};
use super::view::View;
use crate::pipeline::Analysis;
use crate::rhythm::recurrence::recurrence_matrix;
use plotters::prelude::*;

/// A named, coloured line of (x, y) points.
pub(crate) type Series = (&'static str, RGBColor, Vec<(f64, f64)>);

/// Largest recurrence-plot window, beats (the matrix is n × n).
pub(crate) const MAX_RP: usize = 200;

/// 6. Recurrence plot of one window and the recurrence-measure timeline.
pub(crate) fn draw_recurrence<DB: DrawingBackend>(
    a: &Analysis,
    view: &View,
    area: &Area<DB>,
) -> DrawResult {
    let title = "Recurrence of the beat trajectory";
    let pts = &a.recurrence_trajectory;
    if pts.n < 8 || pts.dim == 0 {
        return draw_message(
            area,
            title,
            "fewer than 8 embedded beats: no recurrence plot",
        );
    }
    let params = &a.recurrence_params;
    let times = row_times(a);
    let time_of = |i: usize| times.as_ref().and_then(|t| t.get(i).copied());
    // Window: from the first beat at or after the chosen start, at most MAX_RP beats, ending at
    // the chosen end when there is one.
    let (start, end) = match &times {
        Some(t) if view.chosen() => {
            let (t0, t1) = view.range_or(a, f64::INFINITY);
            let s = t.partition_point(|&x| x < t0).min(pts.n - 1);
            let stop = t.partition_point(|&x| x <= t1);
            (s, stop.clamp(s + 1, pts.n).min(s + MAX_RP))
        }
        _ => (0, pts.n.min(params.window).min(MAX_RP)),
    };
    let (start, end) = if end - start < 8 {
        let s = start.min(pts.n - 8);
        (s, (s + 8).max(end).min(pts.n))
    } else {
        (start, end)
    };
    let (m, eps) = recurrence_matrix(pts, start, end, params).map_err(|err| err.to_string())?;
    let n = end - start;
    let c = pts.dim;
    let body = with_title(
        area,
        &format!(
            "{title}: ψ1…ψ{c}, beats {start}–{} (threshold ε = {eps:.3e})",
            end - 1
        ),
    )?;
    let (w, h) = body.dim_in_pixel();
    let side = h.min(w / 2);
    let (left, right) = body.split_horizontally(side);
    let mut chart = ChartBuilder::on(&left)
        .margin(20)
        .x_label_area_size(90)
        .y_label_area_size(120)
        .build_cartesian_2d(start as f64..end as f64, start as f64..end as f64)
        .ctx()?;
    configure(&mut chart, "Beat number i", "Beat number j")?;
    // One rectangle per horizontal run of recurrent cells.
    let mut runs: Vec<(usize, usize, usize)> = Vec::new();
    for i in 0..n {
        let mut j = 0;
        while j < n {
            if m.get(i * n + j).copied().unwrap_or(false) {
                let j0 = j;
                while j < n && m.get(i * n + j).copied().unwrap_or(false) {
                    j += 1;
                }
                runs.push((i, j0, j));
            } else {
                j += 1;
            }
        }
    }
    chart
        .draw_series(runs.iter().map(|&(i, j0, j1)| {
            let (x, y0, y1) = ((start + i) as f64, (start + j0) as f64, (start + j1) as f64);
            Rectangle::new([(y0, x), (y1, x + 1.0)], OI_BLUE.filled())
        }))
        .ctx()?
        .label("recurrent pair (‖xᵢ − xⱼ‖ ≤ ε)")
        .legend(|(x, y)| Rectangle::new([(x, y - 10), (x + GLYPH_PX, y + 10)], OI_BLUE.filled()));
    draw_legend(&mut chart, SeriesLabelPosition::UpperLeft)?;

    // Right: timeline of RR, DET and LAM per window, at the window's middle beat.
    let x_of = |w: &crate::rhythm::recurrence::RqaWindow| {
        let mid = (w.start + w.end.saturating_sub(1)) / 2;
        time_of(mid).unwrap_or(mid as f64)
    };
    let x_desc = if times.is_some() {
        "Time of the window's middle beat (s)"
    } else {
        "Middle beat of the window (row)"
    };
    let lines: [Series; 3] = [
        (
            "recurrence rate",
            OI_BLUE,
            a.recurrence.iter().map(|w| (x_of(w), w.rqa.rr)).collect(),
        ),
        (
            "determinism DET",
            OI_VERMILLION,
            a.recurrence.iter().map(|w| (x_of(w), w.rqa.det)).collect(),
        ),
        (
            "laminarity LAM",
            OI_GREEN,
            a.recurrence.iter().map(|w| (x_of(w), w.rqa.lam)).collect(),
        ),
    ];
    let Some((tx0, tx1)) = axis_range(lines.iter().flat_map(|l| l.2.iter().map(|p| p.0))) else {
        return draw_message(&right, "", "no recurrence windows");
    };
    let mut chart = ChartBuilder::on(&right)
        .margin(20)
        .x_label_area_size(90)
        .y_label_area_size(110)
        .build_cartesian_2d(tx0..tx1, 0.0..1.05)
        .ctx()?;
    configure(&mut chart, x_desc, "Share of recurrent points (0–1)")?;
    let (ws, we) = (
        time_of(start).unwrap_or(start as f64),
        time_of(end - 1).unwrap_or((end - 1) as f64),
    );
    chart
        .draw_series(std::iter::once(Rectangle::new(
            [(ws.max(tx0), 0.0), (we.min(tx1).max(ws.max(tx0)), 1.05)],
            OI_SKY.mix(0.25).filled(),
        )))
        .ctx()?
        .label("window in the recurrence plot")
        .legend(|(x, y)| {
            Rectangle::new(
                [(x, y - 10), (x + GLYPH_PX, y + 10)],
                OI_SKY.mix(0.4).filled(),
            )
        });
    for (name, col, s) in lines {
        let s: Vec<(f64, f64)> = s
            .into_iter()
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .collect();
        let s = minmax_thin(&s, LINE_BINS / 2);
        chart
            .draw_series(LineSeries::new(s, line_style(col, 3)))
            .ctx()?
            .label(name)
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(col, 3))
            });
    }
    draw_legend(&mut chart, SeriesLabelPosition::UpperRight)
}
