//! Run lengths of the MEWMA and MCUSUM charts by simulation, and the limit
//! for a target in-control average run length.
//!
//! The **run length** of a chart is the number of rows up to and including
//! its first signal; the **average run length** (ARL) is its expectation.
//! The in-control ARL (`ARL₀`) is the mean time between false alarms; the
//! out-of-control ARL for a sustained shift of the mean is the mean delay
//! before it is signalled. Figures here are **zero-state**: the chart
//! starts from `Z_0 = 0` (`S_0 = 0`) and the shift is present from the
//! first row.
//!
//! **Invariance.** Both statistics are unchanged when the rows, `μ` and `Σ`
//! undergo the same invertible affine change `x ↦ A x + b`, and both depend
//! on the whitened rows only through norms, which rotations preserve. So
//! the run-length distribution depends only on `p`, the scheme's
//! parameters, `h`, and the noncentrality of the shift
//! `δ = √(shiftᵀ Σ⁻¹ shift)` (Lowry et al. 1992; Crosier 1988). The
//! simulation therefore draws standard normal vectors (`μ = 0`, `Σ = I`)
//! and adds `δ` to the first coordinate.
//!
//! **Simulation.** Run `r` draws its rows from its own SplitMix64 stream
//! derived from `(seed, r)`, so the results do not depend on how rayon
//! schedules the runs (and the sums are exact integers). Each run stops at
//! its first signal or at a cap (`max_steps`); a capped run is reported as
//! *censored* and counts as `max_steps`, so with censored runs the average
//! is a lower bound. The standard error is `sd(run length)/√runs`; for the
//! roughly geometric in-control run lengths the default 10 000 runs give a
//! standard error of about 1% of the ARL.
//!
//! **Limit search.** [`limit_for_average_run_length`] uses common random
//! numbers: every run keeps its stream, and since a chart's statistics do
//! not depend on `h`, each run's length is a non-decreasing function of
//! `h` (the first time the statistic exceeds `h`), so the estimated ARL is
//! monotone in `h` and bisection finds the smallest `h` (to a relative
//! tolerance) whose estimated ARL reaches the target. Each run is simulated
//! once, up to the largest `h` tried, and remembers the times its statistic
//! set a new maximum, from which its length at any smaller `h` follows.
//! Re-simulating the designed limit with another seed gives an independent
//! check of the achieved ARL.
//!
//! **Markov chain.** [`mewma_in_control_markov`] approximates the
//! in-control ARL of the MEWMA chart with the asymptotic covariance by the
//! Markov chain of Runger and Prabhu (1996): in whitened units `‖Z_i‖` is
//! a Markov process, and given `‖Z_{i−1}‖ = r`,
//! `‖Z_i‖²/λ² ~ χ'²_p(((1−λ) r/λ)²)` (noncentral χ²). The in-control
//! region `‖Z‖ ≤ √(h λ/(2−λ))` is cut into `m + 1` rings of width
//! `g = √(h λ/(2−λ))/(m + 0.5)` (state 0 a ball of radius `g/2`), each
//! represented by its midpoint, and the zero-state ARL is the first entry
//! of `(I − P)⁻¹ 1`, found by an LU solve. It is a deterministic check on
//! the simulation (no random error, a discretization error that falls as
//! `m` grows). The out-of-control (two-dimensional) chain is not provided.
//!
//! **Cautions.** These are properties of the model: independent,
//! multivariate normal rows with known `μ` and `Σ`. Estimated parameters,
//! heavy tails and autocorrelation all change the actual run lengths.
//!
//! # Example
//! ```
//! use mvdist::control_chart::run_length::{
//!     average_run_length, limit_for_average_run_length, RunLengthOptions,
//! };
//! use mvdist::control_chart::{ChartScheme, MewmaOptions};
//!
//! let scheme = ChartScheme::Mewma(MewmaOptions::default().with_smoothing(0.2));
//! let options = RunLengthOptions::default().with_runs(2_000);
//! let design = limit_for_average_run_length(&scheme, 2, 50.0, &options)?;
//! assert!(design.in_control.average >= 50.0);
//! // The delay for a shift of δ = 1.5 at that limit.
//! let shifted = average_run_length(&scheme, 2, design.limit, 1.5, &options)?;
//! assert!(shifted.average < 10.0);
//! # Ok::<(), mvdist::Error>(())
//! ```
//!
//! # References
//! - C. A. Lowry, W. H. Woodall, C. W. Champ and S. E. Rigdon (1992). A
//!   multivariate exponentially weighted moving average control chart.
//!   *Technometrics* 34, 46–53.
//! - R. B. Crosier (1988). Multivariate generalizations of cumulative sum
//!   quality-control schemes. *Technometrics* 30, 291–303.
//! - G. C. Runger and S. S. Prabhu (1996). A Markov chain model for the
//!   multivariate exponentially weighted moving averages control chart.
//!   *J. American Statistical Association* 91, 1701–1706.
//! - G. L. Steele, D. Lea and C. H. Flood (2014). Fast splittable
//!   pseudorandom number generators. *OOPSLA 2014*, 453–472.

