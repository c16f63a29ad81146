//! synth (being written).
