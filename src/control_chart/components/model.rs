//! The principal-component model of in-control rows and its two
//! statistics per row, `T²` on the retained components and the squared
//! prediction error `Q`.

use super::residual::{ResidualLaw, ResidualLimitMethod};
use crate::data::{check_finite, check_row_finite};
use crate::error::{Error, Result};
use crate::kernels::components::{
    component_block, transposed_loadings, ComponentKernel, ComponentScratch,
};
use crate::kernels::linalg::symmetric_eigen;
use crate::moments::{Divisor, MomentAccumulator};
use ndarray::ArrayView2;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// How many principal components a model keeps.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ComponentCount {
    /// Exactly this many components.
    Fixed {
        /// The number of components `k`, `1 ≤ k ≤ p`.
        components: usize,
    },
    /// The fewest components whose eigenvalues add up to at least this
    /// fraction of the total variance (of the scaled variables).
    ExplainedVariance {
        /// The fraction, in `(0, 1]`.
        fraction: f64,
    },
}

impl Default for ComponentCount {
    /// 90% of the variance (a common starting point; common practice).
    fn default() -> Self {
        ComponentCount::ExplainedVariance { fraction: 0.9 }
    }
}

/// How variables are scaled before the components are extracted.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum VariableScaling {
    /// Centre only: components of the covariance matrix. Right when every
    /// variable is in the same unit and its spread matters.
    Centred,
    /// Centre and divide by each variable's in-control standard deviation:
    /// components of the correlation matrix. The default, because sensors
    /// in different units would otherwise be weighted by their units
    /// (common practice).
    #[default]
    UnitVariance,
}

/// `T²` on the retained components and the squared prediction error `Q`
/// of one row.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ComponentStatistics {
    /// `T² = Σ_{a ≤ k} t_a² / λ_a`.
    pub t_squared: f64,
    /// `Q = ‖c − P Pᵀ c‖²`, the squared distance of the scaled, centred row
    /// from the component subspace.
    pub residual: f64,
}

/// Per-variable terms of a row's two statistics.
///
/// * `t_squared[j] = c_j · (P Λ⁻¹ Pᵀ c)_j` — the complete-decomposition
///   contribution of Qin (2003) and Westerhuis, Gurden and Smilde (2000);
///   they add up to `T²`, and can be negative for a variable that pulls
///   the row back toward the centre.
/// * `residual[j] = e_j²` with `e = c − P Pᵀ c` — they add up to `Q`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ComponentContributions {
    /// The row's scores `t = Pᵀ c` on the retained components.
    pub scores: Vec<f64>,
    /// Terms of `T²`, one per variable.
    pub t_squared: Vec<f64>,
    /// Terms of `Q`, one per variable.
    pub residual: Vec<f64>,
}

impl ComponentContributions {
    /// Variables by decreasing contribution to `T²`, at most `count`.
    pub fn largest_t_squared(&self, count: usize) -> Vec<usize> {
        largest(&self.t_squared, count)
    }

    /// Variables by decreasing contribution to `Q`, at most `count`.
    pub fn largest_residual(&self, count: usize) -> Vec<usize> {
        largest(&self.residual, count)
    }
}

fn largest(v: &[f64], count: usize) -> Vec<usize> {
    let mut order: Vec<usize> = (0..v.len()).collect();
    order.sort_by(|&a, &b| v[b].total_cmp(&v[a]).then(a.cmp(&b)));
    order.truncate(count);
    order
}

