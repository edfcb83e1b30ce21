//! Shrinkage covariance: a convex combination of the sample covariance and a
//! simple target, positive definite even when there are fewer rows than
//! variables.
//!
//! With `n` rows `x_k` of `p` variables, sample mean `x̄` and the
//! maximum-likelihood covariance
//!
//! ```text
//! S = (1/n) Σ_k (x_k − x̄)(x_k − x̄)ᵀ        (divisor n, not n − 1)
//! ```
//!
//! the shrunk estimate with intensity `ρ ∈ [0, 1]` is
//!
//! ```text
//! Σ̂ = (1 − ρ) S + ρ T,   T = μ I with μ = tr(S)/p   (scaled identity)
//!                       or T = diag(S)              (diagonal)
//! ```
//!
//! For `ρ > 0` the scaled-identity target makes `Σ̂` positive definite
//! whatever `n` and `p` are, so the model can be used where the sample
//! covariance is singular (`p ≥ n`). The location is always the sample mean.
//!
//! Three ways to choose `ρ`:
//!
//! * [`ledoit_wolf`] — the estimated optimal intensity of Ledoit and Wolf
//!   (2004, Lemma 3.2–3.4 and Theorem 3.2), with the Frobenius inner product
//!   normalized by `p` (`⟨A, B⟩ = tr(ABᵀ)/p`):
//!   `d² = ‖S − μI‖²`, `b̄² = (1/n²) Σ_k ‖y_k y_kᵀ − S‖²` with
//!   `y_k = x_k − x̄`, which simplifies to
//!   `b̄² = (Σ_k ‖y_k‖⁴ / n − ‖S‖²_F) / (n p)`; then
//!   `ρ = min(b̄², d²) / d²`.
//! * [`oas`] — the oracle approximating shrinkage of Chen, Wiesel, Eldar and
//!   Hero (2010, Eq. 23):
//!   `ρ = min(((1 − 2/p) tr(S²) + tr²(S)) / ((n + 1 − 2/p)(tr(S²) − tr²(S)/p)), 1)`
//!   ([`OasFormula::Published`]). scikit-learn 1.9.1 (`sklearn.covariance.oas`,
//!   read in its source) omits the two `2/p` terms, giving
//!   `ρ = min((tr(S²) + tr²(S)) / ((n + 1)(tr(S²) − tr²(S)/p)), 1)`; that form
//!   is [`OasFormula::WithoutTwoOverP`]. The two agree as `p` grows.
//! * [`shrink`] — an intensity chosen by the caller, toward either target.
//!
//! The conventions (mean-centred, divisor `n`) are those of the papers and of
//! scikit-learn's `ledoit_wolf` and `oas`, whose results these functions
//! reproduce to within 4e-15 relative on five open datasets (see
//! `tests/it/robust_reference.rs`). For one
//! variable every target equals `S`, so the reported intensity is 0.
//!
//! A constant variable is refused ([`Error::ZeroVariance`]): shrinkage would
//! give it a variance borrowed from the other variables, which says nothing
//! about it.
//!
//! **Caution.** The χ², Beta and F references of [`crate::calibration`] are
//! exact for the classical estimate only. A [`DistanceModel`] built from a
//! shrinkage estimate uses them as an approximation that is good when the
//! intensity is small (many rows per variable) and poor when `p` is close to
//! `n`; with `p ≥ n` only the χ² reference ([`RowOrigin::KnownParameters`])
//! is available, and its p-values are rough. Treat flags as evidence for a
//! closer look, not a verdict.
//!
//! # References
//! - O. Ledoit and M. Wolf (2004). A well-conditioned estimator for
//!   large-dimensional covariance matrices. *J. Multivariate Analysis* 88,
//!   365–411.
//! - Y. Chen, A. Wiesel, Y. C. Eldar and A. O. Hero (2010). Shrinkage
//!   algorithms for MMSE covariance estimation. *IEEE Trans. Signal
//!   Processing* 58, 5016–5029.
//!
//! # Example
//! ```
//! use mvdist::shrinkage::{ledoit_wolf, shrink, ShrinkageTarget};
//! use ndarray::array;
//!
//! // Three rows, four variables: the sample covariance is singular…
//! let rows = array![
//!     [1.0, 2.0, 0.5, 3.0],
//!     [2.0, 1.5, 1.0, 2.0],
//!     [0.5, 3.0, 2.0, 2.5],
//! ];
//! // …but the Ledoit–Wolf estimate is positive definite.
//! let fit = ledoit_wolf(rows.view())?;
//! assert!(fit.intensity() > 0.0 && fit.intensity() <= 1.0);
//! assert!(fit.scatter().log_determinant().is_finite());
//!
//! // Full shrinkage toward the diagonal keeps only the variances.
//! let diag = shrink(rows.view(), 1.0, ShrinkageTarget::Diagonal)?;
//! assert!(diag.scatter().is_diagonal());
//! # Ok::<(), mvdist::Error>(())
//! ```
//!
//! [`DistanceModel`]: crate::DistanceModel
//! [`RowOrigin::KnownParameters`]: crate::RowOrigin::KnownParameters

