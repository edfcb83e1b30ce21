//! [`CalibrationCheck`]: how often the parametric cutoff flags held-out
//! reference rows, against its nominal level.

use crate::calibration::{check_probability, Reference, RowOrigin};
use crate::data::Rows;
use crate::distributions::BetaDistribution;
use crate::error::{Error, Result};
use crate::model::DistanceModel;
use serde::{Deserialize, Serialize};

/// The levels checked by default: 5%, 1% and 0.1%.
pub const DEFAULT_LEVELS: [f64; 3] = [0.05, 0.01, 0.001];

/// Expected exceedances below which a level is not judged (the usual
/// "at least five expected" rule for binomial counts; common practice).
const FEWEST_EXPECTED: f64 = 5.0;

/// At most about this many Q–Q points are kept: evenly spaced ranks, plus
/// every one of the largest [`TOP_POINTS`] (where departures matter).
const MOST_POINTS: usize = 2000;
const TOP_POINTS: usize = 100;

/// What the held-out rows say about the parametric cutoff at one level.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CalibrationVerdict {
    /// The observed rate is consistent with the level (the level lies in
    /// the 95% interval).
    Consistent,
    /// The cutoff flags more held-out reference rows than its level: its
    /// p-values are too small here.
    TooManyFlags,
    /// The cutoff flags fewer held-out reference rows than its level: it
    /// is conservative here.
    TooFewFlags,
    /// Too few held-out rows to judge this level (fewer than five
    /// exceedances expected, and not clearly too many observed).
    TooFewRows,
}

/// One level of a [`CalibrationCheck`].
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[non_exhaustive]
pub struct LevelCheck {
    /// The nominal level `α`.
    pub alpha: f64,
    /// The parametric cutoff at `α`.
    pub cutoff: f64,
    /// How many held-out rows have a squared distance above the cutoff.
    pub exceedances: usize,
    /// `exceedances / m`.
    pub rate: f64,
    /// The exact (Clopper–Pearson) 95% interval for the rate at which this
    /// fitted cutoff flags reference rows.
    pub interval: [f64; 2],
    /// The verdict.
    pub verdict: CalibrationVerdict,
    /// A plain-language reading.
    pub reading: String,
}

/// The observed exceedance rate of the parametric cutoff on held-out
/// reference rows, at several levels, with exact binomial intervals and a
/// Q–Q chart (see the [module documentation](super)).
///
/// The held-out rows were not used in the fit, so they are scored as new
/// rows ([`RowOrigin::New`]). Given the fit, each independent held-out row
/// exceeds the fitted cutoff with the same probability `π`, so the count is
/// Binomial(m, π) and the interval is an exact interval for `π`: the rate
/// at which *this fitted cutoff* flags reference rows. Under the model's
/// assumptions `π` equals `α` on average over fits, not for every fit; so
/// even for normal rows a level reads as not consistent somewhat more
/// often than 5% of the time, the more so the more rows are held out
/// relative to the rows fitted (about 7% of data sets with 200 rows fitted
/// and 200 held out, about 10% with 4000 and 4000, at p = 4 and α = 5%, in
/// a numpy simulation during review), and the three levels are judged
/// without a multiplicity adjustment. A rate several times `α` is a clear
/// sign; a single level just outside its interval is weak evidence.
///
/// **Caution.** The check is about these data and this model: a level
/// that looks consistent is not a proof that the law holds, and with few
/// held-out rows only large failures show.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[non_exhaustive]
pub struct CalibrationCheck {
    /// The number `m` of held-out rows.
    pub held_out_rows: usize,
    /// The parametric reference checked.
    pub reference: Reference,
    /// One entry per level.
    pub levels: Vec<LevelCheck>,
    /// Q–Q coordinates: the reference quantiles at `(i − ½)/m`, for the
    /// ranks `i` drawn (every rank up to 2000 rows; above, evenly spaced
    /// ranks and the largest 100).
    pub theoretical: Vec<f64>,
    /// Q–Q coordinates: the ordered held-out squared distances at the same
    /// ranks.
    pub observed: Vec<f64>,
    /// How to read the check.
    pub caution: String,
}

const CAUTION: &str = "The check compares the parametric cutoff with held-out reference rows \
of these data; a consistent level is not a proof that the law holds, and few held-out rows show \
only large failures. Held-out p-values assume the scored rows are exchangeable with the \
held-out ones. A flag is evidence, not a verdict: local procedures and qualified people decide.";

