//! beatfold: a research-use workbench that takes ECG-like recordings through a reproducible chain
//! — read or synthesise, condition, detect beats, describe and embed them with a diffusion map,
//! measure their dimension scale by scale, describe the rhythm — and reports it all.
//!
//! **Research use only.** Not a medical device; not for diagnosis or treatment decisions. See
//! [`NOTICE`].
//!
//! Data flows one way: [`io`] → [`record::Record`] → [`signal`] → [`beats`] → [`features`] →
//! [`embed`] / [`dimension`] / [`rhythm`] → [`report`]; [`synth`] makes records with ground truth.
//! Only `io` and `report` touch files; [`pipeline`] runs the chain.

// `!(x > 0.0)` is used on purpose: unlike `x <= 0.0` it also rejects NaN.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

pub mod beats;
pub mod cohort;
pub mod cpu;
pub mod dimension;
pub mod embed;
pub mod error;
pub mod features;
pub mod io;
pub mod neighbours;
pub mod params;
pub mod pipeline;
pub mod points;
pub mod record;
pub mod record_score;
pub mod report;
pub mod rhythm;
pub mod separate;
pub mod signal;
pub mod stats;
pub mod synth;
pub mod verdicts;

pub use error::{Error, Result};

/// The notice every output carries.
pub const NOTICE: &str =
    "Research use only. Not a medical device; not for diagnosis or treatment decisions. \
Results must be reviewed by qualified clinicians under local regulations.";

/// Short form of [`NOTICE`] for figures.
pub const NOTICE_SHORT: &str =
    "beatfold - research use only, not for diagnosis; defer to qualified clinicians";