use super::mcusum::cusum_update;
use super::mewma::{ewma_update, EwmaCovariance, EwmaScale, MewmaOptions};
use super::shift_run::{check_limit, check_row_length, ChartScheme};
use super::InControlEstimate;
use crate::distributions::special::gamma_tails;
use crate::error::{Error, Result};
use crate::robust::random::SplitMix64;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// Stream tag of the run-length simulation (the first stream coordinate).
const STREAM_TAG: u64 = 0x5255_4E4C_454E;
/// The cap of a run when none is set, for an evaluation at a given limit.
const EVALUATION_CAP: u64 = 1_000_000;
/// The cap of a run when none is set, for a limit search: this multiple of
/// the target.
const TARGET_CAP_MULTIPLE: f64 = 100.0;

/// How run lengths are simulated. Setters cannot fail and state their
/// default; the values are checked where they are used.
///
/// # Example
/// ```
/// use mvdist::control_chart::run_length::RunLengthOptions;
/// let o = RunLengthOptions::default().with_runs(50_000).with_seed(7);
/// assert_eq!((o.runs(), o.seed(), o.max_steps()), (50_000, 7, None));
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunLengthOptions {
    runs: usize,
    seed: u64,
    tolerance: f64,
    max_steps: Option<u64>,
}

impl Default for RunLengthOptions {
    fn default() -> Self {
        RunLengthOptions {
            runs: 10_000,
            seed: 0x00C0_FFEE,
            tolerance: 1e-4,
            max_steps: None,
        }
    }
}

impl RunLengthOptions {
    /// Number of simulated runs, at least 2 (default 10 000: a standard
    /// error of about 1% of an in-control ARL).
    pub fn with_runs(mut self, runs: usize) -> Self {
        self.runs = runs;
        self
    }

    /// The seed of the streams (default `0x00C0FFEE`).
    pub fn with_seed(mut self, seed: u64) -> Self {
        self.seed = seed;
        self
    }

    /// Relative tolerance on the limit in a limit search, in `(0, 1)`
    /// (default 1e-4, well below the simulation's own error).
    pub fn with_tolerance(mut self, tolerance: f64) -> Self {
        self.tolerance = tolerance;
        self
    }

    /// The most rows a run may take before it is stopped and counted as
    /// censored (default `None`: 100 × the target in a limit search,
    /// 1 000 000 in an evaluation).
    pub fn with_max_steps(mut self, max_steps: Option<u64>) -> Self {
        self.max_steps = max_steps;
        self
    }

    /// Number of runs.
    pub fn runs(&self) -> usize {
        self.runs
    }

    /// The seed.
    pub fn seed(&self) -> u64 {
        self.seed
    }

    /// The relative tolerance on the limit.
    pub fn tolerance(&self) -> f64 {
        self.tolerance
    }

