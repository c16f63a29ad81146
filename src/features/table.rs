//! A user's per-beat feature table joined to the detected beats of one record, so that the
//! table's columns replace or join the built-in beat windows in every later stage (embedding,
//! dimension, recurrence, separation, report).
//!
//! In: a [`BeatTable`] (read by [`crate::io::beat_table`]), the record's name, rate and detected
//! beat samples, the built-in [`Features`] and a [`TableMode`]. Out: the [`Features`] to use and
//! a [`TableJoin`] counting every row and beat left out, so nothing is dropped silently.
//!
//! Matching: a row takes the detected beat nearest its key within the beat matching window
//! (`score_window_s`, 150 ms by default, the EC57 matching window); a second row on the same beat
//! is a duplicate. Table columns are z-scored over the joined beats of the record (common practice for
//! distance-based methods on columns of different units); when joined to the built-in windows
//! they are further scaled so that the table block's total variance equals the built-in block's,
//! so neither block outweighs the other by its units alone. Being per record, this
//! standardisation removes differences of level and spread between records from the table's
//! columns (in a cohort's shared embedding too); `separate` instead standardises with the fit
//! beats of all its records.

use super::Features;
use crate::error::{Error, Result};
use crate::io::beat_table::BeatTable;
use crate::points::Points;
use crate::separate::TableMode;

/// File lines of unmatched rows kept for messages (the counts themselves are complete).
pub const LIST_MAX: usize = 10;

/// Rows that found no beat, or a beat already taken.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Unmatched {
    /// Rows with no detected beat within the matching window.
    pub unmatched: usize,
    /// Rows matching a beat that an earlier row already matched.
    pub duplicate: usize,
    /// File lines of the first unmatched or duplicate rows.
    pub lines: Vec<usize>,
}

/// Rows of `table` that belong to record `name` (all rows when the table has no record column).
pub fn rows_of(table: &BeatTable, name: &str) -> Vec<usize> {
    (0..table.rows.len())
        .filter(|&r| !table.has_record || table.rows[r].record.as_deref() == Some(name))
        .collect()
}

/// Match table rows to detected beats: for each detected beat the index of its row in `table`
/// (the nearest beat within `window_s` of the row's key), and the rows left over.
pub fn match_rows(
    table: &BeatTable,
    rows: &[usize],
    detected: &[usize],
    fs_hz: f64,
    window_s: f64,
) -> (Vec<Option<usize>>, Unmatched) {
    let w = window_s * fs_hz * (1.0 + 1e-12) + 1e-9;
    let mut row_of = vec![None; detected.len()];
    let mut u = Unmatched::default();
    for &r in rows {
        let x = table.rows[r].key.sample_at(fs_hz);
        let pos = detected.partition_point(|&d| (d as f64) < x);
        let best = [pos.checked_sub(1), Some(pos)]
            .into_iter()
            .flatten()
            .filter(|&j| j < detected.len())
            .map(|j| (j, (detected[j] as f64 - x).abs()))
            .filter(|&(_, d)| d <= w)
            .min_by(|a, b| a.1.total_cmp(&b.1));
        let taken = match best {
            None => {
                u.unmatched += 1;
                false
            }
            Some((j, _)) if row_of[j].is_some() => {
                u.duplicate += 1;
                false
            }
            Some((j, _)) => {
                row_of[j] = Some(r);
                true
            }
        };
        if !taken && u.lines.len() < LIST_MAX {
            u.lines.push(table.rows[r].line);
        }
    }
    (row_of, u)
}

/// Per-column mean and standard deviation (divisor n; a constant column gets SD 1).
pub fn column_stats(p: &Points) -> (Vec<f64>, Vec<f64>) {
    let n = p.n.max(1) as f64;
    let mut mean = vec![0.0; p.dim];
    for r in p.rows() {
        for (m, v) in mean.iter_mut().zip(r) {
            *m += v / n;
        }
    }
    let mut sd = vec![0.0; p.dim];
    for r in p.rows() {
        for ((s, v), m) in sd.iter_mut().zip(r).zip(&mean) {
            *s += (v - m) * (v - m) / n;
        }
    }
    let sd = sd
        .into_iter()
        .map(|v| if v > 0.0 { v.sqrt() } else { 1.0 })
        .collect();
    (mean, sd)
}

