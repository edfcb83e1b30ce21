//! Robust location and scatter: the minimum covariance determinant (MCD)
//! and, for data with about as many or more variables than rows, the
//! minimum regularized covariance determinant (MRCD,
//! [`minimum_regularized_covariance_determinant`]).
//!
//! The sample mean and covariance are pulled toward outliers, which then
//! hide themselves (masking) and make good rows look bad (swamping). The
//! MCD of Rousseeuw (1984) instead finds the `h` of `n` rows whose
//! covariance has the smallest determinant — the tightest ellipsoid holding
//! `h` rows — and estimates location and scatter from them. With the
//! default `h = ⌊(n + p + 1)/2⌋` up to `⌊(n − p + 1)/2⌋` rows can be
//! replaced by arbitrary values without carrying the estimate away (the
//! highest breakdown point an affine-equivariant estimator can have).
//!
//! [`minimum_covariance_determinant`] computes, in order:
//!
//! 1. **Raw estimate** — FastMCD (Rousseeuw and Van Driessen 1999): random
//!    elemental starts, concentration steps, nested subsets for large `n`;
//!    see [`McdOptions`] and `fast_mcd.rs`. The objective is
//!    [`McdFit::raw_log_determinant`], `ln det` of the maximum-likelihood
//!    covariance `S_H` (divisor `h`) of the chosen subset
//!    [`McdFit::subset`].
//! 2. **Consistency** — the raw scatter is `c(h/n)·S_H` with
//!    [`consistency_factor`] `c(α) = α / P(χ²_{p+2} ≤ χ²_{p;α})`.
//! 3. **Small-sample correction** — Pison, Van Aelst and Willems (2002):
//!    factors computed by simulation for `n ≤ 1000` (see
//!    [`McdFit::raw_small_sample_factor`] and `small_sample.rs`, which says
//!    what we could and could not reproduce from the paper).
//! 4. **One-step reweighting** — rows with `d² ≤ χ²_{p;0.975}` under the
//!    corrected raw estimate are kept ([`McdFit::reweighted_rows`]); their
//!    mean and maximum-likelihood covariance times `c(0.975)` and the
//!    reweighted small-sample factor give [`McdFit::location`] and
//!    [`McdFit::scatter`].
//!
//! Conventions match scikit-learn 1.9.1's `MinCovDet` (divisor `h` for the
//! subset covariance, the same consistency factors, reweighting at the
//! 0.975 χ² quantile), so when both find the same subset the raw and
//! reweighted estimates agree to rounding; scikit-learn has no small-sample
//! correction, so compare with it switched off
//! ([`McdOptions::with_small_sample_replications`]`(0)`).
//!
//! **Which reference for the distances?** For the reweighted estimate
//! ([`McdFit::model`]) the common practice is χ²(p) (Rousseeuw and Van
//! Zomeren 1990), but at small `n` it flags clean rows several times more
//! often than nominal (measured: 19% of new rows at α = 0.025 for
//! `n = 21, p = 3`). When the small-sample simulation runs (`n ≤ 1000`),
//! it also gives the Wishart degrees of freedom `m` of a scaled-F
//! approximation, [`crate::Reference::reweighted_mcd`], and the model uses
//! that (measured: 2.6% at the same size; `small_sample.rs` says how `m` is
//! obtained). Distances from the raw estimate ([`McdFit::raw_model`]) have
//! heavier tails; their reference is the F approximation of Hardin and
//! Rocke (2005), [`crate::Reference::raw_mcd`].
//! [`crate::DistanceModel::reference`] picks the matching one from the
//! model's [`crate::FitMethod`].
//!
//! **Subset size.** The default `h = ⌊(n + p + 1)/2⌋` is the
//! maximum-breakdown choice of Rousseeuw and Van Driessen (1999). Some
//! libraries use a slightly larger default (scikit-learn 1.9.1 takes
//! `⌈(n + p + 1)/2⌉`), and on small data sets with few distinct values the
//! one extra row can change which subset wins: on the stack loss data
//! (`n = 21, p = 3`) our `h = 12` and scikit-learn's `h = 13` flag
//! different rows (`tests/it/robust_reference.rs`). Ask for a support fraction
//! to match another convention.
//!
//! **Exact fit.** If at least `h` rows lie on a hyperplane, the minimum
//! determinant is 0: the fit returns [`Error::ExactFit`] with the
//! [`Hyperplane`] and its rows instead of a scatter.
//!
//! **More variables than rows.** The MCD needs `h > p`. The MRCD (Boudt,
//! Rousseeuw, Vanduffel and Verdonck 2020) standardizes each column by its
//! median and [`qn_scale`], and minimizes the determinant of the
//! regularized subset covariance `ρ I + (1 − ρ) c S_H` instead, with `ρ`
//! chosen so that its condition number is at most `κ` (default 50); the
//! scatter is positive definite for any `p`. See
//! [`minimum_regularized_covariance_determinant`].
//!
//! **Caution.** A robust fit shows which rows are far from the bulk of the
//! data, assuming that bulk is roughly elliptical (normal for the
//! p-values). A flagged row is evidence for a closer look, not a verdict
//! that it is wrong; a large group of similar flagged rows may be a second
//! population rather than errors. Decisions such as releasing a batch
//! belong to your local quality procedures and to qualified people.
//!
//! # References
//! - P. J. Rousseeuw (1984). Least median of squares regression. *JASA* 79,
//!   871–880.
//! - P. J. Rousseeuw and K. Van Driessen (1999). A fast algorithm for the
//!   minimum covariance determinant estimator. *Technometrics* 41, 212–223.
//! - C. Croux and G. Haesbroeck (1999). Influence function and efficiency of
//!   the MCD scatter matrix estimator. *J. Multivariate Analysis* 71,
//!   161–190.
//! - G. Pison, S. Van Aelst and G. Willems (2002). Small sample corrections
//!   for LTS and MCD. *Metrika* 55, 111–123.
//! - P. J. Rousseeuw and B. C. van Zomeren (1990). Unmasking multivariate
//!   outliers and leverage points. *JASA* 85, 633–639.
//! - J. Hardin and D. M. Rocke (2005). The distribution of robust distances.
//!   *J. Computational and Graphical Statistics* 14, 928–946.
//!
//! # Example
//! ```
//! use mvdist::robust::{minimum_covariance_determinant, McdOptions};
//! use ndarray::Array2;
//!
//! // 60 rows around (0, 0) and 15 far-away rows at (12, 12).
//! let rows = Array2::from_shape_fn((75, 2), |(i, j)| {
//!     let t = i as f64;
//!     if i >= 60 { 12.0 + 0.1 * (t + j as f64).sin() }
//!     else if j == 0 { (t * 0.37).sin() } else { (t * 0.73).cos() }
//! });
//! let fit = minimum_covariance_determinant(rows.view(), &McdOptions::default().with_seed(7))?;
//! assert!(fit.subset().iter().all(|&i| i < 60));       // the far rows are not in the subset
//! assert!(fit.location()[0].abs() < 0.5);               // the centre stays near (0, 0)
//! let model = fit.model()?;
//! let cutoff = model.cutoff(0.025, mvdist::RowOrigin::InSample)?;
//! let d2 = model.squared_distances(rows.view())?;
//! assert!((60..75).all(|i| d2[i] > cutoff));             // every far row is beyond it
//! # Ok::<(), mvdist::Error>(())
//! ```

