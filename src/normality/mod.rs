//! Checks of multivariate normality, the assumption behind every p-value
//! and cutoff in mvdist.
//!
//! | test | what it looks at | cost | file |
//! |---|---|---|---|
//! | [`Mardia`] skewness (and small-sample form) | third moments of the whitened rows | `O(n·p³/6)`, one pass | `mardia.rs` |
//! | [`Mardia`] kurtosis | fourth power of the squared distances | `O(n·p²)` | `mardia.rs` |
//! | [`HenzeZirkler`] | empirical characteristic function | `O(n²·p)`, memory `O(n·p)` | `henze_zirkler.rs` |
//! | [`RoystonH`] | per-variable [`ShapiroWilk`] results, combined | `O(n log n · p)`, `n ≤ 5000` | `royston.rs`, `shapiro_wilk.rs` |
//! | [`DoornikHansen`] | skewness and kurtosis of decorrelated variables | `O(n·p²)`, one pass | `doornik_hansen.rs` |
//!
//! plus [`ChiSquareQq`] coordinates for a Q–Q plot of the squared
//! distances and per-variable skewness, kurtosis and Shapiro–Wilk results
//! ([`VariableShape`]). [`NormalityReport`] runs everything that applies
//! and attaches a plain-language reading to each result.
//!
//! Every test whitens or standardizes with the maximum-likelihood (divisor
//! `n`) mean and covariance, validated as in [`crate::DistanceModel`]: too
//! few rows (`n ≤ p`), a constant or collinear column, or a non-finite value
//! is a typed [`crate::Error`] naming the column or row. The tests are
//! affine invariant: rescaling or rotating the variables changes nothing.
//!
//! Large batches run in parallel on the caller's rayon pool.
//!
//! # Reading the results
//!
//! A small p-value is evidence that the rows are not a sample from one
//! multivariate normal population. A large p-value is *not* evidence that
//! they are: the tests may lack the power to see the departure, especially
//! with few rows. With many rows the opposite happens: departures too small
//! to matter for a distance threshold become significant. Look at how large
//! the departure is (per-variable skewness and kurtosis, the Q–Q plot)
//! before deciding. The p-values assume independent rows. A result is
//! evidence for a decision, not the decision: that belongs to your local
//! procedures and to qualified people.
//!
//! # Example
//! ```
//! use mvdist::normality::{Mardia, NormalityOptions, NormalityReport};
//! use ndarray::array;
//!
//! let rows = array![
//!     [5.1, 3.5, 1.4], [4.9, 3.0, 1.4], [4.7, 3.2, 1.3], [4.6, 3.1, 1.5],
//!     [5.0, 3.6, 1.4], [5.4, 3.9, 1.7], [4.6, 3.4, 1.4], [5.0, 3.4, 1.5],
//!     [4.4, 2.9, 1.4], [4.9, 3.1, 1.5], [5.4, 3.7, 1.5], [4.8, 3.4, 1.6],
//! ];
//! let mardia = Mardia::compute(rows.view())?;
//! println!("b1,p = {:.3}, p = {:.3}", mardia.skewness(), mardia.skewness_p_value());
//!
//! let report = NormalityReport::compute(rows.view(), &NormalityOptions::default())?;
//! for outcome in &report.tests {
//!     if let Some(s) = outcome.summary() {
//!         println!("{:32} p = {:.4}  {}", s.test.title(), s.p_value, s.reading);
//!     }
//! }
//! # Ok::<(), mvdist::Error>(())
//! ```

mod blocks;
pub mod doornik_hansen;
pub mod henze_zirkler;
pub mod mardia;
mod marginal;
mod pairwise;
mod qq;
mod report;
pub mod royston;
pub mod shapiro_wilk;

pub use doornik_hansen::DoornikHansen;
pub use henze_zirkler::HenzeZirkler;
pub use mardia::Mardia;
pub use marginal::VariableShape;
pub use qq::ChiSquareQq;
pub use report::{
    format_p_value, NormalityOptions, NormalityReport, NormalityTest, SkippedTest, TestOutcome,
    TestSummary, VariableSummary, CAUTION,
};
pub use royston::RoystonH;
pub use shapiro_wilk::{ShapiroWilk, ShapiroWilkCoefficients};
