//! Figure of the dimension suite: local dimension against scale for every estimator together on
//! one log scale axis (ticks at powers of ten), the consensus plateau shaded with its d, the noise
//! scale marked, and a legend outside the data with raw and corrected estimates and intervals.
//!
//! In: a [`DimensionSuite`] (read only). Out: an SVG document or a PNG file (1800 × 1000 px),
//! drawn with plotters using the embedded font of `style.rs` and the Okabe & Ito (2008)
//! colour-blind-safe hues; each estimator also has its own marker shape, so the figure reads
//! without colour. Display only: non-finite or non-positive scales are skipped; local d values
//! above 50 are clipped to the top of the axis (they mark noise, their exact size does not
//! matter for reading the figure). Every figure carries the research-use notice.

use super::style::{ensure_font, FONT};
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
const HUES: [RGBColor; 7] = [
    RGBColor(0, 114, 178),   // blue: k-means
    RGBColor(213, 94, 0),    // vermillion: TwoNN
    RGBColor(0, 158, 115),   // bluish green: MLE
    RGBColor(204, 121, 167), // reddish purple: correlation
    RGBColor(230, 159, 0),   // orange: local PCA
    RGBColor(86, 180, 233),  // sky blue: PCA variance share
    RGBColor(0, 0, 0),       // black: kernel sum
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
        Method::KernelSum => "kernel-sum dimension",
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
        Method::KernelSum => TriangleMarker::new((x, y), 9, c.stroke_width(3)).into_dyn(),
    }
}

type DrawResult = std::result::Result<(), String>;

fn ctx<T, E: std::fmt::Display>(r: std::result::Result<T, E>) -> std::result::Result<T, String> {
    r.map_err(|e| format!("drawing failed: {e}"))
}

/// Label of a power of ten 10^k.
fn pow10_label(k: i32) -> String {
    if (0..=4).contains(&k) {
        format!("{}", 10i64.pow(k as u32))
    } else if (-4..0).contains(&k) {
        format!("{:.*}", (-k) as usize, 10f64.powi(k))
    } else {
        format!("1e{k}")
    }
}