mod consistency;
mod exchange;
mod fast_mcd;
mod hyperplane;
mod mrcd;
pub(crate) mod random;
mod small_sample;
mod spectrum;
mod univariate;

pub use crate::error::Hyperplane;
pub use consistency::consistency_factor;
pub use mrcd::{
    minimum_regularized_covariance_determinant, regularized_mcd_screen, RegularizedMcdFit,
    RegularizedMcdOptions, RegularizedMcdScreen,
};
pub use small_sample::SMALL_SAMPLE_MAX_ROWS;
pub use univariate::qn_scale;

use crate::data::check_finite;
use crate::distributions::ChiSquared;
use crate::error::{Error, Result};
pub use crate::estimate::McdStage;
use crate::estimate::{Estimate, FitMethod};
use crate::kernels::distance as kernel;
use crate::scatter::Scatter;
use fast_mcd::{search, subset_moments, Search, SearchPlan};
use ndarray::{Array2, ArrayView2};

/// Coverage of the reweighting cutoff: rows with `d² ≤ χ²_{p;0.975}` are kept.
pub const REWEIGHT_COVERAGE: f64 = 0.975;

/// Options of a FastMCD fit. Setters cannot fail; the values are checked
/// once, when a fit uses them.
///
/// | option | default | meaning |
/// |---|---|---|
/// | support fraction | none: `h = ⌊(n + p + 1)/2⌋` | `h = ⌊fraction · n⌋`, which must lie in `[⌊(n+p+1)/2⌋, n]` |
/// | seed | 0 | seed of the random subset draws; equal seeds give equal fits |
/// | starts | 500 | random elemental starts (Rousseeuw and Van Driessen 1999); at least 1 |
/// | small-sample replications | 100 | simulated samples for the Pison et al. correction (0: off; only used when `n ≤ 1000`; each costs about a tenth of a fit) |
///
/// # Example
/// ```
/// use mvdist::robust::McdOptions;
/// let s = McdOptions::default().with_support_fraction(0.75).with_seed(42);
/// assert_eq!(s.subset_size(100, 3)?, 75);
/// assert_eq!(McdOptions::default().subset_size(100, 3)?, 52);
/// // Checked where it is used: a fraction above 1 is an error there.
/// assert!(McdOptions::default().with_support_fraction(1.5).subset_size(100, 3).is_err());
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct McdOptions {
    support_fraction: Option<f64>,
    seed: u64,
    starts: usize,
    small_sample_replications: usize,
}

