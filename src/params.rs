//! Checked parameters: every stage's parameter block is validated once, into a [`Checked`] form,
//! before any work starts.
//!
//! A parameter block implements [`Check`]: `validate` says what is wrong (the config path, e.g.
//! `diffusion.components`, the value with its unit and the allowed range, as an
//! [`Error::Param`](crate::Error::Param)), and `check` turns the block into a [`Checked`] value.
//! A `Checked<T>` can only be made by `check` (its field is private), so a function that takes
//! `&Checked<T>` knows its parameters are in range and need no second look.
//!
//! The ranges themselves live beside each stage's algorithm (e.g. `ConditionParams::check` in
//! `signal::condition`); the impls below only connect them to this one form.

use crate::error::Result;
use std::ops::Deref;

/// A parameter block that passed [`Check::validate`]. Read it through `Deref`; change it only
/// by taking it apart ([`Checked::into_inner`]) and checking again.
#[derive(Debug, Clone, PartialEq)]
pub struct Checked<T>(T);

impl<T> Checked<T> {
    /// The parameters, to change and check again.
    pub fn into_inner(self) -> T {
        self.0
    }
}

impl<T: Check> Checked<T> {
    /// `t` checked (the same as `t.check()`).
    pub fn new(t: T) -> Result<Checked<T>> {
        t.check()
    }

    /// The checked form of a block that is part of an already checked block whose `validate`
    /// covers it (e.g. `condition` of a checked `AnalyzeParams`): no second look, except a
    /// debug assertion.
    pub(crate) fn part_of_checked(t: T) -> Checked<T> {
        debug_assert!(t.validate().is_ok());
        Checked(t)
    }
}

impl<T> Deref for Checked<T> {
    type Target = T;
    fn deref(&self) -> &T {
        &self.0
    }
}

impl<T: serde::Serialize> serde::Serialize for Checked<T> {
    fn serialize<S: serde::Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        self.0.serialize(s)
    }
}

/// Reading a checked block checks it: a value out of range is a deserialisation error naming
/// the key and the allowed range.
impl<'de, T: serde::Deserialize<'de> + Check> serde::Deserialize<'de> for Checked<T> {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        T::deserialize(d)?
            .check()
            .map_err(<D::Error as serde::de::Error>::custom)
    }
}

/// Test parameters, checked (a panic names the problem).
#[cfg(test)]
pub(crate) fn ck<T: Check>(t: T) -> Checked<T> {
    match t.check() {
        Ok(c) => c,
        Err(e) => panic!("test parameters out of range: {e}"),
    }
}

/// Validation into the checked form.
pub trait Check: Sized {
    /// Every value in its allowed range; else a parameter error naming the key, the value with
    /// its unit, and the allowed range.
    fn validate(&self) -> Result<()>;

    /// The checked form of these parameters.
    fn check(self) -> Result<Checked<Self>> {
        self.validate()?;
        Ok(Checked(self))
    }
}

impl<T: Check + Default> Default for Checked<T> {
    /// The library defaults, which are valid (each block has a test that says so).
    fn default() -> Self {
        let t = T::default();
        debug_assert!(t.validate().is_ok());
        Checked(t)
    }
}

/// `Check` for a block whose range checks are an inherent `check(&self)` beside its algorithm.
macro_rules! check_by_inherent {
    ($($t:ty),* $(,)?) => {$(
        impl Check for $t {
            fn validate(&self) -> Result<()> {
                <$t>::check(self).map(|_| ())
            }
        }
    )*};
}

check_by_inherent!(
    crate::signal::ConditionParams,
    crate::beats::DetectParams,
    crate::beats::ElgendiParams,
    crate::beats::fusion::VoteParams,
    crate::beats::ec57::Ec57Rules,
    crate::beats::readable::ReadableParams,
    crate::features::FeatureParams,
    crate::embed::DiffusionParams,
    crate::dimension::KmeansScalingParams,
    crate::dimension::SuiteParams,
    crate::rhythm::screen::ScreenParams,
    crate::rhythm::verdict::VerdictParams,
    crate::rhythm::atrial::AtrialParams,
    crate::rhythm::recurrence::RqaParams,
    crate::synth::SynthParams,
    crate::report::ReportOptions,
    crate::cohort::CohortOptions,
    crate::cohort::CohortLabels,
    crate::cohort::SharedParams,
    crate::cohort::support::Support,
    crate::separate::SeparateParams,
);

#[cfg(test)]
mod tests {
    use super::*;

    /// Every block's library default passes its own check.
    #[test]
    fn every_default_block_is_valid() {
        fn ok<T: Check + Default>(name: &str) {
            assert!(T::default().check().is_ok(), "{name}");
        }
        ok::<crate::pipeline::AnalyzeParams>("analyze");
        ok::<crate::signal::ConditionParams>("condition");
        ok::<crate::beats::DetectParams>("pan_tompkins");
        ok::<crate::beats::ElgendiParams>("elgendi");
        ok::<crate::beats::ec57::Ec57Rules>("ec57");
        ok::<crate::beats::readable::ReadableParams>("readable");
        ok::<crate::features::FeatureParams>("features");
        ok::<crate::embed::DiffusionParams>("diffusion");
        ok::<crate::dimension::KmeansScalingParams>("dimension");
        ok::<crate::dimension::SuiteParams>("suite");
        ok::<crate::rhythm::screen::ScreenParams>("screen");
        ok::<crate::rhythm::verdict::VerdictParams>("verdict");
        ok::<crate::rhythm::atrial::AtrialParams>("atrial");
        ok::<crate::rhythm::recurrence::RqaParams>("recurrence");
        ok::<crate::synth::SynthParams>("synth");
        ok::<crate::report::ReportOptions>("report");
        ok::<crate::cohort::SharedParams>("shared");
        ok::<crate::cohort::support::Support>("support");
        ok::<crate::separate::SeparateParams>("separate");
    }

    #[test]
    fn an_out_of_range_block_gives_no_checked_form() {
        let p = crate::embed::DiffusionParams {
            components: 0,
            ..Default::default()
        };
        assert!(matches!(p.check(), Err(crate::Error::Param { .. })));
    }
}
