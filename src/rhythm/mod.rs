//! Rhythm: time-domain variability of the RR series (Task Force of ESC/NASPE 1996).
//!
//! In: RR intervals in seconds. Out: [`Variability`].

use serde::{Deserialize, Serialize};

/// Time-domain variability of an RR series.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Variability {
    /// Number of RR intervals used.
    pub n_rr: usize,
    /// Mean heart rate, beats per minute (60 / mean RR).
    pub mean_hr_bpm: f64,
    /// Mean RR, milliseconds.
    pub mean_rr_ms: f64,
    /// Standard deviation of RR (ddof 1), milliseconds.
    pub sdnn_ms: f64,
    /// Root mean square of successive differences, milliseconds.
    pub rmssd_ms: f64,
    /// Fraction of successive differences strictly greater than 50 ms.
    pub pnn50: f64,
}
