//! All normality checks at once, as one serializable report with readings
//! in plain language.

use super::doornik_hansen::DoornikHansen;
use super::henze_zirkler::HenzeZirkler;
use super::mardia::Mardia;
use super::marginal::VariableShape;
use super::royston::RoystonH;
use super::shapiro_wilk;
use crate::calibration::{check_probability, Reference};
use crate::error::{Error, Result};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The caution every report carries.
pub const CAUTION: &str = "A non-significant result does not show that the rows are \
multivariate normal, only that these tests found no departure; small samples miss sizeable \
departures. With many rows, departures too small to matter are significant: judge their size \
from the per-variable skewness and kurtosis and the chi-square Q-Q plot. The p-values assume \
independent rows. Thresholds elsewhere in mvdist assume multivariate normality; a result here \
is evidence, not a verdict, and decisions belong to your local procedures and qualified people.";

/// Row count from which a significant result gets a note that small
/// departures are significant with many rows.
const LARGE_SAMPLE: usize = 1000;
/// Row count below which a non-significant result gets a note on power.
const SMALL_SAMPLE: usize = 50;

/// Which test a report entry is about.
///
/// # Example
/// ```
/// use mvdist::normality::NormalityTest;
/// assert_eq!(NormalityTest::ALL.len(), 6);
/// assert_eq!(NormalityTest::RoystonH.title(), "Royston H");
/// assert_eq!(serde_json::to_string(&NormalityTest::RoystonH)?, "\"royston_h\"");
/// # Ok::<(), serde_json::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum NormalityTest {
    /// Mardia's skewness, `n·b₁,ₚ/6` against χ².
    MardiaSkewness,
    /// Mardia's skewness with the small-sample factor `k`.
    MardiaSkewnessSmallSample,
    /// Mardia's kurtosis, standardized with its exact null moments.
    MardiaKurtosis,
    /// Henze–Zirkler, lognormal p-value.
    HenzeZirkler,
    /// Royston's H.
    RoystonH,
    /// Doornik–Hansen omnibus.
    DoornikHansen,
}

impl NormalityTest {
    /// Every test, in report order.
    pub const ALL: [NormalityTest; 6] = [
        NormalityTest::MardiaSkewness,
        NormalityTest::MardiaSkewnessSmallSample,
        NormalityTest::MardiaKurtosis,
        NormalityTest::HenzeZirkler,
        NormalityTest::RoystonH,
        NormalityTest::DoornikHansen,
    ];

    /// A short human-readable name.
    pub fn title(self) -> &'static str {
        match self {
            NormalityTest::MardiaSkewness => "Mardia skewness",
            NormalityTest::MardiaSkewnessSmallSample => "Mardia skewness (small-sample)",
            NormalityTest::MardiaKurtosis => "Mardia kurtosis",
            NormalityTest::HenzeZirkler => "Henze-Zirkler",
            NormalityTest::RoystonH => "Royston H",
            NormalityTest::DoornikHansen => "Doornik-Hansen",
        }
    }

    /// What a departure detected by this test looks like.
    fn departure(self) -> &'static str {
        match self {
            NormalityTest::MardiaSkewness | NormalityTest::MardiaSkewnessSmallSample => {
                "the rows are more asymmetric than normal samples of this size"
            }
            NormalityTest::MardiaKurtosis => "",
            NormalityTest::HenzeZirkler => {
                "the rows' joint distribution differs from a normal one with the same mean and covariance"
            }
            NormalityTest::RoystonH => {
                "at least one variable's distribution departs from a normal one (Shapiro-Wilk)"
            }
            NormalityTest::DoornikHansen => {
                "the decorrelated variables' skewness or kurtosis departs from normal values"
            }
        }
    }
}

/// One computed test.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[non_exhaustive]
pub struct TestSummary {
    /// Which test.
    pub test: NormalityTest,
    /// The test statistic (what is referred to `reference`).
    pub statistic: f64,
    /// The law the statistic is referred to, with its degrees of freedom
    /// or parameters ([`Reference::law`]).
    pub reference: Reference,
    /// The p-value.
    pub p_value: f64,
    /// Whether `p_value ≤ alpha`.
    pub significant: bool,
    /// What the result means, in plain language.
    pub reading: String,
    /// Further named quantities of the test (see the README for the keys).
    pub details: BTreeMap<String, f64>,
}

