//! Whitening: linear maps that turn correlated variables into uncorrelated
//! ones with unit variance.
//!
//! A whitening matrix `F` satisfies `F Σ Fᵀ = I`, so `z = F (x − μ)` has
//! identity covariance and `‖z‖² = (x − μ)ᵀ Σ⁻¹ (x − μ)` is the squared
//! generalized distance, whichever `F` is used. The three common choices
//! differ in what the new coordinates mean (Kessy, Lewin and Strimmer,
//! "Optimal whitening and decorrelation", *The American Statistician* 72,
//! 2018):
//!
//! | kind | `F` | inverse | coordinates |
//! |---|---|---|---|
//! | [`Cholesky`](WhiteningKind::Cholesky) | `L⁻¹` (`Σ = L Lᵀ`) | `L` | variable `k` given variables `1…k−1`, standardized |
//! | [`Symmetric`](WhiteningKind::Symmetric) (ZCA) | `Σ^{−1/2}` | `Σ^{1/2}` | closest to the original variables |
//! | [`Principal`](WhiteningKind::Principal) (PCA) | `Λ^{−1/2} Vᵀ` | `V Λ^{1/2}` | principal components, largest variance first |
//!
//! # Example
//! ```
//! use mvdist::{DistanceModel, WhiteningKind};
//! use ndarray::array;
//!
//! let rows = array![[1.0, 2.0], [2.0, 2.9], [3.0, 4.2], [4.0, 4.8], [5.0, 6.1]];
//! let model = DistanceModel::fit(rows.view())?;
//! for kind in [WhiteningKind::Cholesky, WhiteningKind::Symmetric, WhiteningKind::Principal] {
//!     let w = model.whitener(kind)?;
//!     let z = w.whiten(rows.view())?;
//!     // ‖z‖² is the squared distance whatever the kind.
//!     let d2 = model.squared_distance(&[5.0, 6.1])?;
//!     assert!((z.row(4).dot(&z.row(4)) - d2).abs() < 1e-12);
//!     // The inverse map recovers the rows.
//!     let back = w.unwhiten(z.view())?;
//!     assert!((back[(4, 1)] - 6.1).abs() < 1e-12);
//! }
//! # Ok::<(), mvdist::Error>(())
//! ```

use crate::data::{check_columns, check_finite, check_row_finite, square_view};
use crate::error::{Error, Result};
use crate::kernels::linalg;
use crate::scatter::Scatter;
use ndarray::{Array2, ArrayView2};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// Which whitening matrix to use; see the [module documentation](self).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum WhiteningKind {
    /// `F = L⁻¹` from the Cholesky factor.
    Cholesky,
    /// `F = Σ^{−1/2}` (zero-phase component analysis, ZCA).
    Symmetric,
    /// `F = Λ^{−1/2} Vᵀ` (principal components, largest variance first).
    Principal,
}

/// A whitening map `x ↦ F (x − μ)` and its inverse `z ↦ μ + G z`.
///
/// Deserializing checks the stored dimensions (a location of `p` values,
/// two `p × p` matrices) and that every entry is finite.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "WhitenerData")]
pub struct Whitener {
    kind: WhiteningKind,
    dim: usize,
    location: Vec<f64>,
    /// `F`, row-major.
    forward: Vec<f64>,
    /// `G = F⁻¹`, row-major.
    inverse: Vec<f64>,
}

/// The serialized form of a [`Whitener`], checked on the way in.
#[derive(Deserialize)]
struct WhitenerData {
    kind: WhiteningKind,
    dim: usize,
    location: Vec<f64>,
    forward: Vec<f64>,
    inverse: Vec<f64>,
}

impl TryFrom<WhitenerData> for Whitener {
    type Error = Error;
    fn try_from(d: WhitenerData) -> Result<Self> {
        let p = d.dim;
        if p == 0 {
            return Err(Error::Format {
                reason: "a whitener needs at least one column".into(),
            });
        }
        let square = p.checked_mul(p).ok_or_else(|| Error::Format {
            reason: format!("dimension {p} is too large"),
        })?;
        for (what, len, expected) in [
            ("location", d.location.len(), p),
            ("forward matrix", d.forward.len(), square),
            ("inverse matrix", d.inverse.len(), square),
        ] {
            if len != expected {
                return Err(Error::Format {
                    reason: format!(
                        "the whitener's {what} has {len} values; dimension {p} needs {expected}"
                    ),
                });
            }
        }
        for (what, values) in [
            ("location", &d.location),
            ("forward matrix", &d.forward),
            ("inverse matrix", &d.inverse),
        ] {
            if let Some(k) = values.iter().position(|v| !v.is_finite()) {
                return Err(Error::Format {
                    reason: format!("the whitener's {what} has a non-finite value at entry {k}"),
                });
            }
        }
        Ok(Whitener {
            kind: d.kind,
            dim: p,
            location: d.location,
            forward: d.forward,
            inverse: d.inverse,
        })
    }
}