    /// The cap of a run, if set.
    pub fn max_steps(&self) -> Option<u64> {
        self.max_steps
    }

    fn validate(&self) -> Result<()> {
        if self.runs < 2 {
            return Err(Error::invalid(
                "runs",
                format!("{} runs; a standard error needs at least 2", self.runs),
            ));
        }
        if !(self.tolerance > 0.0 && self.tolerance < 1.0) {
            return Err(Error::invalid(
                "tolerance",
                format!("{} is not in (0, 1)", self.tolerance),
            ));
        }
        if self.max_steps == Some(0) {
            return Err(Error::invalid("max steps", "a run needs at least 1 step"));
        }
        Ok(())
    }
}

/// A simulated average run length with its standard error.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunLengthEstimate {
    /// The scheme.
    pub scheme: ChartScheme,
    /// Number of variables `p`.
    pub dim: usize,
    /// The limit `h`.
    pub limit: f64,
    /// The noncentrality `δ` of the shift (0: in control).
    pub shift: f64,
    /// The average run length (zero state), a lower bound if runs were
    /// censored.
    pub average: f64,
    /// Its standard error, `standard_deviation / √runs`.
    pub standard_error: f64,
    /// The standard deviation of the run length.
    pub standard_deviation: f64,
    /// Number of runs.
    pub runs: usize,
    /// Runs stopped at `max_steps` without a signal.
    pub censored: usize,
    /// The cap of a run.
    pub max_steps: u64,
    /// The seed of the streams.
    pub seed: u64,
}

/// The result of a limit search: the limit and its in-control run length.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct LimitDesign {
    /// The smallest limit found (to the tolerance) whose simulated
    /// in-control ARL reaches the target.
    pub limit: f64,
    /// The target in-control ARL.
    pub target: f64,
    /// The simulated in-control run length at `limit` (with the search's
    /// streams: re-simulate with another seed for an independent check).
    pub in_control: RunLengthEstimate,
    /// The largest limit tried whose simulated ARL fell short of the target.
    pub below: f64,
    /// Evaluations of the simulated ARL made by the search.
    pub evaluations: usize,
}

/// The recursion of a scheme, in standardized units.
#[derive(Clone, Copy)]
enum Recursion {
    Mewma(EwmaScale),
    Mcusum(f64),
}

impl Recursion {
    fn new(scheme: &ChartScheme) -> Result<Self> {
        Ok(match scheme {
            ChartScheme::Mewma(o) => Recursion::Mewma(EwmaScale::new(o)?),
            ChartScheme::Mcusum(o) => {
                o.validate()?;
                Recursion::Mcusum(o.reference_value())
            }
        })
    }
}

fn sum_of_squares(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum()
}

/// One simulated run: its stream, its recursion state and the record
/// values of its statistic.
struct Path {
    rng: SplitMix64,
    spare: Option<f64>,
    vector: Vec<f64>,
    steps: u64,
    best: f64,
    /// `(step, statistic)` at each new maximum of the statistic.
    records: Vec<(u64, f64)>,
}

impl Path {
    fn new(seed: u64, run: usize, dim: usize) -> Self {
        Path {
            rng: SplitMix64::stream(seed, STREAM_TAG, run as u64),
            spare: None,
            vector: vec![0.0; dim],
            steps: 0,
            best: f64::NEG_INFINITY,
            records: Vec::new(),
        }
    }

    /// A standard normal variate (Box–Muller, both branches used).
    fn normal(&mut self) -> f64 {
        if let Some(v) = self.spare.take() {
            return v;
        }
        let u = self.rng.uniform();
        let v = self.rng.uniform();
        let r = (-2.0 * u.ln()).sqrt();
        let (s, c) = (std::f64::consts::TAU * v).sin_cos();
        self.spare = Some(r * s);
        r * c
    }

