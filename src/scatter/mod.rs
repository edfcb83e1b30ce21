//! A validated positive-definite scatter (covariance) matrix.
//!
//! Every distance in mvdist is measured through a [`Scatter`]: a symmetric
//! positive-definite `p × p` matrix `Σ`, held together with its Cholesky
//! factorization `Σ = L Lᵀ` and the inverse factor `L⁻¹`. The squared
//! generalized (Mahalanobis) distance of a vector `c` is then
//! `cᵀ Σ⁻¹ c = ‖L⁻¹ c‖²`: a triangular product, never an explicit inverse of
//! `Σ`.
//!
//! Construction is the only place where the checks happen (finite entries,
//! symmetry within a relative tolerance, positive definiteness), so a value
//! of this type is always usable. When the matrix is not positive definite
//! the error names the variable: [`Error::ZeroVariance`] for a constant
//! variable, [`Error::Collinear`] for one that is a linear combination of
//! the variables before it.
//!
//! # Example
//!
//! ```
//! use mvdist::Scatter;
//! use ndarray::array;
//!
//! let s = Scatter::new(array![[4.0, 2.0], [2.0, 3.0]].view())?;
//! assert!((s.log_determinant() - (8.0f64).ln()).abs() < 1e-15);
//! // d² of c = (2, 1): solve Σ y = c → y = (0.5, 0); cᵀy = 1.
//! assert!((s.squared_norm(&[2.0, 1.0])? - 1.0).abs() < 1e-15);
//! # Ok::<(), mvdist::Error>(())
//! ```

pub(crate) mod refine;
mod validate;

use crate::error::{Error, Result};
use crate::kernels::linalg;
use ndarray::{Array2, ArrayView2};
use serde::{Deserialize, Serialize};

pub(crate) use validate::default_collinearity_tolerance;

/// A symmetric positive-definite scatter matrix with its Cholesky factor.
///
/// See the [module documentation](self) for what is checked.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ScatterData", into = "ScatterData")]
pub struct Scatter {
    dim: usize,
    /// Row-major, exactly symmetric.
    matrix: Vec<f64>,
    /// Row-major lower Cholesky factor `L`.
    factor: Vec<f64>,
    /// Row-major lower `L⁻¹`.
    inverse_factor: Vec<f64>,
    /// `(L⁻¹)ᵀ` row-major (each column of `L⁻¹` contiguous), kept for the
    /// single-row kernel when `p ≤ 64`; empty otherwise.
    inverse_factor_t: Vec<f64>,
    log_det: f64,
    diagonal: bool,
}

/// The serialized form: the matrix as nested rows.
#[derive(Serialize, Deserialize)]
#[serde(transparent)]
struct ScatterData {
    matrix: Vec<Vec<f64>>,
}

impl TryFrom<ScatterData> for Scatter {
    type Error = Error;
    fn try_from(data: ScatterData) -> Result<Self> {
        let p = data.matrix.len();
        let mut flat = Vec::with_capacity(p * p);
        for (i, row) in data.matrix.iter().enumerate() {
            if row.len() != p {
                return Err(Error::Format {
                    reason: format!("scatter row {i} has {} entries, expected {p}", row.len()),
                });
            }
            flat.extend_from_slice(row);
        }
        Scatter::from_row_major(&flat, p)
    }
}

impl From<Scatter> for ScatterData {
    fn from(s: Scatter) -> Self {
        ScatterData {
            matrix: s.matrix.chunks(s.dim).map(|r| r.to_vec()).collect(),
        }
    }
}

impl Scatter {
    /// Validates `matrix` and factorizes it.
    ///
    /// # Errors
    /// [`Error::Empty`] for a 0 × 0 matrix, [`Error::ShapeMismatch`] if it is
    /// not square, [`Error::NonFinite`], [`Error::NotSymmetric`],
    /// [`Error::ZeroVariance`], [`Error::Collinear`] or
    /// [`Error::NotPositiveDefinite`].
    pub fn new(matrix: ArrayView2<'_, f64>) -> Result<Self> {
        let (r, c) = matrix.dim();
        if r != c {
            return Err(Error::ShapeMismatch {
                what: "scatter matrix columns (it must be square)",
                expected: r,
                found: c,
            });
        }
        let flat: Vec<f64> = matrix.iter().copied().collect();
        Self::from_row_major(&flat, r)
    }

    /// Validates a row-major `dim × dim` matrix and factorizes it.
    ///
    /// # Errors
    /// As [`Scatter::new`]; [`Error::ShapeMismatch`] if the slice does not
    /// hold `dim²` values.
    pub fn from_row_major(data: &[f64], dim: usize) -> Result<Self> {
        Self::with_collinearity_tolerance(data, dim, default_collinearity_tolerance(dim))
    }

