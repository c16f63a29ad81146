//! Figure of the dimension suite: local dimension against scale for every estimator together,
//! with bootstrap intervals of the estimates and the noise-dominated regime shaded.
//!
//! In: a [`DimensionSuite`] (read only). Out: an SVG document or a PNG file (1800 × 1000 px),
//! drawn with plotters using the embedded font of `figures.rs` and the Okabe & Ito (2008)
//! colour-blind-safe hues; each estimator also has its own marker shape, so the figure reads
//! without colour. Display only: non-finite or non-positive scales are skipped; local d values
//! above 50 are clipped to the top of the axis (they mark noise, their exact size does not
//! matter for reading the figure). Every figure carries the research-use notice.

use super::figures::{ensure_font, FONT};
use crate::dimension::{DimensionSuite, Method};
use crate::error::{Error, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::{Path, PathBuf};

/// Figure size in pixels.
const SIZE: (u32, u32) = (1800, 1000);
/// Highest local dimension shown.
const D_TOP: f64 = 50.0;
const GREY: RGBColor = RGBColor(90, 90, 90);
/// Okabe & Ito (2008) hues, one per method, in [`Method::ALL`] order.
const HUES: [RGBColor; 6] = [
    RGBColor(0, 114, 178),   // blue: k-means
    RGBColor(213, 94, 0),    // vermillion: TwoNN
    RGBColor(0, 158, 115),   // bluish green: MLE
    RGBColor(204, 121, 167), // reddish purple: correlation
    RGBColor(230, 159, 0),   // orange: local PCA
    RGBColor(86, 180, 233),  // sky blue: PCA variance share
];

fn hue(m: Method) -> RGBColor {
    let i = Method::ALL.iter().position(|&x| x == m).unwrap_or(0);
    HUES[i % HUES.len()]
}

fn label(m: Method) -> &'static str {
    match m {
        Method::Kmeans => "k-means scaling",
        Method::Twonn => "TwoNN",
        Method::Mle => "MLE (Levina–Bickel)",
        Method::Correlation => "correlation dimension",
        Method::LocalPca => "local PCA (Fukunaga–Olsen)",
        Method::PcaVarianceShare => "PCA, 95 % variance share",
    }
}

fn marker<DB: DrawingBackend>(
    m: Method,
    (x, y): (i32, i32),
    c: RGBColor,
) -> DynElement<'static, DB, (i32, i32)> {
    let s = c.filled();
    match m {
        Method::Kmeans => Circle::new((x, y), 8, s).into_dyn(),
        Method::Twonn => TriangleMarker::new((x, y), 10, s).into_dyn(),
        Method::Mle => Rectangle::new([(x - 7, y - 7), (x + 7, y + 7)], s).into_dyn(),
        Method::Correlation => Cross::new((x, y), 9, c.stroke_width(3)).into_dyn(),
        Method::LocalPca => Circle::new((x, y), 9, c.stroke_width(3)).into_dyn(),
        Method::PcaVarianceShare => {
            Rectangle::new([(x - 7, y - 7), (x + 7, y + 7)], c.stroke_width(3)).into_dyn()
        }
    }
}

type DrawResult = std::result::Result<(), String>;

fn ctx<T, E: std::fmt::Display>(r: std::result::Result<T, E>) -> std::result::Result<T, String> {
    r.map_err(|e| format!("drawing failed: {e}"))
}

