//! Sliding-window median (centred, window truncated at the ends).
//!
//! In: finite samples and an odd window length in samples. Out: the running median, same length.
//! A sorted copy of the window is kept and updated by binary-search insertion and removal, so the
//! cost is O(n·log w) comparisons plus O(n·w) element moves, which is fast for the short windows
//! used for baseline estimation (tens of samples).

/// Centred running median over `window` samples (rounded up to odd); near the ends the window
/// is truncated to the samples that exist. Even-sized truncated windows take the mean of the two
/// middle values. Non-finite values are ordered by `f64::total_cmp`.
pub fn sliding_median(x: &[f64], window: usize) -> Vec<f64> {
    let n = x.len();
    let mut out = Vec::with_capacity(n);
    if n == 0 {
        return out;
    }
    let half = window / 2;
    let mut sorted: Vec<f64> = Vec::with_capacity(2 * half + 1);
    // Initial window for i = 0: samples 0..=half.
    for &v in x.iter().take(half + 1) {
        insert(&mut sorted, v);
    }
    for i in 0..n {
        out.push(middle(&sorted));
        // Move to i + 1: add x[i + 1 + half], drop x[i - half].
        let incoming = x.get(i + 1 + half).copied();
        let outgoing = if i >= half {
            x.get(i - half).copied()
        } else {
            None
        };
        match (incoming, outgoing) {
            (Some(v), Some(old)) => replace(&mut sorted, old, v),
            (Some(v), None) => insert(&mut sorted, v),
            (None, Some(old)) => remove(&mut sorted, old),
            (None, None) => {}
        }
    }
    out
}

fn insert(sorted: &mut Vec<f64>, v: f64) {
    let pos = sorted.partition_point(|a| a.total_cmp(&v).is_lt());
    sorted.insert(pos, v);
}

/// Replace one occurrence of `old` by `new` and restore the order by moving `new` into place
/// (an insertion-sort step; moves only the elements between the two positions).
fn replace(sorted: &mut [f64], old: f64, new: f64) {
    let mut pos = sorted.partition_point(|a| a.total_cmp(&old).is_lt());
    if pos >= sorted.len() {
        return;
    }
    sorted[pos] = new;
    while pos > 0 && sorted[pos - 1].total_cmp(&new).is_gt() {
        sorted.swap(pos - 1, pos);
        pos -= 1;
    }
    while pos + 1 < sorted.len() && sorted[pos + 1].total_cmp(&new).is_lt() {
        sorted.swap(pos, pos + 1);
        pos += 1;
    }
}

fn remove(sorted: &mut Vec<f64>, v: f64) {
    let pos = sorted.partition_point(|a| a.total_cmp(&v).is_lt());
    if pos < sorted.len() {
        sorted.remove(pos);
    }
}

fn middle(sorted: &[f64]) -> f64 {
    let m = sorted.len();
    if m == 0 {
        return 0.0;
    }
    let mid = m / 2;
    if m % 2 == 1 {
        sorted[mid]
    } else {
        0.5 * (sorted[mid - 1] + sorted[mid])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn brute(x: &[f64], window: usize) -> Vec<f64> {
        let half = window / 2;
        (0..x.len())
            .map(|i| {
                let lo = i.saturating_sub(half);
                let hi = (i + half + 1).min(x.len());
                let mut w = x[lo..hi].to_vec();
                w.sort_by(f64::total_cmp);
                middle(&w)
            })
            .collect()
    }

    #[test]
    fn matches_sorting_definition() {
        // Deterministic pseudo-random values with repeats.
        let x: Vec<f64> = (0..300u64)
            .map(|i| ((i * 7919 + 13) % 37) as f64 - 18.0)
            .collect();
        for w in [1, 3, 5, 11, 31] {
            // Source: definition of the median (sort, take the middle).
            assert_eq!(sliding_median(&x, w), brute(&x, w), "window {w}");
        }
        assert!(sliding_median(&[], 5).is_empty());
        assert_eq!(sliding_median(&[2.0], 5), vec![2.0]);
    }

    #[test]
    fn removes_a_narrow_spike() {
        let mut x = vec![1.0; 50];
        x[25] = 100.0;
        let y = sliding_median(&x, 5);
        assert!(y.iter().all(|&v| v == 1.0));
    }
}
