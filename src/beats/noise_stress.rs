//! The noise stress test of beat detectors (Moody, Muldrow & Mark 1984): a clean annotated
//! record with calibrated noise added in alternating segments, scored per signal-to-noise ratio,
//! with the beats inside unreadable stretches counted apart.
//!
//! In: per record, its name (the SNR is read from the usual suffix: `118e06` → 6 dB, `118e_6` →
//! −6 dB), reference and detected beats, the unreadable intervals of the quality index
//! ([`crate::beats::readable`]), the record length, [`Ec57Rules`] and the [`NoiseSchedule`]. Out: a
//! [`NoiseRecord`] per record and one [`SnrRow`] per SNR.
//!
//! Noise layout of the published test records (Moody, Muldrow & Mark 1984; database notes in
//! docs/references.md): no noise for the first 5 minutes, then 2 minutes noisy and 2 minutes clean
//! in turn to the end.

use crate::beats::ec57::{first_scored_sample, pool, Ec57Rules};
use crate::beats::readable::{covered_s, inside};
use crate::beats::scoring::paired_flags;
use crate::beats::Score;
use serde::{Deserialize, Serialize};

/// Where the noise is: from `first_noisy_s`, `noisy_s` seconds noisy then `clean_s` clean, in turn.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct NoiseSchedule {
    /// Start of the first noisy segment, seconds.
    pub first_noisy_s: f64,
    /// Length of a noisy segment, seconds.
    pub noisy_s: f64,
    /// Length of a clean segment between noisy ones, seconds.
    pub clean_s: f64,
}

impl Default for NoiseSchedule {
    fn default() -> Self {
        NoiseSchedule {
            first_noisy_s: 300.0,
            noisy_s: 120.0,
            clean_s: 120.0,
        }
    }
}

impl NoiseSchedule {
    /// True when `t_s` is in a noisy segment.
    pub fn is_noisy(&self, t_s: f64) -> bool {
        if t_s < self.first_noisy_s {
            return false;
        }
        let period = self.noisy_s + self.clean_s;
        if period <= 0.0 {
            return false;
        }
        (t_s - self.first_noisy_s).rem_euclid(period) < self.noisy_s
    }

    /// Noisy intervals within `[0, end_s)`.
    pub fn noisy_intervals(&self, end_s: f64) -> Vec<(f64, f64)> {
        let mut v = Vec::new();
        let period = self.noisy_s + self.clean_s;
        if !(period > 0.0 && self.noisy_s > 0.0) {
            return v;
        }
        let mut t = self.first_noisy_s;
        while t < end_s {
            v.push((t, (t + self.noisy_s).min(end_s)));
            t += period;
        }
        v
    }
}

/// SNR in dB from a noise-stress record name: the text after the last `e`, two digits, with `_`
/// for a minus sign (`118e24` → 24, `119e00` → 0, `118e_6` → −6). None for other names.
pub fn snr_db_from_name(name: &str) -> Option<i32> {
    let stem = name.rsplit(['/', '\\']).next().unwrap_or(name);
    let (_, tail) = stem.rsplit_once('e')?;
    if tail.len() != 2 {
        return None;
    }
    if let Some(d) = tail.strip_prefix('_') {
        return d.parse::<u8>().ok().map(|v| -(v as i32));
    }
    if tail.bytes().all(|b| b.is_ascii_digit()) {
        tail.parse::<i32>().ok()
    } else {
        None
    }
}

/// Counts of one part of a record (TP/FP/FN by the EC57 rule over the scored part).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct Counts {
    /// Matched reference beats.
    pub tp: usize,
    /// Detections without a reference beat.
    pub fp: usize,
    /// Reference beats without a detection.
    pub fn_: usize,
}

impl Counts {
    fn to_score(self, window_ms: f64) -> Score {
        pool(
            [&Score {
                reference: self.tp + self.fn_,
                detected: self.tp + self.fp,
                tp: self.tp,
                fp: self.fp,
                fn_: self.fn_,
                se: 0.0,
                ppv: 0.0,
                match_window_ms: window_ms,
            }],
            window_ms,
        )
    }
}

