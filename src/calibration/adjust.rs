//! Multiple-testing adjustments for batches of p-values.
//!
//! Scoring many rows at a fixed level flags about `alpha·m` of `m` normal
//! rows by chance alone. Bonferroni's adjustment bounds the chance of any
//! false flag (family-wise error rate); Benjamini and Hochberg's (1995)
//! step-up procedure bounds the expected share of false flags among the
//! flags (false discovery rate), and keeps more power when many rows are
//! truly unusual.

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// How a batch of p-values is adjusted before it is compared with `alpha`.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Adjustment {
    /// No adjustment: each row is tested at level `alpha` on its own.
    #[default]
    None,
    /// Bonferroni: `min(1, m·p)`; controls the family-wise error rate.
    Bonferroni,
    /// Benjamini–Hochberg step-up: controls the false discovery rate for
    /// independent (or positively dependent) tests.
    BenjaminiHochberg,
}

/// Adjusted p-values, in the input order: a row is flagged at level `alpha`
/// when its adjusted p-value is at most `alpha`.
///
/// # Errors
/// [`Error::InvalidParameter`] if a p-value is NaN or outside `[0, 1]`.
///
/// # Example
///
/// ```
/// use mvdist::calibration::{adjusted_p_values, Adjustment};
///
/// let p = [0.01, 0.04, 0.03, 0.5];
/// let bh = adjusted_p_values(&p, Adjustment::BenjaminiHochberg)?;
/// // Sorted: 0.01·4/1 = 0.04; 0.03·4/2 = 0.06; 0.04·4/3 = 0.0533 → 0.0533 (monotone).
/// assert!((bh[0] - 0.04).abs() < 1e-15);
/// assert!((bh[2] - 0.04 * 4.0 / 3.0).abs() < 1e-15);
/// let bonf = adjusted_p_values(&p, Adjustment::Bonferroni)?;
/// assert_eq!(bonf[3], 1.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn adjusted_p_values(p_values: &[f64], adjustment: Adjustment) -> Result<Vec<f64>> {
    for (row, &p) in p_values.iter().enumerate() {
        if !(0.0..=1.0).contains(&p) {
            return Err(Error::invalid(
                "p-value",
                format!("row {row} has p-value {p}, outside [0, 1]"),
            ));
        }
    }
    let m = p_values.len() as f64;
    Ok(match adjustment {
        Adjustment::None => p_values.to_vec(),
        Adjustment::Bonferroni => p_values.iter().map(|&p| (p * m).min(1.0)).collect(),
        Adjustment::BenjaminiHochberg => {
            let mut order: Vec<usize> = (0..p_values.len()).collect();
            order.sort_by(|&a, &b| p_values[a].total_cmp(&p_values[b]));
            let mut adjusted = vec![0.0; p_values.len()];
            let mut running = 1.0f64;
            for (rank, &i) in order.iter().enumerate().rev() {
                running = running.min(p_values[i] * m / (rank as f64 + 1.0));
                adjusted[i] = running;
            }
            adjusted
        }
    })
}
