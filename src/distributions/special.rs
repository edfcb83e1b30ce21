//! Regularized incomplete gamma and beta functions, accurate in both tails.
//!
//! The tail probabilities of mvdist's reference distributions come from
//! here. Each function returns the lower and the upper tail computed
//! separately, so a tiny upper tail (a p-value of 1e-250, say) is computed
//! directly and never as `1 - cdf`.
//!
//! Methods (common practice in numerical libraries): the power series and
//! the Lentz continued fraction for the incomplete gamma function, the
//! continued fraction of the incomplete beta function with the usual
//! symmetry switch (Press et al., *Numerical Recipes*, 3rd ed., §6.2 and
//! §6.4), and, for large shape parameters, prefactors written around the
//! distribution's centre with `u - ln(1 + u)` and Stirling's series so that
//! no large terms cancel (the device of DiDonato and Morris, ACM TOMS 708,
//! 1992).

use statrs::function::gamma::ln_gamma;

const EPS: f64 = 1e-16;
const TINY: f64 = 1e-300;
const MAX_ITER: usize = 100_000;
const HALF_LN_2PI: f64 = 0.918_938_533_204_672_8;

/// `u - ln(1 + u)` without cancellation, for `u > -1`.
pub(crate) fn log1p_gap(u: f64) -> f64 {
    if u.abs() < 0.5 {
        // ln(1+u) = 2 atanh(r), r = u / (2 + u); u - 2r = r u.
        let r = u / (2.0 + u);
        let r2 = r * r;
        let mut term = r * r2;
        let mut sum = 0.0f64;
        let mut k = 3.0;
        while term.abs() > 1e-18 * sum.abs().max(1e-300) {
            sum += term / k;
            term *= r2;
            k += 2.0;
            if k > 200.0 {
                break;
            }
        }
        r * u - 2.0 * sum
    } else {
        u - u.ln_1p()
    }
}

/// `u - ln(1 + u)` where `ratio = 1 + u` is also known to full relative
/// precision (as `x/x₀` near the edge of a distribution's support): the
/// series for small `u`, and `u - ln(ratio)` otherwise, so that a ratio far
/// below 1 (a far lower tail) keeps its digits instead of being rounded
/// through `1 + u`.
fn log1p_gap_with_ratio(u: f64, ratio: f64) -> f64 {
    if u.abs() < 0.5 {
        log1p_gap(u)
    } else {
        u - ratio.ln()
    }
}

/// Stirling's remainder `ln Γ(z) - [(z - ½) ln z - z + ½ ln 2π]`, for z ≥ 10.
fn stirling_remainder(z: f64) -> f64 {
    let w = 1.0 / (z * z);
    // Bernoulli-number coefficients B_{2k} / (2k (2k - 1)).
    let series = 1.0 / 12.0
        + w * (-1.0 / 360.0
            + w * (1.0 / 1260.0
                + w * (-1.0 / 1680.0
                    + w * (1.0 / 1188.0 + w * (-691.0 / 360_360.0 + w * (1.0 / 156.0))))));
    series / z
}

/// `ln B(a, b)` with the large-argument differences taken without
/// cancellation.
pub(crate) fn ln_beta(a: f64, b: f64) -> f64 {
    let (small, big) = if a < b { (a, b) } else { (b, a) };
    if big < 10.0 {
        return ln_gamma(a) + ln_gamma(b) - ln_gamma(a + b);
    }
    // ln Γ(big) - ln Γ(small + big) via Stirling's formula.
    let s = small + big;
    let diff =
        -(big - 0.5) * (small / big).ln_1p() - small * s.ln() + small + stirling_remainder(big)
            - stirling_remainder(s);
    if small < 10.0 {
        ln_gamma(small) + diff
    } else {
        (small - 0.5) * small.ln() - small + HALF_LN_2PI + stirling_remainder(small) + diff
    }
}

/// `ln [x^a e^{-x} / Γ(a)]`.
fn gamma_prefactor_ln(a: f64, x: f64) -> f64 {
    if a >= 10.0 {
        -a * log1p_gap_with_ratio((x - a) / a, x / a)
            + 0.5 * (a / (2.0 * std::f64::consts::PI)).ln()
            - stirling_remainder(a)
    } else {
        a * x.ln() - x - ln_gamma(a)
    }
}