/// A principal-component model of in-control rows (Jackson 1991).
///
/// The rows are centred at their mean and, by default, scaled to unit
/// variance ([`VariableScaling`]); the covariance `S` of the scaled rows
/// (divisor `m − 1`) has eigenvalues `λ₁ ≥ … ≥ λ_p` and eigenvectors `P`.
/// The model keeps the first `k` ([`ComponentCount`]). For a scaled,
/// centred row `c`:
///
/// * scores `t = P_kᵀ c` and `T² = Σ_{a ≤ k} t_a² / λ_a`: the squared
///   generalized distance within the component subspace (with `k = p` it
///   is the full Hotelling `T²`);
/// * the squared prediction error `Q = ‖c − P_k t‖²`: how far the row
///   lies off the subspace, that is, how much it breaks the correlation
///   structure the components describe.
///
/// The two see different faults: a shift along the usual directions of
/// variation raises `T²`; a new kind of variation (a sensor fault, a broken
/// relationship) raises `Q`. Limits for `Q` come from the left-out
/// eigenvalues ([`ResidualLaw`]).
///
/// The eigenvalues of `S` are computed on the `p × p` matrix; when
/// `p ≥ m` only the first `m − 1` can be positive, and `k` must stay below
/// that rank.
///
/// # Example
/// ```
/// use mvdist::control_chart::{ComponentCount, ComponentModel, VariableScaling};
/// use ndarray::array;
///
/// let rows = array![
///     [1.0, 2.1, 2.9], [2.0, 3.9, 6.2], [3.0, 6.1, 8.8], [4.0, 8.0, 12.1],
///     [5.0, 9.8, 15.2], [6.0, 12.2, 17.9], [7.0, 13.9, 21.1], [8.0, 16.1, 24.0],
/// ];
/// let model = ComponentModel::fit(rows.view(), ComponentCount::Fixed { components: 1 }, VariableScaling::UnitVariance)?;
/// // A row that keeps the relationship is close to the subspace…
/// let usual = model.statistics(&[4.5, 9.0, 13.5])?;
/// // …one that breaks it is far off it.
/// let broken = model.statistics(&[4.5, 4.0, 13.5])?;
/// assert!(broken.residual > 50.0 * usual.residual);
/// # Ok::<(), mvdist::Error>(())
/// ```
///
/// # References
/// - J. E. Jackson (1991). *A User's Guide to Principal Components*. Wiley.
/// - J. E. Jackson and G. S. Mudholkar (1979). Control procedures for
///   residuals associated with principal component analysis.
///   *Technometrics* 21, 341–349.
/// - S. J. Qin (2003). Statistical process monitoring: basics and beyond.
///   *J. Chemometrics* 17, 480–502.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ComponentModelData")]
pub struct ComponentModel {
    location: Vec<f64>,
    scale: Vec<f64>,
    scaling: VariableScaling,
    /// All `p` eigenvalues, descending, negative rounding set to 0.
    eigenvalues: Vec<f64>,
    /// `p × k`, row-major: column `a` is the `a`-th eigenvector.
    loadings: Vec<f64>,
    components: usize,
    observations: usize,
}

#[derive(Deserialize)]
struct ComponentModelData {
    location: Vec<f64>,
    scale: Vec<f64>,
    scaling: VariableScaling,
    eigenvalues: Vec<f64>,
    loadings: Vec<f64>,
    components: usize,
    observations: usize,
}

impl TryFrom<ComponentModelData> for ComponentModel {
    type Error = Error;
    fn try_from(d: ComponentModelData) -> Result<Self> {
        let p = d.location.len();
        let k = d.components;
        let bad = |reason: String| Error::Format { reason };
        if p == 0 || d.scale.len() != p || d.eigenvalues.len() != p {
            return Err(bad(format!(
                "a component model needs matching location ({p}), scale ({}) and eigenvalues ({})",
                d.scale.len(),
                d.eigenvalues.len()
            )));
        }
        if k == 0 || k > p || d.loadings.len() != p * k {
            return Err(bad(format!(
                "{k} components with {} loadings do not fit {p} variables",
                d.loadings.len()
            )));
        }
        check_row_finite(&d.location, 0)?;
        check_row_finite(&d.loadings, 0)?;
        if !d.scale.iter().all(|s| s.is_finite() && *s > 0.0) {
            return Err(bad("the scales must be finite and positive".into()));
        }
        if !d.eigenvalues.iter().all(|l| l.is_finite() && *l >= 0.0)
            || d.eigenvalues.windows(2).any(|w| w[0] < w[1])
            || !(d.eigenvalues[k - 1] > 0.0)
        {
            return Err(bad(
                "the eigenvalues must be finite, non-negative and descending, and the retained \
                 ones positive"
                    .into(),
            ));
        }
        if d.observations < 2 {
            return Err(bad(format!(
                "a component model comes from at least 2 rows, not {}",
                d.observations
            )));
        }
        Ok(ComponentModel {
            location: d.location,
            scale: d.scale,
            scaling: d.scaling,
            eigenvalues: d.eigenvalues,
            loadings: d.loadings,
            components: k,
            observations: d.observations,
        })
    }
}

/// Rows per block of the batch kernel.
const BLOCK: usize = 2048;