/// Noise stress result of one record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NoiseRecord {
    /// Record name.
    pub record: String,
    /// SNR of its noisy segments, dB (None when the name carries none).
    pub snr_db: Option<i32>,
    /// Score over the whole scored part.
    pub all: Score,
    /// Score over the beats outside the unreadable intervals.
    pub readable: Score,
    /// Counts of the beats inside unreadable intervals (left out of `readable`).
    pub unreadable: Counts,
    /// Counts in the noisy segments only.
    pub noisy: Counts,
    /// Scored seconds in clean segments, and of them marked unreadable.
    pub clean_s: f64,
    /// Clean seconds marked unreadable.
    pub clean_marked_s: f64,
    /// Scored seconds in noisy segments.
    pub noisy_s: f64,
    /// Noisy seconds marked unreadable.
    pub noisy_marked_s: f64,
    /// True when the record is left out of the totals.
    pub left_out: bool,
}

/// Score one noise-stress record. A reference beat is placed by its own time, a false detection
/// by the detection's time.
#[allow(clippy::too_many_arguments)]
pub fn score_noise_record(
    record: &str,
    reference: &[usize],
    detected: &[usize],
    unreadable: &[(f64, f64)],
    fs_hz: f64,
    n_samples: usize,
    rules: &Ec57Rules,
    schedule: &NoiseSchedule,
) -> NoiseRecord {
    let start = first_scored_sample(rules.learning_s, fs_hz, n_samples);
    let (rp, dp) = paired_flags(reference, detected, fs_hz, rules.window_s);
    let (mut read, mut unread, mut noisy) =
        (Counts::default(), Counts::default(), Counts::default());
    let in_range = |s: usize| s >= start && s < n_samples;
    let mut put = |s: usize, f: &dyn Fn(&mut Counts)| {
        let t = s as f64 / fs_hz;
        if inside(unreadable, t) {
            f(&mut unread);
        } else {
            f(&mut read);
        }
        if schedule.is_noisy(t) {
            f(&mut noisy);
        }
    };
    for (&r, &paired) in reference.iter().zip(&rp) {
        if in_range(r) {
            if paired {
                put(r, &|c| c.tp += 1);
            } else {
                put(r, &|c| c.fn_ += 1);
            }
        }
    }
    for (&d, &paired) in detected.iter().zip(&dp) {
        if in_range(d) && !paired {
            put(d, &|c| c.fp += 1);
        }
    }
    let w = 1000.0 * rules.window_s;
    let all = Counts {
        tp: read.tp + unread.tp,
        fp: read.fp + unread.fp,
        fn_: read.fn_ + unread.fn_,
    };
    let (from, to) = (start as f64 / fs_hz, n_samples as f64 / fs_hz);
    let noisy_iv = schedule.noisy_intervals(to);
    let noisy_s = covered_s(&noisy_iv, from, to);
    let marked_s = covered_s(unreadable, from, to);
    // Marked time inside noisy segments: the overlap of the two interval lists.
    let noisy_marked_s: f64 = noisy_iv
        .iter()
        .map(|&(a, b)| covered_s(unreadable, a.max(from), b.min(to)))
        .sum();
    NoiseRecord {
        record: record.to_string(),
        snr_db: snr_db_from_name(record),
        all: all.to_score(w),
        readable: read.to_score(w),
        unreadable: unread,
        noisy,
        clean_s: (to - from).max(0.0) - noisy_s,
        clean_marked_s: marked_s - noisy_marked_s,
        noisy_s,
        noisy_marked_s,
        left_out: rules.left_out(record),
    }
}

/// Records of one SNR pooled.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SnrRow {
    /// SNR, dB (None: records whose name carries no SNR).
    pub snr_db: Option<i32>,
    /// Records pooled.
    pub records: Vec<String>,
    /// Pooled score over the scored part.
    pub all: Score,
    /// Pooled score outside the unreadable intervals.
    pub readable: Score,
    /// Pooled counts inside unreadable intervals.
    pub unreadable: Counts,
    /// Pooled counts in the noisy segments.
    pub noisy: Counts,
    /// Clean seconds scored, and of them marked unreadable.
    pub clean_s: f64,
    /// Clean seconds marked unreadable.
    pub clean_marked_s: f64,
    /// Noisy seconds scored.
    pub noisy_s: f64,
    /// Noisy seconds marked unreadable.
    pub noisy_marked_s: f64,
}