    /// Continues the run until its statistic exceeds `limit` or it reaches
    /// `cap` steps.
    fn extend(
        &mut self,
        recursion: &Recursion,
        shift: f64,
        limit: f64,
        cap: u64,
        scratch: &mut (Vec<f64>, Vec<f64>),
    ) {
        let (x, zeros) = scratch;
        while !(self.best > limit) && self.steps < cap {
            for xj in x.iter_mut() {
                *xj = self.normal();
            }
            if let Some(first) = x.first_mut() {
                *first += shift;
            }
            self.steps += 1;
            let statistic = match recursion {
                Recursion::Mewma(scale) => {
                    ewma_update(&mut self.vector, x, zeros, scale);
                    sum_of_squares(&self.vector) / scale.at(self.steps)
                }
                Recursion::Mcusum(k) => {
                    cusum_update(&mut self.vector, x, zeros, *k, sum_of_squares)
                        .unwrap_or(f64::INFINITY)
                }
            };
            if statistic > self.best {
                self.best = statistic;
                self.records.push((self.steps, statistic));
            }
        }
    }

    /// The run length at `limit` (the run has been extended to at least
    /// `limit`), and whether it is censored.
    fn length(&self, limit: f64, cap: u64) -> (u64, bool) {
        let i = self.records.partition_point(|&(_, v)| v <= limit);
        match self.records.get(i) {
            Some(&(step, _)) => (step, false),
            None => (cap, true),
        }
    }
}

/// The simulated runs of one problem.
struct Simulation {
    recursion: Recursion,
    scheme: ChartScheme,
    dim: usize,
    shift: f64,
    cap: u64,
    seed: u64,
    paths: Vec<Path>,
    evaluations: usize,
}

impl Simulation {
    fn new(
        scheme: &ChartScheme,
        dim: usize,
        shift: f64,
        cap: u64,
        options: &RunLengthOptions,
    ) -> Result<Self> {
        let recursion = Recursion::new(scheme)?;
        options.validate()?;
        if dim == 0 {
            return Err(Error::invalid(
                "dimension",
                "the chart needs at least 1 variable",
            ));
        }
        if !(shift.is_finite() && shift >= 0.0) {
            return Err(Error::invalid(
                "shift",
                format!("δ = {shift} is not a finite number ≥ 0"),
            ));
        }
        let seed = options.seed;
        let paths = (0..options.runs).map(|r| Path::new(seed, r, dim)).collect();
        Ok(Simulation {
            recursion,
            scheme: *scheme,
            dim,
            shift,
            cap,
            seed,
            paths,
            evaluations: 0,
        })
    }

    /// The estimate at `limit`, simulating further where needed.
    fn at(&mut self, limit: f64) -> RunLengthEstimate {
        let (recursion, shift, cap, dim) = (self.recursion, self.shift, self.cap, self.dim);
        self.paths.par_iter_mut().with_min_len(16).for_each_init(
            || (vec![0.0; dim], vec![0.0; dim]),
            |scratch, path| path.extend(&recursion, shift, limit, cap, scratch),
        );
        self.evaluations += 1;
        let (mut sum, mut squares, mut censored) = (0u128, 0u128, 0usize);
        for path in &self.paths {
            let (len, cut) = path.length(limit, cap);
            sum += u128::from(len);
            squares += u128::from(len) * u128::from(len);
            censored += usize::from(cut);
        }
        let n = self.paths.len() as u128;
        let average = sum as f64 / n as f64;
        // Exact integer numerator: n Σ L² − (Σ L)² = n (n − 1) s².
        let numerator = (n * squares).saturating_sub(sum * sum);
        let variance = numerator as f64 / (n * (n - 1)) as f64;
        let standard_deviation = variance.sqrt();
        RunLengthEstimate {
            scheme: self.scheme,
            dim,
            limit,
            shift,
            average,
            standard_error: standard_deviation / (n as f64).sqrt(),
            standard_deviation,
            runs: self.paths.len(),
            censored,
            max_steps: cap,
            seed: self.seed,
        }
    }
}