/// Regularized incomplete gamma function: returns `(P(a, x), Q(a, x))`,
/// the lower and upper tails, each accurate relative to itself.
pub(crate) fn gamma_tails(a: f64, x: f64) -> (f64, f64) {
    if x.is_nan() || a.is_nan() || a <= 0.0 {
        return (f64::NAN, f64::NAN);
    }
    if x <= 0.0 {
        return (0.0, 1.0);
    }
    if x == f64::INFINITY {
        return (1.0, 0.0);
    }
    let ln_pre = gamma_prefactor_ln(a, x);
    if x < a + 1.0 {
        // Power series for P.
        let mut ap = a;
        let mut del = 1.0 / a;
        let mut sum = del;
        for _ in 0..MAX_ITER {
            ap += 1.0;
            del *= x / ap;
            sum += del;
            if del.abs() < sum.abs() * EPS {
                break;
            }
        }
        let p = (ln_pre + sum.ln()).exp();
        (p, 1.0 - p)
    } else {
        // Continued fraction for Q (modified Lentz).
        let mut b = x + 1.0 - a;
        let mut c = 1.0 / TINY;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..MAX_ITER {
            let an = -(i as f64) * (i as f64 - a);
            b += 2.0;
            d = an * d + b;
            if d.abs() < TINY {
                d = TINY;
            }
            c = b + an / c;
            if c.abs() < TINY {
                c = TINY;
            }
            d = 1.0 / d;
            let del = d * c;
            h *= del;
            if (del - 1.0).abs() < EPS {
                break;
            }
        }
        let q = (ln_pre + h.ln()).exp();
        (1.0 - q, q)
    }
}

/// `ln [x^a y^b / B(a, b)]` with `y = 1 - x` passed separately.
fn beta_prefactor_ln(a: f64, b: f64, x: f64, y: f64) -> f64 {
    if a.min(b) >= 10.0 {
        // Around the centre x0 = a / (a + b): the first-order terms cancel
        // exactly, leaving -a·g(t/x0) - b·g(-t/y0) with g(u) = u - ln(1+u).
        // In the far tails 1 + t/x0 = x/x0 (or 1 − t/y0 = y/y0) is far
        // below 1 and is taken from x (or y) directly, not through t.
        let s = a + b;
        let x0 = a / s;
        let y0 = b / s;
        let t = if x <= 0.5 { x - x0 } else { y0 - y };
        let e =
            -a * log1p_gap_with_ratio(t / x0, x / x0) - b * log1p_gap_with_ratio(-t / y0, y / y0);
        e + 0.5 * (a * b / (2.0 * std::f64::consts::PI * s)).ln() + stirling_remainder(s)
            - stirling_remainder(a)
            - stirling_remainder(b)
    } else {
        let ln_x = if x <= 0.5 { x.ln() } else { (-y).ln_1p() };
        let ln_y = if y <= 0.5 { y.ln() } else { (-x).ln_1p() };
        a * ln_x + b * ln_y - ln_beta(a, b)
    }
}

/// Continued fraction for `I_x(a, b)` in the form of DiDonato and Morris
/// (ACM TOMS 708, 1992, "BFRAC"): `I_x(a, b) = x^a y^b / B(a, b) / K`, with
/// `K = β₀ + α₁/(β₁ + α₂/(β₂ + …))` evaluated by the modified Lentz method.
/// It converges quickly for `x` below the mean `a/(a+b)`, and its terms use
/// `a·y − b·x` with `y = 1 − x` passed separately, so no term cancels
/// catastrophically for large shapes.
fn beta_continued_fraction(a: f64, b: f64, x: f64, y: f64) -> f64 {
    let lambda = a * y - b * x;
    let term = |m: f64| {
        let den = a + 2.0 * m - 1.0;
        let alpha = (a + m - 1.0) * (a + b + m - 1.0) * m * (b - m) * x * x / (den * den);
        let beta = m
            + m * (b - m) * x / den
            + (a + m) * (lambda + 1.0 + m * (2.0 - x)) / (a + 2.0 * m + 1.0);
        (alpha, beta)
    };
    let b0 = a * (lambda + 1.0) / (a + 1.0);
    let mut f = if b0 == 0.0 { TINY } else { b0 };
    let mut c = f;
    let mut d = 0.0;
    for m in 1..MAX_ITER {
        let (alpha, beta) = term(m as f64);
        d = beta + alpha * d;
        if d == 0.0 {
            d = TINY;
        }
        c = beta + alpha / c;
        if c == 0.0 {
            c = TINY;
        }
        d = 1.0 / d;
        let delta = c * d;
        f *= delta;
        if (delta - 1.0).abs() < EPS {
            break;
        }
    }
    f
}

