//! Figure of an inter-patient run: the fit beats in the fitted diffusion map (left) and the test
//! patients' beats placed in it by Nyström extension (right), both coloured by reference class,
//! on the same first two diffusion coordinates and axis ranges.
//!
//! In: a [`Separation`] with a [`MapView`]. Out: `PATH.svg` and `PATH.png` (1800 × 1000 px),
//! Okabe & Ito (2008) colour-blind-safe hues, the bench note and the research-use notice in the
//! figure. Axis limits are the 0.5 % and 99.5 % quantiles of all beats (plus 5 %) (a few far beats
//! would otherwise squeeze the rest into a corner); beats outside are drawn at the edge and
//! counted in the caption. At most [`MAX_PER_CLASS`] beats of a class are drawn per panel (a
//! seeded random choice, so the SVG stays small: about 1.6 MB for the 100 000 MIT-BIH beats);
//! the scores use every beat. Display only: nothing here is a result.

use super::{BeatClass, MapView, Separation, BENCH_NOTE};
use crate::error::{Error, Result};
use crate::report::{ensure_font, FONT};
use plotters::coord::Shift;
use plotters::prelude::*;
use rand::seq::index::sample;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use std::path::{Path, PathBuf};

const SIZE: (u32, u32) = (1800, 1000);
/// Okabe & Ito (2008) hues, one a class (N, S, V, F, Q).
const HUES: [RGBColor; 5] = [
    RGBColor(0, 114, 178),
    RGBColor(230, 159, 0),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(0, 0, 0),
];
const LIGHT: RGBColor = RGBColor(215, 215, 215);
/// Most beats of one class drawn in one panel.
pub const MAX_PER_CLASS: usize = 2000;
/// Seed of the choice of drawn beats.
const DRAW_SEED: u64 = 0;
/// Axis limits: these quantiles of the drawn beats' coordinates.
const QUANTILES: (f64, f64) = (0.005, 0.995);

/// The beats drawn: per class at most [`MAX_PER_CLASS`], a seeded random choice, in input order.
fn thin(pts: &[(f64, f64, BeatClass)], seed: u64) -> Vec<(f64, f64, BeatClass)> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut out = Vec::new();
    for c in BeatClass::ALL {
        let members: Vec<usize> = (0..pts.len())
            .filter(|&i| pts[i].2 == c && pts[i].0.is_finite() && pts[i].1.is_finite())
            .collect();
        let mut keep: Vec<usize> = if members.len() > MAX_PER_CLASS {
            sample(&mut rng, members.len(), MAX_PER_CLASS)
                .into_iter()
                .map(|j| members[j])
                .collect()
        } else {
            members
        };
        keep.sort_unstable();
        out.extend(keep.into_iter().map(|i| pts[i]));
    }
    out
}

