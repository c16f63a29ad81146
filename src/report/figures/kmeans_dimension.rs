//! Figure 5, `dimension`, when the estimator suite was not computed: k-means distortion against
//! k and its local dimension against scale (Zador 1982).

use super::style::{
    axis_range, configure, draw_legend, draw_message, line_style, scale_label, Area, Ctx,
    DrawResult, DESC_PX, FONT, GLYPH_PX, GREY, LABEL_PX, OI_BLUE, OI_GREEN, OI_ORANGE,
    OI_VERMILLION, TITLE_PX,
};
use crate::pipeline::Analysis;
use plotters::prelude::*;

pub(crate) fn draw_dimension<DB: DrawingBackend>(a: &Analysis, area: &Area<DB>) -> DrawResult {
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