/// The zero-state average run length of a scheme with `dim` variables and
/// limit `h`, for a sustained shift of noncentrality `shift` (`δ`; 0 for
/// in control), by simulation.
///
/// # Errors
/// [`Error::InvalidParameter`] for invalid scheme parameters, `dim = 0`, a
/// limit that is not finite and positive, a negative or non-finite shift,
/// fewer than 2 runs, a tolerance outside `(0, 1)` or a cap of 0.
pub fn average_run_length(
    scheme: &ChartScheme,
    dim: usize,
    limit: f64,
    shift: f64,
    options: &RunLengthOptions,
) -> Result<RunLengthEstimate> {
    check_limit(limit)?;
    let cap = options.max_steps.unwrap_or(EVALUATION_CAP);
    let mut sim = Simulation::new(scheme, dim, shift, cap, options)?;
    Ok(sim.at(limit))
}

/// [`average_run_length`] for several shifts, with the same streams for
/// each (common random numbers, which makes the ARL curve smoother).
///
/// # Errors
/// As [`average_run_length`], for any of the shifts.
pub fn average_run_lengths(
    scheme: &ChartScheme,
    dim: usize,
    limit: f64,
    shifts: &[f64],
    options: &RunLengthOptions,
) -> Result<Vec<RunLengthEstimate>> {
    shifts
        .iter()
        .map(|&d| average_run_length(scheme, dim, limit, d, options))
        .collect()
}

/// The noncentrality `δ = √(shiftᵀ Σ⁻¹ shift)` of a shift of the mean
/// under an in-control estimate, computed through the Cholesky factor of
/// `Σ` (no inverse). By invariance this is all of the shift that the run
/// lengths depend on.
///
/// # Errors
/// [`Error::ShapeMismatch`] for a shift of another length;
/// [`Error::NonFinite`] (row 0, naming the column) for a non-finite entry.
///
/// # Example
/// ```
/// use mvdist::control_chart::{run_length::noncentrality, InControlEstimate};
/// use mvdist::Scatter;
/// let estimate = InControlEstimate::new(vec![0.0, 0.0], Scatter::diagonal(&[4.0, 1.0])?)?;
/// assert!((noncentrality(&estimate, &[2.0, 0.0])? - 1.0).abs() < 1e-12);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn noncentrality(estimate: &InControlEstimate, shift: &[f64]) -> Result<f64> {
    check_row_length(shift, estimate.dim())?;
    Ok(estimate.scatter().squared_norm(shift)?.sqrt())
}

/// [`average_run_length`] for a shift of the mean given as a vector in the
/// data's units (`μ₁ − μ`), under the chart's in-control estimate: the
/// shift's noncentrality ([`noncentrality`]) is simulated.
///
/// # Errors
/// As [`noncentrality`] and [`average_run_length`].
pub fn average_run_length_for_shift(
    scheme: &ChartScheme,
    estimate: &InControlEstimate,
    limit: f64,
    shift: &[f64],
    options: &RunLengthOptions,
) -> Result<RunLengthEstimate> {
    let delta = noncentrality(estimate, shift)?;
    average_run_length(scheme, estimate.dim(), limit, delta, options)
}

