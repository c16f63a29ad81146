//! Display choices shared by the figures: the time range and the colouring of the embedding.

use super::colouring::ColourBy;
use crate::pipeline::Analysis;

/// Display choices shared by the figures: a time range (seconds from the record start) and the
/// colouring of the embedding.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct View {
    /// Start of the chosen time range, seconds; `None` = the record start.
    pub from_s: Option<f64>,
    /// End of the chosen time range, seconds; `None` = each figure's default length after the
    /// start.
    pub to_s: Option<f64>,
    /// Colouring of the embedding scatter.
    pub colour_by: ColourBy,
}

impl View {
    /// True when the user chose a start or an end.
    pub(super) fn chosen(&self) -> bool {
        self.from_s.is_some() || self.to_s.is_some()
    }

    /// The chosen range, the missing end `default_len_s` after the start, clipped to the record.
    pub(super) fn range_or(&self, a: &Analysis, default_len_s: f64) -> (f64, f64) {
        let dur = if a.duration_s.is_finite() && a.duration_s > 0.0 {
            a.duration_s
        } else {
            a.conditioned.len() as f64 / a.fs_hz.max(f64::MIN_POSITIVE)
        };
        let t0 = self.from_s.unwrap_or(0.0).max(0.0);
        let t1 = self.to_s.unwrap_or(t0 + default_len_s).min(dur);
        (t0, t1.max(t0))
    }
}
