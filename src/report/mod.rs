//! report (being written).