/// The limit `h` whose simulated zero-state in-control ARL reaches
/// `target` (see the [module documentation](self) for the method), with
/// the achieved ARL and its standard error.
///
/// # Errors
/// As [`average_run_length`]; [`Error::InvalidParameter`] for a target
/// that is not finite and above 1, a cap not above the target, or a scheme
/// whose in-control ARL exceeds the target even for a limit near 0 (an
/// MCUSUM reference value so large that the statistic is rarely positive).
pub fn limit_for_average_run_length(
    scheme: &ChartScheme,
    dim: usize,
    target: f64,
    options: &RunLengthOptions,
) -> Result<LimitDesign> {
    if !(target.is_finite() && target > 1.0) {
        return Err(Error::invalid(
            "target average run length",
            format!("{target} is not a finite number greater than 1"),
        ));
    }
    let cap = match options.max_steps {
        Some(c) => c,
        None => (TARGET_CAP_MULTIPLE * target).ceil().min(u64::MAX as f64) as u64,
    };
    if !(cap as f64 > target) {
        return Err(Error::invalid(
            "max steps",
            format!("a cap of {cap} rows cannot show an average run length of {target}"),
        ));
    }
    let mut sim = Simulation::new(scheme, dim, 0.0, cap, options)?;
    let start = match scheme {
        ChartScheme::Mewma(_) => dim as f64,
        ChartScheme::Mcusum(_) => 1.0,
    };
    let mut h = start;
    let mut estimate = sim.at(h);
    let (mut below, mut above);
    if estimate.average >= target {
        above = (h, estimate);
        loop {
            h /= 1.25;
            if h < 1e-9 * start {
                return Err(Error::invalid(
                    "scheme",
                    format!(
                        "even a limit of {h:.3e} gives an in-control average run length of \
                         {:.4} ≥ {target}; a smaller reference value is needed",
                        estimate.average
                    ),
                ));
            }
            estimate = sim.at(h);
            if estimate.average < target {
                below = h;
                break;
            }
            above = (h, estimate);
        }
    } else {
        below = h;
        loop {
            let growth = if estimate.average < target / 4.0 {
                1.25
            } else {
                1.03
            };
            h *= growth;
            estimate = sim.at(h);
            if estimate.average >= target {
                above = (h, estimate);
                break;
            }
            below = h;
        }
    }
    while above.0 - below > options.tolerance * above.0 {
        let mid = 0.5 * (below + above.0);
        let e = sim.at(mid);
        if e.average >= target {
            above = (mid, e);
        } else {
            below = mid;
        }
    }
    Ok(LimitDesign {
        limit: above.0,
        target,
        in_control: above.1,
        below,
        evaluations: sim.evaluations,
    })
}

/// The largest number of rings [`mewma_in_control_markov`] accepts.
pub const MARKOV_MAX_STATES: usize = 2000;

/// The in-control zero-state ARL of the MEWMA chart with the asymptotic
/// covariance, by the Markov-chain approximation of Runger and Prabhu
/// (1996) with `states` rings (see the [module documentation](self)):
/// more rings, smaller discretization error (50 to 100 are usual).
///
/// # Errors
/// [`Error::InvalidParameter`] for `λ` outside `(0, 1]`, the exact
/// covariance form (its chain is not time-homogeneous; simulate it with
/// [`average_run_length`]), `dim = 0`, a limit that is not finite and
/// positive, or `states` outside `2..=MARKOV_MAX_STATES`, or if the chain's
/// linear system is singular to working precision.
///
/// # Example
/// ```
/// use mvdist::control_chart::run_length::mewma_in_control_markov;
/// use mvdist::control_chart::{EwmaCovariance, MewmaOptions};
/// let o = MewmaOptions::default().with_smoothing(0.1).with_covariance(EwmaCovariance::Asymptotic);
/// let arl = mewma_in_control_markov(&o, 2, 8.64, 60)?;
/// assert!((arl - 200.0).abs() < 10.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn mewma_in_control_markov(
    options: &MewmaOptions,
    dim: usize,
    limit: f64,
    states: usize,
) -> Result<f64> {
    options.validate()?;
    if options.covariance() != EwmaCovariance::Asymptotic {
        return Err(Error::invalid(
            "covariance",
            "the Markov chain needs the asymptotic covariance; simulate the exact form",
        ));
    }
    if dim == 0 {
        return Err(Error::invalid(
            "dimension",
            "the chart needs at least 1 variable",
        ));
    }
    check_limit(limit)?;
    if !(2..=MARKOV_MAX_STATES).contains(&states) {
        return Err(Error::invalid(
            "states",
            format!("{states} rings; between 2 and {MARKOV_MAX_STATES} are accepted"),
        ));
    }
    let lambda = options.smoothing();
    let radius = (limit * lambda / (2.0 - lambda)).sqrt();
    let n = states;
    let g = radius / (n as f64 - 0.5);
    let half_dof = 0.5 * dim as f64;
    // Upper edges of rings 0..n−1 (the last is the limit), in the scale of
    // ‖Z_i‖²/λ²/2 that the gamma function takes.
    let edges: Vec<f64> = (0..n)
        .map(|j| {
            let b = if j + 1 == n {
                radius
            } else {
                (j as f64 + 0.5) * g
            };
            0.5 * (b / lambda) * (b / lambda)
        })
        .collect();
    // A = I − P, row-major.
    let mut a = vec![0.0; n * n];
    let ratio = (1.0 - lambda) / lambda;
    for (i, row) in a.chunks_exact_mut(n).enumerate() {
        let centre = i as f64 * g * ratio;
        let half_nc = 0.5 * centre * centre;
        let mut below = 0.0;
        for (j, (cell, &edge)) in row.iter_mut().zip(&edges).enumerate() {
            let cdf = noncentral_gamma_lower(half_dof, half_nc, edge);
            let p = (cdf - below).max(0.0);
            below = cdf;
            *cell = if i == j { 1.0 - p } else { -p };
        }
    }
    let mut rhs = vec![1.0; n];
    solve_in_place(&mut a, &mut rhs, n)?;
    let arl = rhs.first().copied().unwrap_or(f64::NAN);
    if !(arl.is_finite() && arl >= 1.0) {
        return Err(Error::invalid(
            "states",
            format!("the chain's run length came out as {arl}; try another number of rings"),
        ));
    }
    Ok(arl)
}

