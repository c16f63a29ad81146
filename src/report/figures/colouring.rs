//! What colours the beats of the embedding (time, RR, beat class, rhythm label) and the links
//! from embedding rows to beats and their times.

use super::style::{
    class_colour, time_colour, Area, Ctx, DrawResult, CATEGORY_COLOURS, CLASSES, DESC_PX, FONT,
    GREY, LABEL_PX, OI_BLACK,
};
use crate::error::{Error, Result};
use crate::pipeline::Analysis;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// What colours the points of the embedding figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ColourBy {
    /// Time of the beat, seconds (continuous).
    #[default]
    Time,
    /// RR interval ending at the beat, seconds (continuous).
    Rr,
    /// Beat class label (`N`, `V`, `A`, `Q`).
    Class,
    /// Reference rhythm label where the record has one, else the irregular-rhythm screen flag.
    Rhythm,
    /// Pointwise local dimension of the beat's feature row (Levina & Bickel 2004 at the suite's
    /// `mle_k2` neighbours; see [`crate::dimension::DimensionSuite::pointwise`]); grey where
    /// the suite has no value (rows outside its neighbour subset).
    LocalDimension,
}

impl ColourBy {
    /// Parse `time`, `rr`, `class`, `rhythm` or `local-dimension`.
    pub fn parse(s: &str) -> Result<ColourBy> {
        match s.trim().to_ascii_lowercase().as_str() {
            "time" => Ok(ColourBy::Time),
            "rr" => Ok(ColourBy::Rr),
            "class" => Ok(ColourBy::Class),
            "rhythm" => Ok(ColourBy::Rhythm),
            "local-dimension" | "local_dimension" => Ok(ColourBy::LocalDimension),
            other => Err(Error::param(
                "colour-by",
                format!("`{other}`; choose time, rr, class, rhythm or local-dimension"),
            )),
        }
    }
}

/// Time in seconds of detected beat `b`.
pub(crate) fn beat_time(a: &Analysis, b: usize) -> Option<f64> {
    let s = *a.beat_samples.get(b)?;
    (a.fs_hz > 0.0).then(|| s as f64 / a.fs_hz)
}

/// Detected-beat index of every embedding row, when the links are complete.
pub(crate) fn row_beats(a: &Analysis) -> Option<Vec<usize>> {
    let n = a.embedding.n;
    if a.features.beat_index.len() < n {
        return None;
    }
    let v: Vec<usize> = a.features.beat_index[..n].to_vec();
    v.iter().all(|&b| b < a.beat_samples.len()).then_some(v)
}

/// Time in seconds of every embedding row, when the links are complete.
pub(crate) fn row_times(a: &Analysis) -> Option<Vec<f64>> {
    row_beats(a)?.into_iter().map(|b| beat_time(a, b)).collect()
}

/// Pointwise local dimension of every embedding row (NaN where the suite has none).
pub(crate) fn row_local_dimension(a: &Analysis) -> Vec<f64> {
    let pw = a
        .dimension_suite
        .as_ref()
        .map_or(&[][..], |s| s.pointwise.as_slice());
    (0..a.embedding.n)
        .map(|i| pw.get(i).copied().unwrap_or(f64::NAN))
        .collect()
}

/// Label of the reference rhythm interval holding time `t`, if any (intervals sorted by start).
pub(crate) fn rhythm_at(sorted: &[&crate::record::RhythmInterval], t: f64) -> Option<String> {
    let k = sorted.partition_point(|r| r.start_s <= t);
    let r = sorted.get(k.checked_sub(1)?)?;
    (t < r.end_s).then(|| r.label.clone())
}

/// Shorten a user label for a legend.
pub(crate) fn short_label(s: &str, max_chars: usize) -> String {
    if s.chars().count() <= max_chars {
        s.to_string()
    } else {
        let mut t: String = s.chars().take(max_chars.saturating_sub(1)).collect();
        t.push('…');
        t
    }
}

/// How the rows of the embedding are coloured.
pub(crate) enum Colouring {
    /// A value per row on the blue → yellow scale, with the colour-bar title.
    Continuous(Vec<f64>, String),
    /// A category per row, with the category names and colours, and the legend heading.
    Categorical(Vec<usize>, Vec<String>, Vec<RGBColor>, String),
}

