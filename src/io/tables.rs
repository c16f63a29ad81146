//! Plain CSV tables that commands write beside their results: beats with RR intervals, windowed
//! variability and row-major matrices. Every writer goes through [`super::write_atomic`], so a
//! failed write never leaves a half-written file.

use super::write_atomic;
use crate::rhythm::windowed::VariabilityWindow;
use crate::Result;
use std::path::Path;

/// The beats table: `sample,time_s,rr_s,label`, one row a beat; the first beat has no RR
/// interval (empty field). `rr_s[i - 1]` is the interval that ends at beat `i`.
pub fn beats_csv(samples: &[usize], rr_s: &[f64], labels: &[char], fs_hz: f64) -> String {
    let mut s = String::from("sample,time_s,rr_s,label\n");
    for (i, &smp) in samples.iter().enumerate() {
        let rr = match i.checked_sub(1).and_then(|k| rr_s.get(k)) {
            Some(r) => format!("{r:.6}"),
            None => String::new(),
        };
        let label = labels.get(i).copied().unwrap_or('?');
        s.push_str(&format!("{smp},{:.6},{rr},{label}\n", smp as f64 / fs_hz));
    }
    s
}

/// Write [`beats_csv`] to `path` atomically.
pub fn write_beats(
    path: &Path,
    samples: &[usize],
    rr_s: &[f64],
    labels: &[char],
    fs_hz: f64,
) -> Result<()> {
    write_atomic(path, beats_csv(samples, rr_s, labels, fs_hz).as_bytes())
}

/// The windowed-variability table, one row a window.
pub fn windows_csv(wins: &[VariabilityWindow]) -> String {
    let mut csv =
        String::from("start_s,end_s,n_intervals,n_nn,mean_hr_bpm,sdnn_ms,rmssd_ms,pnn50,cv\n");
    for w in wins {
        let v = &w.variability;
        csv.push_str(&format!(
            "{:.3},{:.3},{},{},{:.4},{:.4},{:.4},{:.5},{:.6}\n",
            w.start_s,
            w.end_s,
            w.n_intervals,
            v.n_rr,
            v.mean_hr_bpm,
            v.sdnn_ms,
            v.rmssd_ms,
            v.pnn50,
            w.cv
        ));
    }
    csv
}

/// Row-major values as CSV lines without a header (8 significant digits, scientific notation).
pub fn matrix_csv(values: &[f64], cols: usize) -> String {
    let mut s = String::new();
    for row in values.chunks(cols.max(1)) {
        let r: Vec<String> = row.iter().map(|v| format!("{v:.8e}")).collect();
        s.push_str(&r.join(","));
        s.push('\n');
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn beats_table_puts_each_interval_on_the_beat_that_ends_it() {
        let t = beats_csv(&[100, 350, 600], &[1.0, 1.0], &['N', 'N', 'V'], 250.0);
        let rows: Vec<&str> = t.lines().collect();
        assert_eq!(rows[0], "sample,time_s,rr_s,label");
        assert_eq!(rows[1], "100,0.400000,,N");
        assert_eq!(rows[2], "350,1.400000,1.000000,N");
        assert_eq!(rows[3], "600,2.400000,1.000000,V");
    }

    #[test]
    fn matrix_rows_have_the_given_width() {
        let t = matrix_csv(&[1.0, 2.0, 3.0, 4.0], 2);
        assert_eq!(t, "1.00000000e0,2.00000000e0\n3.00000000e0,4.00000000e0\n");
    }
}
