//! Discriminant directions: the linear combinations of the variables that
//! separate the group centroids most, relative to the spread within groups.

use super::fit::Classifier;
use crate::data::check_columns;
use crate::error::{Error, Result};
use crate::kernels::linalg;
use ndarray::{Array2, ArrayView2};

/// Directions `v` maximizing the ratio of between-group to within-group
/// variance, `vᵀ B v / vᵀ S v`, where `S` is the pooled within-group
/// scatter (`n − G` divisor) and
/// `B = Σ_g n_g (x̄_g − x̄)(x̄_g − x̄)ᵀ` the between-group scatter about the
/// grand mean `x̄` (Fisher 1936; Rao 1948).
///
/// They solve the generalized symmetric eigenproblem `B v = λ S v`. With the
/// Cholesky factor `S = L Lᵀ` this is the ordinary symmetric problem
/// `(L⁻¹ B L⁻ᵀ) y = λ y`, and `v = L⁻ᵀ y`; no inverse of `S` is formed.
/// There are at most `min(G − 1, p)` directions with positive `λ`; they
/// are returned in decreasing order of `λ`, each scaled so that
/// `vᵀ S v = 1` (the projected rows have unit pooled within-group variance)
/// and signed so that its largest component is positive. The *share of
/// separation* of a direction is `λ_k / Σ λ`.
///
/// # Example
/// ```
/// use mvdist::classification::{Classifier, ClassifierOptions, Rule};
/// use ndarray::array;
///
/// let rows = array![
///     [1.0, 2.0], [2.0, 2.9], [1.5, 2.2], [2.2, 3.4], [0.8, 1.9],
///     [5.0, 1.0], [6.1, 1.8], [5.5, 0.7], [6.0, 1.1], [5.2, 1.6],
///     [1.2, 7.0], [2.1, 8.2], [1.7, 7.7], [0.9, 8.9], [1.4, 7.5],
/// ];
/// let labels = [0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2];
/// let c = Classifier::fit(rows.view(), &labels, &ClassifierOptions::new(Rule::Linear))?;
/// let d = c.discriminant_directions()?;
/// assert_eq!(d.values().len(), 2);
/// assert!((d.shares().iter().sum::<f64>() - 1.0).abs() < 1e-12);
/// let scores = d.project(rows.view())?;
/// assert_eq!(scores.dim(), (15, 2));
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct DiscriminantDirections {
    dim: usize,
    values: Vec<f64>,
    /// `p × r`, row-major: column `k` is direction `k`.
    directions: Vec<f64>,
    shares: Vec<f64>,
    centre: Vec<f64>,
}

impl DiscriminantDirections {
    /// The eigenvalues `λ_k` (between- to within-group variance ratio along
    /// each direction), largest first.
    pub fn values(&self) -> &[f64] {
        &self.values
    }

    /// The directions as the columns of a `p × r` matrix.
    pub fn directions(&self) -> ArrayView2<'_, f64> {
        crate::data::matrix_view(&self.directions, self.dim, self.values.len())
    }

    /// Each direction's share of the total separation, `λ_k / Σ λ`.
    pub fn shares(&self) -> &[f64] {
        &self.shares
    }

    /// The discriminant coordinates `(x − x̄)ᵀ v_k` of every row.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless `rows` has `p` columns;
    /// [`Error::NonFinite`] naming the row.
    pub fn project(&self, rows: ArrayView2<'_, f64>) -> Result<Array2<f64>> {
        check_columns(rows, self.dim)?;
        crate::data::check_finite(rows)?;
        let r = self.values.len();
        let p = self.dim;
        let mut out = Array2::<f64>::zeros((rows.nrows(), r));
        for (x, mut o) in rows.outer_iter().zip(out.outer_iter_mut()) {
            for k in 0..r {
                o[k] = (0..p)
                    .map(|j| (x[j] - self.centre[j]) * self.directions[j * r + k])
                    .sum();
            }
        }
        if let Some(i) = out
            .outer_iter()
            .position(|o| o.iter().any(|v| !v.is_finite()))
        {
            return Err(Error::Overflow { row: i });
        }
        Ok(out)
    }
}

impl<L> Classifier<L> {
    /// The discriminant directions of the training groups (see
    /// [`DiscriminantDirections`]), relative to the pooled within-group
    /// scatter.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] when the pooled scatter could not be
    /// estimated (quadratic rule with too few rows for it) or the
    /// eigenvalue iteration does not converge.
    pub fn discriminant_directions(&self) -> Result<DiscriminantDirections> {
        let s = self.pooled.as_ref().ok_or_else(|| {
            Error::invalid(
                "classifier",
                "the pooled within-group scatter could not be estimated from these rows",
            )
        })?;
        let (p, g_count) = (self.dim, self.labels.len());
        let w = s.inverse_factor_slice();
        // L⁻¹ B L⁻ᵀ = Σ_g n_g b_g b_gᵀ with b_g = L⁻¹ (x̄_g − x̄).
        let mut between = vec![0.0; p * p];
        let mut b = vec![0.0; p];
        for g in 0..g_count {
            let mu = &self.centroids[g * p..(g + 1) * p];
            for i in 0..p {
                b[i] = (0..=i)
                    .map(|j| w[i * p + j] * (mu[j] - self.centre[j]))
                    .sum();
            }
            let ng = self.counts[g] as f64;
            for i in 0..p {
                for j in 0..p {
                    between[i * p + j] += ng * b[i] * b[j];
                }
            }
        }
        let (values, vectors) = linalg::symmetric_eigen(&between, p)
            .ok_or_else(|| Error::invalid("classifier", "eigenvalue iteration did not converge"))?;
        let r = (g_count - 1).min(p);
        let l = s.factor_slice();
        let mut kept = Vec::with_capacity(r);
        let mut directions = vec![0.0; p * r];
        for k in 0..r {
            let col = p - 1 - k;
            kept.push(values[col].max(0.0));
            // Back substitution: Lᵀ v = y.
            let mut v: Vec<f64> = (0..p).map(|i| vectors[i * p + col]).collect();
            for i in (0..p).rev() {
                let mut acc = v[i];
                for m in (i + 1)..p {
                    acc -= l[m * p + i] * v[m];
                }
                v[i] = acc / l[i * p + i];
            }
            let largest = v
                .iter()
                .fold(0.0f64, |m, &x| if x.abs() > m.abs() { x } else { m });
            let sign = if largest < 0.0 { -1.0 } else { 1.0 };
            for i in 0..p {
                directions[i * r + k] = sign * v[i];
            }
        }
        let total: f64 = kept.iter().sum();
        let shares = kept
            .iter()
            .map(|v| if total > 0.0 { v / total } else { f64::NAN })
            .collect();
        if directions.iter().chain(&kept).any(|v| !v.is_finite()) {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(DiscriminantDirections {
            dim: p,
            values: kept,
            directions,
            shares,
            centre: self.centre.clone(),
        })
    }
}
