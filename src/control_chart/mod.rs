//! Hotelling T² control charts: limits, Phase I and Phase II, and the
//! diagnosis of signals.
//!
//! A T² chart watches a multivariate process through one number per point:
//! the squared generalized distance of an observation (or of a subgroup
//! mean) from the in-control location, `T² = (x − x̄)ᵀ S⁻¹ (x − x̄)`. It
//! signals when `T²` exceeds an upper control limit chosen so that an
//! in-control point does so with probability `α`
//! ([`FalseAlarmRate`]; for independent points the in-control average run
//! length is `1/α`).
//!
//! * **Phase I** ([`ControlChart::individuals`], [`ControlChart::subgroups`])
//!   looks back at historical data to establish what "in control" means:
//!   the points are also the data the location and scatter are estimated
//!   from, so their limits differ (a Beta limit for individual
//!   observations, Tracy, Young and Mason 1992). Points that signal can be
//!   removed and the estimate refitted until none remains
//!   ([`SignalRemoval`]); the start can be screened by a model the caller
//!   supplies, such as a robust estimate ([`PhaseOneStart`]).
//! * **Phase II** ([`ControlChart::monitor`]) checks new points against the
//!   Phase I estimate with an F limit.
//!
//! The limit formulas for both designs (individuals, subgroups) and phases
//! are in [`ControlLimit`].
//!
//! Every signal is diagnosed ([`SignalDiagnosis`]): T² is split into the
//! Mason–Tracy–Young terms (see [`decomposition`]), unconditional
//! (`T²_j`: is variable `j` out of range on its own?) and conditional
//! (`T²_{j·J}`: is `j` unusual given the variables `J`, that is, is a
//! relationship broken?), each judged against its own published limit, and
//! into the per-variable contributions of [`crate::explain`].
//! [`chart_svg`] draws the chart.
//!
//! **Small sustained shifts.** A T² chart judges each point alone; the
//! [`mewma`] chart (exponentially weighted moving average, [`MewmaChart`])
//! and Crosier's [`mcusum`] chart ([`McusumChart`]) accumulate evidence
//! over points and signal small persistent shifts of the mean much sooner.
//! Both chart rows one [`ShiftPoint`] each (statistic, limit, signal, and
//! for signals a [`ShiftDiagnosis`]); their limits and average run lengths
//! come from [`run_length`].
//!
//! **Cautions.** The limits assume that in-control points are independent
//! and multivariate normal, and that Phase I really was in control after
//! cleaning. Autocorrelated or skewed data, or a drifting Phase I, make the
//! false-alarm rate differ from the nominal one. A signal is a prompt to
//! investigate, not a verdict on the process or the product; decisions
//! belong to local procedures and qualified people.
//!
//! # Example
//! ```
//! use mvdist::control_chart::{ControlChart, PhaseOneOptions};
//! use ndarray::array;
//!
//! let history = array![
//!     [10.1, 4.9], [9.8, 5.2], [10.3, 5.1], [9.9, 4.8], [10.0, 5.0], [10.2, 5.3],
//!     [9.7, 4.9], [10.1, 5.0], [9.9, 5.1], [10.0, 4.7], [10.4, 5.2], [9.6, 4.8],
//! ];
//! let chart = ControlChart::individuals(history.view(), &PhaseOneOptions::default())?;
//! for point in chart.monitor(array![[10.1, 5.0], [11.5, 3.9]].view())? {
//!     if let Some(why) = &point.diagnosis {
//!         for term in why.exceeding() {
//!             println!("point {}: term {:?} = {:.1} > {:.1}", point.index, term.given, term.value, term.cutoff);
//!         }
//!     }
//! }
//! # Ok::<(), mvdist::Error>(())
//! ```
//!
//! # References
//! - C. A. Lowry, W. H. Woodall, C. W. Champ and S. E. Rigdon (1992). A
//!   multivariate exponentially weighted moving average control chart.
//!   *Technometrics* 34, 46–53.
//! - R. B. Crosier (1988). Multivariate generalizations of cumulative sum
//!   quality-control schemes. *Technometrics* 30, 291–303.
//! - N. D. Tracy, J. C. Young and R. L. Mason (1992). Multivariate control
//!   charts for individual observations. *J. Quality Technology* 24, 88–95.
//! - R. L. Mason, N. D. Tracy and J. C. Young (1995). Decomposition of T²
//!   for multivariate control chart interpretation. *J. Quality Technology*
//!   27, 99–108.
//! - R. L. Mason, N. D. Tracy and J. C. Young (1997). A practical approach
//!   for interpreting multivariate T² control chart signals. *J. Quality
//!   Technology* 29, 396–406.
//! - F. B. Alt (1985). Multivariate quality control. In *Encyclopedia of
//!   Statistical Sciences* 6, Wiley, 110–122.
//! - NIST/SEMATECH e-Handbook of Statistical Methods, §6.5.4.3 (Hotelling
//!   T² charts).

mod chart;
mod components;
pub mod decomposition;
mod diagnosis;
mod false_alarm;
mod in_control;
mod limits;
pub mod mcusum;
pub mod mewma;
pub(crate) mod panels;
mod point;
pub mod run_length;
mod settings;
mod shift_run;
mod shift_svg;
pub(crate) mod svg;

pub use chart::{ChartDesign, ControlChart};
pub use components::{
    component_chart_svg, ComponentChart, ComponentContributions, ComponentCount, ComponentModel,
    ComponentOptions, ComponentPoint, ComponentRound, ComponentStatistics, ResidualLaw,
    ResidualLimitMethod, VariableScaling,
};
pub use diagnosis::{RatedTerm, SignalDiagnosis};
pub use false_alarm::FalseAlarmRate;
pub use in_control::InControlEstimate;
pub use limits::ControlLimit;
pub use mcusum::{McusumChart, McusumOptions};
pub use mewma::{EwmaCovariance, MewmaChart, MewmaOptions};
pub use point::{ChartPoint, PhaseOneRound, PointStatus};
pub use settings::{PhaseOneOptions, PhaseOneStart, SignalRemoval};
pub use shift_run::{first_signal, ChartScheme, ChartState, ShiftDiagnosis, ShiftPoint};
pub use shift_svg::shift_chart_svg;
pub use svg::chart_svg;