    /// As [`Scatter::from_row_major`], with an explicit collinearity
    /// tolerance: a variable whose variance left after regression on the
    /// earlier variables is below `tolerance` times its own variance is
    /// reported as [`Error::Collinear`]. The default is `32·p·ε`
    /// (`ε = 2.2e-16`), which catches exact dependences blurred by
    /// rounding and nothing else.
    ///
    /// # Errors
    /// As [`Scatter::from_row_major`], and [`Error::InvalidParameter`] if the
    /// tolerance is not in `[0, 1)`.
    pub fn with_collinearity_tolerance(data: &[f64], dim: usize, tolerance: f64) -> Result<Self> {
        if dim == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if !(0.0..1.0).contains(&tolerance) {
            return Err(Error::invalid(
                "collinearity tolerance",
                format!("{tolerance} is not in [0, 1)"),
            ));
        }
        if data.len() != dim * dim {
            return Err(Error::ShapeMismatch {
                what: "scatter matrix entries",
                expected: dim * dim,
                found: data.len(),
            });
        }
        let matrix = validate::symmetrized(data, dim)?;
        for j in 0..dim {
            let v = matrix[j * dim + j];
            if v == 0.0 {
                return Err(Error::ZeroVariance { column: j });
            }
            if v < 0.0 {
                return Err(Error::NotPositiveDefinite { column: j });
            }
        }
        let factor = match linalg::cholesky_lower(&matrix, dim) {
            Ok(l) => l,
            Err(_) => return Err(validate::diagnose(&matrix, dim, tolerance)),
        };
        for j in 0..dim {
            let ljj = factor[j * dim + j];
            let fraction = ljj * ljj / matrix[j * dim + j];
            if !(fraction >= tolerance) {
                return Err(Error::Collinear {
                    column: j,
                    residual_fraction: fraction,
                });
            }
        }
        let diagonal = (0..dim).all(|i| (0..dim).all(|j| i == j || matrix[i * dim + j] == 0.0));
        let inverse_factor = linalg::invert_lower(&factor, dim);
        let log_det = 2.0 * (0..dim).map(|j| factor[j * dim + j].ln()).sum::<f64>();
        if inverse_factor.iter().any(|v| !v.is_finite()) || !log_det.is_finite() {
            return Err(Error::NotPositiveDefinite { column: dim - 1 });
        }
        let inverse_factor_t = if dim <= crate::kernels::distance::STACK_DIM {
            let mut t = vec![0.0; dim * dim];
            for i in 0..dim {
                for j in 0..=i {
                    t[j * dim + i] = inverse_factor[i * dim + j];
                }
            }
            t
        } else {
            Vec::new()
        };
        Ok(Scatter {
            dim,
            matrix,
            factor,
            inverse_factor,
            inverse_factor_t,
            log_det,
            diagonal,
        })
    }

