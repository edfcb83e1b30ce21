//! The library's integration tests, one module per area, in one binary (one
//! link instead of one per file). `no_alloc` has a process of its own: it
//! installs a counting global allocator.
//!
//! Long simulations are `#[ignore]`d; run them in release mode with
//! `cargo test --release -p mvdist -- --ignored`.

#[path = "../common/mod.rs"]
mod common;

mod classification;
mod classification_properties;
mod components;
mod control_chart;
mod demo;
mod drift;
mod held_out;
mod incomplete;
mod layers;
mod mean_tests;
mod model_files;
mod mrcd;
mod no_panic;
mod normality;
mod normality_calibration;
mod properties;
mod reference_checks;
mod robust_calibration;
mod robust_properties;
mod robust_reference;
mod scorer;
mod small_shift;
