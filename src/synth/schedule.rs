//! The beat schedule shared by the RR process (`rr`, which writes it) and the waveform model
//! (`model`, which integrates over it): beat kinds, scheduled beats and the settle time.

/// Each output chunk of the model starts this many seconds early with z = 0, and the schedule
/// starts at least this early; the model forgets its initial state as exp(−t / 1 s), so the
/// start-up error is below e⁻²⁰ ≈ 2·10⁻⁹ of a wave's size.
pub(crate) const SETTLE_S: f64 = 20.0;

/// The kind of a beat, which decides its waveform.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum BeatKind {
    /// Regular rhythm: P wave, narrow QRS, T wave. Code `N`.
    Sinus,
    /// Beat inside an irregular-rhythm episode: no P wave, narrow QRS. Code `N`.
    Conducted,
    /// Premature ectopic beat: no P wave, wide QRS, large inverted T. Code `V`.
    Ventricular,
}

impl BeatKind {
    /// One-letter annotation code.
    pub(crate) fn code(self) -> char {
        match self {
            BeatKind::Sinus | BeatKind::Conducted => 'N',
            BeatKind::Ventricular => 'V',
        }
    }
}

/// One beat: the exact time (s from record start, may be negative in the warm-up) at which the
/// model's phase crosses the R event angle, and its kind.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct ScheduledBeat {
    pub t_s: f64,
    pub kind: BeatKind,
}
