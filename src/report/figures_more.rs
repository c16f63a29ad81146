//! Figures 4, 6 and 7 of the report: the beat trajectory in diffusion coordinates, the recurrence
//! plot with the recurrence-measure timeline (Marwan, Romano, Thiel & Kurths 2007), and the RR
//! tachogram with the irregular-rhythm research screen beside the Poincaré plot (Brennan,
//! Palaniswami & Kamen 2001).
//!
//! In: a finished [`Analysis`] and the display choices of a [`View`]. Out: drawings on a plotters
//! area. Nothing here is a result: the recurrence plot recomputes the matrix of one display
//! window with the analysis's own recurrence parameters only to show it.

use super::figures::{
    axis_range, configure, draw_legend, draw_message, line_style, minmax_thin, row_times,
    stride_indices, time_colour, with_title, Area, Ctx, DrawResult, View, DESC_PX, FONT, GLYPH_PX,
    GREY, LINE_BINS, MAX_SCATTER, OI_BLUE, OI_GREEN, OI_ORANGE, OI_SKY, OI_VERMILLION, TITLE_PX,
    TRAJECTORY_S,
};
use crate::pipeline::Analysis;
use crate::points::Points;
use crate::rhythm::recurrence::{recurrence_matrix, RqaParams};
use plotters::prelude::*;

