//! # mvdist: how unusual is this row?
//!
//! mvdist measures how far a multivariate observation lies from a
//! reference population, in units that account for the spread of each
//! variable and the correlations between them, and says how surprising that
//! distance is.
//!
//! ## The idea in three steps
//!
//! 1. **Estimate** a location `μ` (where the reference rows sit) and a
//!    scatter `Σ` (how they spread and co-vary) — see [`moments`].
//! 2. **Measure** each row's squared generalized (Mahalanobis) distance
//!    `d² = (x − μ)ᵀ Σ⁻¹ (x − μ)`. Two measurements that are each ordinary
//!    can be jointly extraordinary when they break a correlation; `d²` sees
//!    that, a per-variable check does not — see [`distance`] and
//!    [`whitening`].
//! 3. **Calibrate**: under multivariate normality, `d²` follows a known
//!    distribution (χ², Beta or F, depending on whether the parameters were
//!    estimated and whether the row was in the fitting sample), which turns
//!    a distance into a p-value and a cutoff — see [`calibration`]. When a
//!    row is flagged, [`explain`] splits its `d²` into per-variable terms.
//!
//! ## Quick start
//!
//! ```
//! use mvdist::{Adjustment, ContributionOrder, DistanceModel, RowOrigin};
//! use ndarray::array;
//!
//! // Reference rows: observations × variables.
//! let reference = array![
//!     [5.1, 3.5, 1.4], [4.9, 3.0, 1.4], [4.7, 3.2, 1.3], [4.6, 3.1, 1.5],
//!     [5.0, 3.6, 1.4], [5.4, 3.9, 1.7], [4.6, 3.4, 1.4], [5.0, 3.4, 1.5],
//!     [4.4, 2.9, 1.4], [4.9, 3.1, 1.5], [5.4, 3.7, 1.5], [4.8, 3.4, 1.6],
//! ];
//! let model = DistanceModel::fit(reference.view())?;
//!
//! // Score new rows: F reference, because they were not in the fit.
//! let new_rows = array![[5.0, 3.4, 1.5], [4.5, 3.9, 1.1]];
//! let scores = model.score(new_rows.view(), RowOrigin::New)?;
//! let flags = scores.flags(0.01, Adjustment::BenjaminiHochberg)?;
//! println!("d² = {:?}, p = {:?}, flagged = {flags:?}", scores.squared_distances(), scores.p_values());
//!
//! // Which variables drove the second row's distance?
//! let why = model.explain(&new_rows.row(1).to_vec(), ContributionOrder::LargestFirst)?;
//! println!("{:?}", why.in_order());
//! # Ok::<(), mvdist::Error>(())
//! ```
//!
//! ## Cautions
//!
//! Every p-value and cutoff assumes that the reference rows are a sample
//! from one multivariate normal population and that the model fits it.
//! Check that assumption before relying on a threshold ([`normality`]
//! has the usual tests). A flag is evidence
//! that a row is unusual under the model, not a verdict that it is bad:
//! decisions such as releasing a batch or raising an alarm belong to your
//! local quality procedures and to qualified people.
//!
//! ## Conventions
//!
//! * Rows are observations, columns are variables. Functions take
//!   [`ndarray::ArrayView2`] of any layout, or row-major `&[f64]` with a
//!   column count ([`data::rows_from_slice`]).
//! * Errors are values of one enum, [`Error`], naming the row and column of
//!   the problem; no public function panics on bad input.
//! * Large batches run in parallel on the caller's rayon pool; run inside
//!   `rayon::ThreadPool::install` to bound the threads. Below
//!   [`distance::SEQUENTIAL_THRESHOLD`] values work stays on the calling
//!   thread.
//! * Linear algebra runs in pure Rust on faer; hot loops select AVX2/FMA
//!   code at run time, so a plain `cargo build --release` is fast.
//! * [`ndarray`] is re-exported, so `mvdist::ndarray` is always the version
//!   the API takes.
//!
//! ## Companion crates
//!
//! The library has no command-line or SQL dependencies. The `mvdist`
//! command is the `mvdist-cli` crate (`cargo install --path
//! crates/mvdist-cli`); SQL functions for Apache DataFusion are the
//! `mvdist-datafusion` crate.

#![deny(missing_docs)]
// Index loops mirror the formulas in numeric kernels; `!(x > 0.0)` is used
// on purpose so that NaN takes the error branch.
#![allow(clippy::needless_range_loop, clippy::neg_cmp_op_on_partial_ord)]
#![warn(clippy::unwrap_used, clippy::expect_used, clippy::panic)]
#![cfg_attr(test, allow(clippy::unwrap_used, clippy::expect_used, clippy::panic))]

pub mod calibration;
pub mod classification;
pub mod control_chart;
pub mod data;
pub mod distance;
mod distributions;
pub mod drift;
mod error;
mod estimate;
pub mod explain;
pub mod held_out;
pub mod incomplete;
mod kernels;
pub mod mean_tests;
mod model;
pub mod model_file;
pub mod moments;
pub mod normality;
pub mod robust;
pub mod scatter;
mod scorer;
pub mod shrinkage;
pub mod whitening;

pub use ndarray;

pub use calibration::{Adjustment, EmpiricalPValue, PValueBasis, Reference, RowOrigin};
pub use error::{Error, ErrorKind, Result};
pub use estimate::{Estimate, FitMethod};
pub use explain::{ContributionOrder, Contributions};
pub use model::{
    DistanceModel, ObservedContributions, ObservedRowScore, ObservedScores, RowScore, Scores,
};
pub use moments::{Divisor, MomentAccumulator};
pub use scatter::Scatter;
pub use scorer::Scorer;
pub use whitening::{Whitener, WhiteningKind};

// Every model and fitted-estimate type can be shared across threads: a
// compile-time check, so that a field that is not `Send + Sync` (an `Rc`, a
// `Cell`) fails the build rather than a user's service.
const _: () = {
    const fn shared<T: Send + Sync>() {}
    shared::<DistanceModel>();
    shared::<Scorer>();
    shared::<ErrorKind>();
    shared::<Scatter>();
    shared::<Estimate>();
    shared::<Reference>();
    shared::<Scores>();
    shared::<Whitener>();
    shared::<MomentAccumulator>();
    shared::<robust::McdFit>();
    shared::<robust::RegularizedMcdFit>();
    shared::<robust::RegularizedMcdScreen>();
    shared::<shrinkage::ShrinkageFit>();
    shared::<classification::Classifier<String>>();
    shared::<classification::Classifier<u32>>();
    shared::<drift::ForgettingModel>();
    shared::<drift::SlidingWindowModel>();
    shared::<control_chart::ControlChart>();
    shared::<control_chart::ComponentChart>();
    shared::<control_chart::ComponentModel>();
    shared::<control_chart::InControlEstimate>();
    shared::<control_chart::MewmaChart>();
    shared::<control_chart::McusumChart>();
    shared::<control_chart::ChartState>();
    shared::<control_chart::ShiftPoint>();
    shared::<control_chart::ShiftDiagnosis>();
    shared::<control_chart::EwmaCovariance>();
    shared::<control_chart::run_length::RunLengthOptions>();
    shared::<control_chart::run_length::RunLengthEstimate>();
    shared::<control_chart::run_length::LimitDesign>();
    shared::<model_file::ModelFile>();
    shared::<calibration::EmpiricalReference>();
    shared::<held_out::CalibrationCheck>();
    shared::<incomplete::EmFit>();
    shared::<Error>();
};