/// Linear-interpolated quantile of sorted values.
fn quantile(sorted: &[f64], q: f64) -> f64 {
    let h = q * (sorted.len() - 1) as f64;
    let (lo, hi) = (h.floor() as usize, h.ceil() as usize);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// What is drawn: both panels' beats, the axis ranges (quantiles of all beats, not only the
/// drawn ones) and the count of all beats outside them.
struct Drawn {
    fit: Vec<(f64, f64, BeatClass)>,
    test: Vec<(f64, f64, BeatClass)>,
    x: (f64, f64),
    y: (f64, f64),
    outside: usize,
    total: usize,
}

fn prepare(m: &MapView) -> Option<Drawn> {
    let fit = thin(&m.fit, DRAW_SEED);
    let test = thin(&m.test, DRAW_SEED + 1);
    let finite = |p: &&(f64, f64, BeatClass)| p.0.is_finite() && p.1.is_finite();
    let axis = |f: fn(&(f64, f64, BeatClass)) -> f64| -> Option<(f64, f64)> {
        let mut v: Vec<f64> = m.fit.iter().chain(&m.test).filter(finite).map(f).collect();
        if v.is_empty() {
            return None;
        }
        v.sort_by(f64::total_cmp);
        let (a, b) = (quantile(&v, QUANTILES.0), quantile(&v, QUANTILES.1));
        let s = (b - a).abs().max(1e-12) * 0.05;
        Some((a - s, b + s))
    };
    let (x, y) = (axis(|p| p.0)?, axis(|p| p.1)?);
    let out = |p: &&(f64, f64, BeatClass)| p.0 < x.0 || p.0 > x.1 || p.1 < y.0 || p.1 > y.1;
    let outside = m
        .fit
        .iter()
        .chain(&m.test)
        .filter(finite)
        .filter(out)
        .count();
    let clamp = |v: Vec<(f64, f64, BeatClass)>| {
        v.into_iter()
            .map(|(a, b, c)| (a.clamp(x.0, x.1), b.clamp(y.0, y.1), c))
            .collect::<Vec<_>>()
    };
    let total = fit.len() + test.len();
    Some(Drawn {
        fit: clamp(fit),
        test: clamp(test),
        x,
        y,
        outside,
        total,
    })
}

/// The caption under the panels.
fn caption(m: &MapView, d: &Drawn) -> String {
    format!(
        "{} of {} beats drawn (at most {MAX_PER_CLASS} a class a panel, seeded; scores use all); axes at the 0.5-99.5 % quantiles of all beats; {} beats beyond, drawn at the edge",
        d.total,
        m.fit.len() + m.test.len(),
        d.outside
    )
}

fn draw<DB: DrawingBackend>(
    m: &MapView,
    d: &Drawn,
    root: &DrawingArea<DB, Shift>,
) -> std::result::Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| format!("drawing failed: {x}");
    root.fill(&WHITE).map_err(e)?;
    let (top, rest) = root.split_vertically(100);
    let (body, foot) = rest.split_vertically(SIZE.1 - 100 - 80);
    top.draw(&Text::new(
        "Fit beats (left) and held-out patients' beats (right) in the fitted diffusion map (ψ1, ψ2)",
        (20, 10),
        (FONT, 30).into_font(),
    ))
    .map_err(e)?;
    top.draw(&Text::new(
        BENCH_NOTE,
        (20, 55),
        (FONT, 20).into_font().color(&RGBColor(60, 60, 60)),
    ))
    .map_err(e)?;
    for (k, c) in BeatClass::ALL.iter().enumerate() {
        top.draw(&Text::new(
            format!("● {}", c.name()),
            (1450 + 65 * k as i32, 10),
            (FONT, 28).into_font().color(&HUES[k]),
        ))
        .map_err(e)?;
    }
    foot.draw(&Text::new(
        caption(m, d),
        (20, 6),
        (FONT, 20).into_font().color(&RGBColor(60, 60, 60)),
    ))
    .map_err(e)?;
    foot.draw(&Text::new(
        crate::NOTICE_SHORT,
        (20, 44),
        (FONT, 22).into_font().color(&RGBColor(90, 90, 90)),
    ))
    .map_err(e)?;
    let ((x0, x1), (y0, y1)) = (d.x, d.y);
    let panels = body.split_evenly((1, 2));
    for (k, (area, title)) in panels
        .iter()
        .zip(["fit records", "test records (Nyström extension)"])
        .enumerate()
    {
        let mut ch = ChartBuilder::on(area)
            .caption(title, (FONT, 26).into_font())
            .margin(10)
            .x_label_area_size(35)
            .y_label_area_size(60)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(e)?;
        ch.configure_mesh()
            .disable_mesh()
            .label_style((FONT, 18).into_font())
            .x_desc("ψ1")
            .y_desc("ψ2")
            .draw()
            .map_err(e)?;
        let pts = if k == 0 { &d.fit } else { &d.test };
        if k == 1 {
            ch.draw_series(
                d.fit
                    .iter()
                    .map(|&(x, y, _)| Circle::new((x, y), 1, LIGHT.filled())),
            )
            .map_err(e)?;
        }
        // Common classes first, so rare ones stay visible on top.
        for c in BeatClass::ALL {
            ch.draw_series(
                pts.iter()
                    .filter(|p| p.2 == c)
                    .map(|&(x, y, _)| Circle::new((x, y), 2, HUES[c.index()].filled())),
            )
            .map_err(e)?;
        }
    }
    Ok(())
}

