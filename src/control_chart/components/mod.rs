//! Component-based monitoring of many correlated variables: `T²` on `k`
//! principal components and the squared prediction error `Q`.
//!
//! With dozens or hundreds of correlated sensors, most of the variation
//! lives in a few directions. A [`ComponentModel`] keeps the first `k`
//! principal components of the in-control rows; each new row gets two
//! numbers:
//!
//! * `T²` on the components — is the row unusual *along* the usual
//!   directions of variation? — with the Beta/F limits of the T² chart in
//!   `k` dimensions;
//! * `Q`, the squared prediction error — is the row *off* the usual
//!   directions, with a kind of variation the in-control data did not
//!   have? — with the Jackson–Mudholkar (1979) or Box (1954) limit from
//!   the left-out eigenvalues ([`ResidualLaw`]).
//!
//! [`ComponentChart`] adds Phase I (with removal of signals) and Phase II
//! and the per-variable contributions of each signal.
//!
//! # References
//! - J. E. Jackson (1991). *A User's Guide to Principal Components*. Wiley.
//! - J. E. Jackson and G. S. Mudholkar (1979). Control procedures for
//!   residuals associated with principal component analysis.
//!   *Technometrics* 21, 341–349.
//! - G. E. P. Box (1954). Some theorems on quadratic forms applied in the
//!   study of analysis of variance problems, I. *Ann. Math. Statist.* 25,
//!   290–302.
//! - P. Nomikos and J. F. MacGregor (1995). Multivariate SPC charts for
//!   monitoring batch processes. *Technometrics* 37, 41–59.
//! - S. J. Qin (2003). Statistical process monitoring: basics and beyond.
//!   *J. Chemometrics* 17, 480–502.

mod chart;
mod model;
mod residual;
mod svg;

pub use chart::{ComponentChart, ComponentOptions, ComponentPoint, ComponentRound};
pub use model::{
    ComponentContributions, ComponentCount, ComponentModel, ComponentStatistics, VariableScaling,
};
pub use residual::{ResidualLaw, ResidualLimitMethod};
pub use svg::component_chart_svg;