impl Default for McdOptions {
    fn default() -> Self {
        McdOptions {
            support_fraction: None,
            seed: 0,
            starts: 500,
            small_sample_replications: 100,
        }
    }
}

impl McdOptions {
    /// Uses `h = ⌊fraction · n⌋` rows (default: none, the maximum-breakdown
    /// `h = ⌊(n + p + 1)/2⌋`). The fit checks that `0 < fraction ≤ 1` and
    /// that `h` lies in `[⌊(n + p + 1)/2⌋, n]`.
    pub fn with_support_fraction(mut self, fraction: f64) -> Self {
        self.support_fraction = Some(fraction);
        self
    }

    /// Sets the seed of the random subset draws (default 0).
    pub fn with_seed(mut self, seed: u64) -> Self {
        self.seed = seed;
        self
    }

    /// Sets the number of random starts (default 500; the fit rejects 0).
    pub fn with_starts(mut self, starts: usize) -> Self {
        self.starts = starts;
        self
    }

    /// Sets the number of simulated samples for the small-sample
    /// correction (default 100); 0 switches it off.
    pub fn with_small_sample_replications(mut self, replications: usize) -> Self {
        self.small_sample_replications = replications;
        self
    }

    /// The support fraction asked for, if any.
    pub fn support_fraction(&self) -> Option<f64> {
        self.support_fraction
    }

    /// The seed.
    pub fn seed(&self) -> u64 {
        self.seed
    }

    /// The number of random starts.
    pub fn starts(&self) -> usize {
        self.starts
    }

    /// The number of small-sample replications.
    pub fn small_sample_replications(&self) -> usize {
        self.small_sample_replications
    }

