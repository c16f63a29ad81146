//! The per-record rhythm verdict: one class for a whole record (any length from 10 s), with the
//! fraction of the record in irregular episodes, the index the decision rests on, and the reasons
//! in words. Research use only: a verdict is a research label for a recording, never a diagnosis.

use serde::{Deserialize, Serialize};

/// The class of a record's rhythm.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum VerdictClass {
    /// Regular rhythm with ordinary variability.
    Regular,
    /// Irregularly irregular RR with no organised atrial activity (AF-like).
    Irregular,
    /// Irregular but organised: frequent ectopy, bigeminy, trigeminy, flutter with variable block.
    Other,
    /// Quality too poor (or too few beats) to decide.
    Unreadable,
}

impl VerdictClass {
    /// Every class, in display order.
    pub const ALL: [VerdictClass; 4] = [
        VerdictClass::Regular,
        VerdictClass::Irregular,
        VerdictClass::Other,
        VerdictClass::Unreadable,
    ];

    /// The lower-case name used in JSON, tables and label maps.
    pub fn name(self) -> &'static str {
        match self {
            VerdictClass::Regular => "regular",
            VerdictClass::Irregular => "irregular",
            VerdictClass::Other => "other",
            VerdictClass::Unreadable => "unreadable",
        }
    }

    /// Parse a lower-case class name.
    pub fn parse(s: &str) -> Option<VerdictClass> {
        VerdictClass::ALL.into_iter().find(|c| c.name() == s)
    }
}

/// A record's verdict.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Verdict {
    /// The class.
    pub class: VerdictClass,
    /// Fraction of the analysed duration inside irregular episodes, 0..1.
    pub irregular_fraction: f64,
    /// The irregularity index the decision rests on (its definition is in docs/methods.md).
    pub index: f64,
    /// Reasons, in words, for the class.
    pub reasons: Vec<String>,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn class_names_round_trip() {
        for c in VerdictClass::ALL {
            assert_eq!(VerdictClass::parse(c.name()), Some(c));
            let json = serde_json::to_string(&c).unwrap();
            assert_eq!(json, format!("\"{}\"", c.name()));
        }
        assert_eq!(VerdictClass::parse("Regular"), None);
    }
}