impl SnrRow {
    /// Fraction of the false detections that fall in unreadable intervals (1 with none).
    pub fn fp_caught(&self) -> f64 {
        let fp = self.all.fp;
        if fp == 0 {
            1.0
        } else {
            self.unreadable.fp as f64 / fp as f64
        }
    }

    /// Fraction of the clean time marked unreadable (0 with no clean time).
    pub fn clean_marked(&self) -> f64 {
        if self.clean_s > 0.0 {
            self.clean_marked_s / self.clean_s
        } else {
            0.0
        }
    }
}

/// Pool the records not left out by SNR, highest SNR first (names without an SNR last).
pub fn by_snr(rows: &[NoiseRecord]) -> Vec<SnrRow> {
    let mut keys: Vec<Option<i32>> = rows
        .iter()
        .filter(|r| !r.left_out)
        .map(|r| r.snr_db)
        .collect();
    keys.sort_by(|a, b| match (a, b) {
        (Some(x), Some(y)) => y.cmp(x),
        (Some(_), None) => std::cmp::Ordering::Less,
        (None, Some(_)) => std::cmp::Ordering::Greater,
        (None, None) => std::cmp::Ordering::Equal,
    });
    keys.dedup();
    keys.into_iter()
        .map(|k| pooled_row(k, rows.iter().filter(|r| !r.left_out && r.snr_db == k)))
        .collect()
}

/// Pool any set of records into one row labelled `snr_db`.
pub fn pooled_row<'a>(snr_db: Option<i32>, rows: impl Iterator<Item = &'a NoiseRecord>) -> SnrRow {
    let rows: Vec<&NoiseRecord> = rows.collect();
    let w = rows.first().map_or(150.0, |r| r.all.match_window_ms);
    let add = |f: &dyn Fn(&NoiseRecord) -> Counts| {
        rows.iter().fold(Counts::default(), |acc, r| {
            let c = f(r);
            Counts {
                tp: acc.tp + c.tp,
                fp: acc.fp + c.fp,
                fn_: acc.fn_ + c.fn_,
            }
        })
    };
    let sum = |f: &dyn Fn(&NoiseRecord) -> f64| rows.iter().map(|r| f(r)).sum::<f64>();
    SnrRow {
        snr_db,
        records: rows.iter().map(|r| r.record.clone()).collect(),
        all: pool(rows.iter().map(|r| &r.all), w),
        readable: pool(rows.iter().map(|r| &r.readable), w),
        unreadable: add(&|r| r.unreadable),
        noisy: add(&|r| r.noisy),
        clean_s: sum(&|r| r.clean_s),
        clean_marked_s: sum(&|r| r.clean_marked_s),
        noisy_s: sum(&|r| r.noisy_s),
        noisy_marked_s: sum(&|r| r.noisy_marked_s),
    }
}

