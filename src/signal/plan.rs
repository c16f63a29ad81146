//! Filter plans: every filter design is made once per design key (kind, order, corners, sampling
//! rate) and then reused, across the leads of a record and across the records of a cohort.
//!
//! In: a key and a design function. Out: a copy of the designed [`Sos`] (a few sections, cheap to
//! copy). The cache lives for the process; it holds at most [`MAX_PLANS`] designs and forgets all
//! of them when full, so a run over records at many rates cannot grow it without bound. Designs
//! are deterministic, so a forgotten plan designed again is the same filter.

use super::filter::Sos;
use crate::error::Result;
use std::cell::Cell;
use std::collections::HashMap;
use std::sync::{Mutex, OnceLock};

/// Most designs kept at once.
pub const MAX_PLANS: usize = 256;

/// What a design depends on: its kind and its numbers, bit for bit.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub(crate) struct PlanKey {
    kind: &'static str,
    order: usize,
    numbers: [u64; 3],
}

impl PlanKey {
    pub(crate) fn new(kind: &'static str, order: usize, numbers: [f64; 3]) -> PlanKey {
        PlanKey {
            kind,
            order,
            numbers: numbers.map(f64::to_bits),
        }
    }
}

fn plans() -> &'static Mutex<HashMap<PlanKey, Sos>> {
    static PLANS: OnceLock<Mutex<HashMap<PlanKey, Sos>>> = OnceLock::new();
    PLANS.get_or_init(|| Mutex::new(HashMap::new()))
}

thread_local! {
    static DESIGNS_HERE: Cell<usize> = const { Cell::new(0) };
}

/// How many designs this thread has made through the plan cache (for tests: a second request for
/// the same key must not add one).
pub fn designs_made_by_this_thread() -> usize {
    DESIGNS_HERE.with(Cell::get)
}

/// The design for `key`, made by `design` on first use. Errors are not cached: a bad request
/// reports its error every time.
pub(crate) fn planned(key: PlanKey, design: impl FnOnce() -> Result<Sos>) -> Result<Sos> {
    if let Some(s) = plans().lock().ok().and_then(|m| m.get(&key).cloned()) {
        return Ok(s);
    }
    let s = design()?;
    DESIGNS_HERE.with(|c| c.set(c.get() + 1));
    if let Ok(mut m) = plans().lock() {
        if m.len() >= MAX_PLANS {
            m.clear();
        }
        m.insert(key, s.clone());
    }
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_design_is_made_once_per_rate_and_reused() {
        // A rate no other test uses, so the cache starts without it.
        let fs = 317.25;
        let before = designs_made_by_this_thread();
        let a = Sos::checked_bandpass(2, (4.0, 21.0), fs).unwrap();
        assert_eq!(designs_made_by_this_thread(), before + 1);
        let b = Sos::checked_bandpass(2, (4.0, 21.0), fs).unwrap();
        assert_eq!(
            designs_made_by_this_thread(),
            before + 1,
            "second request redesigned"
        );
        assert_eq!(a, b);
        // Another rate is another design.
        let c = Sos::checked_bandpass(2, (4.0, 21.0), fs * 2.0).unwrap();
        assert_eq!(designs_made_by_this_thread(), before + 2);
        assert_ne!(a, c);
        // A conditioner for many leads at one rate designs its chain once.
        let p = crate::params::Checked::<crate::signal::ConditionParams>::default();
        let n0 = designs_made_by_this_thread();
        for _ in 0..3 {
            crate::signal::Conditioner::new(411.5, &p).unwrap();
        }
        let made = designs_made_by_this_thread() - n0;
        assert!(
            made <= 2,
            "band-pass and notch designed once each, made {made}"
        );
        // Errors are reported every time, not cached away.
        assert!(Sos::checked_bandpass(2, (4.0, 400.0), fs).is_err());
        assert!(Sos::checked_bandpass(2, (4.0, 400.0), fs).is_err());
    }
}
