//! Conditioning: zero-phase Butterworth band-pass (second-order sections, applied forward and
//! backward), mains notch, baseline removal, and per-segment signal-quality flags.
//!
//! In: one lead's samples and its sampling rate in Hz. Out: the conditioned samples (same length)
//! and [`QualitySegment`]s.
//!
//! Submodules: [`filter`] (Butterworth and notch designs as second-order sections, causal and
//! zero-phase application), [`median`] (sliding-window median), [`condition`] (the conditioning
//! chain with its checked [`ConditionParams`]), [`quality`] (per-segment flags), [`resample`]
//! (integer decimation for detection on records sampled far above 250 Hz).
//! Filters are designed once per design and sampling rate ([`plan`]) and applied to many leads
//! and records.

use serde::{Deserialize, Serialize};

pub mod condition;
pub mod filter;
pub mod median;
pub mod plan;
pub mod quality;
pub mod resample;

pub use condition::{condition, fill_non_finite, ConditionParams, Conditioner};
pub use filter::{Section, Sos};
pub use quality::quality;

/// Quality flags of one segment of a lead.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct QualitySegment {
    /// Segment start, seconds.
    pub start_s: f64,
    /// Segment end, seconds.
    pub end_s: f64,
    /// Signal nearly constant (flat line or lead off).
    pub flat: bool,
    /// Samples stuck at the range limits (saturation / clipping).
    pub clipped: bool,
    /// High-frequency noise power well above the QRS band.
    pub noisy: bool,
    /// Non-finite samples (NaN/Inf) were present and replaced.
    pub non_finite: bool,
    /// Electrode off: the segment is flat at a level far from the lead's usual level (see
    /// [`quality`](quality::quality) for the rule).
    #[serde(default)]
    pub lead_off: bool,
    /// The segment's amplitude differs from the previous usable segment's by a large factor, as
    /// a gain switch or a moved electrode gives.
    #[serde(default)]
    pub gain_change: bool,
}

impl QualitySegment {
    /// True when no flag is set.
    pub fn is_clean(&self) -> bool {
        !(self.flat
            || self.clipped
            || self.noisy
            || self.non_finite
            || self.lead_off
            || self.gain_change)
    }
}