/// Colouring of the `a.embedding.n` rows by `by`.
pub(crate) fn colouring(a: &Analysis, by: ColourBy) -> Colouring {
    let n = a.embedding.n;
    let beats = row_beats(a);
    let order = || {
        Colouring::Continuous(
            (0..n).map(|i| i as f64).collect(),
            "Beat order (row)".into(),
        )
    };
    let Some(beats) = beats else {
        return order();
    };
    match by {
        ColourBy::LocalDimension => Colouring::Continuous(
            row_local_dimension(a),
            "Local dimension (MLE, per beat)".into(),
        ),
        ColourBy::Time => match row_times(a) {
            Some(t) => Colouring::Continuous(t, "Time (s)".into()),
            None => order(),
        },
        ColourBy::Rr => Colouring::Continuous(
            beats
                .iter()
                .map(|&b| {
                    b.checked_sub(1)
                        .and_then(|k| a.rr_s.get(k))
                        .copied()
                        .unwrap_or(f64::NAN)
                })
                .collect(),
            "RR interval ending at the beat (s)".into(),
        ),
        ColourBy::Class => {
            let labels: Vec<char> = beats
                .iter()
                .map(|&b| a.beat_labels.get(b).copied().unwrap_or('?'))
                .collect();
            let mut names = Vec::new();
            let mut colours = Vec::new();
            let mut keys: Vec<Option<char>> = Vec::new();
            for c in CLASSES {
                if labels.contains(&c) {
                    keys.push(Some(c));
                    names.push(format!("class {c}"));
                    colours.push(class_colour(c));
                }
            }
            if labels.iter().any(|c| !CLASSES.contains(c)) {
                keys.push(None);
                names.push("other label".into());
                colours.push(GREY);
            }
            let cats = labels
                .iter()
                .map(|c| {
                    keys.iter()
                        .position(|k| *k == Some(*c))
                        .or_else(|| keys.iter().position(|k| k.is_none()))
                        .unwrap_or(0)
                })
                .collect();
            Colouring::Categorical(cats, names, colours, "Beat class".into())
        }
        ColourBy::Rhythm => {
            let heading = if a.reference.rhythms.is_empty() {
                "Rhythm screen"
            } else {
                "Reference rhythm"
            };
            let labels: Vec<String> = if a.reference.rhythms.is_empty() {
                beats
                    .iter()
                    .map(|&b| {
                        let irr = b
                            .checked_sub(1)
                            .and_then(|k| a.screen.irregular.get(k))
                            .copied()
                            .unwrap_or(false);
                        if irr {
                            "screen: irregular".to_string()
                        } else {
                            "screen: not irregular".to_string()
                        }
                    })
                    .collect()
            } else {
                let mut sorted: Vec<&crate::record::RhythmInterval> =
                    a.reference.rhythms.iter().collect();
                sorted.sort_by(|x, y| x.start_s.total_cmp(&y.start_s));
                beats
                    .iter()
                    .map(|&b| {
                        beat_time(a, b)
                            .and_then(|t| rhythm_at(&sorted, t))
                            .map_or("no reference label".to_string(), |l| short_label(&l, 20))
                    })
                    .collect()
            };
            let mut names: Vec<String> = Vec::new();
            for l in &labels {
                if !names.contains(l) && names.len() < CATEGORY_COLOURS.len() {
                    names.push(l.clone());
                }
            }
            let mut colours: Vec<RGBColor> = CATEGORY_COLOURS[..names.len()].to_vec();
            let overflow = labels.iter().any(|l| !names.contains(l));
            if overflow {
                names.push("other labels".into());
                colours.push(GREY);
            }
            let cats = labels
                .iter()
                .map(|l| names.iter().position(|x| x == l).unwrap_or(names.len() - 1))
                .collect();
            Colouring::Categorical(cats, names, colours, heading.into())
        }
    }
}

/// Colour bar (continuous) or legend (categorical) in `area`.
pub(crate) fn draw_colour_key<DB: DrawingBackend>(
    area: &Area<DB>,
    colouring: &Colouring,
    range: (f64, f64),
) -> DrawResult {
    match colouring {
        Colouring::Continuous(_, desc) => {
            let (c0, c1) = range;
            let mut bar = ChartBuilder::on(area)
                .margin_top(40)
                .margin_bottom(24)
                .margin_right(24)
                .x_label_area_size(90)
                .y_label_area_size(170)
                .build_cartesian_2d(0.0..1.0, c0..c1)
                .ctx()?;
            bar.configure_mesh()
                .disable_x_mesh()
                .disable_y_mesh()
                .disable_x_axis()
                .y_desc(desc.as_str())
                .axis_desc_style((FONT, DESC_PX))
                .label_style((FONT, LABEL_PX))
                .y_labels(6)
                .draw()
                .ctx()?;
            let steps = 100;
            bar.draw_series((0..steps).map(|s| {
                let lo = c0 + (c1 - c0) * s as f64 / steps as f64;
                let hi = c0 + (c1 - c0) * (s + 1) as f64 / steps as f64;
                Rectangle::new(
                    [(0.0, lo), (1.0, hi)],
                    time_colour((s as f64 + 0.5) / steps as f64).filled(),
                )
            }))
            .ctx()?;
            Ok(())
        }
        Colouring::Categorical(_, names, colours, heading) => {
            let style = TextStyle::from((FONT, LABEL_PX).into_font())
                .color(&OI_BLACK)
                .pos(Pos::new(HPos::Left, VPos::Center));
            area.draw(&Text::new(heading.clone(), (12, 36), style.clone()))
                .ctx()?;
            for (k, (name, col)) in names.iter().zip(colours).enumerate() {
                let y = 90 + 44 * k as i32;
                area.draw(&Circle::new((24, y), 10, col.filled())).ctx()?;
                area.draw(&Text::new(short_label(name, 20), (44, y), style.clone()))
                    .ctx()?;
            }
            Ok(())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn local_dimension_is_a_colour_choice() {
        // common practice: the option names of the CLI flag, parsed case-insensitively.
        assert_eq!(
            ColourBy::parse("local-dimension").unwrap(),
            ColourBy::LocalDimension
        );
        assert_eq!(
            ColourBy::parse("Local_Dimension").unwrap(),
            ColourBy::LocalDimension
        );
        let err = ColourBy::parse("height").unwrap_err().to_string();
        assert!(err.contains("local-dimension"), "{err}");
    }
}