/// Regularized incomplete beta function: returns `(I_x(a, b), 1 - I_x(a, b))`
/// for `x` in `[0, 1]`, with `y = 1 - x` passed separately so that values
/// of `x` near 1 keep their precision. Each tail is accurate relative to
/// itself.
pub(crate) fn beta_tails(a: f64, b: f64, x: f64, y: f64) -> (f64, f64) {
    if x.is_nan() || y.is_nan() || a.is_nan() || b.is_nan() || a <= 0.0 || b <= 0.0 {
        return (f64::NAN, f64::NAN);
    }
    if x <= 0.0 {
        return (0.0, 1.0);
    }
    if y <= 0.0 {
        return (1.0, 0.0);
    }
    let ln_pre = beta_prefactor_ln(a, b, x, y);
    if x * (a + b) < a {
        let lower = (ln_pre - beta_continued_fraction(a, b, x, y).ln()).exp();
        (lower, 1.0 - lower)
    } else {
        let upper = (ln_pre - beta_continued_fraction(b, a, y, x).ln()).exp();
        (1.0 - upper, upper)
    }
}

/// Largest whole-number shape for which the finite sums below are used.
const WHOLE_SHAPE_LIMIT: f64 = 64.0;

/// Upper tail `1 − I_x(a, b)` for a whole-number `a` (up to 64) as the
/// negative-binomial sum `y^b Σ_{k<a} (b)_k x^k / k!`, with `(b)_k` the
/// rising factorial and `y = 1 − x` passed separately: `I_x(a, b)` is the
/// probability of at least `a` successes (probability `x`) before the
/// `b`-th failure (DLMF 8.17.5 with the negative binomial law; common
/// practice for the F and Beta tails at even numerator degrees of
/// freedom). Every term is positive, so the sum is accurate relative to
/// itself; its one transcendental step is `y^b`. `None` where the sum does
/// not apply or `y^b` leaves the normal range (the caller then uses the
/// continued fraction).
pub(crate) fn beta_upper_whole(a: f64, b: f64, x: f64, y: f64) -> Option<f64> {
    if !(1.0..=WHOLE_SHAPE_LIMIT).contains(&a) || a.fract() != 0.0 {
        return None;
    }
    if !(b > 0.0 && b.is_finite() && x > 0.0 && y > 0.0) {
        return None;
    }
    // y^b: through ln(1 − x) while x is small (y itself would have lost
    // x's low digits), directly from the exact y otherwise.
    let front = if x < 0.5 {
        (b * (-x).ln_1p()).exp()
    } else {
        y.powf(b)
    };
    front_times_terms(front, a, |k| (b + k - 1.0) / k * x)
}

/// Upper tail `Q(a, x)` of the regularized incomplete gamma function for a
/// whole-number `a` (up to 64) as the Poisson sum `e^{−x} Σ_{k<a} x^k/k!`
/// (DLMF 8.4.10); positive terms, accurate relative to itself. `None` where
/// it does not apply or `e^{−x}` leaves the normal range.
pub(crate) fn gamma_upper_whole(a: f64, x: f64) -> Option<f64> {
    if !(1.0..=WHOLE_SHAPE_LIMIT).contains(&a) || a.fract() != 0.0 || !(x > 0.0) {
        return None;
    }
    front_times_terms((-x).exp(), a, |k| x / k)
}

/// `front · Σ_{k<a} t_k` with `t_0 = 1` and `t_k = t_{k−1} · ratio(k)`,
/// capped at 1 (a probability, off by rounding at most); `None` when
/// `front` is not a normal number or the result is not finite.
fn front_times_terms(front: f64, a: f64, ratio: impl Fn(f64) -> f64) -> Option<f64> {
    if !(front >= f64::MIN_POSITIVE) {
        return None;
    }
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1.0;
    while k < a {
        term *= ratio(k);
        sum += term;
        k += 1.0;
    }
    let q = front * sum;
    q.is_finite().then_some(q.min(1.0))
}

