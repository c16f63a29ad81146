//! io (being written).