    /// The subset size `h` for `n` rows of `p` variables.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless the support fraction is in
    /// `(0, 1]`, or if `h` falls outside
    /// `[⌊(n + p + 1)/2⌋, n]`; [`Error::TooFewRows`] unless `n > p`.
    pub fn subset_size(&self, n: usize, p: usize) -> Result<usize> {
        if let Some(fraction) = self.support_fraction {
            if !(fraction > 0.0 && fraction <= 1.0) {
                return Err(Error::invalid(
                    "support fraction",
                    format!("{fraction} is not in (0, 1]"),
                ));
            }
        }
        if n <= p {
            return Err(Error::TooFewRows {
                rows: n,
                needed: p.saturating_add(1),
                columns: p,
            });
        }
        // ⌊(n + p + 1)/2⌋ without overflow (n > p here).
        let lowest = n / 2 + p / 2 + (n % 2 + p % 2).div_ceil(2);
        let h = match self.support_fraction {
            None => lowest,
            Some(f) => ((f * n as f64) + 1e-9).floor().max(0.0) as usize,
        };
        if h < lowest || h > n {
            return Err(Error::invalid(
                "support fraction",
                format!(
                    "{:?} gives h = {h} rows, outside [{lowest}, {n}] for n = {n} rows and p = {p} columns",
                    self.support_fraction
                ),
            ));
        }
        Ok(h)
    }
}

/// A fitted minimum covariance determinant estimate: raw and reweighted
/// location and scatter, the rows behind each, and the factors applied.
///
/// # Example
/// ```
/// use mvdist::robust::{minimum_covariance_determinant, McdOptions};
/// use ndarray::Array2;
/// let rows = Array2::from_shape_fn((30, 2), |(i, j)| ((i * (j + 2)) as f64 * 0.77).sin());
/// let fit = minimum_covariance_determinant(rows.view(), &McdOptions::default())?;
/// assert_eq!(fit.subset().len(), fit.subset_size());
/// assert_eq!(fit.subset_size(), 16); // ⌊(30 + 2 + 1)/2⌋
/// assert!(fit.reweighted_rows().len() > fit.dim());
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct McdFit {
    sample_size: usize,
    subset: Vec<usize>,
    raw_location: Vec<f64>,
    raw_scatter: Scatter,
    raw_log_determinant: f64,
    consistency_factor: f64,
    raw_small_sample_factor: f64,
    location: Vec<f64>,
    scatter: Scatter,
    reweighted_rows: Vec<usize>,
    reweighted_factor: f64,
    reweighted_small_sample_factor: f64,
    reweighted_wishart_dof: Option<f64>,
    settings: McdOptions,
}

impl McdFit {
    /// Number of rows `n`.
    pub fn sample_size(&self) -> usize {
        self.sample_size
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.location.len()
    }

    /// The subset size `h`.
    pub fn subset_size(&self) -> usize {
        self.subset.len()
    }

    /// The rows (0-based, ascending) of the final `h`-subset.
    pub fn subset(&self) -> &[usize] {
        &self.subset
    }

    /// The raw location: the mean of the subset.
    pub fn raw_location(&self) -> &[f64] {
        &self.raw_location
    }

    /// The raw scatter `c(h/n) · S_H` (consistency factor applied, no
    /// small-sample factor): the estimate the Hardin–Rocke reference is
    /// built for.
    pub fn raw_scatter(&self) -> &Scatter {
        &self.raw_scatter
    }

    /// The MCD objective: `ln det S_H` of the subset's maximum-likelihood
    /// covariance (before any factor).
    pub fn raw_log_determinant(&self) -> f64 {
        self.raw_log_determinant
    }

    /// The consistency factor `c(h/n)`.
    pub fn consistency_factor(&self) -> f64 {
        self.consistency_factor
    }

    /// The simulated small-sample factor of the raw scatter (1 when off or
    /// `n > 1000`); the distances used for reweighting are measured with
    /// `raw_small_sample_factor · raw_scatter`.
    pub fn raw_small_sample_factor(&self) -> f64 {
        self.raw_small_sample_factor
    }