/// Draw the suite figure on a whole canvas of the report's figure size.
pub(super) fn draw_suite<DB: DrawingBackend>(
    s: &DimensionSuite,
    root: &DrawingArea<DB, Shift>,
) -> DrawResult {
    ctx(root.fill(&WHITE))?;
    let (body, foot) = root.split_vertically(SIZE.1 - 48);
    ctx(foot.draw(&Text::new(
        crate::NOTICE_SHORT,
        (24, 8),
        (FONT, 24).into_font().color(&GREY),
    )))?;
    let title = format!(
        "Local dimension against scale ({} points in {} dimensions)",
        s.n, s.ambient_dim
    );
    let series: Vec<(Method, Vec<(f64, f64)>)> = s
        .estimates
        .iter()
        .map(|e| {
            let mut pts: Vec<(f64, f64)> = e
                .curve
                .iter()
                .filter(|p| p.scale > 0.0 && p.scale.is_finite() && p.d.is_finite())
                .map(|p| (p.scale.log10(), p.d.min(D_TOP)))
                .collect();
            pts.sort_by(|a, b| a.0.total_cmp(&b.0));
            (e.method, pts)
        })
        .collect();
    let xs = series.iter().flat_map(|(_, p)| p.iter().map(|q| q.0));
    let (x0, x1) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
        (a.min(v), b.max(v))
    });
    if !x0.is_finite() {
        let style = TextStyle::from((FONT, 48).into_font()).color(&HUES[1]);
        ctx(body.draw(&Text::new(title, (40, 30), (FONT, 40).into_font())))?;
        return ctx(body.draw(&Text::new("no curve values to show", (500, 450), style)));
    }
    let pad = ((x1 - x0) * 0.05).max(0.05);
    let (x0, x1) = (x0 - pad, x1 + pad);
    let d_max = series
        .iter()
        .flat_map(|(_, p)| p.iter().map(|q| q.1))
        .chain(
            s.estimates
                .iter()
                .map(|e| e.ci95[1])
                .filter(|v| v.is_finite()),
        )
        .fold(1.0f64, f64::max)
        .min(D_TOP);
    let y1 = (d_max * 1.1).ceil();
    let mut chart = ctx(ChartBuilder::on(&body)
        .caption(title, (FONT, 40))
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(110)
        .build_cartesian_2d(x0..x1, 0.0..y1))?;
    ctx(chart
        .configure_mesh()
        .x_desc("Scale (input units, log axis)")
        .y_desc("Local dimension d")
        .axis_desc_style((FONT, 34))
        .label_style((FONT, 28))
        .light_line_style(RGBColor(235, 235, 235))
        .x_labels(6)
        .y_labels(8)
        .x_label_formatter(&|v| format!("{:.3e}", 10f64.powf(*v)))
        .draw())?;
    if let Some(ns) = s
        .noise_scale
        .filter(|v| v.is_finite() && *v > 0.0)
        .map(f64::log10)
        .filter(|&v| v > x0)
    {
        ctx(chart.draw_series(std::iter::once(Rectangle::new(
            [(x0, 0.0), (ns.min(x1), y1)],
            RGBColor(230, 159, 0).mix(0.18).filled(),
        ))))?
        .label("noise-dominated scales (k-means)")
        .legend(|(x, y)| {
            Rectangle::new(
                [(x, y - 10), (x + 44, y + 10)],
                RGBColor(230, 159, 0).mix(0.35).filled(),
            )
        });
    }
    for (m, pts) in &series {
        let c = hue(*m);
        let est = s.get(*m);
        let text = match est {
            Some(e) if e.ci95[0].is_finite() => format!(
                "{}: d = {:.2} [{:.2}, {:.2}]",
                label(*m),
                e.d,
                e.ci95[0],
                e.ci95[1]
            ),
            Some(e) => format!("{}: d = {:.2}", label(*m), e.d),
            None => label(*m).to_string(),
        };
        let style = ShapeStyle {
            color: c.to_rgba(),
            filled: false,
            stroke_width: 3,
        };
        let mm = *m;
        ctx(chart.draw_series(LineSeries::new(pts.clone(), style)))?
            .label(text)
            .legend(move |(x, y)| {
                EmptyElement::at((x + 22, y))
                    + PathElement::new(vec![(-22, 0), (22, 0)], style)
                    + marker::<DB>(mm, (0, 0), c)
            });
        ctx(chart.draw_series(
            pts.iter()
                .map(|&p| EmptyElement::at(p) + marker::<DB>(mm, (0, 0), c)),
        ))?;
        // The estimate and its interval as a band at the right edge.
        if let Some(e) = est.filter(|e| e.ci95[0].is_finite() && e.ci95[1].is_finite()) {
            // One bar per method, side by side in the right margin.
            let slot = Method::ALL.iter().position(|&x| x == *m).unwrap_or(0) as f64;
            let xr = x1 - pad * (0.15 + 0.17 * slot);
            ctx(chart.draw_series(std::iter::once(PathElement::new(
                vec![(xr, e.ci95[0].min(D_TOP)), (xr, e.ci95[1].min(D_TOP))],
                c.stroke_width(6),
            ))))?;
        }
    }
    ctx(chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .background_style(WHITE.mix(0.85))
        .border_style(GREY)
        .label_font((FONT, 26))
        .legend_area_size(64)
        .margin(12)
        .draw())
}