/// Draw the suite figure on a whole canvas of the report's figure size: the curves on a log
/// scale axis with ticks at powers of ten, the consensus plateau shaded with its d as a dashed
/// line, the noise scale as a vertical line with the finer scales tinted, and to the right,
/// outside the data, a legend that lists every estimator's raw and corrected estimate with its
/// interval.
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
    let (plot, side) = body.split_horizontally(1200);
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
    // Whole decades, so the axis always shows at least two powers of ten.
    let (k0, k1) = (
        x0.floor() as i32,
        (x1.ceil() as i32).max(x0.floor() as i32 + 1),
    );
    let (x0, x1) = (k0 as f64, k1 as f64);
    let n_ticks = (k1 - k0 + 1) as usize;
    let cons = s.consensus.as_ref();
    let d_max = series
        .iter()
        .flat_map(|(_, p)| p.iter().map(|q| q.1))
        .chain(cons.map(|c| c.d))
        .fold(1.0f64, f64::max)
        .min(D_TOP);
    let y1 = (d_max * 1.1).ceil();
    let mut chart = ctx(ChartBuilder::on(&plot)
        .caption(title, (FONT, 36))
        .margin(24)
        .x_label_area_size(90)
        .y_label_area_size(100)
        .build_cartesian_2d(x0..x1, 0.0..y1))?;
    ctx(chart
        .configure_mesh()
        .x_desc("Scale (input units, log axis)")
        .y_desc("Local dimension d")
        .axis_desc_style((FONT, 32))
        .label_style((FONT, 28))
        .light_line_style(RGBColor(235, 235, 235))
        .y_labels(8)
        .x_labels(n_ticks)
        .x_label_formatter(&|v| {
            if (v - v.round()).abs() < 1e-9 {
                pow10_label(v.round() as i32)
            } else {
                String::new()
            }
        })
        .draw())?;
    let noise = s
        .consensus
        .as_ref()
        .and_then(|c| c.noise_scale)
        .or(s.noise_scale)
        .filter(|v| v.is_finite() && *v > 0.0)
        .map(f64::log10)
        .filter(|&v| v > x0 && v < x1);
    if let Some(ns) = noise {
        ctx(chart.draw_series(std::iter::once(Rectangle::new(
            [(x0, 0.0), (ns, y1)],
            RGBColor(230, 159, 0).mix(0.12).filled(),
        ))))?;
        ctx(chart.draw_series(std::iter::once(PathElement::new(
            vec![(ns, 0.0), (ns, y1)],
            RGBColor(213, 94, 0).stroke_width(3),
        ))))?;
    }
    if let Some(c) = cons {
        if let Some([lo, hi]) = c.scale_range.filter(|r| r[0] > 0.0 && r[1] > 0.0) {
            let (a, b) = (lo.log10().max(x0), hi.log10().min(x1));
            ctx(chart.draw_series(std::iter::once(Rectangle::new(
                [(a, 0.0), (b, y1)],
                RGBColor(0, 114, 178).mix(0.10).filled(),
            ))))?;
            if c.d.is_finite() {
                ctx(chart.draw_series(DashedLineSeries::new(
                    vec![(a, c.d.min(D_TOP)), (b, c.d.min(D_TOP))],
                    12,
                    8,
                    BLACK.stroke_width(3),
                )))?;
            }
        }
    }
    for (m, pts) in &series {
        let c = hue(*m);
        let style = ShapeStyle {
            color: c.to_rgba(),
            filled: false,
            stroke_width: 3,
        };
        let mm = *m;
        ctx(chart.draw_series(LineSeries::new(pts.clone(), style)))?;
        ctx(chart.draw_series(
            pts.iter()
                .map(|&p| EmptyElement::at(p) + marker::<DB>(mm, (0, 0), c)),
        ))?;
    }
    // Legend, outside the data.
    let font = (FONT, 24).into_font();
    let small = (FONT, 21).into_font().color(&GREY);
    let mut y = 60;
    ctx(side.draw(&Text::new(
        "estimate: raw → corrected [95 %]",
        (10, y),
        font.clone(),
    )))?;
    y += 44;
    let num = |v: f64| {
        if v.is_finite() {
            format!("{v:.2}")
        } else {
            "–".to_string()
        }
    };
    for e in &s.estimates {
        let c = hue(e.method);
        ctx(side.draw(&PathElement::new(
            vec![(10, y + 12), (60, y + 12)],
            c.stroke_width(3),
        )))?;
        ctx(side.draw(&(EmptyElement::at((35, y + 12)) + marker::<DB>(e.method, (0, 0), c))))?;
        ctx(side.draw(&Text::new(label(e.method), (72, y), font.clone())))?;
        let line = if e.correction.applied {
            format!(
                "{} → {} [{}, {}]{}",
                num(e.d),
                num(e.corrected_d),
                num(e.corrected_ci95[0]),
                num(e.corrected_ci95[1]),
                if e.correction.at_cap { " (cap)" } else { "" }
            )
        } else {
            format!(
                "{} [{}, {}] (not corrected)",
                num(e.d),
                num(e.ci95[0]),
                num(e.ci95[1])
            )
        };
        ctx(side.draw(&Text::new(line, (72, y + 30), small.clone())))?;
        y += 76;
    }
    if let Some(c) = cons {
        ctx(side.draw(&Rectangle::new(
            [(10, y), (60, y + 24)],
            RGBColor(0, 114, 178).mix(0.25).filled(),
        )))?;
        ctx(side.draw(&Text::new(
            format!("consensus: d = {} ({:?})", num(c.d), c.status).to_lowercase(),
            (72, y),
            font.clone(),
        )))?;
        ctx(side.draw(&Text::new(
            format!("[{}, {}], plateau shaded", num(c.ci95[0]), num(c.ci95[1])),
            (72, y + 30),
            small.clone(),
        )))?;
        y += 76;
    }
    if noise.is_some() {
        ctx(side.draw(&PathElement::new(
            vec![(35, y), (35, y + 28)],
            RGBColor(213, 94, 0).stroke_width(3),
        )))?;
        ctx(side.draw(&Text::new(
            "noise scale; noise-dominated",
            (72, y),
            font.clone(),
        )))?;
        ctx(side.draw(&Text::new("scales tinted to its left", (72, y + 30), small)))?;
    }
    Ok(())
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
            corrected_d: d * 1.1,
            corrected_ci95: [d, d * 1.2],
            correction: crate::dimension::Correction {
                applied: true,
                at_cap: false,
            },
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
            consensus: None,
            pointwise: vec![],
        };
        let svg = render_suite_svg(&s).unwrap();
        for m in Method::ALL {
            assert!(svg.contains(label(m)), "{m:?}");
        }
        assert!(svg.contains("noise-dominated"));
        // Power-of-ten ticks, not 1.000e-1.
        assert!(svg.contains("0.01") && svg.contains("0.1"), "ticks");
        assert!(!svg.contains("000e-"));
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
