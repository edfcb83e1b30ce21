//! The EM fit of a multivariate normal mean and covariance from rows with
//! empty cells; see the [module documentation](super).

use crate::error::{Error, Result};
use crate::estimate::{Estimate, FitMethod};
use crate::kernels::linalg::{cholesky_lower, gram_lower_add, invert_lower};
use crate::scatter::Scatter;
use ndarray::ArrayView2;
use rayon::prelude::*;

/// Options of [`expectation_maximization`]. Setters cannot fail; the
/// values are checked once, where they are used.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct EmOptions {
    tolerance: f64,
    max_iterations: usize,
}

impl Default for EmOptions {
    /// Tolerance 1e-9, at most 1000 iterations.
    fn default() -> Self {
        EmOptions {
            tolerance: 1e-9,
            max_iterations: 1000,
        }
    }
}

impl EmOptions {
    /// Stop when no mean or covariance entry moves by more than this,
    /// relative to the scale of its variables (default 1e-9; must be
    /// positive).
    pub fn with_tolerance(mut self, tolerance: f64) -> Self {
        self.tolerance = tolerance;
        self
    }

    /// The most iterations (default 1000; must be at least 1). A fit that
    /// reaches it is returned with [`EmFit::converged`] `false`.
    pub fn with_max_iterations(mut self, iterations: usize) -> Self {
        self.max_iterations = iterations;
        self
    }

    /// The tolerance.
    pub fn tolerance(&self) -> f64 {
        self.tolerance
    }

    /// The iteration limit.
    pub fn max_iterations(&self) -> usize {
        self.max_iterations
    }

    fn validate(&self) -> Result<()> {
        if !(self.tolerance > 0.0 && self.tolerance.is_finite()) {
            return Err(Error::invalid(
                "tolerance",
                format!("{} is not a positive number (default 1e-9)", self.tolerance),
            ));
        }
        if self.max_iterations == 0 {
            return Err(Error::invalid(
                "max iterations",
                "0; at least one iteration is needed (default 1000)",
            ));
        }
        Ok(())
    }
}

/// The result of [`expectation_maximization`]: the maximum-likelihood mean
/// and covariance (divisor `n`) with the trace of the fit.
#[derive(Clone, Debug, PartialEq)]
pub struct EmFit {
    location: Vec<f64>,
    scatter: Scatter,
    rows: usize,
    missing_cells: usize,
    iterations: usize,
    converged: bool,
    log_likelihood: Vec<f64>,
}

impl EmFit {
    /// The estimated mean.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// The estimated covariance (maximum likelihood, divisor `n`).
    pub fn scatter(&self) -> &Scatter {
        &self.scatter
    }

    /// The number of rows `n`.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// The number of empty cells.
    pub fn missing_cells(&self) -> usize {
        self.missing_cells
    }

    /// The number of iterations run.
    pub fn iterations(&self) -> usize {
        self.iterations
    }

    /// Whether the tolerance was met before the iteration limit.
    pub fn converged(&self) -> bool {
        self.converged
    }

    /// The observed-data log-likelihood at the start of each iteration and
    /// at the estimate (non-decreasing up to rounding).
    pub fn log_likelihood(&self) -> &[f64] {
        &self.log_likelihood
    }

    /// The estimate, for [`crate::DistanceModel::from_estimate`].
    pub fn estimate(&self) -> Estimate {
        Estimate {
            location: self.location.clone(),
            scatter: self.scatter.clone(),
            sample_size: self.rows,
            estimator: FitMethod::ExpectationMaximization {
                iterations: self.iterations,
                converged: self.converged,
                missing_cells: self.missing_cells,
            },
        }
    }
}

/// Rows per task, and per block of the outer-product kernel.
const TASK_ROWS: usize = 8192;
const BLOCK_ROWS: usize = 256;
const LN_2PI: f64 = 1.837_877_066_409_345_5;

/// Per-task sums of one E step, centred at the current mean.
struct Sums {
    first: Vec<f64>,
    second: Vec<f64>,
    log_likelihood: f64,
}

