//! Beat classes from reference annotation codes, and the class of each detected beat.
//!
//! The five classes group the one-letter beat codes of MIT-format annotations as ANSI/AAMI EC57
//! groups them for reporting beat classification (the grouping recalled from memory, and the one
//! used by de Chazal, O'Dwyer & Reilly 2004): N-type (N, L, R, e, j), S (A, a, J, S), V (V, E),
//! F (F) and Q (/, f, Q). A detected beat takes the class of the reference beat it is paired with
//! by the EC57 rule (150 ms window, each reference beat paired at most once,
//! [`crate::beats::scoring::match_pairs`]); detections with no reference beat, and reference beats
//! of other codes, have no class and are counted.

use crate::beats::scoring::match_pairs;
use crate::record::BeatAnnotation;
use serde::Serialize;

/// A beat class of the EC57 grouping.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub enum BeatClass {
    /// Normal and bundle-branch-block beats, atrial and nodal escape beats.
    N,
    /// Supraventricular ectopic beats.
    S,
    /// Ventricular ectopic beats.
    V,
    /// Fusion of ventricular and normal beats.
    F,
    /// Paced, fusion of paced and normal, and unclassifiable beats.
    Q,
}

impl BeatClass {
    /// Every class, in table order.
    pub const ALL: [BeatClass; 5] = [
        BeatClass::N,
        BeatClass::S,
        BeatClass::V,
        BeatClass::F,
        BeatClass::Q,
    ];

    /// The class of a one-letter beat code, `None` for codes outside the grouping.
    pub fn from_code(code: char) -> Option<BeatClass> {
        match code {
            'N' | 'L' | 'R' | 'e' | 'j' => Some(BeatClass::N),
            'A' | 'a' | 'J' | 'S' => Some(BeatClass::S),
            'V' | 'E' => Some(BeatClass::V),
            'F' => Some(BeatClass::F),
            '/' | 'f' | 'Q' => Some(BeatClass::Q),
            _ => None,
        }
    }

    /// Position in [`BeatClass::ALL`].
    pub fn index(self) -> usize {
        self as usize
    }

    /// One-letter name.
    pub fn name(self) -> &'static str {
        match self {
            BeatClass::N => "N",
            BeatClass::S => "S",
            BeatClass::V => "V",
            BeatClass::F => "F",
            BeatClass::Q => "Q",
        }
    }
}

/// The class of every detected beat of one record.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BeatClasses {
    /// One entry per detected beat: its class, or `None` (no reference beat in the window, or a
    /// reference code outside the grouping).
    pub class: Vec<Option<BeatClass>>,
    /// Reference beats with a class that no detected beat was paired with.
    pub missed_reference: usize,
    /// Detected beats paired with no reference beat.
    pub unmatched_detections: usize,
    /// Reference beats whose code is outside the grouping (e.g. `?`).
    pub other_codes: usize,
}

/// Pair detected beats (`detected`, sorted samples) with reference beats (sorted by sample) by
/// the EC57 rule with a `window_s` window at `fs_hz`, and give each detected beat the class of its
/// reference beat.
pub fn classify_detections(
    reference: &[BeatAnnotation],
    detected: &[usize],
    fs_hz: f64,
    window_s: f64,
) -> BeatClasses {
    let ref_samples: Vec<usize> = reference.iter().map(|b| b.sample).collect();
    let pairs = match_pairs(&ref_samples, detected, fs_hz, window_s);
    let mut class = vec![None; detected.len()];
    let mut paired_ref = vec![false; reference.len()];
    for &(r, d) in &pairs {
        paired_ref[r] = true;
        class[d] = BeatClass::from_code(reference[r].code);
    }
    let other_codes = reference
        .iter()
        .filter(|b| BeatClass::from_code(b.code).is_none())
        .count();
    let missed_reference = reference
        .iter()
        .zip(&paired_ref)
        .filter(|(b, &p)| !p && BeatClass::from_code(b.code).is_some())
        .count();
    BeatClasses {
        class,
        missed_reference,
        unmatched_detections: detected.len() - pairs.len(),
        other_codes,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ann(sample: usize, code: char) -> BeatAnnotation {
        BeatAnnotation { sample, code }
    }

    #[test]
    fn codes_group_as_in_the_standard() {
        // Source: ANSI/AAMI EC57 grouping as used by de Chazal et al. (2004), from memory.
        for (c, k) in [
            ('N', BeatClass::N),
            ('L', BeatClass::N),
            ('R', BeatClass::N),
            ('e', BeatClass::N),
            ('j', BeatClass::N),
            ('A', BeatClass::S),
            ('a', BeatClass::S),
            ('J', BeatClass::S),
            ('S', BeatClass::S),
            ('V', BeatClass::V),
            ('E', BeatClass::V),
            ('F', BeatClass::F),
            ('/', BeatClass::Q),
            ('f', BeatClass::Q),
            ('Q', BeatClass::Q),
        ] {
            assert_eq!(BeatClass::from_code(c), Some(k), "code {c}");
        }
        assert_eq!(BeatClass::from_code('?'), None);
        assert_eq!(BeatClass::from_code('+'), None);
    }

    #[test]
    fn detections_take_the_class_of_their_reference_beat() {
        // 100 Hz, window 0.15 s = 15 samples.
        let reference = [ann(100, 'N'), ann(200, 'V'), ann(300, 'A'), ann(400, '?')];
        let detected = [103, 214, 360, 401];
        let c = classify_detections(&reference, &detected, 100.0, 0.15);
        assert_eq!(
            c.class,
            vec![Some(BeatClass::N), Some(BeatClass::V), None, None]
        );
        assert_eq!(c.missed_reference, 1); // the A beat at 300
        assert_eq!(c.unmatched_detections, 1); // 360
        assert_eq!(c.other_codes, 1);
    }
}
