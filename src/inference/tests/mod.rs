//! Study-level tests of the inference stage through its public entry point: exact
//! enumeration on tiny hand-built studies, calibration and power by simulation, and
//! determinism across thread counts. Unit tests of single functions sit at the foot of
//! each module instead.

mod behaviour;
mod calibration;
pub(super) mod common;
mod determinism;
mod exact;