    /// The reweighted location: the mean of the kept rows.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// The reweighted scatter: the maximum-likelihood covariance of the kept
    /// rows times `c(0.975)` and the reweighted small-sample factor.
    pub fn scatter(&self) -> &Scatter {
        &self.scatter
    }

    /// The rows (0-based, ascending) kept by the reweighting step.
    pub fn reweighted_rows(&self) -> &[usize] {
        &self.reweighted_rows
    }

    /// The simulated small-sample factor of the reweighted scatter.
    pub fn reweighted_small_sample_factor(&self) -> f64 {
        self.reweighted_small_sample_factor
    }

    /// The simulated Wishart degrees of freedom `m` of the reweighted
    /// distances' F reference ([`crate::Reference::reweighted_mcd`]); `None`
    /// when the small-sample simulation did not run (`n > 1000`, or
    /// [`McdOptions::with_small_sample_replications`]`(0)`), in which case
    /// the reweighted model uses χ²(p).
    pub fn reweighted_wishart_dof(&self) -> Option<f64> {
        self.reweighted_wishart_dof
    }

    /// The settings the fit used.
    pub fn options(&self) -> &McdOptions {
        &self.settings
    }

    fn estimator(&self, stage: McdStage, scale_factor: f64) -> FitMethod {
        FitMethod::Mcd {
            stage,
            subset_size: self.subset_size(),
            support_fraction: self.settings.support_fraction,
            seed: self.settings.seed,
            scale_factor,
            wishart_dof: match stage {
                McdStage::Reweighted => self.reweighted_wishart_dof,
                McdStage::Raw => None,
            },
        }
    }

    /// The reweighted estimate: location, scatter, `n`, and an
    /// [`FitMethod::Mcd`] record with the simulated
    /// [`reweighted_wishart_dof`](Self::reweighted_wishart_dof).
    pub fn estimate(&self) -> Estimate {
        Estimate {
            location: self.location.clone(),
            scatter: self.scatter.clone(),
            sample_size: self.sample_size,
            estimator: self.estimator(
                McdStage::Reweighted,
                self.reweighted_factor * self.reweighted_small_sample_factor,
            ),
        }
    }

    /// The raw estimate (the `h`-subset's, with its consistency factor).
    pub fn raw_estimate(&self) -> Estimate {
        Estimate {
            location: self.raw_location.clone(),
            scatter: self.raw_scatter.clone(),
            sample_size: self.sample_size,
            estimator: self.estimator(McdStage::Raw, self.consistency_factor),
        }
    }
}

/// The reweighting step's result.
pub(crate) struct Reweighted {
    pub(crate) mean: Vec<f64>,
    /// `c(0.975)` times the maximum-likelihood covariance of the kept rows.
    pub(crate) scatter: Scatter,
    pub(crate) rows: Vec<usize>,
    pub(crate) factor: f64,
}

/// One-step reweighting: keep rows with `d² ≤ χ²_{p;0.975}` where `d²` is
/// measured with `factor · ml_cov` around `mean`.
pub(crate) fn reweight(
    x: ArrayView2<'_, f64>,
    mean: &[f64],
    ml_cov: &Scatter,
    factor: f64,
) -> Result<Reweighted> {
    let (n, p) = x.dim();
    let mut d2 = vec![0.0; n];
    kernel::batch_squared_distances(ml_cov.whitening_factor(), mean, x, &mut d2)?;
    let cutoff = ChiSquared::new(p as f64)?.isf(1.0 - REWEIGHT_COVERAGE)?;
    let rows: Vec<usize> = (0..n).filter(|&i| d2[i] / factor <= cutoff).collect();
    if rows.len() <= p {
        return Err(Error::TooFewRows {
            rows: rows.len(),
            needed: p + 1,
            columns: p,
        });
    }
    let mut buf = Vec::new();
    let (m, cov) = subset_moments(x, &rows, &mut buf)?;
    let c = consistency_factor(p, REWEIGHT_COVERAGE)?;
    let scaled: Vec<f64> = cov.iter().map(|v| v * c).collect();
    let scatter = Scatter::from_row_major(&scaled, p)?;
    Ok(Reweighted {
        mean: m,
        scatter,
        rows,
        factor: c,
    })
}