use crate::error::{Error, Result};
use crate::estimate::{Estimate, FitMethod};
pub use crate::estimate::{OasFormula, ShrinkageTarget};
use crate::moments::MomentAccumulator;
use crate::scatter::Scatter;
use ndarray::ArrayView2;
use rayon::prelude::*;

/// A shrinkage estimate: sample mean, shrunk scatter, and the intensity
/// and target used.
///
/// # Example
/// ```
/// use mvdist::shrinkage::{oas, OasFormula};
/// use ndarray::array;
///
/// let rows = array![[1.0, 2.0], [2.0, 2.5], [4.0, 3.0], [3.0, 5.0], [0.0, 1.0]];
/// let fit = oas(rows.view(), OasFormula::Published)?;
/// assert!((fit.location()[1] - 2.7).abs() < 1e-15);
/// let model = fit.into_model()?;
/// assert_eq!(model.sample_size(), 5);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct ShrinkageFit {
    location: Vec<f64>,
    scatter: Scatter,
    intensity: f64,
    target: ShrinkageTarget,
    sample_size: usize,
    estimator: FitMethod,
}

impl ShrinkageFit {
    /// The sample mean.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// The shrunk scatter `(1 − ρ) S + ρ T`.
    pub fn scatter(&self) -> &Scatter {
        &self.scatter
    }

    /// The intensity `ρ` used, in `[0, 1]`.
    pub fn intensity(&self) -> f64 {
        self.intensity
    }

    /// The target `T`.
    pub fn target(&self) -> ShrinkageTarget {
        self.target
    }

    /// Number of rows `n`.
    pub fn sample_size(&self) -> usize {
        self.sample_size
    }

    /// How the estimate was made (as recorded in a model).
    pub fn fit_method(&self) -> &FitMethod {
        &self.estimator
    }

    /// The estimate, for [`crate::DistanceModel::from_estimate`].
    pub fn estimate(&self) -> Estimate {
        self.clone().into_estimate()
    }

    /// The estimate, by value (no copy of the location and scatter).
    pub fn into_estimate(self) -> Estimate {
        Estimate {
            location: self.location,
            scatter: self.scatter,
            sample_size: self.sample_size,
            estimator: self.estimator,
        }
    }
}

/// The sample moments every shrinkage estimate starts from.
struct SampleMoments {
    n: usize,
    p: usize,
    mean: Vec<f64>,
    /// Maximum-likelihood covariance `S`, row-major.
    covariance: Vec<f64>,
}

