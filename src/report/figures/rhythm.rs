//! Figure 8, `rhythm`: the rhythm over the whole record. Top: the RR tachogram with the
//! screen's episodes and the reference's irregular intervals. Middle: the windowed RR
//! irregularity of the screen (nRMSSD of the long and the short windows, Dash et al. 2009) with
//! its threshold. Bottom: the beat-resolution evidence of the verdict, the coefficient of sample
//! entropy (COSEn, Lake & Moorman 2011) per segment of consecutive intervals with its threshold,
//! and the segments whose P waves match the record's template (Babaeizadeh et al. 2009). The
//! title carries the record's verdict (a research label, never a diagnosis).
//!
//! In: a finished [`Analysis`]. Out: a drawing; nothing here is a result.

use super::style::{
    axis_range, configure, draw_legend, draw_message, line_style, minmax_thin, reference_strip,
    shade_bands, with_title, Area, Ctx, DrawResult, GLYPH_PX, GREY, LINE_BINS, OI_BLUE, OI_GREEN,
    OI_ORANGE, OI_VERMILLION,
};
use crate::pipeline::Analysis;
use crate::rhythm::screen::{ScreenParams, ScreenWindow};
use crate::rhythm::verdict::VerdictParams;
use plotters::prelude::*;

/// The block `key` of the analysis parameters, or its defaults.
fn block<T: serde::de::DeserializeOwned + Default>(a: &Analysis, key: &str) -> T {
    a.parameters
        .get(key)
        .and_then(|v| serde_json::from_value::<T>(v.clone()).ok())
        .unwrap_or_default()
}

/// Time (s) of the beat closing RR interval `k`.
fn t_end(a: &Analysis, k: usize) -> Option<f64> {
    (a.fs_hz > 0.0)
        .then(|| a.beat_samples.get(k + 1).map(|&s| s as f64 / a.fs_hz))
        .flatten()
}

/// (time of the window's middle interval, nRMSSD) of each window.
fn window_points(a: &Analysis, w: &[ScreenWindow]) -> Vec<(f64, f64)> {
    w.iter()
        .filter_map(|w| {
            let mid = (w.start + w.end.saturating_sub(1)) / 2;
            Some((t_end(a, mid)?, w.nrmssd)).filter(|p| p.1.is_finite())
        })
        .collect()
}