/// `P(χ'²_{2a}(2μ) ≤ 2x)`: the noncentral χ² distribution function as a
/// Poisson(μ) mixture of regularized lower gamma functions `P(a + j, x)`.
fn noncentral_gamma_lower(a: f64, mu: f64, x: f64) -> f64 {
    if mu <= 0.0 {
        return gamma_tails(a, x).0;
    }
    let spread = mu.sqrt();
    let last = (mu + 12.0 * spread + 40.0).ceil() as u64;
    let first = (mu - 12.0 * spread).floor().max(0.0) as u64;
    let ln_mu = mu.ln();
    let mut total = 0.0;
    for j in first..=last {
        let jf = j as f64;
        let w = (-mu + jf * ln_mu - statrs::function::gamma::ln_gamma(jf + 1.0)).exp();
        total += w * gamma_tails(a + jf, x).0;
    }
    total.clamp(0.0, 1.0)
}

/// Solves `A y = b` (row-major `n × n`) in place by Gaussian elimination
/// with partial pivoting; `b` becomes `y`.
fn solve_in_place(a: &mut [f64], b: &mut [f64], n: usize) -> Result<()> {
    let singular = || Error::invalid("states", "the chain's linear system is singular");
    for col in 0..n {
        let pivot = (col..n)
            .max_by(|&r, &s| a[r * n + col].abs().total_cmp(&a[s * n + col].abs()))
            .ok_or_else(singular)?;
        if a[pivot * n + col].abs() < f64::MIN_POSITIVE {
            return Err(singular());
        }
        if pivot != col {
            for c in 0..n {
                a.swap(pivot * n + c, col * n + c);
            }
            b.swap(pivot, col);
        }
        let d = a[col * n + col];
        for r in col + 1..n {
            let f = a[r * n + col] / d;
            if f != 0.0 {
                for c in col..n {
                    a[r * n + c] -= f * a[col * n + c];
                }
                b[r] -= f * b[col];
            }
        }
    }
    for col in (0..n).rev() {
        let mut v = b[col];
        for c in col + 1..n {
            v -= a[col * n + c] * b[c];
        }
        b[col] = v / a[col * n + col];
    }
    Ok(())
}