impl SampleMoments {
    fn new(rows: ArrayView2<'_, f64>) -> Result<Self> {
        let (n, p) = rows.dim();
        if p == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if n == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        let acc = MomentAccumulator::from_rows(rows)?;
        if n < 2 {
            return Err(Error::TooFewRows {
                rows: n,
                needed: 2,
                columns: p,
            });
        }
        for j in 0..p {
            if acc.column_min()[j] == acc.column_max()[j] {
                return Err(Error::ZeroVariance { column: j });
            }
        }
        let nf = n as f64;
        let covariance: Vec<f64> = acc.comoment.iter().map(|m| m / nf).collect();
        if covariance.iter().chain(acc.mean()).any(|v| !v.is_finite()) {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(SampleMoments {
            n,
            p,
            mean: acc.mean().to_vec(),
            covariance,
        })
    }

    fn trace(&self) -> f64 {
        (0..self.p).map(|j| self.covariance[j * self.p + j]).sum()
    }

    /// `‖S‖²_F = tr(S²)`.
    fn frobenius_sq(&self) -> f64 {
        self.covariance.iter().map(|v| v * v).sum()
    }

    /// `(1 − ρ) S + ρ T` as a validated scatter.
    fn shrunk(&self, intensity: f64, target: ShrinkageTarget) -> Result<Scatter> {
        let p = self.p;
        let mu = self.trace() / p as f64;
        let mut m: Vec<f64> = self
            .covariance
            .iter()
            .map(|v| (1.0 - intensity) * v)
            .collect();
        for j in 0..p {
            m[j * p + j] += intensity
                * match target {
                    ShrinkageTarget::ScaledIdentity => mu,
                    ShrinkageTarget::Diagonal => self.covariance[j * p + j],
                };
        }
        Scatter::from_row_major(&m, p)
    }

    fn fit(
        self,
        intensity: f64,
        target: ShrinkageTarget,
        estimator: FitMethod,
    ) -> Result<ShrinkageFit> {
        let scatter = self.shrunk(intensity, target)?;
        Ok(ShrinkageFit {
            location: self.mean,
            scatter,
            intensity,
            target,
            sample_size: self.n,
            estimator,
        })
    }
}

/// `Σ_k ‖x_k − m‖⁴`, in parallel row chunks for large inputs.
fn sum_of_squared_norms_squared(rows: ArrayView2<'_, f64>, mean: &[f64]) -> f64 {
    let chunk = |lo: usize, hi: usize| -> f64 {
        let mut total = 0.0;
        for i in lo..hi {
            let row = rows.row(i);
            let mut s = 0.0;
            for (v, m) in row.iter().zip(mean) {
                let d = v - m;
                s += d * d;
            }
            total += s * s;
        }
        total
    };
    let n = rows.nrows();
    let per = 4096;
    if n * mean.len() < crate::kernels::distance::SEQUENTIAL_BELOW {
        chunk(0, n)
    } else {
        (0..n.div_ceil(per))
            .into_par_iter()
            .map(|b| chunk(b * per, ((b + 1) * per).min(n)))
            .sum()
    }
}

/// The Ledoit–Wolf estimate: shrinkage toward `μ I` with the estimated
/// optimal intensity (formula in the [module documentation](self)).
///
/// # Errors
/// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
/// [`Error::TooFewRows`] for a single row; [`Error::ZeroVariance`] for a
/// constant column; [`Error::Collinear`] in the degenerate case where the
/// estimated intensity is 0 and `S` is singular (for example two rows).
///
/// # Example
/// ```
/// use mvdist::shrinkage::ledoit_wolf;
/// use ndarray::array;
/// let rows = array![[1.0, 0.0], [0.0, 1.0], [-1.0, 0.0], [0.0, -1.0]];
/// // S = I/2 is already a scaled identity: nothing to shrink.
/// let fit = ledoit_wolf(rows.view())?;
/// assert_eq!(fit.intensity(), 0.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn ledoit_wolf(rows: ArrayView2<'_, f64>) -> Result<ShrinkageFit> {
    let m = SampleMoments::new(rows)?;
    let intensity = if m.p == 1 {
        0.0
    } else {
        let (n, p) = (m.n as f64, m.p as f64);
        let mu = m.trace() / p;
        let s2 = m.frobenius_sq();
        let fourth = sum_of_squared_norms_squared(rows, &m.mean);
        let d2 = (s2 - 2.0 * mu * m.trace() + p * mu * mu) / p;
        let b2_bar = (fourth / n - s2) / (n * p);
        let b2 = b2_bar.min(d2);
        if b2 <= 0.0 || !(d2 > 0.0) {
            0.0
        } else {
            b2 / d2
        }
    };
    m.fit(
        intensity,
        ShrinkageTarget::ScaledIdentity,
        FitMethod::LedoitWolf { intensity },
    )
}

