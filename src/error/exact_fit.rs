//! The details of an exact fit, carried by [`crate::Error::ExactFit`]: they
//! live with the error so that the error type depends on no estimator. The
//! robust fit computes them (`robust/hyperplane.rs`).

use serde::{Deserialize, Serialize};
use std::fmt;

/// A hyperplane `aᵀx = b` (with `‖a‖ = 1`) and the rows that lie on it.
///
/// # Example
/// ```
/// use mvdist::{robust::{minimum_covariance_determinant, McdOptions}, Error};
/// use ndarray::Array2;
/// // 30 of 40 rows satisfy x₁ = 2·x₀ + 1; the rest are scattered.
/// let rows = Array2::from_shape_fn((40, 2), |(i, j)| {
///     let t = i as f64;
///     match (i < 30, j) {
///         (_, 0) => t,
///         (true, _) => 2.0 * t + 1.0,
///         (false, _) => (t * 1.7).sin() * 50.0,
///     }
/// });
/// match minimum_covariance_determinant(rows.view(), &McdOptions::default()) {
///     Err(Error::ExactFit { hyperplane }) => {
///         assert!(hyperplane.rows().len() >= 30);
///         assert!(hyperplane.residual(&[3.0, 7.0]).abs() < 1e-12);
///     }
///     other => return Err(format!("expected an exact fit, got {other:?}").into()),
/// }
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Hyperplane {
    pub(crate) coefficients: Vec<f64>,
    pub(crate) offset: f64,
    pub(crate) rows: Vec<usize>,
    pub(crate) subset_size: usize,
}

impl Hyperplane {
    /// The unit normal `a` (its largest entry in magnitude is positive).
    pub fn coefficients(&self) -> &[f64] {
        &self.coefficients
    }

    /// The offset `b` in `aᵀx = b`.
    pub fn offset(&self) -> f64 {
        self.offset
    }

    /// The rows (0-based, ascending) that lie on the hyperplane.
    pub fn rows(&self) -> &[usize] {
        &self.rows
    }

    /// The subset size `h` that the number of rows on the plane reached.
    pub fn subset_size(&self) -> usize {
        self.subset_size
    }

    /// `aᵀx − b`: the signed distance of `x` from the hyperplane (0 on it).
    /// Entries beyond the hyperplane's dimension are ignored.
    pub fn residual(&self, x: &[f64]) -> f64 {
        self.coefficients
            .iter()
            .zip(x)
            .map(|(a, v)| a * v)
            .sum::<f64>()
            - self.offset
    }
}

impl fmt::Display for Hyperplane {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut first = true;
        for (j, a) in self.coefficients.iter().enumerate() {
            if a.abs() < 1e-12 {
                continue;
            }
            if first {
                write!(f, "{a:.6}·x{j}")?;
            } else if *a < 0.0 {
                write!(f, " − {:.6}·x{j}", -a)?;
            } else {
                write!(f, " + {a:.6}·x{j}")?;
            }
            first = false;
        }
        write!(f, " = {:.6} (columns numbered from 0)", self.offset)
    }
}