/// A test that was not computed, and why.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[non_exhaustive]
pub struct SkippedTest {
    /// Which test.
    pub test: NormalityTest,
    /// Why it was not computed.
    pub not_computed: String,
}

/// A report entry: a computed test, or the reason it was not computed.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum TestOutcome {
    /// The test was computed.
    Computed(TestSummary),
    /// The test does not apply to this sample (too few or too many rows).
    NotComputed(SkippedTest),
}

impl TestOutcome {
    /// Which test.
    pub fn test(&self) -> NormalityTest {
        match self {
            TestOutcome::Computed(s) => s.test,
            TestOutcome::NotComputed(s) => s.test,
        }
    }

    /// The summary, if computed.
    pub fn summary(&self) -> Option<&TestSummary> {
        match self {
            TestOutcome::Computed(s) => Some(s),
            TestOutcome::NotComputed(_) => None,
        }
    }
}

/// One variable's shape in the report.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[non_exhaustive]
pub struct VariableSummary {
    /// The variable's name, when the caller gave names.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Sample skewness `√b₁` (0 when symmetric).
    pub skewness: f64,
    /// Sample kurtosis `b₂` (3 for a normal population).
    pub kurtosis: f64,
    /// Shapiro–Wilk `W` (`None` outside 3 ≤ n ≤ 5000).
    pub shapiro_wilk_w: Option<f64>,
    /// Shapiro–Wilk p-value (`None` outside 3 ≤ n ≤ 5000).
    pub shapiro_wilk_p_value: Option<f64>,
}

/// Options of [`NormalityReport::compute`]. Setters cannot fail; the
/// values are checked once, by `compute`.
///
/// # Example
/// ```
/// use mvdist::normality::NormalityOptions;
/// let options = NormalityOptions::default().with_alpha(0.01).with_pairwise_row_limit(20_000);
/// assert_eq!(options.alpha(), 0.01);
/// ```
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct NormalityOptions {
    alpha: f64,
    pairwise_row_limit: usize,
    hold_out: Option<f64>,
}

impl Default for NormalityOptions {
    /// `alpha = 0.05`; Henze–Zirkler up to 50 000 rows; no calibration
    /// check.
    fn default() -> Self {
        NormalityOptions {
            alpha: 0.05,
            pairwise_row_limit: 50_000,
            hold_out: None,
        }
    }
}

impl NormalityOptions {
    /// The significance level for the `significant` flags and readings
    /// (default 0.05; `compute` rejects values outside (0, 1)).
    pub fn with_alpha(mut self, alpha: f64) -> Self {
        self.alpha = alpha;
        self
    }

    /// The largest number of rows for which the Henze–Zirkler test (whose
    /// cost grows with `n²`: about 1.6 s for 50 000 rows of 10 variables on
    /// two cores) is computed; above it the test is reported as not
    /// computed (default 50 000; `compute` rejects 0).
    pub fn with_pairwise_row_limit(mut self, limit: usize) -> Self {
        self.pairwise_row_limit = limit;
        self
    }

    /// Adds a check of the F cutoffs ([`crate::held_out::CalibrationCheck`])
    /// to the report: a classical model is fitted on the rows without this
    /// fraction (a seeded split, seed 0), and the held-out rows' exceedance
    /// rates are compared with 5%, 1% and 0.1% (default: no check; `compute`
    /// rejects a fraction outside (0, 1)).
    pub fn with_calibration_check(mut self, hold_out_fraction: f64) -> Self {
        self.hold_out = Some(hold_out_fraction);
        self
    }

    /// The held-out fraction of the calibration check, if one is asked for.
    pub fn calibration_check(&self) -> Option<f64> {
        self.hold_out
    }

    fn validate(&self) -> Result<()> {
        check_probability(self.alpha)?;
        if let Some(f) = self.hold_out {
            if !(f > 0.0 && f < 1.0) {
                return Err(Error::invalid(
                    "held-out fraction",
                    format!("{f} is not in (0, 1); a fifth to a half of the rows is usual"),
                ));
            }
        }
        if self.pairwise_row_limit == 0 {
            return Err(Error::invalid(
                "pairwise row limit",
                "0 rows; it must be at least 1 (the default is 50 000)",
            ));
        }
        Ok(())
    }

