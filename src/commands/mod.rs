//! One file per command; each turns parsed arguments into library calls and printed output.

pub mod check;
pub mod demo;
pub mod plan;
pub mod replay;
pub mod run;
