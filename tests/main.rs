//! One integration-test binary (one link step): every module runs the real `nevermet` binary
//! on real folders, or calls the library against an outside reference.

mod util;

mod browser;
mod calibration;
mod demo;
mod engine;
mod errors;
mod exports;
mod inference_reference;
mod loading;
mod pycwt_reference;
mod run;
mod spectral_reference;