/// A named, coloured line of (x, y) points.
type Series = (&'static str, RGBColor, Vec<(f64, f64)>);

/// Most trajectory points joined in one drawing.
const MAX_TRAJECTORY: usize = 2000;
/// Largest recurrence-plot window, beats (the matrix is n × n).
const MAX_RP: usize = 200;

/// Embedding rows whose beat time lies in `[t0, t1]`, in order.
fn rows_in(times: &[f64], t0: f64, t1: f64) -> Vec<usize> {
    times
        .iter()
        .enumerate()
        .filter(|(_, &t)| t >= t0 && t <= t1)
        .map(|(i, _)| i)
        .collect()
}

/// 4. Successive beats joined in ψ1–ψ2, and ψ1…ψ3 against time, over the chosen range.
pub(super) fn draw_trajectory<DB: DrawingBackend>(
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

/// Recurrence parameters and trajectory components the analysis used (defaults if absent).
fn rqa_setup(a: &Analysis) -> (RqaParams, usize) {
    let params = a
        .parameters
        .get("recurrence")
        .and_then(|v| serde_json::from_value::<RqaParams>(v.clone()).ok())
        .filter(|p| p.check().is_ok())
        .unwrap_or_default();
    let comps = a
        .parameters
        .get("recurrence_components")
        .and_then(|v| v.as_u64())
        .map_or(3, |c| c as usize)
        .max(1);
    (params, comps)
}

/// 6. Recurrence plot of one window and the recurrence-measure timeline.
pub(super) fn draw_recurrence<DB: DrawingBackend>(
    a: &Analysis,
    view: &View,
    area: &Area<DB>,
) -> DrawResult {
    let title = "Recurrence of the beat trajectory";
    let e = &a.embedding;
    let k = e.components;
    if e.n < 8 || k == 0 || e.coords.len() != e.n * k {
        return draw_message(
            area,
            title,
            "fewer than 8 embedded beats: no recurrence plot",
        );
    }
    let (params, comps) = rqa_setup(a);
    let c = comps.min(k);
    let traj: Vec<f64> = e.coords.chunks(k).flat_map(|r| r[..c].to_vec()).collect();
    let pts = Points::new(e.n, c, traj).map_err(|err| format!("trajectory: {err}"))?;
    let times = row_times(a);
    let time_of = |i: usize| times.as_ref().and_then(|t| t.get(i).copied());
    // Window: from the first beat at or after the chosen start, at most MAX_RP beats, ending at
    // the chosen end when there is one.
    let (start, end) = match &times {
        Some(t) if view.chosen() => {
            let (t0, t1) = view.range_or(a, f64::INFINITY);
            let s = t.partition_point(|&x| x < t0).min(e.n - 1);
            let stop = t.partition_point(|&x| x <= t1);
            (s, stop.clamp(s + 1, e.n).min(s + MAX_RP))
        }
        _ => (0, e.n.min(params.window).min(MAX_RP)),
    };
    let (start, end) = if end - start < 8 {
        let s = start.min(e.n - 8);
        (s, (s + 8).max(end).min(e.n))
    } else {
        (start, end)
    };
    let (m, eps) = recurrence_matrix(&pts, start, end, &params).map_err(|err| err.to_string())?;
    let n = end - start;
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

/// 7. RR tachogram with screen episodes shaded, and the Poincaré plot.
pub(super) fn draw_rr<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
    let title = "RR tachogram";
    let fs = a.fs_hz;
    // Time of the beat that ends each interval; fall back to the running sum of RR.
    let raw: Vec<(f64, f64)> = if a.beat_samples.len() == a.rr_s.len() + 1 && fs > 0.0 {
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
    let pts = minmax_thin(&raw, LINE_BINS);
    if pts.len() < 2 {
        return draw_message(area, title, "not enough beats");
    }
    let (Some((x0, x1)), Some((y0, y1))) = (
        axis_range(pts.iter().map(|p| p.0)),
        axis_range(pts.iter().map(|p| p.1)),
    ) else {
        return draw_message(area, title, "not enough beats");
    };
    let (w, _) = area.dim_in_pixel();
    let (left, right) = area.split_horizontally(w * 3 / 5);
    let (sd1, sd2) = a.poincare_ms;
    let mut chart = ChartBuilder::on(&left)
        .caption(title, (FONT, TITLE_PX))
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(130)
        .build_cartesian_2d(x0..x1, y0..y1)
        .ctx()?;
    configure(&mut chart, "Time (s)", "RR interval (s)")?;
    let episodes: Vec<(f64, f64)> = a
        .screen
        .episodes
        .iter()
        .filter(|e| e.end_s > x0 && e.start_s < x1)
        .map(|e| (e.start_s.max(x0), e.end_s.min(x1)))
        .collect();
    super::figures::shade_bands(
        &mut chart,
        &episodes,
        (y0, y1),
        OI_ORANGE,
        (0.25, 0.45),
        "irregular-rhythm screen (research)",
    )?;
    let reference = crate::rhythm::screen::irregular_reference(&a.reference);
    let band = (y1 - 0.04 * (y1 - y0), y1);
    let reference: Vec<(f64, f64)> = reference
        .into_iter()
        .filter(|&(s, e)| e > x0 && s < x1)
        .map(|(s, e)| (s.max(x0), e.min(x1)))
        .collect();
    if !reference.is_empty() {
        chart
            .draw_series(
                reference
                    .iter()
                    .map(|&(s, e)| Rectangle::new([(s, band.0), (e, band.1)], OI_SKY.filled())),
            )
            .ctx()?
            .label("reference irregular rhythm")
            .legend(|(x, y)| Rectangle::new([(x, y - 6), (x + GLYPH_PX, y + 6)], OI_SKY.filled()));
    }
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
    draw_legend(&mut chart, SeriesLabelPosition::LowerRight)?;

    // Poincaré plot: RR(n+1) against RR(n), same range on both axes.
    let pairs: Vec<(f64, f64)> = a
        .rr_s
        .windows(2)
        .map(|p| (p[0], p[1]))
        .filter(|p| p.0.is_finite() && p.1.is_finite())
        .collect();
    let shown: Vec<(f64, f64)> = stride_indices(pairs.len(), MAX_SCATTER)
        .filter_map(|i| pairs.get(i).copied())
        .collect();
    let Some((r0, r1)) = axis_range(shown.iter().flat_map(|p| [p.0, p.1])) else {
        return draw_message(&right, "Poincaré plot", "fewer than 3 beats");
    };
    let mut chart = ChartBuilder::on(&right)
        .caption(
            format!("Poincaré plot (SD1 {sd1:.0} ms, SD2 {sd2:.0} ms)"),
            (FONT, DESC_PX),
        )
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(130)
        .build_cartesian_2d(r0..r1, r0..r1)
        .ctx()?;
    configure(&mut chart, "RR(n) (s)", "RR(n+1) (s)")?;
    chart
        .draw_series(LineSeries::new([(r0, r0), (r1, r1)], line_style(GREY, 1)))
        .ctx()?
        .label("identity line")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(GREY, 2)));
    chart
        .draw_series(
            shown
                .iter()
                .map(|&p| Circle::new(p, 4, OI_BLUE.mix(0.6).filled())),
        )
        .ctx()?
        .label(format!(
            "successive RR pairs ({} of {})",
            shown.len(),
            pairs.len()
        ))
        .legend(|(x, y)| Circle::new((x + GLYPH_PX / 2, y), 6, OI_BLUE.filled()));
    draw_legend(&mut chart, SeriesLabelPosition::LowerRight)
}