    /// A diagonal scatter from variances: distances become standardized
    /// Euclidean distances `Σ_j c_j² / σ_j²`, computed on a fast path.
    ///
    /// # Errors
    /// [`Error::Empty`], [`Error::NonFinite`], [`Error::ZeroVariance`] or
    /// [`Error::NotPositiveDefinite`] (a negative variance).
    ///
    /// # Example
    /// ```
    /// use mvdist::Scatter;
    /// let s = Scatter::diagonal(&[4.0, 9.0])?;
    /// assert!(s.is_diagonal());
    /// assert!((s.squared_norm(&[2.0, 3.0])? - 2.0).abs() < 1e-15);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn diagonal(variances: &[f64]) -> Result<Self> {
        let p = variances.len();
        if p == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        let mut m = vec![0.0; p * p];
        for (j, &v) in variances.iter().enumerate() {
            if !v.is_finite() {
                return Err(Error::NonFinite {
                    row: j,
                    column: j,
                    value: v,
                });
            }
            m[j * p + j] = v;
        }
        Self::from_row_major(&m, p)
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// The matrix `Σ`.
    pub fn matrix(&self) -> ArrayView2<'_, f64> {
        crate::data::square_view(&self.matrix, self.dim)
    }

    /// The lower Cholesky factor `L` with `Σ = L Lᵀ`.
    pub fn factor(&self) -> ArrayView2<'_, f64> {
        crate::data::square_view(&self.factor, self.dim)
    }

    /// The lower triangular whitening matrix `L⁻¹`: `z = L⁻¹ c` has identity
    /// covariance when `c` has covariance `Σ`.
    pub fn inverse_factor(&self) -> ArrayView2<'_, f64> {
        crate::data::square_view(&self.inverse_factor, self.dim)
    }

    /// The whitening factor in the form the distance kernels take.
    pub(crate) fn whitening_factor(&self) -> crate::kernels::distance::Factor<'_> {
        crate::kernels::distance::Factor {
            w: &self.inverse_factor,
            wt: &self.inverse_factor_t,
            dim: self.dim,
            diagonal: self.diagonal,
        }
    }

    pub(crate) fn inverse_factor_slice(&self) -> &[f64] {
        &self.inverse_factor
    }

    pub(crate) fn factor_slice(&self) -> &[f64] {
        &self.factor
    }

    pub(crate) fn matrix_slice(&self) -> &[f64] {
        &self.matrix
    }

    /// Natural logarithm of the determinant, `ln det Σ = 2 Σ_j ln L_jj`.
    pub fn log_determinant(&self) -> f64 {
        self.log_det
    }

    /// Whether every off-diagonal entry is zero (then distances use the
    /// standardized-Euclidean fast path).
    pub fn is_diagonal(&self) -> bool {
        self.diagonal
    }

    /// The variances (the diagonal of `Σ`).
    pub fn variances(&self) -> Vec<f64> {
        (0..self.dim)
            .map(|j| self.matrix[j * self.dim + j])
            .collect()
    }

    /// The correlation matrix `D^{-1/2} Σ D^{-1/2}`.
    pub fn correlation(&self) -> Array2<f64> {
        let p = self.dim;
        let sd: Vec<f64> = self.variances().iter().map(|v| v.sqrt()).collect();
        Array2::from_shape_fn((p, p), |(i, j)| {
            if i == j {
                1.0
            } else {
                self.matrix[i * p + j] / (sd[i] * sd[j])
            }
        })
    }

    /// A cheap lower bound on the 2-norm condition number:
    /// `(max_j L_jj / min_j L_jj)²`. Exact for diagonal matrices.
    pub fn condition_estimate(&self) -> f64 {
        let p = self.dim;
        let (lo, hi) = (0..p)
            .map(|j| self.factor[j * p + j])
            .fold((f64::INFINITY, 0.0f64), |(lo, hi), v| {
                (lo.min(v), hi.max(v))
            });
        (hi / lo) * (hi / lo)
    }

    /// The 2-norm condition number `λ_max / λ_min`, from the eigenvalues
    /// (`O(p³)`).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] in the (unexpected) case that the
    /// eigenvalue iteration does not converge.
    pub fn condition_number(&self) -> Result<f64> {
        let ev = linalg::symmetric_eigenvalues(&self.matrix, self.dim)
            .ok_or_else(|| Error::invalid("scatter", "eigenvalue iteration did not converge"))?;
        let lo = ev.first().copied().unwrap_or(f64::NAN);
        let hi = ev.last().copied().unwrap_or(f64::NAN);
        Ok(hi / lo)
    }

    /// `cᵀ Σ⁻¹ c`: the squared generalized norm of a centred vector.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] if `c.len() != dim`; [`Error::NonFinite`]
    /// (with row 0) for a NaN or infinite entry.
    pub fn squared_norm(&self, c: &[f64]) -> Result<f64> {
        self.check_vector(c)?;
        finite_or_overflow(crate::kernels::distance::squared_norm_centred(
            self.whitening_factor(),
            c,
        ))
    }

    /// `cᵀ Σ⁻¹ c` computed with iterative refinement in extended precision:
    /// accurate to a few units in the last place for condition numbers up
    /// to about 1e14, at roughly ten times the cost of
    /// [`squared_norm`](Self::squared_norm).
    ///
    /// # Errors
    /// As [`squared_norm`](Self::squared_norm).
    pub fn squared_norm_refined(&self, c: &[f64]) -> Result<f64> {
        self.check_vector(c)?;
        finite_or_overflow(refine::refined_quadratic_form(self, c))
    }

    /// Solves `Σ y = b` through the Cholesky factor.
    ///
    /// # Errors
    /// As [`squared_norm`](Self::squared_norm).
    pub fn solve(&self, b: &[f64]) -> Result<Vec<f64>> {
        self.check_vector(b)?;
        let mut y = b.to_vec();
        refine::cholesky_solve_in_place(self, &mut y);
        if y.iter().any(|v| !v.is_finite()) {
            return Err(Error::Overflow { row: 0 });
        }
        Ok(y)
    }

    fn check_vector(&self, c: &[f64]) -> Result<()> {
        if c.len() != self.dim {
            return Err(Error::ShapeMismatch {
                what: "vector length (number of columns)",
                expected: self.dim,
                found: c.len(),
            });
        }
        crate::data::check_row_finite(c, 0)
    }
}

fn finite_or_overflow(v: f64) -> Result<f64> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(Error::Overflow { row: 0 })
    }
}