/// Write `path.svg` and `path.png` (atomically). Errors: the run has no map (within-record).
pub fn write(path: &Path, r: &Separation) -> Result<()> {
    let svg_path = PathBuf::from(format!("{}.svg", path.display()));
    let Some(m) = &r.map else {
        return Err(Error::output(
            &svg_path,
            "no fitted diffusion map in this run (the figure needs the inter-patient protocol and the diffusion space)",
        ));
    };
    let Some(d) = prepare(m) else {
        return Err(Error::output(
            &svg_path,
            "no beat with finite coordinates to draw",
        ));
    };
    ensure_font().map_err(|x| Error::output(&svg_path, x))?;
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
        draw(m, &d, &root).map_err(|x| Error::output(&svg_path, x))?;
        root.present()
            .map_err(|x| Error::output(&svg_path, x.to_string()))?;
    }
    crate::io::write_atomic(&svg_path, s.as_bytes())?;
    let png_path = PathBuf::from(format!("{}.png", path.display()));
    let tmp = crate::io::temp_sibling(&png_path, ".png")?;
    let drawn = (|| {
        let root = BitMapBackend::new(&tmp, SIZE).into_drawing_area();
        draw(m, &d, &root)?;
        root.present().map_err(|x| x.to_string())
    })();
    if let Err(x) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::output(&png_path, x));
    }
    crate::io::commit_temp(&tmp, &png_path)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::Rng;

    #[test]
    fn axes_are_robust_and_the_svg_stays_small() {
        // 60 000 fit and 50 000 test beats in a unit square, plus 20 far outliers.
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let cloud = |n: usize, rng: &mut ChaCha8Rng| -> Vec<(f64, f64, BeatClass)> {
            (0..n)
                .map(|i| {
                    let c = BeatClass::ALL[if i % 10 == 0 { 2 } else { 0 }];
                    (rng.gen::<f64>(), rng.gen::<f64>(), c)
                })
                .collect()
        };
        let mut fit = cloud(60_000, &mut rng);
        for i in 0..20 {
            fit[i * 7].0 = 1000.0;
        }
        let m = MapView {
            test: cloud(50_000, &mut rng),
            fit,
        };
        let d = prepare(&m).unwrap();
        // Exactly the 20 outliers lie beyond the axes (the uniform beats fall inside the
        // quantiles' range widened by 5 %).
        assert_eq!(d.outside, 20);
        // The outliers do not stretch the axes: limits near the unit square (quantiles ± 5 %).
        assert!(d.x.1 < 1.1 && d.x.0 > -0.1, "{:?}", d.x);
        // Drawn: 3000 N + 3000 V per panel.
        assert_eq!(d.total, 4 * MAX_PER_CLASS);
        let cap = caption(&m, &d);
        assert!(cap.contains("of 110000 beats drawn"), "{cap}");
        let dir = tempfile::tempdir().unwrap();
        let r = Separation {
            protocol: super::super::Protocol::InterPatient,
            vote_neighbors: 5,
            spaces: Vec::new(),
            fit_records: Vec::new(),
            test_records: Vec::new(),
            notes: Vec::new(),
            map: Some(m),
            records: Vec::new(),
            timings: Vec::new(),
        };
        let base = dir.path().join("map");
        write(&base, &r).unwrap();
        let svg = std::fs::read_to_string(dir.path().join("map.svg")).unwrap();
        // Target: an SVG under 2 MB.
        assert!(svg.len() < 2_000_000, "{} bytes", svg.len());
        assert!(svg.contains("not a beat classifier"));
        assert!(svg.contains("beats beyond, drawn at the edge"));
    }
}