/// `(x − mean)/sd · scale` column by column.
pub fn standardise(p: &Points, mean: &[f64], sd: &[f64], scale: f64) -> Points {
    let data = p
        .rows()
        .flat_map(|r| {
            r.iter()
                .zip(mean)
                .zip(sd)
                .map(move |((v, m), s)| (v - m) / s * scale)
        })
        .collect();
    Points {
        n: p.n,
        dim: p.dim,
        data,
    }
}

/// Rows of `a` and `b` side by side (same row count).
pub fn hstack(a: &Points, b: &Points) -> Points {
    let data = a
        .rows()
        .zip(b.rows())
        .flat_map(|(x, y)| x.iter().chain(y).copied().collect::<Vec<_>>())
        .collect();
    Points {
        n: a.n,
        dim: a.dim + b.dim,
        data,
    }
}

/// The scale of z-scored table columns joined to `builtin`: the table block's total variance
/// then equals the built-in block's.
pub fn join_scale(builtin: &Points, table_dim: usize) -> f64 {
    let (_, bsd) = column_stats(builtin);
    let total: f64 = bsd.iter().map(|s| s * s).sum();
    (total / table_dim.max(1) as f64).sqrt()
}

/// What happened to the rows of a table and to the beats of one record.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TableJoin {
    /// Table rows for the record.
    pub rows: usize,
    /// Rows left over (no beat, or a beat already taken).
    pub unmatched: Unmatched,
    /// Beats that would be described (every detected beat when replacing; beats with a
    /// complete built-in window when joining) but have no row.
    pub beats_without_row: usize,
    /// Beats described by the result.
    pub joined: usize,
}

impl TableJoin {
    /// A one-line account for the report's notes.
    pub fn note(&self, table: &BeatTable, mode: TableMode) -> String {
        let u = &self.unmatched;
        let mut s = format!(
            "feature table {} ({}, {} columns): {} rows for this record, {} beats described",
            table.path.display(),
            match mode {
                TableMode::Replace => "replaces the built-in windows",
                TableMode::Join => "joined to the built-in windows",
            },
            table.names.len(),
            self.rows,
            self.joined
        );
        if u.unmatched + u.duplicate > 0 {
            s.push_str(&format!(
                "; {} rows match no detected beat and {} match a beat another row already matched (lines {:?}{})",
                u.unmatched,
                u.duplicate,
                u.lines,
                if u.unmatched + u.duplicate > u.lines.len() { " …" } else { "" }
            ));
        }
        if self.beats_without_row > 0 {
            s.push_str(&format!(
                "; {} beats have no row and are left out",
                self.beats_without_row
            ));
        }
        s
    }
}