/// The table of our own printed by `score` and written by the validation example: one line per
/// SNR with Se and +P over all scored beats, the false detections inside unreadable stretches,
/// the clean time wrongly marked, and Se / +P outside unreadable stretches.
pub fn snr_table_markdown(rows: &[SnrRow]) -> String {
    let mut s = String::from(
        "| SNR dB | records | ref beats | TP | FP | FN | Se % | +P % | FP in unreadable | clean time marked unreadable % | noisy time marked unreadable % | Se / +P % outside unreadable |\n|---|---|---|---|---|---|---|---|---|---|---|---|\n",
    );
    for r in rows {
        let pct = |n: f64, d: f64| {
            if d > 0.0 {
                format!("{:.1}", 100.0 * n / d)
            } else {
                "–".into()
            }
        };
        s.push_str(&format!(
            "| {} | {} | {} | {} | {} | {} | {:.2} | {:.2} | {} of {} ({}) | {} | {} | {:.2} / {:.2} |\n",
            r.snr_db.map_or("–".into(), |v| v.to_string()),
            r.records.join(", "),
            r.all.reference,
            r.all.tp,
            r.all.fp,
            r.all.fn_,
            100.0 * r.all.se,
            100.0 * r.all.ppv,
            r.unreadable.fp,
            r.all.fp,
            pct(r.unreadable.fp as f64, r.all.fp as f64),
            pct(r.clean_marked_s, r.clean_s),
            pct(r.noisy_marked_s, r.noisy_s),
            100.0 * r.readable.se,
            100.0 * r.readable.ppv,
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn snr_from_names() {
        assert_eq!(snr_db_from_name("118e24"), Some(24));
        assert_eq!(snr_db_from_name("119e00"), Some(0));
        assert_eq!(snr_db_from_name("118e_6"), Some(-6));
        assert_eq!(snr_db_from_name("/data/nstdb/119e12"), Some(12));
        assert_eq!(snr_db_from_name("100"), None);
        assert_eq!(snr_db_from_name("record"), None);
        assert_eq!(snr_db_from_name("118e6"), None);
    }

    #[test]
    fn schedule_alternates() {
        // Moody, Muldrow & Mark (1984) layout: clean 0–300 s, noisy 300–420, clean 420–540, ...
        let s = NoiseSchedule::default();
        assert!(!s.is_noisy(299.9) && s.is_noisy(300.0) && s.is_noisy(419.9));
        assert!(!s.is_noisy(420.0) && !s.is_noisy(539.9) && s.is_noisy(540.0));
        assert_eq!(
            s.noisy_intervals(600.0),
            vec![(300.0, 420.0), (540.0, 600.0)]
        );
    }

    #[test]
    fn beats_split_by_unreadable_and_noise() {
        let fs = 10.0;
        let rules = Ec57Rules {
            learning_s: 0.0,
            ..Ec57Rules::default()
        };
        let sched = NoiseSchedule {
            first_noisy_s: 10.0,
            noisy_s: 10.0,
            clean_s: 10.0,
        };
        // 40 s; references every 2 s; two false detections at 13 s and 33 s; one missed beat at 15 s.
        let r: Vec<usize> = (0..20).map(|k| k * 20 + 10).collect();
        let mut d: Vec<usize> = r.iter().copied().filter(|&x| x != 150).collect();
        d.extend([130, 330]);
        d.sort_unstable();
        // Noisy: 10–20 s and 30–40 s. Unreadable: 10–20 s (noisy) and 22–24 s (clean).
        let u = vec![(10.0, 20.0), (22.0, 24.0)];
        let n = score_noise_record("118e06", &r, &d, &u, fs, 400, &rules, &sched);
        assert_eq!(n.snr_db, Some(6));
        assert_eq!((n.all.tp, n.all.fp, n.all.fn_), (19, 2, 1));
        // Inside unreadable: refs at 11,13,15,17,19 (4 TP, 1 FN), 23 (TP); FP at 13 s.
        assert_eq!(
            n.unreadable,
            Counts {
                tp: 5,
                fp: 1,
                fn_: 1
            }
        );
        assert_eq!((n.readable.tp, n.readable.fp, n.readable.fn_), (14, 1, 0));
        // Noisy 10–20 s: 4 TP, 1 FN, 1 FP; 30–40 s: 5 TP, 1 FP.
        assert_eq!(
            n.noisy,
            Counts {
                tp: 9,
                fp: 2,
                fn_: 1
            }
        );
        assert!((n.noisy_s - 20.0).abs() < 1e-12 && (n.clean_s - 20.0).abs() < 1e-12);
        assert!((n.noisy_marked_s - 10.0).abs() < 1e-12);
        assert!((n.clean_marked_s - 2.0).abs() < 1e-12);
        let rows = by_snr(&[
            n.clone(),
            NoiseRecord {
                record: "119e12".into(),
                snr_db: Some(12),
                ..n
            },
        ]);
        assert_eq!(
            rows.iter().map(|r| r.snr_db).collect::<Vec<_>>(),
            vec![Some(12), Some(6)]
        );
        assert!((rows[1].fp_caught() - 0.5).abs() < 1e-15);
        assert!((rows[1].clean_marked() - 2.0 / 20.0).abs() < 1e-15);
        let md = snr_table_markdown(&rows);
        assert!(
            md.contains("| 6 | 118e06 | 20 | 19 | 2 | 1 | 95.00 | 90.48 | 1 of 2 (50.0) |"),
            "{md}"
        );
    }
}
