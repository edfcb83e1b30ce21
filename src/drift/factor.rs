//! A Cholesky factor kept current under rank-one changes.

use crate::data::check_row;
use crate::error::{Error, Result};
use faer::{ColMut, MatMut, MatRef, Side};

/// The lower Cholesky factor `L` of a co-moment matrix `M = L Lᵀ`, stored
/// column-major, updated in `O(p²)` per rank-one change through faer's
/// rank-update kernel.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct TrackedFactor {
    p: usize,
    /// Column-major lower factor.
    l: Vec<f64>,
    /// Scratch for the update vector.
    w: Vec<f64>,
}

impl TrackedFactor {
    pub(crate) fn zeros(p: usize) -> Self {
        TrackedFactor {
            p,
            l: vec![0.0; p * p],
            w: vec![0.0; p],
        }
    }

    /// Factorizes a row-major symmetric matrix afresh.
    pub(crate) fn refactor(&mut self, m: &[f64]) -> Result<()> {
        let p = self.p;
        let llt = MatRef::from_row_major_slice(m, p, p)
            .llt(Side::Lower)
            .map_err(|_| Error::NotPositiveDefinite { column: 0 })?;
        let l = llt.L();
        for j in 0..p {
            for i in 0..p {
                self.l[j * p + i] = if i >= j { l[(i, j)] } else { 0.0 };
            }
        }
        Ok(())
    }

    /// `L ← chol(s·L Lᵀ + a·v vᵀ)` (`s > 0`; `a < 0` is a downdate).
    pub(crate) fn scale_and_update(&mut self, s: f64, v: &[f64], a: f64) -> Result<()> {
        let p = self.p;
        if s != 1.0 {
            let r = s.sqrt();
            for x in self.l.iter_mut() {
                *x *= r;
            }
        }
        if a == 0.0 {
            return Ok(());
        }
        self.w.copy_from_slice(v);
        let mut alpha = [a];
        faer::linalg::cholesky::llt::update::rank_r_update_clobber(
            MatMut::from_column_major_slice_mut(&mut self.l, p, p),
            MatMut::from_column_major_slice_mut(&mut self.w, p, 1),
            ColMut::from_slice_mut(&mut alpha).as_diagonal_mut(),
        )
        .map_err(|_| Error::NotPositiveDefinite { column: 0 })
    }

    /// `‖L⁻¹ c‖²` by column-oriented forward substitution, in `scratch`.
    pub(crate) fn whitened_norm(&self, c: &[f64], scratch: &mut [f64]) -> f64 {
        let p = self.p;
        scratch[..p].copy_from_slice(c);
        let mut d2 = 0.0;
        for j in 0..p {
            let col = &self.l[j * p..(j + 1) * p];
            let z = scratch[j] / col[j];
            d2 += z * z;
            for i in (j + 1)..p {
                scratch[i] -= col[i] * z;
            }
        }
        d2
    }

    /// `scale · (x − mean)ᵀ (L Lᵀ)⁻¹ (x − mean)` for a checked row `x`, with
    /// stack scratch for `p ≤ 32`: the squared distance of `x` when
    /// `L Lᵀ` is the co-moment matrix and `scale` its divisor.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a row of the wrong length,
    /// [`Error::NonFinite`] for NaN or infinite entries, [`Error::Overflow`]
    /// when the distance is not finite.
    pub(crate) fn squared_distance(&self, x: &[f64], mean: &[f64], scale: f64) -> Result<f64> {
        let p = self.p;
        check_row(x, p, 0)?;
        let mut stack = [0.0f64; 64];
        let mut heap;
        let (c, scratch): (&mut [f64], &mut [f64]) = if p <= 32 {
            let (a, b) = stack.split_at_mut(32);
            (&mut a[..p], &mut b[..p])
        } else {
            heap = vec![0.0; 2 * p];
            heap.split_at_mut(p)
        };
        for ((ci, &xi), &mi) in c.iter_mut().zip(x).zip(mean) {
            *ci = xi - mi;
        }
        let d2 = scale * self.whitened_norm(c, scratch);
        if d2.is_finite() {
            Ok(d2)
        } else {
            Err(Error::Overflow { row: 0 })
        }
    }

    /// `L` as a row-major lower matrix.
    pub(crate) fn row_major(&self) -> Vec<f64> {
        let p = self.p;
        let mut out = vec![0.0; p * p];
        for j in 0..p {
            for i in j..p {
                out[i * p + j] = self.l[j * p + i];
            }
        }
        out
    }

    /// Whether every diagonal entry is positive and finite.
    pub(crate) fn is_valid(&self) -> bool {
        (0..self.p).all(|j| {
            let d = self.l[j * self.p + j];
            d.is_finite() && d > 0.0
        })
    }
}
