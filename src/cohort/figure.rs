//! Figure of the shared embedding: records side by side, one small panel a record (the first
//! 12 in plan order), each showing the whole fit sample in light grey and the record's own
//! sampled beats in colour, on the same first two shared diffusion coordinates and the same axis
//! ranges, so shapes and positions compare directly.
//!
//! In: the fit sample (record of each member, fit coordinates). Out: `cohort_embedding.svg` and
//! `cohort_embedding.png` (1800 × 1000 px), drawn with plotters in the Okabe & Ito (2008)
//! colour-blind-safe hues (one a group, or one a record when no groups are given). Display only:
//! nothing here is a result. Every figure carries the research-use notice.

use crate::error::{Error, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::Path;

const SIZE: (u32, u32) = (1800, 1000);
use crate::report::{ensure_font, FONT};
const MAX_PANELS: usize = 12;
const LIGHT: RGBColor = RGBColor(205, 205, 205);
/// Okabe & Ito (2008) hues.
const HUES: [RGBColor; 7] = [
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(230, 159, 0),
    RGBColor(86, 180, 233),
    RGBColor(0, 0, 0),
];

struct Data<'a> {
    names: &'a [String],
    colour_of: Vec<usize>,
    members: &'a [(usize, usize)],
    coords: &'a [f64],
    c: usize,
}

fn xy(d: &Data, i: usize) -> Option<(f64, f64)> {
    let x = *d.coords.get(i * d.c)?;
    let y = if d.c > 1 {
        *d.coords.get(i * d.c + 1)?
    } else {
        0.0
    };
    (x.is_finite() && y.is_finite()).then_some((x, y))
}

fn draw<DB: DrawingBackend>(
    d: &Data,
    root: &DrawingArea<DB, Shift>,
) -> std::result::Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| format!("drawing failed: {x}");
    root.fill(&WHITE).map_err(e)?;
    let (top, rest) = root.split_vertically(70);
    let (body, foot) = rest.split_vertically(SIZE.1 - 70 - 40);
    top.draw(&Text::new(
        "Records side by side in the shared diffusion embedding (ψ1, ψ2)",
        (20, 15),
        (FONT, 34).into_font(),
    ))
    .map_err(e)?;
    foot.draw(&Text::new(
        crate::NOTICE_SHORT,
        (20, 8),
        (FONT, 22).into_font().color(&RGBColor(90, 90, 90)),
    ))
    .map_err(e)?;
    let pts: Vec<(usize, f64, f64)> = (0..d.members.len())
        .filter_map(|i| xy(d, i).map(|(x, y)| (d.members[i].0, x, y)))
        .collect();
    let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for &(_, x, y) in &pts {
        x0 = x0.min(x);
        x1 = x1.max(x);
        y0 = y0.min(y);
        y1 = y1.max(y);
    }
    if pts.is_empty() {
        return Ok(());
    }
    let pad = |a: f64, b: f64| {
        let s = (b - a).abs().max(1e-12) * 0.05;
        (a - s, b + s)
    };
    let (x0, x1) = pad(x0, x1);
    let (y0, y1) = pad(y0, y1);
    let shown = d.names.len().min(MAX_PANELS);
    let cols = if shown <= 4 { shown.max(1) } else { 4 };
    let rows = shown.div_ceil(cols).max(1);
    let panels = body.split_evenly((rows, cols));
    for (k, area) in panels.iter().enumerate().take(shown) {
        let mut ch = ChartBuilder::on(area)
            .caption(&d.names[k], (FONT, 24).into_font())
            .margin(8)
            .x_label_area_size(30)
            .y_label_area_size(50)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(e)?;
        ch.configure_mesh()
            .disable_mesh()
            .label_style((FONT, 16).into_font())
            .x_labels(4)
            .y_labels(4)
            .draw()
            .map_err(e)?;
        ch.draw_series(
            pts.iter()
                .filter(|p| p.0 != k)
                .map(|&(_, x, y)| Circle::new((x, y), 2, LIGHT.filled())),
        )
        .map_err(e)?;
        let hue = HUES[d.colour_of.get(k).copied().unwrap_or(0) % HUES.len()];
        ch.draw_series(
            pts.iter()
                .filter(|p| p.0 == k)
                .map(|&(_, x, y)| Circle::new((x, y), 3, hue.filled())),
        )
        .map_err(e)?;
    }
    if d.names.len() > shown {
        top.draw(&Text::new(
            format!("first {shown} of {} records", d.names.len()),
            (1400, 20),
            (FONT, 24).into_font(),
        ))
        .map_err(e)?;
    }
    Ok(())
}

/// Write `cohort_embedding.svg` and `.png` into `out` (atomically).
pub(crate) fn write(
    out: &Path,
    names: &[String],
    groups: &[String],
    members: &[(usize, usize)],
    coords: &[f64],
    c: usize,
) -> Result<()> {
    let svg_path = out.join("cohort_embedding.svg");
    ensure_font().map_err(|m| Error::output(&svg_path, m))?;
    // One colour a group when groups are given, else one a record.
    let mut distinct: Vec<&str> = groups.iter().map(String::as_str).collect();
    distinct.sort_unstable();
    distinct.dedup();
    let by_group = distinct.len() > 1 || distinct.first().is_some_and(|g| !g.is_empty());
    let colour_of = (0..names.len())
        .map(|k| {
            if by_group {
                let g = groups.get(k).map_or("", String::as_str);
                distinct.iter().position(|x| *x == g).unwrap_or(0)
            } else {
                k
            }
        })
        .collect();
    let d = Data {
        names,
        colour_of,
        members,
        coords,
        c,
    };
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
        draw(&d, &root).map_err(|m| Error::output(&svg_path, m))?;
        root.present()
            .map_err(|x| Error::output(&svg_path, x.to_string()))?;
    }
    crate::io::write_atomic(&svg_path, s.as_bytes())?;
    let png_path = out.join("cohort_embedding.png");
    let tmp = crate::io::temp_sibling(&png_path, ".png")?;
    let drawn = (|| {
        let root = BitMapBackend::new(&tmp, SIZE).into_drawing_area();
        draw(&d, &root)?;
        root.present().map_err(|x| x.to_string())
    })();
    if let Err(m) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::output(&png_path, m));
    }
    crate::io::commit_temp(&tmp, &png_path)
}
