//! Small summary statistics shared by several stages.

/// Median of the finite values (the mean of the two middle values for an even count); NaN when
/// there is no finite value.
pub fn median(values: impl IntoIterator<Item = f64>) -> f64 {
    let mut v: Vec<f64> = values.into_iter().filter(|x| x.is_finite()).collect();
    median_of_finite(&mut v)
}

/// [`median`] of values already known to be finite, reordering them in place (no allocation;
/// for hot loops over small sets). NaN when `v` is empty.
pub fn median_of_finite(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_unstable_by(f64::total_cmp);
    let m = v.len() / 2;
    if v.len() % 2 == 1 {
        v[m]
    } else {
        0.5 * (v[m - 1] + v[m])
    }
}

/// Area under the ROC curve of `score` for members against non-members: the Mann–Whitney U of
/// the members' ranks divided by n₁n₀, the probability that a random member scores above a random
/// non-member, tied scores taking their average rank (counting one half; Hanley & McNeil 1982).
/// Points with a non-finite score are left out; NaN when either group is then empty.
/// O(n log n), so it serves a beat set as well as a record set.
pub fn roc_auc(score: &[f64], member: &[bool]) -> f64 {
    let mut order: Vec<usize> = (0..score.len().min(member.len()))
        .filter(|&i| score[i].is_finite())
        .collect();
    let n1 = order.iter().filter(|&&i| member[i]).count();
    let n0 = order.len() - n1;
    if n1 == 0 || n0 == 0 {
        return f64::NAN;
    }
    order.sort_by(|&a, &b| score[a].total_cmp(&score[b]));
    let mut rank_sum = 0.0;
    let mut i = 0;
    while i < order.len() {
        let mut j = i;
        while j + 1 < order.len() && score[order[j + 1]] == score[order[i]] {
            j += 1;
        }
        // Ranks i+1 ..= j+1 share their mean.
        let mean_rank = (i + j + 2) as f64 / 2.0;
        rank_sum += mean_rank * order[i..=j].iter().filter(|&&o| member[o]).count() as f64;
        i = j + 1;
    }
    let u = rank_sum - (n1 * (n1 + 1)) as f64 / 2.0;
    u / (n1 as f64 * n0 as f64)
}

#[cfg(test)]
mod tests {
    use super::{median, roc_auc};

    #[test]
    fn auc_matches_hand_counts() {
        // Source: the Mann–Whitney definition (Mann & Whitney 1947): members 0.9, 0.4; others
        // 0.1, 0.4, 0.5. Pairs won: 0.9 beats 3; 0.4 beats 0.1, ties 0.4 (½), loses to 0.5 →
        // U = 3 + 1.5 = 4.5 of 6 pairs. A NaN score is left out.
        let auc = roc_auc(
            &[0.9, 0.4, 0.1, 0.4, 0.5, f64::NAN],
            &[true, true, false, false, false, true],
        );
        assert!((auc - 0.75).abs() < 1e-12, "{auc}");
        assert_eq!(roc_auc(&[1.0, 0.0], &[true, false]), 1.0);
        assert!(roc_auc(&[1.0, 0.0], &[true, true]).is_nan());
        assert!(roc_auc(&[1.0, f64::NAN], &[true, false]).is_nan());
    }

    #[test]
    fn odd_even_empty_and_non_finite() {
        assert_eq!(median([3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median([4.0, 1.0, 3.0, 2.0]), 2.5);
        assert!(median([]).is_nan());
        assert_eq!(median([f64::NAN, 5.0, f64::INFINITY, 1.0]), 3.0);
    }
}
