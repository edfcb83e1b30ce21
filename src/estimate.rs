//! The estimation layer's common output: an [`Estimate`] (location,
//! scatter, sample size and how they were obtained) that every estimator
//! returns and [`crate::DistanceModel`] consumes, and the [`FitMethod`]
//! record of how it was made. The estimator-specific kinds it names
//! ([`McdStage`], [`ShrinkageTarget`], [`OasFormula`]) live here too, so
//! that this module depends on no estimator and the estimators depend on no
//! model.

use crate::moments::Divisor;
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};

/// How a model's location and scatter were fitted: the method and the
/// values it settled on (a shrinkage intensity, an MCD subset size and
/// seed). [`crate::DistanceModel::reference`] chooses the reference law
/// from it, and model files record it (under the key `estimator`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
#[non_exhaustive]
pub enum FitMethod {
    /// Sample mean and covariance.
    Classical {
        /// The covariance denominator.
        divisor: Divisor,
    },
    /// Weighted mean and covariance.
    Weighted {
        /// The covariance denominator.
        divisor: Divisor,
    },
    /// Location and scatter supplied by the caller.
    Supplied,
    /// Exponentially weighted mean and covariance
    /// ([`ForgettingModel`](crate::drift::ForgettingModel)).
    ExponentiallyWeighted {
        /// The forgetting factor `λ`.
        forgetting: f64,
    },
    /// Mean and covariance of a sliding window of rows
    /// ([`SlidingWindowModel`](crate::drift::SlidingWindowModel)).
    SlidingWindow {
        /// The window size.
        capacity: usize,
    },
    /// Sample mean and Ledoit–Wolf shrinkage toward a scaled identity
    /// ([`crate::shrinkage::ledoit_wolf`]).
    LedoitWolf {
        /// The estimated intensity used, in `[0, 1]`.
        intensity: f64,
    },
    /// Sample mean and oracle approximating shrinkage toward a scaled
    /// identity ([`crate::shrinkage::oas`]).
    Oas {
        /// The estimated intensity used, in `[0, 1]`.
        intensity: f64,
        /// Which formula gave it.
        formula: OasFormula,
    },
    /// Sample mean and shrinkage with an intensity chosen by the caller
    /// ([`crate::shrinkage::shrink`]).
    Shrunk {
        /// The intensity, in `[0, 1]`.
        intensity: f64,
        /// The target.
        target: ShrinkageTarget,
    },
    /// The maximum-likelihood fit from rows with empty cells by the EM
    /// algorithm ([`crate::incomplete`]).
    ExpectationMaximization {
        /// The iterations run.
        iterations: usize,
        /// Whether the tolerance was met.
        converged: bool,
        /// The number of empty cells in the fitted rows.
        missing_cells: usize,
    },
    /// Minimum covariance determinant by FastMCD
    /// ([`crate::robust::minimum_covariance_determinant`]).
    Mcd {
        /// Raw (the `h`-subset) or one-step reweighted estimate.
        stage: McdStage,
        /// The subset size `h`.
        subset_size: usize,
        /// The support fraction the caller asked for, if any (otherwise
        /// `h = ⌊(n + p + 1)/2⌋`).
        support_fraction: Option<f64>,
        /// The seed of the random subset draws.
        seed: u64,
        /// The factor applied to the maximum-likelihood covariance of the
        /// retained rows (consistency, and for the reweighted estimate the
        /// small-sample correction too).
        scale_factor: f64,
        /// For the reweighted estimate, the simulated Wishart degrees of
        /// freedom `m` of its F reference
        /// ([`crate::Reference::reweighted_mcd`]); `None` for the raw estimate,
        /// for fits without the small-sample simulation, and in model files
        /// written before this field existed (their reweighted distances
        /// use χ²(p)).
        #[serde(default)]
        wishart_dof: Option<f64>,
    },
    /// Minimum regularized covariance determinant
    /// ([`crate::robust::minimum_regularized_covariance_determinant`]): on
    /// the robustly standardized scale the scatter is
    /// `ρ I + (1 − ρ) c S_H`.
    RegularizedMcd {
        /// The regularization `ρ ∈ [0, 1]` of this scatter (of the
        /// reweighted rows when `reweighted` is true).
        regularization: f64,
        /// The subset size `h`.
        subset_size: usize,
        /// The bound `κ` on the condition number of the standardized scatter.
        condition_bound: f64,
        /// Whether this is the one-step reweighted estimate.
        reweighted: bool,
    },
}

/// Which MCD estimate a model holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum McdStage {
    /// The `h`-subset estimate with its consistency factor (reference:
    /// Hardin–Rocke F).
    Raw,
    /// The one-step reweighted estimate (reference: the simulated scaled F,
    /// or χ² without a simulation).
    Reweighted,
}

/// The matrix a shrinkage estimate is pulled toward.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ShrinkageTarget {
    /// `μ I` with `μ = tr(S)/p`, the average variance: shrinks every
    /// eigenvalue toward their mean and every correlation toward zero.
    ScaledIdentity,
    /// `diag(S)`: keeps the variances and shrinks the covariances toward
    /// zero.
    Diagonal,
}

/// Which formula of the OAS intensity to use; see the
/// [shrinkage module documentation](crate::shrinkage).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OasFormula {
    /// Chen et al. (2010), Eq. 23, with the `2/p` terms.
    #[default]
    Published,
    /// Eq. 23 without the `2/p` terms, as in scikit-learn 1.9.1.
    WithoutTwoOverP,
}

/// One fitted estimate: location `μ`, scatter `Σ`, the number `n` of rows
/// behind it, and the [`FitMethod`] that made it. Estimators return it;
/// [`crate::DistanceModel::from_estimate`] turns it into a model.
///
/// # Example
/// ```
/// use mvdist::{shrinkage::ledoit_wolf, DistanceModel, FitMethod};
/// use ndarray::array;
/// let rows = array![[1.0, 2.0], [2.0, 2.5], [4.0, 3.0], [3.0, 5.0], [0.0, 1.0]];
/// let estimate = ledoit_wolf(rows.view())?.estimate();
/// assert!(matches!(estimate.fit_method(), FitMethod::LedoitWolf { .. }));
/// let model = DistanceModel::from_estimate(estimate)?;
/// assert_eq!(model.sample_size(), 5);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Estimate {
    pub(crate) location: Vec<f64>,
    pub(crate) scatter: Scatter,
    pub(crate) sample_size: usize,
    pub(crate) estimator: FitMethod,
}

impl Estimate {
    /// The location `μ`.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// The scatter `Σ`.
    pub fn scatter(&self) -> &Scatter {
        &self.scatter
    }

    /// Number of rows `n` behind the estimate.
    pub fn sample_size(&self) -> usize {
        self.sample_size
    }

    /// How the estimate was made.
    pub fn fit_method(&self) -> &FitMethod {
        &self.estimator
    }

    /// Location, scatter, sample size and estimator, by value.
    pub fn into_parts(self) -> (Vec<f64>, Scatter, usize, FitMethod) {
        (
            self.location,
            self.scatter,
            self.sample_size,
            self.estimator,
        )
    }
}