/// The maximum-likelihood mean and covariance of multivariate normal rows
/// with empty cells (NaN), by the EM algorithm; see the
/// [module documentation](super).
///
/// # Errors
/// [`Error::Empty`]; [`Error::NonFinite`] for an infinite value (NaN is an
/// empty cell); [`Error::InvalidParameter`] naming a row with every cell
/// empty, or a column observed in `p` rows or fewer, or for invalid
/// options; [`Error::TooFewRows`] unless `n > p`; [`Error::ZeroVariance`]
/// naming a column whose observed values are all equal;
/// [`Error::Collinear`] or [`Error::NotPositiveDefinite`] when the
/// estimate is singular (a column whose variance left after regression on
/// the earlier columns is below 100 times the tolerance, relative to its
/// own variance, counts as collinear: the iterations settle entries only
/// to about the tolerance).
///
/// # Example
/// ```
/// use mvdist::incomplete::{expectation_maximization, EmOptions};
/// use mvdist::DistanceModel;
/// use ndarray::array;
/// let nan = f64::NAN;
/// let rows = array![
///     [1.0, 2.1, 0.3], [2.0, nan, 0.9], [3.0, 4.2, nan], [4.0, 4.8, 1.6],
///     [5.0, 6.1, 1.9], [2.5, 3.0, 0.7], [3.5, nan, 1.2], [1.5, 2.2, 0.6],
///     [4.5, 5.6, 1.5], [0.5, 1.4, 0.1],
/// ];
/// let fit = expectation_maximization(rows.view(), &EmOptions::default())?;
/// assert!(fit.converged());
/// assert_eq!(fit.missing_cells(), 3);
/// let ll = fit.log_likelihood();
/// assert!(ll.windows(2).all(|w| w[1] >= w[0] - 1e-9 * w[0].abs()));
/// let model = DistanceModel::from_estimate(fit.estimate())?;
/// assert_eq!(model.sample_size(), 10);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn expectation_maximization(rows: ArrayView2<'_, f64>, options: &EmOptions) -> Result<EmFit> {
    options.validate()?;
    let (n, p) = rows.dim();
    if p == 0 {
        return Err(Error::Empty { what: "columns" });
    }
    if n == 0 {
        return Err(Error::Empty { what: "rows" });
    }
    if n <= p {
        return Err(Error::TooFewRows {
            rows: n,
            needed: p + 1,
            columns: p,
        });
    }
    // Check the cells; observed counts, sums and sums of squares per column.
    let mut count = vec![0usize; p];
    let mut missing_cells = 0usize;
    for (i, r) in rows.outer_iter().enumerate() {
        let mut any = false;
        for (j, &v) in r.iter().enumerate() {
            if v.is_nan() {
                missing_cells += 1;
                continue;
            }
            if !v.is_finite() {
                return Err(Error::NonFinite {
                    row: i,
                    column: j,
                    value: v,
                });
            }
            count[j] += 1;
            any = true;
        }
        if !any {
            return Err(crate::data::no_observed_value(i));
        }
    }
    if let Some((j, &k)) = count.iter().enumerate().find(|(_, &k)| k <= p) {
        return Err(Error::invalid(
            "rows with gaps",
            format!(
                "column {j} is observed in only {k} rows; the EM fit needs more than p = {p} \
                 observed values in every column"
            ),
        ));
    }
    // Start: observed means and variances (two passes for accuracy).
    let mut mean = vec![0.0; p];
    for r in rows.outer_iter() {
        for (j, &v) in r.iter().enumerate() {
            if !v.is_nan() {
                mean[j] += v;
            }
        }
    }
    for j in 0..p {
        mean[j] /= count[j] as f64;
    }
    let mut var = vec![0.0; p];
    for r in rows.outer_iter() {
        for (j, &v) in r.iter().enumerate() {
            if !v.is_nan() {
                var[j] += (v - mean[j]) * (v - mean[j]);
            }
        }
    }
    let mut cov = vec![0.0; p * p];
    for j in 0..p {
        let v = var[j] / count[j] as f64;
        if !(v > 0.0) {
            return Err(Error::ZeroVariance { column: j });
        }
        cov[j * p + j] = v;
    }

    let mut trace = Vec::new();
    let mut converged = false;
    let mut iterations = 0;
    while iterations < options.max_iterations {
        iterations += 1;
        let sums = e_step(rows, &mean, &cov)?;
        trace.push(sums.log_likelihood);
        // M step, from sums centred at the old mean.
        let nf = n as f64;
        let shift: Vec<f64> = sums.first.iter().map(|s| s / nf).collect();
        let mut next = vec![0.0; p * p];
        for a in 0..p {
            for b in 0..=a {
                let v = sums.second[a * p + b] / nf - shift[a] * shift[b];
                next[a * p + b] = v;
                next[b * p + a] = v;
            }
        }
        // The change, relative to the scale of the variables.
        let mut change = 0.0f64;
        for a in 0..p {
            let sa = next[a * p + a].max(f64::MIN_POSITIVE).sqrt();
            change = change.max(shift[a].abs() / sa);
            for b in 0..=a {
                let sb = next[b * p + b].max(f64::MIN_POSITIVE).sqrt();
                change = change.max((next[a * p + b] - cov[a * p + b]).abs() / (sa * sb));
            }
        }
        for a in 0..p {
            mean[a] += shift[a];
        }
        cov = next;
        if !change.is_finite() {
            return Err(Error::invalid(
                "rows with gaps",
                "the EM iterations diverged; check for columns that are (nearly) linear \
                 combinations of others",
            ));
        }
        if change <= options.tolerance {
            converged = true;
            break;
        }
    }
    // The log-likelihood at the estimate closes the trace.
    trace.push(e_step(rows, &mean, &cov)?.log_likelihood);
    // Entries are only settled to about the tolerance, so a residual
    // variance below 100 times it (relative) cannot be told from zero: the
    // columns are reported as collinear rather than returned as an
    // ill-conditioned scatter.
    let collinearity = (100.0 * options.tolerance).clamp(32.0 * p as f64 * f64::EPSILON, 0.5);
    let scatter = Scatter::with_collinearity_tolerance(&cov, p, collinearity)?;
    Ok(EmFit {
        location: mean,
        scatter,
        rows: n,
        missing_cells,
        iterations,
        converged,
        log_likelihood: trace,
    })
}

