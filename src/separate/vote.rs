//! Nearest-neighbour vote and separation scores of labelled beats in one space.
//!
//! In: the classes of a labelled reference set, each query's nearest reference rows
//! ([`crate::neighbours`]) and the queries' true classes. Out: a [`SpaceScore`]: the confusion
//! matrix of a k-nearest-neighbour majority vote (Cover & Hart 1967), per class Se = TP/(TP+FN),
//! +P = TP/(TP+FP) and F1 = 2TP/(2TP+FP+FN), and a rank-based separation index per class: the
//! area under the ROC curve of the share of a beat's k neighbours that belong to the class,
//! computed as the Mann–Whitney U statistic divided by n₁n₀ (Mann & Whitney 1947; Hanley & McNeil
//! 1982), with tied scores given their average rank. 0.5 is chance, 1 perfect separation.

use super::classes::BeatClass;
use crate::neighbours::Neighbors;
use serde::Serialize;

/// Number of classes.
const NC: usize = BeatClass::ALL.len();

/// The vote of one query: the class with most of the `k` neighbours; a tie goes to the tied
/// class whose nearest member is nearest. Also the share of neighbours in each class.
pub fn vote(neighbour_classes: &[BeatClass]) -> (BeatClass, [f64; NC]) {
    let mut count = [0usize; NC];
    let mut first = [usize::MAX; NC];
    for (r, c) in neighbour_classes.iter().enumerate() {
        count[c.index()] += 1;
        first[c.index()] = first[c.index()].min(r);
    }
    let mut best = 0;
    for c in 1..NC {
        if count[c] > count[best] || (count[c] == count[best] && first[c] < first[best]) {
            best = c;
        }
    }
    let k = neighbour_classes.len().max(1) as f64;
    let share = count.map(|n| n as f64 / k);
    (BeatClass::ALL[best], share)
}

/// Votes of every query from a neighbour table over a reference set with classes `ref_class`.
/// With `skip_self`, query i is reference row i and is left out of its own neighbours (the
/// table must then hold k + 1 neighbours per query); otherwise all k neighbours vote.
pub fn votes(
    nb: &Neighbors,
    ref_class: &[BeatClass],
    k: usize,
    skip_self: bool,
) -> Vec<(BeatClass, [f64; NC])> {
    (0..nb.n)
        .map(|i| {
            let cls: Vec<BeatClass> = nb
                .index_of(i)
                .iter()
                .filter(|&&j| !(skip_self && j == i))
                .take(k)
                .map(|&j| ref_class[j])
                .collect();
            vote(&cls)
        })
        .collect()
}

/// Scores of one class.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClassScore {
    /// The class.
    pub class: BeatClass,
    /// Beats of the class (reference).
    pub n: usize,
    /// Beats voted into the class.
    pub predicted: usize,
    /// Beats of the class voted into it.
    pub tp: usize,
    /// Sensitivity TP/n (NaN when n = 0).
    pub se: f64,
    /// Positive predictivity TP/predicted (NaN when nothing was voted into the class).
    pub ppv: f64,
    /// F1 = 2TP/(n + predicted) (NaN when both are 0).
    pub f1: f64,
    /// Rank separation index (ROC area of the neighbour share; NaN without members or without
    /// other beats).
    pub rank_index: f64,
}

/// Scores of one space: confusion matrix and per-class scores.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpaceScore {
    /// Beats scored.
    pub n: usize,
    /// Rows: reference class, columns: voted class, in [`BeatClass::ALL`] order.
    pub confusion: [[usize; NC]; NC],
    /// One entry per class of [`BeatClass::ALL`].
    pub classes: Vec<ClassScore>,
}

fn ratio(a: usize, b: usize) -> f64 {
    if b == 0 {
        f64::NAN
    } else {
        a as f64 / b as f64
    }
}

/// Score votes (`votes[i]` for the beat of class `truth[i]`).
pub fn score(truth: &[BeatClass], votes: &[(BeatClass, [f64; NC])]) -> SpaceScore {
    let mut confusion = [[0usize; NC]; NC];
    for (t, (v, _)) in truth.iter().zip(votes) {
        confusion[t.index()][v.index()] += 1;
    }
    let classes = BeatClass::ALL
        .iter()
        .map(|&c| {
            let k = c.index();
            let n: usize = confusion[k].iter().sum();
            let predicted: usize = confusion.iter().map(|row| row[k]).sum();
            let tp = confusion[k][k];
            let share: Vec<f64> = votes.iter().map(|(_, s)| s[k]).collect();
            let member: Vec<bool> = truth.iter().map(|&t| t == c).collect();
            ClassScore {
                class: c,
                n,
                predicted,
                tp,
                se: ratio(tp, n),
                ppv: ratio(tp, predicted),
                f1: ratio(2 * tp, n + predicted),
                rank_index: crate::stats::roc_auc(&share, &member),
            }
        })
        .collect();
    SpaceScore {
        n: truth.len(),
        confusion,
        classes,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use BeatClass::{N, S, V};

    #[test]
    fn vote_takes_the_majority_and_breaks_ties_by_the_nearest() {
        assert_eq!(vote(&[N, V, V, N, V]).0, V);
        // 2 N, 2 V, 1 S: N and V tie, V's member is nearer.
        assert_eq!(vote(&[V, N, S, N, V]).0, V);
        let (_, share) = vote(&[N, N, N, V, S]);
        assert_eq!(share[N.index()], 0.6);
        assert_eq!(share[S.index()], 0.2);
    }

    #[test]
    fn scores_follow_the_confusion_matrix() {
        let truth = [N, N, N, V, V];
        let v = [N, N, V, V, N].map(|c| vote(&[c]));
        let s = score(&truth, &v);
        assert_eq!(s.confusion[0][0], 2);
        assert_eq!(s.confusion[0][2], 1);
        assert_eq!(s.confusion[2][0], 1);
        let vs = &s.classes[V.index()];
        assert_eq!((vs.n, vs.predicted, vs.tp), (2, 2, 1));
        assert!((vs.se - 0.5).abs() < 1e-12 && (vs.ppv - 0.5).abs() < 1e-12);
        assert!((vs.f1 - 0.5).abs() < 1e-12);
        assert!(s.classes[S.index()].se.is_nan());
    }
}