    /// The significance level.
    pub fn alpha(&self) -> f64 {
        self.alpha
    }

    /// The Henze–Zirkler row limit.
    pub fn pairwise_row_limit(&self) -> usize {
        self.pairwise_row_limit
    }
}

/// Every normality test of this module on one sample, with per-variable
/// shapes, readings and a caution; serializable (see the README for the
/// JSON keys).
///
/// # Example
/// ```
/// use mvdist::normality::{NormalityOptions, NormalityReport, NormalityTest};
/// use ndarray::array;
///
/// let rows = array![
///     [5.1, 3.5, 1.4], [4.9, 3.0, 1.4], [4.7, 3.2, 1.3], [4.6, 3.1, 1.5],
///     [5.0, 3.6, 1.4], [5.4, 3.9, 1.7], [4.6, 3.4, 1.4], [5.0, 3.4, 1.5],
///     [4.4, 2.9, 1.4], [4.9, 3.1, 1.5], [5.4, 3.7, 1.5], [4.8, 3.4, 1.6],
/// ];
/// let report = NormalityReport::compute(rows.view(), &NormalityOptions::default())?
///     .with_variable_names(vec!["sepal_length".into(), "sepal_width".into(), "petal_length".into()])?;
/// let hz = report.summary(NormalityTest::HenzeZirkler).ok_or("computed for 12 rows")?;
/// println!("{}: p = {:.3} — {}", hz.test.title(), hz.p_value, hz.reading);
/// let json = serde_json::to_string(&report)?;
/// assert!(json.contains("\"test\":\"henze_zirkler\""));
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[non_exhaustive]
pub struct NormalityReport {
    /// Number of rows `n`.
    pub rows: usize,
    /// Number of variables `p`.
    pub columns: usize,
    /// The significance level used for `significant` and the readings.
    pub alpha: f64,
    /// One entry per test, in [`NormalityTest::ALL`] order.
    pub tests: Vec<TestOutcome>,
    /// One entry per variable, in column order.
    pub per_variable: Vec<VariableSummary>,
    /// Why the per-variable Shapiro–Wilk results are missing, if they are.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shapiro_wilk_not_computed: Option<String>,
    /// The check of the F cutoffs on held-out rows, when asked for
    /// ([`NormalityOptions::with_calibration_check`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub calibration: Option<crate::held_out::CalibrationCheck>,
    /// Why the calibration check asked for is missing, if it is.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub calibration_not_computed: Option<String>,
    /// How to read (and not read) the results.
    pub caution: String,
}