/// One E step at `(mean, cov)`: the sums of the filled rows centred at
/// `mean`, the sum of their outer products plus conditional covariances,
/// and the observed-data log-likelihood.
fn e_step(rows: ArrayView2<'_, f64>, mean: &[f64], cov: &[f64]) -> Result<Sums> {
    let (n, p) = rows.dim();
    let l = cholesky_lower(cov, p).map_err(|column| Error::NotPositiveDefinite { column })?;
    let log_det: f64 = (0..p).map(|i| 2.0 * l[i * p + i].ln()).sum();
    // K = Σ⁻¹ = L⁻ᵀ L⁻¹: the conditional laws need its blocks.
    let li = invert_lower(&l, p);
    let mut k = vec![0.0; p * p];
    for a in 0..p {
        for b in 0..=a {
            let mut s = 0.0;
            for r in a..p {
                s += li[r * p + a] * li[r * p + b];
            }
            k[a * p + b] = s;
            k[b * p + a] = s;
        }
    }
    let tasks: Vec<usize> = (0..n.div_ceil(TASK_ROWS)).collect();
    let parts = tasks
        .par_iter()
        .map(|&t| {
            let start = t * TASK_ROWS;
            let end = (start + TASK_ROWS).min(n);
            e_step_task(rows, start, end, mean, &k, log_det)
        })
        .collect::<Vec<Sums>>();
    let mut total = Sums {
        first: vec![0.0; p],
        second: vec![0.0; p * p],
        log_likelihood: 0.0,
    };
    for part in parts {
        for (a, b) in total.first.iter_mut().zip(&part.first) {
            *a += b;
        }
        for (a, b) in total.second.iter_mut().zip(&part.second) {
            *a += b;
        }
        total.log_likelihood += part.log_likelihood;
    }
    // The kernel fills the lower triangle; mirror it.
    for a in 0..p {
        for b in 0..a {
            total.second[b * p + a] = total.second[a * p + b];
        }
    }
    Ok(total)
}