fn scaled(s: &Scatter, factor: f64) -> Result<Scatter> {
    let m: Vec<f64> = s.matrix_slice().iter().map(|v| v * factor).collect();
    Scatter::from_row_major(&m, s.dim())
}

/// Fits the minimum covariance determinant estimate by FastMCD, with
/// consistency and small-sample factors and one-step reweighting; see the
/// [module documentation](self).
///
/// # Errors
/// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
/// [`Error::TooFewRows`] unless `n > p` (use [`crate::shrinkage`] when
/// there are fewer rows than variables); [`Error::ZeroVariance`] naming a
/// constant column; [`Error::InvalidParameter`] for a support fraction
/// giving `h` outside `[⌊(n+p+1)/2⌋, n]`; [`Error::ExactFit`] when at least
/// `h` rows lie on a hyperplane.
///
/// # Example
/// ```
/// use mvdist::{robust::{minimum_covariance_determinant, McdOptions}, Error};
/// use ndarray::array;
/// let few = array![[1.0, 2.0, 3.0], [2.0, 1.0, 0.0]];
/// assert!(matches!(
///     minimum_covariance_determinant(few.view(), &McdOptions::default()),
///     Err(Error::TooFewRows { .. })
/// ));
/// ```
pub fn minimum_covariance_determinant(
    rows: ArrayView2<'_, f64>,
    settings: &McdOptions,
) -> Result<McdFit> {
    let (n, p) = rows.dim();
    if p == 0 {
        return Err(Error::Empty { what: "columns" });
    }
    if n == 0 {
        return Err(Error::Empty { what: "rows" });
    }
    check_finite(rows)?;
    if settings.starts == 0 {
        return Err(Error::invalid(
            "starts",
            "0 random starts; at least one is needed (the default is 500)",
        ));
    }
    let h = settings.subset_size(n, p)?;
    for j in 0..p {
        let col = rows.column(j);
        let first = col[0];
        if col.iter().all(|&v| v == first) {
            return Err(Error::ZeroVariance { column: j });
        }
    }
    let owned: Array2<f64>;
    let x = if rows.is_standard_layout() {
        rows
    } else {
        owned = rows.as_standard_layout().into_owned();
        owned.view()
    };
    let plan = SearchPlan {
        subset_size: h,
        starts: settings.starts,
        seed: settings.seed,
        thorough: true,
    };
    let raw = match search(x, &plan)? {
        Search::Found(raw) => raw,
        Search::ExactFit(hyperplane) => return Err(Error::ExactFit { hyperplane }),
    };
    let c_raw = consistency_factor(p, h as f64 / n as f64)?;
    let sim = small_sample::simulated_factors(
        n,
        p,
        h,
        c_raw,
        settings.seed,
        settings.small_sample_replications,
    )?;
    let (f_raw, f_rew) = (sim.raw_factor, sim.reweighted_factor);
    let w = reweight(x, &raw.mean, &raw.covariance, c_raw * f_raw)?;
    let scatter = if f_rew == 1.0 {
        w.scatter
    } else {
        scaled(&w.scatter, f_rew)?
    };
    Ok(McdFit {
        sample_size: n,
        raw_log_determinant: raw.covariance.log_determinant(),
        raw_scatter: scaled(&raw.covariance, c_raw)?,
        subset: raw.subset,
        raw_location: raw.mean,
        consistency_factor: c_raw,
        raw_small_sample_factor: f_raw,
        location: w.mean,
        scatter,
        reweighted_rows: w.rows,
        reweighted_factor: w.factor,
        reweighted_small_sample_factor: f_rew,
        reweighted_wishart_dof: sim.wishart_dof,
        settings: settings.clone(),
    })
}