impl ComponentModel {
    /// Fits the model to in-control rows.
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::TooFewRows`] for fewer than 2 rows;
    /// [`Error::NonFinite`] naming the row and column; [`Error::ZeroVariance`]
    /// for a constant column under [`VariableScaling::UnitVariance`];
    /// [`Error::InvalidParameter`] for `k = 0`, `k > p`, a fraction outside
    /// `(0, 1]`, or a retained component with zero variance (the data
    /// have rank below `k`) or an eigen-decomposition that fails.
    pub fn fit(
        rows: ArrayView2<'_, f64>,
        count: ComponentCount,
        scaling: VariableScaling,
    ) -> Result<Self> {
        let (m, p) = rows.dim();
        if p == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if m == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        if m < 2 {
            return Err(Error::TooFewRows {
                rows: m,
                needed: 2,
                columns: p,
            });
        }
        check_finite(rows)?;
        let acc = MomentAccumulator::from_rows(rows)?;
        let location = acc.mean().to_vec();
        let cov = acc.covariance(Divisor::Unbiased)?;
        let mut scale = vec![1.0; p];
        if scaling == VariableScaling::UnitVariance {
            for (j, s) in scale.iter_mut().enumerate() {
                let v = cov[[j, j]];
                if !(v > 0.0) {
                    return Err(Error::ZeroVariance { column: j });
                }
                *s = v.sqrt();
            }
        }
        let mut scaled = vec![0.0; p * p];
        for i in 0..p {
            for j in 0..p {
                scaled[i * p + j] = cov[[i, j]] / (scale[i] * scale[j]);
            }
        }
        let (values, vectors) = symmetric_eigen(&scaled, p).ok_or_else(|| {
            Error::invalid(
                "covariance",
                "its eigen-decomposition did not converge; check the data for extreme values",
            )
        })?;
        // Descending order; eigenvector signs fixed so that each vector's
        // largest entry (in absolute value) is positive.
        let eigenvalues: Vec<f64> = values.iter().rev().map(|l| l.max(0.0)).collect();
        let total: f64 = eigenvalues.iter().sum();
        let k = match count {
            ComponentCount::Fixed { components } => {
                if components == 0 || components > p {
                    return Err(Error::invalid(
                        "components",
                        format!("{components}; choose between 1 and the {p} variables"),
                    ));
                }
                components
            }
            ComponentCount::ExplainedVariance { fraction } => {
                if !(fraction > 0.0 && fraction <= 1.0) {
                    return Err(Error::invalid(
                        "explained variance fraction",
                        format!("{fraction}; choose a fraction in (0, 1]"),
                    ));
                }
                let mut sum = 0.0;
                let mut k = p;
                for (a, l) in eigenvalues.iter().enumerate() {
                    sum += l;
                    if sum >= fraction * total * (1.0 - 1e-12) {
                        k = a + 1;
                        break;
                    }
                }
                k
            }
        };
        let tolerance = eigenvalues[0] * (p as f64) * f64::EPSILON * 16.0;
        if !(eigenvalues[k - 1] > tolerance) {
            return Err(Error::invalid(
                "components",
                format!(
                    "{k}; component {k} has (numerically) zero variance, so the rows span fewer \
                     dimensions ({m} rows, {p} variables): keep fewer components"
                ),
            ));
        }
        let mut loadings = vec![0.0; p * k];
        for a in 0..k {
            let col = p - 1 - a;
            let mut big = 0.0f64;
            let mut sign = 1.0;
            for i in 0..p {
                let v = vectors[i * p + col];
                if v.abs() > big {
                    big = v.abs();
                    sign = if v < 0.0 { -1.0 } else { 1.0 };
                }
            }
            for i in 0..p {
                loadings[i * k + a] = sign * vectors[i * p + col];
            }
        }
        Ok(ComponentModel {
            location,
            scale,
            scaling,
            eigenvalues,
            loadings,
            components: k,
            observations: m,
        })
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.location.len()
    }

    /// Number of retained components `k`.
    pub fn components(&self) -> usize {
        self.components
    }

    /// Rows the model was fitted on, `m`.
    pub fn observations(&self) -> usize {
        self.observations
    }

    /// The in-control mean of each variable.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// Each variable's divisor: its in-control standard deviation, or 1
    /// for [`VariableScaling::Centred`].
    pub fn scale(&self) -> &[f64] {
        &self.scale
    }

    /// How variables were scaled.
    pub fn scaling(&self) -> VariableScaling {
        self.scaling
    }

    /// All `p` eigenvalues of the scaled covariance, largest first.
    pub fn eigenvalues(&self) -> &[f64] {
        &self.eigenvalues
    }

    /// The share of the total variance each retained component explains.
    pub fn explained_fractions(&self) -> Vec<f64> {
        let total: f64 = self.eigenvalues.iter().sum();
        self.eigenvalues[..self.components]
            .iter()
            .map(|l| l / total)
            .collect()
    }

    /// The loadings `P_k` (`p × k`, row-major: entry `(j, a)` at
    /// `j·k + a`), with unit-length columns; each column's largest entry
    /// is positive.
    pub fn loadings(&self) -> ArrayView2<'_, f64> {
        crate::data::matrix_view(&self.loadings, self.dim(), self.components)
    }

    /// The law of `Q` from the left-out eigenvalues, or `None` when the
    /// model keeps every component (no residual).
    ///
    /// # Errors
    /// As [`ResidualLaw::new`] (for example the Jackson–Mudholkar exponent
    /// is not positive, or the left-out eigenvalues are all zero).
    pub fn residual_law(&self, method: ResidualLimitMethod) -> Result<Option<ResidualLaw>> {
        if self.components == self.dim() {
            return Ok(None);
        }
        ResidualLaw::new(&self.eigenvalues[self.components..], method).map(Some)
    }

    fn check_row(&self, row: &[f64]) -> Result<()> {
        if row.len() != self.dim() {
            return Err(Error::ShapeMismatch {
                what: "row length (number of columns)",
                expected: self.dim(),
                found: row.len(),
            });
        }
        check_row_finite(row, 0)
    }

    fn scaled_centred(&self, row: &[f64]) -> Result<Vec<f64>> {
        self.check_row(row)?;
        let c: Vec<f64> = row
            .iter()
            .zip(&self.location)
            .zip(&self.scale)
            .map(|((x, m), s)| (x - m) / s)
            .collect();
        check_row_finite(&c, 0).map_err(|_| Error::Overflow { row: 0 })?;
        Ok(c)
    }

    /// `T²` and `Q` of one row.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a wrong length; [`Error::NonFinite`].
    pub fn statistics(&self, row: &[f64]) -> Result<ComponentStatistics> {
        let why = self.contributions(row)?;
        Ok(ComponentStatistics {
            t_squared: why.t_squared.iter().sum(),
            residual: why.residual.iter().sum(),
        })
    }

    /// The scores and the per-variable terms of `T²` and `Q` of one row
    /// (see [`ComponentContributions`]).
    ///
    /// # Errors
    /// As [`statistics`](Self::statistics).
    pub fn contributions(&self, row: &[f64]) -> Result<ComponentContributions> {
        let c = self.scaled_centred(row)?;
        let (p, k) = (self.dim(), self.components);
        let mut scores = vec![0.0; k];
        for j in 0..p {
            for a in 0..k {
                scores[a] += self.loadings[j * k + a] * c[j];
            }
        }
        let mut t_squared = vec![0.0; p];
        let mut residual = vec![0.0; p];
        for j in 0..p {
            let mut back = 0.0;
            let mut weighted = 0.0;
            for a in 0..k {
                let l = self.loadings[j * k + a];
                back += l * scores[a];
                weighted += l * scores[a] / self.eigenvalues[a];
            }
            t_squared[j] = c[j] * weighted;
            let e = c[j] - back;
            residual[j] = e * e;
        }
        Ok(ComponentContributions {
            scores,
            t_squared,
            residual,
        })
    }

    /// `T²` and `Q` of every row, written into `t_squared` and `residual`
    /// (one slot per row). Runs in parallel blocks on the caller's rayon
    /// pool; each row is centred, scaled and projected with its variables
    /// in SIMD lanes (AVX-512 or AVX2/FMA chosen at run time), with the
    /// residual `e = c − P t` formed explicitly, so `Q` keeps its relative
    /// accuracy even when it is tiny against `‖c‖²`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a different number of columns or output
    /// lengths other than the number of rows; [`Error::NonFinite`] naming
    /// the first bad row and its column.
    pub fn statistics_into(
        &self,
        rows: ArrayView2<'_, f64>,
        t_squared: &mut [f64],
        residual: &mut [f64],
    ) -> Result<()> {
        let (n, p) = rows.dim();
        crate::data::check_columns(rows, self.dim())?;
        for (what, len) in [
            ("T² output length (number of rows)", t_squared.len()),
            ("Q output length (number of rows)", residual.len()),
        ] {
            if len != n {
                return Err(Error::ShapeMismatch {
                    what,
                    expected: n,
                    found: len,
                });
            }
        }
        let k = self.components;
        let inverse_scale: Vec<f64> = self.scale.iter().map(|s| 1.0 / s).collect();
        let inverse_eigen: Vec<f64> = self.eigenvalues[..k].iter().map(|l| 1.0 / l).collect();
        let transposed = transposed_loadings(&self.loadings, p, k);
        let kernel = ComponentKernel {
            transposed: &transposed,
            location: &self.location,
            inverse_scale: &inverse_scale,
            inverse_eigen: &inverse_eigen,
        };
        let first_bad = t_squared
            .par_chunks_mut(BLOCK)
            .zip(residual.par_chunks_mut(BLOCK))
            .enumerate()
            .map_init(
                || ComponentScratch::new(p, k),
                |scratch, (b, (t2, q))| -> Option<usize> {
                    let start = b * BLOCK;
                    let x = rows.slice(ndarray::s![start..start + t2.len(), ..]);
                    component_block(kernel, x, t2, q, scratch);
                    // A non-finite input (or an overflow) makes a
                    // statistic non-finite: one test per row.
                    t2.iter()
                        .zip(q.iter())
                        .position(|(a, b)| !(a.is_finite() && b.is_finite()))
                        .map(|i| start + i)
                },
            )
            .flatten()
            .min();
        match first_bad {
            Some(row) => Err(crate::kernels::distance::non_finite_cause(rows, row)),
            None => Ok(()),
        }
    }
}