/// 8. The rhythm timeline of the whole record.
pub(crate) fn draw_rhythm_timeline<DB: DrawingBackend>(
    a: &Analysis,
    area: &Area<DB>,
) -> DrawResult {
    let v = &a.verdict;
    let title = format!(
        "Rhythm of the whole record: verdict `{}`, irregular fraction {:.2} (research label)",
        v.class.name(),
        v.irregular_fraction
    );
    let rr: Vec<(f64, f64)> = (0..a.rr_s.len())
        .filter_map(|k| Some((t_end(a, k)?, a.rr_s[k])).filter(|p| p.1.is_finite()))
        .collect();
    if rr.len() < 2 {
        return draw_message(area, &title, "not enough beats for a rhythm timeline");
    }
    let x0 = 0.0;
    let x1 = if a.duration_s > 0.0 {
        a.duration_s
    } else {
        rr.last().map_or(1.0, |p| p.0)
    };
    let sp: ScreenParams = block(a, "screen");
    let vp: VerdictParams = block(a, "verdict");
    let body = with_title(area, &title)?;
    let (_, h) = body.dim_in_pixel();
    let (top, rest) = body.split_vertically(h / 3);
    let (mid, bottom) = rest.split_vertically(h / 3);
    let episodes: Vec<(f64, f64)> = a.screen.episode_bounds();

    // Top: RR tachogram, episodes, reference.
    let pts = minmax_thin(&rr, LINE_BINS);
    let Some((y0, y1)) = axis_range(pts.iter().map(|p| p.1)) else {
        return draw_message(&top, "", "no finite RR interval");
    };
    let mut chart = ChartBuilder::on(&top)
        .margin(12)
        .x_label_area_size(60)
        .y_label_area_size(130)
        .build_cartesian_2d(x0..x1, y0..y1)
        .ctx()?;
    configure(&mut chart, "", "RR (s)")?;
    shade_bands(
        &mut chart,
        &episodes,
        (y0, y1),
        OI_ORANGE,
        (0.25, 0.45),
        "episodes found (research screen)",
    )?;
    let reference = crate::rhythm::screen::irregular_reference(&a.reference);
    reference_strip(&mut chart, &reference, (y0, y1), 0.06)?;
    chart
        .draw_series(LineSeries::new(pts, line_style(OI_BLUE, 2)))
        .ctx()?
        .label("RR interval")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_BLUE, 3)));
    draw_legend(&mut chart, SeriesLabelPosition::LowerRight)?;

    // Middle: windowed nRMSSD of the long and the short windows.
    let long = window_points(a, &a.screen.windows);
    let short = window_points(a, &a.screen.short_windows);
    let hi = axis_range(long.iter().chain(&short).map(|p| p.1))
        .map_or(2.0 * sp.nrmssd_min, |r| r.1.max(1.5 * sp.nrmssd_min));
    let mut chart = ChartBuilder::on(&mid)
        .margin(12)
        .x_label_area_size(60)
        .y_label_area_size(130)
        .build_cartesian_2d(x0..x1, 0.0..hi)
        .ctx()?;
    configure(&mut chart, "", "window nRMSSD")?;
    chart
        .draw_series(
            episodes
                .iter()
                .map(|&(s, e)| Rectangle::new([(s, 0.0), (e, hi)], OI_ORANGE.mix(0.15).filled())),
        )
        .ctx()?;
    chart
        .draw_series(LineSeries::new(
            [(x0, sp.nrmssd_min), (x1, sp.nrmssd_min)],
            line_style(GREY, 2),
        ))
        .ctx()?
        .label(format!("threshold {}", sp.nrmssd_min))
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(GREY, 2)));
    for (pts, colour, name) in [
        (
            long,
            OI_BLUE,
            format!("{}-interval windows", sp.window_beats),
        ),
        (
            short,
            OI_VERMILLION,
            format!("{}-interval windows", sp.short_window_beats),
        ),
    ] {
        if pts.is_empty() {
            continue;
        }
        chart
            .draw_series(LineSeries::new(pts.clone(), line_style(colour, 2)))
            .ctx()?
            .label(name)
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(colour, 3))
            });
        if pts.len() <= 400 {
            chart
                .draw_series(pts.iter().map(|&p| Circle::new(p, 3, colour.filled())))
                .ctx()?;
        }
    }
    draw_legend(&mut chart, SeriesLabelPosition::UpperRight)?;

    // Bottom: COSEn per segment, and the segments with the record's P wave.
    let seg = &a.verdict_evidence.segments;
    let (c0, c1) = axis_range(
        seg.iter()
            .map(|s| s[2])
            .chain([vp.cosen_min - 0.5, vp.cosen_min + 0.5]),
    )
    .unwrap_or((vp.cosen_min - 1.0, vp.cosen_min + 1.0));
    let mut chart = ChartBuilder::on(&bottom)
        .margin(12)
        .x_label_area_size(90)
        .y_label_area_size(130)
        .build_cartesian_2d(x0..x1, c0..c1)
        .ctx()?;
    configure(&mut chart, "Time (s)", "segment COSEn")?;
    let with_p: Vec<(f64, f64)> = seg
        .iter()
        .filter(|s| s[3] >= vp.p_wave_min)
        .map(|s| (s[0], s[1]))
        .collect();
    let strip = (c1 - 0.08 * (c1 - c0), c1);
    if !with_p.is_empty() {
        chart
            .draw_series(
                with_p
                    .iter()
                    .map(|&(s, e)| Rectangle::new([(s, strip.0), (e, strip.1)], OI_GREEN.filled())),
            )
            .ctx()?
            .label(format!(
                "P waves match the template (index ≥ {})",
                vp.p_wave_min
            ))
            .legend(|(x, y)| {
                Rectangle::new([(x, y - 6), (x + GLYPH_PX, y + 6)], OI_GREEN.filled())
            });
    }
    chart
        .draw_series(LineSeries::new(
            [(x0, vp.cosen_min), (x1, vp.cosen_min)],
            line_style(GREY, 2),
        ))
        .ctx()?
        .label(format!("threshold {}", vp.cosen_min))
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(GREY, 2)));
    let steps: Vec<Vec<(f64, f64)>> = seg
        .iter()
        .filter(|s| s[2].is_finite())
        .map(|s| vec![(s[0], s[2]), (s[1], s[2])])
        .collect();
    if !steps.is_empty() {
        chart
            .draw_series(
                steps
                    .into_iter()
                    .map(|p| PathElement::new(p, line_style(OI_BLUE, 4))),
            )
            .ctx()?
            .label(format!(
                "COSEn of {} consecutive intervals",
                vp.segment_beats
            ))
            .legend(|(x, y)| {
                PathElement::new(vec![(x, y), (x + GLYPH_PX, y)], line_style(OI_BLUE, 4))
            });
    }
    draw_legend(&mut chart, SeriesLabelPosition::LowerRight)
}