fn e_step_task(
    rows: ArrayView2<'_, f64>,
    start: usize,
    end: usize,
    mean: &[f64],
    k: &[f64],
    log_det: f64,
) -> Sums {
    let p = mean.len();
    let mut first = vec![0.0; p];
    let mut second = vec![0.0; p * p];
    let mut block = vec![0.0; BLOCK_ROWS * p];
    let mut filled = 0usize;
    let mut log_likelihood = 0.0;
    let mut missing = Vec::with_capacity(p);
    let mut kmm = vec![0.0; p * p];
    let mut b = vec![0.0; p];
    let mut unit = vec![0.0; p];
    for i in start..end {
        let x = rows.row(i);
        let z = &mut block[filled * p..(filled + 1) * p];
        missing.clear();
        for j in 0..p {
            let v = x[j];
            if v.is_nan() {
                missing.push(j);
                z[j] = 0.0;
            } else {
                z[j] = v - mean[j];
            }
        }
        let r = missing.len();
        let mut log_det_kmm = 0.0;
        if r > 0 {
            // K_mm, its Cholesky factor in place, and b = K_mo z_o.
            for (a, &ma) in missing.iter().enumerate() {
                for (c, &mc) in missing.iter().enumerate() {
                    kmm[a * r + c] = k[ma * p + mc];
                }
                let mut s = 0.0;
                for j in 0..p {
                    s += k[ma * p + j] * z[j]; // z_m is 0 here
                }
                b[a] = s;
            }
            small_cholesky(&mut kmm[..r * r], r);
            for a in 0..r {
                log_det_kmm += 2.0 * kmm[a * r + a].ln();
            }
            // y = K_mm⁻¹ b; z_m = −y.
            small_solve(&kmm[..r * r], r, &mut b[..r]);
            for (a, &ma) in missing.iter().enumerate() {
                z[ma] = -b[a];
            }
            // Cov[x_m | x_o] = K_mm⁻¹, added to the second moments.
            for c in 0..r {
                let e = &mut unit[..r];
                e.fill(0.0);
                e[c] = 1.0;
                small_solve(&kmm[..r * r], r, e);
                for a in c..r {
                    let (ma, mc) = (missing[a], missing[c]);
                    // The lower triangle, as the outer-product kernel fills.
                    let (hi, lo) = if ma >= mc { (ma, mc) } else { (mc, ma) };
                    second[hi * p + lo] += e[a];
                }
            }
        }
        // q = zᵀ K z with the conditional mean filled in equals the
        // observed-part quadratic form c_oᵀ Σ_oo⁻¹ c_o.
        let mut q = 0.0;
        for a in 0..p {
            let mut s = 0.0;
            for c in 0..p {
                s += k[a * p + c] * z[c];
            }
            q += z[a] * s;
        }
        let observed = (p - r) as f64;
        log_likelihood -= 0.5 * (observed * LN_2PI + log_det + log_det_kmm + q);
        for j in 0..p {
            first[j] += z[j];
        }
        filled += 1;
        if filled == BLOCK_ROWS {
            gram_lower_add(&mut second, &block, filled, p);
            filled = 0;
        }
    }
    if filled > 0 {
        gram_lower_add(&mut second, &block[..filled * p], filled, p);
    }
    Sums {
        first,
        second,
        log_likelihood,
    }
}

/// In-place lower Cholesky factor of a small row-major `r × r` matrix
/// (a principal block of a positive definite `K`, so positive definite).
fn small_cholesky(a: &mut [f64], r: usize) {
    for j in 0..r {
        let mut d = a[j * r + j];
        for c in 0..j {
            d -= a[j * r + c] * a[j * r + c];
        }
        let d = d.max(f64::MIN_POSITIVE).sqrt();
        a[j * r + j] = d;
        for i in (j + 1)..r {
            let mut s = a[i * r + j];
            for c in 0..j {
                s -= a[i * r + c] * a[j * r + c];
            }
            a[i * r + j] = s / d;
        }
    }
}

/// Solves `L Lᵀ y = b` in place with the factor of [`small_cholesky`].
fn small_solve(l: &[f64], r: usize, b: &mut [f64]) {
    for i in 0..r {
        let mut s = b[i];
        for c in 0..i {
            s -= l[i * r + c] * b[c];
        }
        b[i] = s / l[i * r + i];
    }
    for i in (0..r).rev() {
        let mut s = b[i];
        for c in (i + 1)..r {
            s -= l[c * r + i] * b[c];
        }
        b[i] = s / l[i * r + i];
    }
}