/// The features of a record with a table: its rows replace the built-in windows
/// ([`TableMode::Replace`]: every detected beat with a row) or are appended to them
/// ([`TableMode::Join`]: beats with both a window and a row). See the module notes.
///
/// Errors: no row of the table matches a detected beat of the record.
pub fn apply(
    builtin: &Features,
    detected: &[usize],
    fs_hz: f64,
    window_s: f64,
    record: &str,
    table: &BeatTable,
    mode: TableMode,
) -> Result<(Features, TableJoin)> {
    let rows = rows_of(table, record);
    let (row_of, unmatched) = match_rows(table, &rows, detected, fs_hz, window_s);
    // (beat index, built-in row) of every beat to describe.
    let candidates: Vec<(usize, Option<usize>)> = match mode {
        TableMode::Replace => (0..detected.len()).map(|b| (b, None)).collect(),
        TableMode::Join => builtin
            .beat_index
            .iter()
            .enumerate()
            .map(|(r, &b)| (b, Some(r)))
            .collect(),
    };
    let kept: Vec<(usize, Option<usize>, usize)> = candidates
        .iter()
        .filter_map(|&(b, r)| row_of.get(b).copied().flatten().map(|t| (b, r, t)))
        .collect();
    let join = TableJoin {
        rows: rows.len(),
        unmatched,
        beats_without_row: candidates.len() - kept.len(),
        joined: kept.len(),
    };
    if kept.is_empty() {
        return Err(Error::input(
            &table.path,
            format!("record `{record}`"),
            format!(
                "none of the {} rows for this record matches a detected beat within {} ms",
                rows.len(),
                window_s * 1000.0
            ),
        ));
    }
    let data = kept
        .iter()
        .flat_map(|&(_, _, t)| table.rows[t].values.iter().copied())
        .collect();
    let t = Points::new(kept.len(), table.names.len(), data)?;
    let (mean, sd) = column_stats(&t);
    let beat_index: Vec<usize> = kept.iter().map(|k| k.0).collect();
    let f = match mode {
        TableMode::Replace => Features {
            points: standardise(&t, &mean, &sd, 1.0),
            names: table.names.clone(),
            beat_index,
        },
        TableMode::Join => {
            let b = builtin
                .points
                .select(&kept.iter().filter_map(|k| k.1).collect::<Vec<_>>());
            let z = standardise(&t, &mean, &sd, join_scale(&b, t.dim));
            Features {
                points: hstack(&b, &z),
                names: builtin.names.iter().chain(&table.names).cloned().collect(),
                beat_index,
            }
        }
    };
    Ok((f, join))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::beat_table::parse;
    use std::path::Path;

    fn builtin() -> Features {
        // Beats 1..=4 have windows (beat 0 and 5 at the edges do not).
        Features {
            points: Points::new(4, 2, vec![1.0, 0.0, 2.0, 0.0, 3.0, 0.0, 4.0, 0.0]).unwrap(),
            names: vec!["a".into(), "b".into()],
            beat_index: vec![1, 2, 3, 4],
        }
    }

    #[test]
    fn rows_replace_or_join_and_leftovers_are_counted() {
        let detected = [100, 200, 300, 400, 500, 600];
        // Row at 205 → beat 1 (within 150 ms at 100 Hz = 15 samples); 203 duplicates it; 900
        // matches nothing; 600 → beat 5 (no built-in window).
        let t = parse(
            Path::new("t.csv"),
            "sample,x\n205,1\n203,9\n900,5\n300,3\n600,7\n",
        )
        .unwrap();
        let (f, j) = apply(
            &builtin(),
            &detected,
            100.0,
            0.15,
            "r",
            &t,
            TableMode::Replace,
        )
        .unwrap();
        assert_eq!(f.beat_index, vec![1, 2, 5]);
        assert_eq!(f.names, vec!["x".to_string()]);
        assert_eq!((j.rows, j.joined, j.beats_without_row), (5, 3, 3));
        assert_eq!((j.unmatched.unmatched, j.unmatched.duplicate), (1, 1));
        assert_eq!(j.unmatched.lines, vec![3, 4]);
        // z-scores of 1, 3, 7: mean 11/3.
        let m = 11.0 / 3.0;
        let sd = ((1.0f64 - m).powi(2) + (3.0 - m).powi(2) + (7.0 - m).powi(2)) / 3.0;
        assert!((f.points.data[0] - (1.0 - m) / sd.sqrt()).abs() < 1e-12);
        let note = j.note(&t, TableMode::Replace);
        assert!(note.contains("1 rows match no detected beat"), "{note}");
        assert!(note.contains("3 beats have no row"), "{note}");

        let (f, j) = apply(&builtin(), &detected, 100.0, 0.15, "r", &t, TableMode::Join).unwrap();
        // Beat 5 has no window: only beats 1 and 2 have both.
        assert_eq!(f.beat_index, vec![1, 2]);
        assert_eq!(f.points.dim, 3);
        assert_eq!((j.joined, j.beats_without_row), (2, 2));
        assert_eq!(f.points.row(0)[0], 1.0);

        let none = parse(Path::new("t.csv"), "sample,x\n5000,1\n").unwrap();
        let e = apply(
            &builtin(),
            &detected,
            100.0,
            0.15,
            "r",
            &none,
            TableMode::Replace,
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("t.csv") && e.contains("none of the 1 rows"),
            "{e}"
        );
    }
}