/// The exact (Clopper–Pearson) two-sided 95% interval for a binomial
/// proportion with `k` successes in `m` trials.
pub(crate) fn clopper_pearson(k: usize, m: usize) -> Result<[f64; 2]> {
    let (kf, mf) = (k as f64, m as f64);
    let lower = if k == 0 {
        0.0
    } else {
        BetaDistribution::new(kf, mf - kf + 1.0)?
            .isf_with_complement(0.975)?
            .0
    };
    let upper = if k == m {
        1.0
    } else {
        BetaDistribution::new(kf + 1.0, mf - kf)?
            .isf_with_complement(0.025)?
            .0
    };
    Ok([lower, upper])
}

pub(super) fn percent(v: f64) -> String {
    let pct = 100.0 * v;
    if pct == 0.0 {
        "0%".into()
    } else if pct >= 10.0 {
        format!("{pct:.0}%")
    } else if pct >= 1.0 {
        format!("{pct:.1}%")
    } else {
        format!("{pct:.2}%")
    }
}

fn law_name(reference: &Reference) -> &'static str {
    use crate::calibration::Law;
    match reference.law() {
        Law::ChiSquare { .. } => "chi-square",
        Law::ScaledBeta { .. } => "Beta",
        Law::ScaledF { .. } => "F",
        _ => "parametric",
    }
}

impl CalibrationCheck {
    /// Checks the model's parametric (new-row) cutoff on the calibration
    /// rows it carries, at [`DEFAULT_LEVELS`].
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if the model carries no calibration
    /// rows; the errors of [`DistanceModel::reference`].
    pub fn of_model(model: &DistanceModel) -> Result<Self> {
        let calibration = model.calibration().ok_or_else(|| {
            Error::invalid(
                "calibration check",
                "the model carries no held-out rows; fit it with \
                 mvdist::held_out::fit_holding_out, or pass held-out rows to \
                 CalibrationCheck::from_rows",
            )
        })?;
        Self::from_squared_distances(
            model.reference(RowOrigin::New)?,
            calibration.squared_distances(),
            &DEFAULT_LEVELS,
        )
    }

