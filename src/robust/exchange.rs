//! Pairwise exchanges: a final polish of the best `h`-subset.
//!
//! A C-step keeps the `h` rows closest to the subset's own mean and
//! covariance, and stops at a subset that reproduces itself. Such a fixed
//! point can still be improved by *exchanging* one row of the subset for one
//! row outside it, the move of Hawkins' (1994) feasible solution algorithm.
//! Near the optimum, different starts end in fixed points that differ by a
//! few rows on the boundary, with determinants equal to seven or eight
//! digits; a few exchanges among boundary rows move the result to the lower
//! of them.
//!
//! For a subset of `c` rows with mean `m`, co-moment matrix `M = c·S` and
//! `u = x_i − m` (row `i` leaves), `w = x_j − m` (row `j` enters):
//!
//! * removing `i` gives `M₋ᵢ = M − a·u uᵀ`, `a = c/(c−1)`, with
//!   `det M₋ᵢ = det M · (1 − a·uᵀM⁻¹u)`;
//! * adding `j` to those `c−1` rows (mean `m − u/(c−1)`) adds
//!   `((c−1)/c)·v vᵀ` with `v = w + u/(c−1)`, multiplying the determinant by
//!   `1 + ((c−1)/c)·vᵀM₋ᵢ⁻¹v`, where by Sherman–Morrison
//!   `vᵀM₋ᵢ⁻¹v = vᵀM⁻¹v + a(uᵀM⁻¹v)²/(1 − a·uᵀM⁻¹u)`.
//!
//! With `z = L⁻¹(·)` for `S = L Lᵀ`, `uᵀM⁻¹v = z_u·z_v / c`, so each pair
//! costs `O(p)` once the boundary rows are whitened. The ratio only ranks
//! exchanges: the caller recomputes the chosen subset's covariance exactly
//! and keeps it only if its determinant is lower.
//!
//! Reference: D. M. Hawkins (1994). The feasible solution algorithm for the
//! minimum covariance determinant estimator in multivariate data.
//! *Computational Statistics & Data Analysis* 17, 197–210.

use crate::scatter::Scatter;
use ndarray::ArrayView2;

/// Rows on each side of the boundary whose exchanges are evaluated: the
/// subset's rows with the largest distances and the outside rows with the
/// smallest.
const BOUNDARY: usize = 32;

/// One row leaving the subset and one entering, with the ratio of the new
/// determinant to the old.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Exchange {
    pub(crate) leave: usize,
    pub(crate) enter: usize,
    pub(crate) ratio: f64,
}

/// The exchange with the smallest determinant ratio among the boundary rows,
/// or `None` when the subset or its complement is empty.
///
/// `subset` is ascending, `d2` holds every row's squared distance under
/// `(mean, scatter)`, the subset's mean and maximum-likelihood covariance.
pub(crate) fn best_exchange(
    x: ArrayView2<'_, f64>,
    subset: &[usize],
    mean: &[f64],
    scatter: &Scatter,
    d2: &[f64],
) -> Option<Exchange> {
    let n = x.nrows();
    let c = subset.len();
    if c < 2 || c >= n {
        return None;
    }
    let mut inside = vec![false; n];
    for &i in subset {
        inside[i] = true;
    }
    let mut leaving: Vec<usize> = subset.to_vec();
    let mut entering: Vec<usize> = (0..n).filter(|&i| !inside[i]).collect();
    let by_distance = |a: &usize, b: &usize| d2[*a].total_cmp(&d2[*b]).then(a.cmp(b));
    if leaving.len() > BOUNDARY {
        let cut = leaving.len() - BOUNDARY;
        leaving.select_nth_unstable_by(cut, by_distance);
        leaving.drain(..cut);
    }
    if entering.len() > BOUNDARY {
        entering.select_nth_unstable_by(BOUNDARY - 1, by_distance);
        entering.truncate(BOUNDARY);
    }
    let white = |i: usize| whiten(x, i, mean, scatter);
    let zu: Vec<Vec<f64>> = leaving.iter().map(|&i| white(i)).collect();
    let zw: Vec<Vec<f64>> = entering.iter().map(|&j| white(j)).collect();

    let cf = c as f64;
    let a = cf / (cf - 1.0);
    let back = 1.0 / (cf - 1.0);
    let grow = (cf - 1.0) / cf;
    let mut best: Option<Exchange> = None;
    for (u, &i) in zu.iter().zip(&leaving) {
        let uu = dot(u, u) / cf;
        // det M₋ᵢ / det M ≥ 0; a negative value is rounding. It may be 0:
        // a row whose removal alone leaves a singular subset can still be
        // part of an exchange (the two-term form below is the determinant
        // lemma for the rank-two update and needs no division by r1), and
        // that is how an exact fit one row away is reached.
        let r1 = (1.0 - a * uu).max(0.0);
        for (w, &j) in zw.iter().zip(&entering) {
            // v = w + u/(c−1), whitened.
            let (mut vv, mut uv) = (0.0, 0.0);
            for (&wk, &uk) in w.iter().zip(u) {
                let vk = wk + back * uk;
                vv += vk * vk;
                uv += uk * vk;
            }
            let (vv, uv) = (vv / cf, uv / cf);
            // r1·(1 + grow·(vv + a·uv²/r1)), without dividing by r1.
            let ratio = r1 * (1.0 + grow * vv) + grow * a * uv * uv;
            if ratio.is_finite() && best.is_none_or(|b| ratio < b.ratio) {
                best = Some(Exchange {
                    leave: i,
                    enter: j,
                    ratio,
                });
            }
        }
    }
    best
}

