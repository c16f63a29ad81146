//! Figure 7, `rr`: the RR tachogram with the irregular-rhythm research screen shaded, beside the
//! Poincaré plot (Brennan, Palaniswami & Kamen 2001).

use super::style::{
    axis_range, configure, draw_legend, draw_message, line_style, minmax_thin, reference_strip,
    shade_bands, stride_indices, Area, Ctx, DrawResult, DESC_PX, FONT, GLYPH_PX, GREY, LINE_BINS,
    MAX_SCATTER, OI_BLUE, OI_ORANGE, TITLE_PX,
};
use crate::pipeline::Analysis;
use plotters::prelude::*;

/// 7. RR tachogram with screen episodes shaded, and the Poincaré plot.
pub(crate) fn draw_rr<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
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
    shade_bands(
        &mut chart,
        &episodes,
        (y0, y1),
        OI_ORANGE,
        (0.25, 0.45),
        "irregular-rhythm screen (research)",
    )?;
    let reference = crate::rhythm::screen::irregular_reference(&a.reference);
    let reference: Vec<(f64, f64)> = reference
        .into_iter()
        .filter(|&(s, e)| e > x0 && s < x1)
        .map(|(s, e)| (s.max(x0), e.min(x1)))
        .collect();
    reference_strip(&mut chart, &reference, (y0, y1), 0.04)?;
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