    /// Checks the model's parametric (new-row) cutoff on reference rows
    /// that were **not** used to fit it, at [`DEFAULT_LEVELS`].
    ///
    /// # Errors
    /// As [`DistanceModel::squared_distances`] and
    /// [`DistanceModel::reference`]; [`Error::Empty`] for no rows.
    pub fn from_rows<'a>(model: &DistanceModel, rows: impl Into<Rows<'a>>) -> Result<Self> {
        let d2 = model.squared_distances(rows)?;
        Self::from_squared_distances(model.reference(RowOrigin::New)?, &d2, &DEFAULT_LEVELS)
    }

    /// The check of `reference` on the squared distances of held-out rows,
    /// at the given levels.
    ///
    /// # Errors
    /// [`Error::Empty`] for no squared distances or no levels;
    /// [`Error::InvalidParameter`] for a level outside (0, 1);
    /// [`Error::NonFinite`] for a non-finite squared distance.
    pub fn from_squared_distances(
        reference: Reference,
        squared_distances: &[f64],
        levels: &[f64],
    ) -> Result<Self> {
        if squared_distances.is_empty() {
            return Err(Error::Empty {
                what: "held-out rows",
            });
        }
        if levels.is_empty() {
            return Err(Error::Empty { what: "levels" });
        }
        crate::data::check_row_finite(squared_distances, 0).map_err(|e| match e {
            Error::NonFinite { column, value, .. } => Error::NonFinite {
                row: column,
                column: 0,
                value,
            },
            other => other,
        })?;
        let m = squared_distances.len();
        let mut observed = squared_distances.to_vec();
        observed.sort_by(f64::total_cmp);
        let law = law_name(&reference);
        let mut out = Vec::with_capacity(levels.len());
        for &alpha in levels {
            check_probability(alpha)?;
            let cutoff = reference.cutoff(alpha)?;
            let exceedances = m - observed.partition_point(|&d| d <= cutoff);
            let rate = exceedances as f64 / m as f64;
            let interval = clopper_pearson(exceedances, m)?;
            let expected = alpha * m as f64;
            let at = format!(
                "the fitted {law} cutoff at {} flags {} of {m} held-out reference rows \
                 ({exceedances}; 95% interval {}–{})",
                percent(alpha),
                percent(rate),
                percent(interval[0]),
                percent(interval[1]),
            );
            // Too many flags show even with few rows expected; "consistent"
            // and "too few" need enough rows to mean something.
            let (verdict, reading) = if alpha < interval[0] {
                (
                    CalibrationVerdict::TooManyFlags,
                    format!(
                        "{at}: do not trust it here; use the empirical reference \
                         (held-out p-values)"
                    ),
                )
            } else if expected < FEWEST_EXPECTED {
                (
                    CalibrationVerdict::TooFewRows,
                    format!(
                        "{at}: with {expected:.1} expected, too few rows to judge this level \
                         (hold out at least {} rows)",
                        (FEWEST_EXPECTED / alpha).ceil()
                    ),
                )
            } else if alpha > interval[1] {
                (
                    CalibrationVerdict::TooFewFlags,
                    format!(
                        "{at}: it is conservative here (fewer flags than its level); the \
                         empirical reference has more power"
                    ),
                )
            } else {
                (
                    CalibrationVerdict::Consistent,
                    format!("{at}: consistent with its level"),
                )
            };
            out.push(LevelCheck {
                alpha,
                cutoff,
                exceedances,
                rate,
                interval,
                verdict,
                reading,
            });
        }
        let mf = m as f64;
        let stride = m.div_ceil(MOST_POINTS).max(1);
        let ranks: Vec<usize> = (0..m)
            .filter(|&i| i % stride == 0 || i + TOP_POINTS >= m)
            .collect();
        let theoretical = ranks
            .iter()
            .map(|&i| reference.cutoff((mf - i as f64 - 0.5) / mf))
            .collect::<Result<Vec<f64>>>()?;
        let observed = ranks.iter().map(|&i| observed[i]).collect();
        Ok(CalibrationCheck {
            held_out_rows: m,
            reference,
            levels: out,
            theoretical,
            observed,
            caution: CAUTION.into(),
        })
    }

    /// The levels checked.
    pub fn levels(&self) -> &[LevelCheck] {
        &self.levels
    }

    /// Whether any judged level flags more rows than it should.
    pub fn any_too_many(&self) -> bool {
        self.levels
            .iter()
            .any(|l| l.verdict == CalibrationVerdict::TooManyFlags)
    }

    /// The Q–Q chart of the held-out squared distances against the
    /// reference law, as a standalone SVG document.
    pub fn to_svg(&self, title: &str) -> String {
        super::svg::qq_svg(self, title)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clopper_pearson_edges() {
        // k = 0: the upper limit is 1 − 0.025^(1/m) in closed form (the
        // "rule of three" family; common practice).
        let [lo, hi] = clopper_pearson(0, 200).unwrap();
        assert_eq!(lo, 0.0);
        assert!((hi - (1.0 - 0.025f64.powf(1.0 / 200.0))).abs() < 1e-12);
        // k = m: the lower limit is 0.025^(1/m).
        let [lo, hi] = clopper_pearson(50, 50).unwrap();
        assert_eq!(hi, 1.0);
        assert!((lo - 0.025f64.powf(1.0 / 50.0)).abs() < 1e-12);
    }

    #[test]
    fn clopper_pearson_matches_scipy() {
        // scipy 1.17.1: scipy.stats.beta.ppf(0.025, k, m - k + 1) and
        // beta.ppf(0.975, k + 1, m - k) (Boost's inverse incomplete beta);
        // binomtest(k, m).proportion_ci(0.95, "exact") agrees to about 3e-9
        // relative (a root search with a looser tolerance).
        for (k, m, lo, hi) in [
            (7, 200, 0.014185525898419246, 0.0707809983509772),
            (34, 1000, 0.02365864810759675, 0.04718943861570743),
            (1, 150, 0.00016877114310994754, 0.03658316774058025),
        ] {
            let [a, b] = clopper_pearson(k, m).unwrap();
            assert!((a - lo).abs() < 1e-12 * lo, "{k}/{m}: {a} vs {lo}");
            assert!((b - hi).abs() < 1e-12 * hi, "{k}/{m}: {b} vs {hi}");
        }
    }
}