impl NormalityReport {
    /// Runs every test that applies to the sample.
    ///
    /// Tests that do not apply are reported as [`TestOutcome::NotComputed`]
    /// with the reason: Mardia's tests below `max(p + 2, 4)` rows,
    /// Doornik–Hansen below 8 rows, Royston's H (and the per-variable
    /// Shapiro–Wilk results) outside 3 to 5000 rows, Henze–Zirkler above
    /// [`NormalityOptions::pairwise_row_limit`] rows.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] for options out of range (`alpha`
    /// outside (0, 1), a row limit of 0). Problems that stop every test:
    /// [`Error::Empty`];
    /// [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] unless `n > p`; [`Error::ZeroVariance`] or
    /// [`Error::Collinear`] naming the column; [`Error::Overflow`].
    pub fn compute(rows: ArrayView2<'_, f64>, options: &NormalityOptions) -> Result<Self> {
        options.validate()?;
        let (n, p) = rows.dim();
        // Validates the sample once; the shared errors stop the report.
        super::blocks::fit_ml(rows)?;
        let alpha = options.alpha;
        let shapes = VariableShape::of_columns(rows)?;
        let mut tests = Vec::with_capacity(NormalityTest::ALL.len());

        match Mardia::compute(rows) {
            Ok(m) => {
                let df = m.skewness_degrees_of_freedom();
                let b1 = details(&[("b1p", m.skewness())]);
                tests.push(summary(
                    NormalityTest::MardiaSkewness,
                    m.skewness_statistic(),
                    Reference::chi_square_statistic(df),
                    m.skewness_p_value(),
                    b1.clone(),
                    n,
                    alpha,
                ));
                let mut b1k = b1;
                b1k.insert("small_sample_factor".into(), m.small_sample_factor());
                tests.push(summary(
                    NormalityTest::MardiaSkewnessSmallSample,
                    m.corrected_skewness_statistic(),
                    Reference::chi_square_statistic(df),
                    m.corrected_skewness_p_value(),
                    b1k,
                    n,
                    alpha,
                ));
                tests.push(summary(
                    NormalityTest::MardiaKurtosis,
                    m.kurtosis_statistic(),
                    Ok(Reference::standard_normal_two_sided()),
                    m.kurtosis_p_value(),
                    details(&[
                        ("b2p", m.kurtosis()),
                        ("null_mean", m.kurtosis_null_mean()),
                        ("null_variance", m.kurtosis_null_variance()),
                    ]),
                    n,
                    alpha,
                ));
            }
            Err(e) => {
                for t in [
                    NormalityTest::MardiaSkewness,
                    NormalityTest::MardiaSkewnessSmallSample,
                    NormalityTest::MardiaKurtosis,
                ] {
                    tests.push(skipped(t, &e));
                }
            }
        }

        if n > options.pairwise_row_limit {
            tests.push(TestOutcome::NotComputed(SkippedTest {
                test: NormalityTest::HenzeZirkler,
                not_computed: format!(
                    "{n} rows exceed the pairwise row limit of {}: the cost grows with the square \
                     of the number of rows; raise the limit or test a random subsample",
                    options.pairwise_row_limit
                ),
            }));
        } else {
            tests.push(match HenzeZirkler::compute(rows) {
                Ok(h) => summary(
                    NormalityTest::HenzeZirkler,
                    h.statistic(),
                    h.reference(),
                    h.p_value(),
                    details(&[
                        ("smoothing", h.smoothing()),
                        ("null_mean", h.null_mean()),
                        ("null_variance", h.null_variance()),
                    ]),
                    n,
                    alpha,
                ),
                Err(e) => skipped(NormalityTest::HenzeZirkler, &e),
            });
        }

        tests.push(match RoystonH::compute(rows) {
            Ok(r) => summary(
                NormalityTest::RoystonH,
                r.statistic(),
                Reference::chi_square_statistic(r.equivalent_degrees_of_freedom()),
                r.p_value(),
                details(&[(
                    "mean_transformed_correlation",
                    r.mean_transformed_correlation(),
                )]),
                n,
                alpha,
            ),
            Err(e) => skipped(NormalityTest::RoystonH, &e),
        });

        tests.push(match DoornikHansen::compute(rows) {
            Ok(d) => summary(
                NormalityTest::DoornikHansen,
                d.statistic(),
                Reference::chi_square_statistic(d.degrees_of_freedom()),
                d.p_value(),
                BTreeMap::new(),
                n,
                alpha,
            ),
            Err(e) => skipped(NormalityTest::DoornikHansen, &e),
        });

        let shapiro_wilk_not_computed = if shapes.iter().any(|s| s.shapiro_wilk.is_none()) {
            Some(format!(
                "{n} rows: the Shapiro-Wilk approximation covers {} to {} rows",
                shapiro_wilk::MIN_ROWS,
                shapiro_wilk::MAX_ROWS
            ))
        } else {
            None
        };
        let per_variable = shapes
            .iter()
            .map(|s| VariableSummary {
                name: None,
                skewness: s.skewness,
                kurtosis: s.kurtosis,
                shapiro_wilk_w: s.shapiro_wilk.map(|t| t.statistic()),
                shapiro_wilk_p_value: s.shapiro_wilk.map(|t| t.p_value()),
            })
            .collect();
        // A calibration check that cannot be made (too few rows left after
        // the split, say) is reported with its reason; it does not stop the
        // tests. An invalid fraction is an error, like other options.
        let (calibration, calibration_not_computed) = match options.hold_out {
            None => (None, None),
            Some(fraction) => {
                let split = crate::held_out::HoldOutOptions::default().with_fraction(fraction);
                let check = crate::held_out::fit_holding_out(rows, &split, |r| {
                    crate::DistanceModel::fit(r)
                })
                .and_then(|model| crate::held_out::CalibrationCheck::of_model(&model));
                match check {
                    Ok(c) => (Some(c), None),
                    Err(e) => (
                        None,
                        Some(format!("the calibration check was not made: {e}")),
                    ),
                }
            }
        };
        Ok(NormalityReport {
            rows: n,
            columns: p,
            alpha,
            tests,
            per_variable,
            shapiro_wilk_not_computed,
            calibration,
            calibration_not_computed,
            caution: CAUTION.to_string(),
        })
    }

