//! The shared vocabulary of the stages: plain ids and index types that the pair plan, the
//! engine, the inference and the report all speak, so no stage converts another's copy of
//! the same idea. It depends on nothing else in the crate; `pairing` and `inference`, which
//! must not reference the other stages, may reference it.

pub mod grid;

pub use grid::{Cell, Col, MemberIx, PairGrid, Row};