/// `L⁻¹ (x_i − mean)`.
fn whiten(x: ArrayView2<'_, f64>, i: usize, mean: &[f64], scatter: &Scatter) -> Vec<f64> {
    let p = mean.len();
    let w = scatter.inverse_factor_slice();
    let c: Vec<f64> = x.row(i).iter().zip(mean).map(|(v, m)| v - m).collect();
    (0..p)
        .map(|r| dot(&w[r * p..r * p + r + 1], &c[..r + 1]))
        .collect()
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::moments::MomentAccumulator;
    use ndarray::Array2;

    fn ml_scatter(x: &Array2<f64>, idx: &[usize]) -> crate::Result<(Vec<f64>, Scatter)> {
        let rows = x.select(ndarray::Axis(0), idx);
        let acc = MomentAccumulator::from_rows(rows.view())?;
        let c = idx.len() as f64;
        let cov: Vec<f64> = acc.comoment.iter().map(|v| v / c).collect();
        Ok((
            acc.mean().to_vec(),
            Scatter::from_row_major(&cov, x.ncols())?,
        ))
    }

    /// The ranking ratio equals the determinant ratio computed directly
    /// (the rank-one identities above are exact).
    #[test]
    fn ratio_equals_the_direct_determinant_ratio() -> crate::Result<()> {
        let n = 40;
        let x = Array2::from_shape_fn((n, 3), |(i, j)| {
            ((i * 7 + j * 13) as f64 * 0.618).sin() * (1.0 + j as f64) + 0.1 * (i * j) as f64
        });
        let subset: Vec<usize> = (0..n).filter(|i| i % 3 != 0).collect();
        let (mean, scatter) = ml_scatter(&x, &subset)?;
        let d2 = (0..n)
            .map(|i| {
                let c: Vec<f64> = x.row(i).iter().zip(&mean).map(|(v, m)| v - m).collect();
                scatter.squared_norm(&c)
            })
            .collect::<crate::Result<Vec<f64>>>()?;
        let e = best_exchange(x.view(), &subset, &mean, &scatter, &d2);
        assert!(e.is_some(), "both sides of the boundary are non-empty");
        let Some(e) = e else { return Ok(()) };
        let mut swapped: Vec<usize> = subset
            .iter()
            .map(|&i| if i == e.leave { e.enter } else { i })
            .collect();
        swapped.sort_unstable();
        let (_, after) = ml_scatter(&x, &swapped)?;
        let direct = (after.log_determinant() - scatter.log_determinant()).exp();
        assert!(
            (e.ratio - direct).abs() < 1e-10 * direct,
            "{} vs {direct}",
            e.ratio
        );
        assert!(subset.contains(&e.leave) && !subset.contains(&e.enter));
        // Every pair is on the boundary here: the choice is the best of all.
        let mut lowest = f64::INFINITY;
        for &i in &subset {
            for j in (0..n).filter(|j| !subset.contains(j)) {
                let mut s: Vec<usize> =
                    subset.iter().map(|&k| if k == i { j } else { k }).collect();
                s.sort_unstable();
                lowest = lowest.min(ml_scatter(&x, &s)?.1.log_determinant());
            }
        }
        assert!((after.log_determinant() - lowest).abs() < 1e-12);
        Ok(())
    }
}
