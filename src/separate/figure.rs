//! Figure of an inter-patient run: the fit beats in the fitted diffusion map (left) and the test
//! patients' beats placed in it by Nyström extension (right), both coloured by reference class,
//! on the same first two diffusion coordinates and axis ranges.
//!
//! In: a [`Separation`] with a [`MapView`]. Out: `PATH.svg` and `PATH.png` (1800 × 1000 px),
//! Okabe & Ito (2008) colour-blind-safe hues, the research-use notice in the footer. Display
//! only: nothing here is a result.

use super::{BeatClass, MapView, Separation};
use crate::error::{Error, Result};
use crate::report::{ensure_font, FONT};
use plotters::coord::Shift;
use plotters::prelude::*;
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

fn draw<DB: DrawingBackend>(
    m: &MapView,
    root: &DrawingArea<DB, Shift>,
) -> std::result::Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| format!("drawing failed: {x}");
    root.fill(&WHITE).map_err(e)?;
    let (top, rest) = root.split_vertically(70);
    let (body, foot) = rest.split_vertically(SIZE.1 - 70 - 40);
    top.draw(&Text::new(
        "Fit beats (left) and held-out patients' beats (right) in the fitted diffusion map (ψ1, ψ2)",
        (20, 15),
        (FONT, 30).into_font(),
    ))
    .map_err(e)?;
    let legend: Vec<String> = BeatClass::ALL
        .iter()
        .map(|c| c.name().to_string())
        .collect();
    for (k, name) in legend.iter().enumerate() {
        top.draw(&Text::new(
            format!("● {name}"),
            (1450 + 65 * k as i32, 15),
            (FONT, 28).into_font().color(&HUES[k]),
        ))
        .map_err(e)?;
    }
    foot.draw(&Text::new(
        crate::NOTICE_SHORT,
        (20, 8),
        (FONT, 22).into_font().color(&RGBColor(90, 90, 90)),
    ))
    .map_err(e)?;
    let all = m
        .fit
        .iter()
        .chain(&m.test)
        .filter(|p| p.0.is_finite() && p.1.is_finite());
    let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for &(x, y, _) in all {
        x0 = x0.min(x);
        x1 = x1.max(x);
        y0 = y0.min(y);
        y1 = y1.max(y);
    }
    if x0 > x1 {
        return Ok(());
    }
    let pad = |a: f64, b: f64| {
        let s = (b - a).abs().max(1e-12) * 0.05;
        (a - s, b + s)
    };
    let ((x0, x1), (y0, y1)) = (pad(x0, x1), pad(y0, y1));
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
        let pts = if k == 0 { &m.fit } else { &m.test };
        if k == 1 {
            ch.draw_series(
                m.fit
                    .iter()
                    .map(|&(x, y, _)| Circle::new((x, y), 1, LIGHT.filled())),
            )
            .map_err(e)?;
        }
        // Common classes first, so rare ones stay visible on top.
        for c in BeatClass::ALL {
            ch.draw_series(
                pts.iter()
                    .filter(|p| p.2 == c && p.0.is_finite() && p.1.is_finite())
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
    ensure_font().map_err(|x| Error::output(&svg_path, x))?;
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
        draw(m, &root).map_err(|x| Error::output(&svg_path, x))?;
        root.present()
            .map_err(|x| Error::output(&svg_path, x.to_string()))?;
    }
    crate::io::write_atomic(&svg_path, s.as_bytes())?;
    let png_path = PathBuf::from(format!("{}.png", path.display()));
    let tmp = crate::io::temp_sibling(&png_path, ".png")?;
    let drawn = (|| {
        let root = BitMapBackend::new(&tmp, SIZE).into_drawing_area();
        draw(m, &root)?;
        root.present().map_err(|x| x.to_string())
    })();
    if let Err(x) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::output(&png_path, x));
    }
    crate::io::commit_temp(&tmp, &png_path)
}