/// The OAS estimate: shrinkage toward `μ I` with the oracle approximating
/// intensity, by the chosen formula (see the [module documentation](self)).
///
/// # Errors
/// As [`ledoit_wolf`].
///
/// # Example
/// ```
/// use mvdist::shrinkage::{oas, OasFormula};
/// use ndarray::array;
/// let rows = array![[1.0, 2.0, 0.5], [2.0, 1.5, 1.0], [0.5, 3.0, 2.0]];
/// let published = oas(rows.view(), OasFormula::Published)?;
/// let without = oas(rows.view(), OasFormula::WithoutTwoOverP)?;
/// assert!(published.intensity() <= 1.0 && without.intensity() <= 1.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn oas(rows: ArrayView2<'_, f64>, formula: OasFormula) -> Result<ShrinkageFit> {
    let m = SampleMoments::new(rows)?;
    let intensity = if m.p == 1 {
        0.0
    } else {
        let (n, p) = (m.n as f64, m.p as f64);
        let tr = m.trace();
        let tr_s2 = m.frobenius_sq();
        let (a, b) = match formula {
            OasFormula::Published => (1.0 - 2.0 / p, n + 1.0 - 2.0 / p),
            OasFormula::WithoutTwoOverP => (1.0, n + 1.0),
        };
        let num = a * tr_s2 + tr * tr;
        let den = b * (tr_s2 - tr * tr / p);
        if den == 0.0 {
            1.0
        } else {
            (num / den).clamp(0.0, 1.0)
        }
    };
    m.fit(
        intensity,
        ShrinkageTarget::ScaledIdentity,
        FitMethod::Oas { intensity, formula },
    )
}

/// Shrinkage with an intensity chosen by the caller:
/// `(1 − ρ) S + ρ T` for the given target.
///
/// # Errors
/// As [`ledoit_wolf`]; [`Error::InvalidParameter`] unless
/// `0 ≤ intensity ≤ 1`; [`Error::Collinear`] when the result is singular
/// (intensity 0 with a singular `S`).
///
/// # Example
/// ```
/// use mvdist::shrinkage::{shrink, ShrinkageTarget};
/// use ndarray::array;
/// let rows = array![[1.0, 2.0], [2.0, 3.5], [3.0, 5.0], [4.0, 5.5]];
/// let fit = shrink(rows.view(), 0.5, ShrinkageTarget::Diagonal)?;
/// // The variances stay, the covariance is halved.
/// let s = fit.scatter().matrix();
/// assert!((s[(0, 0)] - 1.25).abs() < 1e-14);
/// assert!((s[(0, 1)] - 0.5 * 1.5).abs() < 1e-14);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn shrink(
    rows: ArrayView2<'_, f64>,
    intensity: f64,
    target: ShrinkageTarget,
) -> Result<ShrinkageFit> {
    if !(0.0..=1.0).contains(&intensity) {
        return Err(Error::invalid(
            "shrinkage intensity",
            format!("{intensity} is not in [0, 1]"),
        ));
    }
    let m = SampleMoments::new(rows)?;
    m.fit(intensity, target, FitMethod::Shrunk { intensity, target })
}