impl Whitener {
    /// The whitening map of `kind` for location `location` and `scatter`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] if the location's length differs from the
    /// scatter's dimension; [`Error::NonFinite`] for a non-finite location.
    pub fn new(location: &[f64], scatter: &Scatter, kind: WhiteningKind) -> Result<Self> {
        let p = scatter.dim();
        if location.len() != p {
            return Err(Error::ShapeMismatch {
                what: "location length",
                expected: p,
                found: location.len(),
            });
        }
        check_row_finite(location, 0)?;
        let (forward, inverse) = match kind {
            WhiteningKind::Cholesky => (
                scatter.inverse_factor_slice().to_vec(),
                scatter.factor_slice().to_vec(),
            ),
            WhiteningKind::Symmetric | WhiteningKind::Principal => {
                let (values, vectors) = linalg::symmetric_eigen(scatter.matrix_slice(), p)
                    .ok_or_else(|| {
                        Error::invalid("scatter", "eigen-decomposition did not converge")
                    })?;
                if values.iter().any(|&v| !(v > 0.0)) {
                    return Err(Error::NotPositiveDefinite { column: 0 });
                }
                // Columns of `vectors` are eigenvectors, ascending values;
                // reorder descending and fix each sign (largest entry > 0).
                let mut v = vec![0.0; p * p];
                let mut lam = vec![0.0; p];
                for k in 0..p {
                    let src = p - 1 - k;
                    lam[k] = values[src];
                    let big = (0..p)
                        .max_by(|&a, &b| {
                            vectors[a * p + src]
                                .abs()
                                .total_cmp(&vectors[b * p + src].abs())
                        })
                        .unwrap_or(0);
                    let sign = if vectors[big * p + src] < 0.0 {
                        -1.0
                    } else {
                        1.0
                    };
                    for i in 0..p {
                        v[i * p + k] = sign * vectors[i * p + src];
                    }
                }
                let mut f = vec![0.0; p * p];
                let mut g = vec![0.0; p * p];
                if kind == WhiteningKind::Principal {
                    for k in 0..p {
                        for i in 0..p {
                            f[k * p + i] = v[i * p + k] / lam[k].sqrt();
                            g[i * p + k] = v[i * p + k] * lam[k].sqrt();
                        }
                    }
                } else {
                    for i in 0..p {
                        for j in 0..p {
                            let mut a = 0.0;
                            let mut b = 0.0;
                            for k in 0..p {
                                let vv = v[i * p + k] * v[j * p + k];
                                a += vv / lam[k].sqrt();
                                b += vv * lam[k].sqrt();
                            }
                            f[i * p + j] = a;
                            g[i * p + j] = b;
                        }
                    }
                }
                (f, g)
            }
        };
        Ok(Whitener {
            kind,
            dim: p,
            location: location.to_vec(),
            forward,
            inverse,
        })
    }

    /// The kind of whitening.
    pub fn kind(&self) -> WhiteningKind {
        self.kind
    }

    /// The whitening matrix `F`.
    pub fn forward_matrix(&self) -> ArrayView2<'_, f64> {
        square_view(&self.forward, self.dim)
    }

    /// The inverse map's matrix `G = F⁻¹`.
    pub fn inverse_matrix(&self) -> ArrayView2<'_, f64> {
        square_view(&self.inverse, self.dim)
    }

    /// `z = F (x − μ)` for every row of `rows`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for the wrong number of columns;
    /// [`Error::NonFinite`] naming the first non-finite value.
    pub fn whiten(&self, rows: ArrayView2<'_, f64>) -> Result<Array2<f64>> {
        self.apply(rows, &self.forward, true)
    }

    /// `x = μ + G z` for every row of `whitened`.
    ///
    /// # Errors
    /// As [`whiten`](Self::whiten).
    pub fn unwhiten(&self, whitened: ArrayView2<'_, f64>) -> Result<Array2<f64>> {
        self.apply(whitened, &self.inverse, false)
    }

    fn apply(
        &self,
        rows: ArrayView2<'_, f64>,
        m: &[f64],
        centre_first: bool,
    ) -> Result<Array2<f64>> {
        let p = self.dim;
        check_columns(rows, p)?;
        check_finite(rows)?;
        let n = rows.nrows();
        // Transposed map, row-major, so that out_block = in_block · Mᵀ.
        let mut mt = vec![0.0; p * p];
        for i in 0..p {
            for j in 0..p {
                mt[j * p + i] = m[i * p + j];
            }
        }
        let mut out = vec![0.0; n * p];
        let block = (16_384 / p).max(16);
        out.par_chunks_mut(block * p).enumerate().for_each_init(
            Vec::new,
            |buf: &mut Vec<f64>, (b, o)| {
                let lo = b * block;
                let count = o.len() / p;
                buf.clear();
                for r in 0..count {
                    let row = rows.row(lo + r);
                    if centre_first {
                        buf.extend(row.iter().zip(&self.location).map(|(&v, &m)| v - m));
                    } else {
                        buf.extend(row.iter());
                    }
                }
                linalg::product(o, buf, &mt, count, p, p);
                if !centre_first {
                    for c in o.chunks_exact_mut(p) {
                        for (v, &m) in c.iter_mut().zip(&self.location) {
                            *v += m;
                        }
                    }
                }
            },
        );
        if let Some(k) = out.iter().position(|v| !v.is_finite()) {
            return Err(Error::Overflow { row: k / p });
        }
        Array2::from_shape_vec((n, p), out).map_err(|_| Error::ShapeMismatch {
            what: "output",
            expected: n * p,
            found: 0,
        })
    }
}