    /// Names the variables (in column order).
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless there is one name per column.
    pub fn with_variable_names(mut self, names: Vec<String>) -> Result<Self> {
        if names.len() != self.columns {
            return Err(Error::ShapeMismatch {
                what: "number of variable names",
                expected: self.columns,
                found: names.len(),
            });
        }
        for (v, name) in self.per_variable.iter_mut().zip(names) {
            v.name = Some(name);
        }
        Ok(self)
    }

    /// The summary of one test, if it was computed.
    pub fn summary(&self, test: NormalityTest) -> Option<&TestSummary> {
        self.tests
            .iter()
            .find(|t| t.test() == test)
            .and_then(TestOutcome::summary)
    }

    /// Whether any computed test is significant at `alpha`.
    pub fn any_significant(&self) -> bool {
        self.tests
            .iter()
            .filter_map(TestOutcome::summary)
            .any(|s| s.significant)
    }
}

fn details(pairs: &[(&str, f64)]) -> BTreeMap<String, f64> {
    pairs.iter().map(|(k, v)| (k.to_string(), *v)).collect()
}

fn skipped(test: NormalityTest, e: &Error) -> TestOutcome {
    TestOutcome::NotComputed(SkippedTest {
        test,
        not_computed: e.to_string(),
    })
}

/// A p-value for people: four decimals, or two significant digits when small.
///
/// # Example
/// ```
/// use mvdist::normality::format_p_value;
/// assert_eq!(format_p_value(0.04321), "0.0432");
/// assert_eq!(format_p_value(4.76e-7), "4.8e-7");
/// assert_eq!(format_p_value(0.0), "< 1e-300");
/// ```
pub fn format_p_value(p: f64) -> String {
    if p >= 1e-4 {
        format!("{p:.4}")
    } else if p > 0.0 {
        format!("{p:.1e}")
    } else {
        "< 1e-300".to_string()
    }
}

#[allow(clippy::too_many_arguments)]
fn summary(
    test: NormalityTest,
    statistic: f64,
    reference: Result<Reference>,
    p_value: f64,
    details: BTreeMap<String, f64>,
    n: usize,
    alpha: f64,
) -> TestOutcome {
    let reference = match reference {
        Ok(r) => r,
        Err(e) => return skipped(test, &e),
    };
    let significant = p_value <= alpha;
    let p = format_p_value(p_value);
    let reading = if significant {
        let what = if test == NormalityTest::MardiaKurtosis {
            if statistic > 0.0 {
                "the rows have heavier tails (more far-out rows) than normal samples of this size"
            } else {
                "the rows have lighter tails than normal samples of this size"
            }
        } else {
            test.departure()
        };
        let mut r = format!("p = {p} ≤ {alpha}: evidence against multivariate normality; {what}.");
        if n >= LARGE_SAMPLE {
            r.push_str(&format!(
                " With {n} rows even a small departure is significant; judge its size from the \
                 per-variable measures and the Q-Q plot."
            ));
        }
        r
    } else {
        let mut r = format!(
            "p = {p} > {alpha}: no evidence against multivariate normality from this test. \
             This does not show that the rows are normal."
        );
        if n < SMALL_SAMPLE {
            r.push_str(&format!(
                " With only {n} rows the test can miss sizeable departures."
            ));
        }
        r
    };
    TestOutcome::Computed(TestSummary {
        test,
        statistic,
        reference,
        p_value,
        significant,
        reading,
        details,
    })
}