/// The suite figure as an SVG document.
///
/// Errors: the embedded font cannot be loaded, or drawing fails.
pub fn render_suite_svg(s: &DimensionSuite) -> Result<String> {
    ensure_font().map_err(Error::Analysis)?;
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, SIZE).into_drawing_area();
        draw_suite(s, &root).map_err(Error::Analysis)?;
        root.present()
            .map_err(|e| Error::Analysis(format!("drawing failed: {e}")))?;
    }
    Ok(out)
}

/// Write the suite figure as `stem.svg` and `stem.png` (each atomically) and return both paths.
///
/// Errors: drawing or writing fails.
pub fn write_suite_figure(s: &DimensionSuite, stem: &Path) -> Result<Vec<PathBuf>> {
    let svg_path = stem.with_extension("svg");
    let svg = render_suite_svg(s)?;
    crate::io::write_atomic(&svg_path, svg.as_bytes())?;
    let png_path = stem.with_extension("png");
    ensure_font().map_err(|m| Error::output(&png_path, m))?;
    let tmp = crate::io::temp_sibling(&png_path, ".png")?;
    let drawn = (|| {
        let root = BitMapBackend::new(&tmp, SIZE).into_drawing_area();
        draw_suite(s, &root)?;
        root.present().map_err(|e| format!("drawing failed: {e}"))
    })();
    if let Err(m) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::output(&png_path, m));
    }
    crate::io::commit_temp(&tmp, &png_path)?;
    Ok(vec![svg_path, png_path])
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dimension::{MethodEstimate, ScalePoint};

    #[test]
    fn suite_figure_has_every_method_and_the_notice() {
        let est = |method, d: f64| MethodEstimate {
            method,
            d,
            ci95: [d - 0.1, d + 0.1],
            curve: vec![
                ScalePoint { scale: 0.5, d },
                ScalePoint {
                    scale: 0.05,
                    d: d + 3.0,
                },
            ],
        };
        let s = DimensionSuite {
            n: 100,
            ambient_dim: 4,
            n_used: 100,
            bootstrap: 10,
            estimates: Method::ALL.iter().map(|&m| est(m, 2.0)).collect(),
            kmeans: None,
            noise_scale: Some(0.1),
            failures: vec![],
        };
        let svg = render_suite_svg(&s).unwrap();
        for m in Method::ALL {
            assert!(svg.contains(label(m)), "{m:?}");
        }
        assert!(svg.contains("noise-dominated"));
        assert!(svg.contains("research use") || svg.contains("Research use"));
        let dir = tempfile::tempdir().unwrap();
        let files = write_suite_figure(&s, &dir.path().join("dims")).unwrap();
        assert!(files.iter().all(|f| f.exists()));
        let empty = DimensionSuite {
            estimates: vec![],
            ..s
        };
        assert!(render_suite_svg(&empty)
            .unwrap()
            .contains("no curve values"));
    }
}