/// Finds `t` in `[lo, hi]` with `f(t) = 0` for a function that decreases
/// from positive to negative over the bracket: regula falsi with the
/// Illinois modification, falling back to bisection, stopping when the
/// bracket no longer shrinks.
pub(crate) fn solve_decreasing(mut lo: f64, mut hi: f64, f: impl Fn(f64) -> f64) -> f64 {
    let mut f_lo = f(lo);
    let mut f_hi = f(hi);
    if f_lo <= 0.0 {
        return lo;
    }
    if f_hi >= 0.0 {
        return hi;
    }
    let mut side = 0i8;
    for iteration in 0..400 {
        let width = hi - lo;
        let mut t = if iteration % 3 == 2 || !f_lo.is_finite() || !f_hi.is_finite() {
            lo + 0.5 * width
        } else {
            lo + width * f_lo / (f_lo - f_hi)
        };
        if !(t > lo && t < hi) {
            t = lo + 0.5 * width;
        }
        if t <= lo || t >= hi {
            break;
        }
        let ft = f(t);
        if ft == 0.0 {
            return t;
        }
        if ft > 0.0 {
            lo = t;
            f_lo = ft;
            if side == 1 {
                f_hi *= 0.5;
            }
            side = 1;
        } else {
            hi = t;
            f_hi = ft;
            if side == -1 {
                f_lo *= 0.5;
            }
            side = -1;
        }
        if hi - lo <= 2.0 * f64::EPSILON * lo.abs().max(hi.abs()) {
            break;
        }
    }
    if f_lo.abs() < f_hi.abs() {
        lo
    } else {
        hi
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn log1p_gap_matches_direct_formula_away_from_zero() {
        // Common practice: for moderate u the direct formula is accurate.
        for &u in &[-0.4, -0.1, 0.01, 0.3, 0.49, 2.0] {
            let direct = u - f64::ln_1p(u);
            assert!((log1p_gap(u) - direct).abs() <= 1e-14 * direct.abs().max(1e-300));
        }
    }

    #[test]
    fn whole_shape_sums_match_the_continued_fraction() {
        // Two evaluations that share no code but the prefactor's logarithm:
        // the finite sums against the series and continued fractions.
        let mut worst = 0.0f64;
        for &a in &[1.0, 2.0, 3.0, 4.0, 8.0, 16.0, 32.0] {
            for &b in &[0.5, 1.0, 2.5, 7.0, 30.0, 499.5, 5.0e5] {
                for i in 1..200 {
                    let x = (i as f64 / 200.0).powi(3);
                    let y = 1.0 - x;
                    let (_, upper) = beta_tails(a, b, x, y);
                    if let Some(q) = beta_upper_whole(a, b, x, y) {
                        if upper > 1e-300 {
                            worst = worst.max((q - upper).abs() / upper);
                        }
                    }
                }
            }
            for i in 1..400 {
                let x = i as f64 * 0.5;
                let (_, upper) = gamma_tails(a, x);
                if let Some(q) = gamma_upper_whole(a, x) {
                    if upper > 1e-300 {
                        worst = worst.max((q - upper).abs() / upper);
                    }
                }
            }
        }
        assert!(worst < 2e-12, "largest relative difference {worst:e}");
        // Closed forms (textbook): 1 − I_x(1, b) = y^b, Q(1, x) = e^{−x}.
        let close =
            |q: Option<f64>, v: f64| q.is_some_and(|q| (q - v).abs() <= 4.0 * f64::EPSILON * v);
        assert!(close(beta_upper_whole(1.0, 3.0, 0.5, 0.5), 0.125));
        assert!(close(beta_upper_whole(1.0, 3.0, 0.25, 0.75), 0.421875));
        // 1 − I_x(2, b) = y^b (1 + b x).
        assert!(close(
            beta_upper_whole(2.0, 3.0, 0.25, 0.75),
            0.421875 * 1.75
        ));
        assert!(close(gamma_upper_whole(1.0, 2.0), (-2.0f64).exp()));
        assert!(close(gamma_upper_whole(2.0, 2.0), 3.0 * (-2.0f64).exp()));
        // Out of range: fractional or large shapes, underflowing fronts.
        assert_eq!(beta_upper_whole(1.5, 3.0, 0.5, 0.5), None);
        assert_eq!(beta_upper_whole(65.0, 3.0, 0.5, 0.5), None);
        assert_eq!(beta_upper_whole(2.0, 5.0e5, 0.5, 0.5), None);
        assert_eq!(gamma_upper_whole(2.0, 800.0), None);
    }

    #[test]
    fn gamma_tails_known_closed_forms() {
        // Q(1, x) = exp(-x) (exponential distribution; textbook identity).
        for &x in &[0.1, 1.0, 5.0, 50.0, 600.0] {
            let (_, q) = gamma_tails(1.0, x);
            assert!((q - (-x).exp()).abs() <= 1e-14 * (-x).exp());
        }
    }

    #[test]
    fn beta_tails_known_closed_forms() {
        // I_x(1, b) = 1 - (1 - x)^b (textbook identity).
        for &(b, x) in &[(3.0, 0.2), (50.0, 0.01), (7.5, 0.9)] {
            let (lo, up) = beta_tails(1.0, b, x, 1.0 - x);
            let exact_up = f64::powf(1.0 - x, b);
            assert!((up - exact_up).abs() <= 1e-13 * exact_up);
            assert!((lo - (1.0 - exact_up)).abs() <= 1e-13);
        }
    }

    #[test]
    fn ln_beta_matches_gamma_formula_for_moderate_arguments() {
        for &(a, b) in &[(12.0, 15.0), (3.0, 40.0), (25.5, 11.0)] {
            let direct = ln_gamma(a) + ln_gamma(b) - ln_gamma(a + b);
            assert!((ln_beta(a, b) - direct).abs() < 1e-12 * direct.abs().max(1.0));
        }
    }
}
