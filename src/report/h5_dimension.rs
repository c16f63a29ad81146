//! The consensus answer and the per-point local dimension in `/dimension` of results.h5.
//!
//! Attributes `consensus_d`, `consensus_ci95_low`, `consensus_ci95_high`,
//! `consensus_scale_low`, `consensus_scale_high` (NaN when no plateau), `consensus_noise_scale`
//! (NaN when none), `consensus_status` ("resolved" or "unresolved"), `consensus_reason` and
//! `consensus_sentence`, `consensus_local_spread` and `consensus_local_spread_uniform` (the
//! spread of the pointwise local dimension of the data and of a uniform cube at d, NaN when not
//! measured); dataset `local_d` (one value per beat, NaN where not computed).

use crate::dimension::{DimensionSuite, Status};
use hdf5_pure::{AttrValue, GroupBuilder};

/// Add the consensus attributes and the `local_d` dataset to the dimension group.
pub(super) fn add_consensus(g: &mut GroupBuilder, s: &DimensionSuite) {
    if let Some(c) = &s.consensus {
        let f = |g: &mut GroupBuilder, k: &str, v: f64| g.set_attr(k, AttrValue::F64(v));
        f(g, "consensus_d", c.d);
        f(g, "consensus_ci95_low", c.ci95[0]);
        f(g, "consensus_ci95_high", c.ci95[1]);
        let [lo, hi] = c.scale_range.unwrap_or([f64::NAN, f64::NAN]);
        f(g, "consensus_scale_low", lo);
        f(g, "consensus_scale_high", hi);
        f(
            g,
            "consensus_noise_scale",
            c.noise_scale.unwrap_or(f64::NAN),
        );
        let status = match c.status {
            Status::Resolved => "resolved",
            Status::Unresolved => "unresolved",
        };
        g.set_attr("consensus_status", AttrValue::VarLenString(status.into()));
        g.set_attr(
            "consensus_reason",
            AttrValue::VarLenString(c.reason.clone()),
        );
        g.set_attr("consensus_sentence", AttrValue::VarLenString(c.sentence()));
        let [data_s, cube_s] = c.local_spread.unwrap_or([f64::NAN, f64::NAN]);
        f(g, "consensus_local_spread", data_s);
        f(g, "consensus_local_spread_uniform", cube_s);
    }
    if !s.pointwise.is_empty() {
        g.create_dataset("local_d").with_f64_data(&s.pointwise);
    }
}
