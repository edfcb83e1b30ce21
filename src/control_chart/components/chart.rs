//! The component-based chart: Phase I with removal of signals, Phase II
//! monitoring, both statistics with their limits and the contributions of
//! each signal.

use super::model::{ComponentContributions, ComponentCount, ComponentModel, VariableScaling};
use super::residual::{ResidualLaw, ResidualLimitMethod};
use crate::control_chart::{ControlLimit, FalseAlarmRate, PointStatus, SignalRemoval};
use crate::data::check_columns;
use crate::error::{Error, Result};
use ndarray::{ArrayView2, Axis};
use serde::{Deserialize, Serialize};

/// Options of a component-based chart. Setters cannot fail and state their
/// default; the chart checks the values once, when it is built.
///
/// # Example
/// ```
/// use mvdist::control_chart::{ComponentCount, ComponentOptions, ResidualLimitMethod};
///
/// let options = ComponentOptions::default()
///     .with_components(ComponentCount::Fixed { components: 3 })
///     .with_residual_limit(ResidualLimitMethod::ScaledChiSquare);
/// assert_eq!(options.components(), ComponentCount::Fixed { components: 3 });
/// ```
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[non_exhaustive]
pub struct ComponentOptions {
    components: ComponentCount,
    scaling: VariableScaling,
    false_alarm: FalseAlarmRate,
    residual_limit: ResidualLimitMethod,
    removal: SignalRemoval,
}

impl ComponentOptions {
    /// How many components to keep (default:
    /// [`ComponentCount::default`], 90% of the variance).
    pub fn with_components(mut self, count: ComponentCount) -> Self {
        self.components = count;
        self
    }

    /// How variables are scaled (default: [`VariableScaling::UnitVariance`]).
    pub fn with_scaling(mut self, scaling: VariableScaling) -> Self {
        self.scaling = scaling;
        self
    }

    /// The false-alarm rate per point of each statistic (default:
    /// [`FalseAlarmRate::default`]). A point signals when either statistic
    /// exceeds its limit, so the chart's combined in-control rate is
    /// between `α` and `2α`.
    pub fn with_false_alarm(mut self, rate: FalseAlarmRate) -> Self {
        self.false_alarm = rate;
        self
    }

    /// How the limit of `Q` is computed (default:
    /// [`ResidualLimitMethod::JacksonMudholkar`]).
    pub fn with_residual_limit(mut self, method: ResidualLimitMethod) -> Self {
        self.residual_limit = method;
        self
    }

    /// What Phase I does with signals (default: [`SignalRemoval::Keep`]).
    pub fn with_removal(mut self, removal: SignalRemoval) -> Self {
        self.removal = removal;
        self
    }

    /// How many components to keep.
    pub fn components(&self) -> ComponentCount {
        self.components
    }

    /// How variables are scaled.
    pub fn scaling(&self) -> VariableScaling {
        self.scaling
    }

    /// The false-alarm rate per point of each statistic.
    pub fn false_alarm(&self) -> FalseAlarmRate {
        self.false_alarm
    }

    /// How the limit of `Q` is computed.
    pub fn residual_limit(&self) -> ResidualLimitMethod {
        self.residual_limit
    }

    /// What Phase I does with signals.
    pub fn removal(&self) -> SignalRemoval {
        self.removal
    }
}

/// One point on a component-based chart.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ComponentPoint {
    /// 0-based row of its input.
    pub index: usize,
    /// `T²` on the retained components.
    pub t_squared: f64,
    /// The limit of `T²` that applies to the point (Phase I or II).
    pub t_squared_limit: f64,
    /// Probability that an in-control point's `T²` exceeds this one.
    pub t_squared_p_value: f64,
    /// The squared prediction error `Q`.
    pub residual: f64,
    /// The limit of `Q` (`None` when every component is kept).
    pub residual_limit: Option<f64>,
    /// The approximate probability that an in-control `Q` exceeds this one.
    pub residual_p_value: Option<f64>,
    /// `T²` above its limit.
    pub t_squared_signal: bool,
    /// `Q` above its limit.
    pub residual_signal: bool,
    /// Phase I (kept or removed) or Phase II.
    pub status: PointStatus,
    /// For signals: the per-variable terms of both statistics.
    pub diagnosis: Option<ComponentContributions>,
}

impl ComponentPoint {
    /// Either statistic above its limit.
    pub fn signal(&self) -> bool {
        self.t_squared_signal || self.residual_signal
    }
}

/// One estimate-and-check round of Phase I.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ComponentRound {
    /// 1-based round number.
    pub round: usize,
    /// Rows in the estimate this round.
    pub in_estimate: usize,
    /// Components kept this round.
    pub components: usize,
    /// The Phase I limit of `T²` this round.
    pub t_squared_limit: f64,
    /// The limit of `Q` this round.
    pub residual_limit: Option<f64>,
    /// Rows (0-based) above either limit this round.
    pub signals: Vec<usize>,
}

/// A component-based control chart: `T²` on `k` principal components and
/// the squared prediction error `Q`, each with its limit (Jackson 1991;
/// Nomikos and MacGregor 1995; Qin 2003).
///
/// **Phase I** ([`phase_one`](Self::phase_one)) fits the
/// [`ComponentModel`] to historical rows, charts them and, if asked,
/// removes signals and refits until none remains. **Phase II**
/// ([`monitor`](Self::monitor)) charts new rows. Limits:
///
/// * `T²` — the Beta limit of Tracy, Young and Mason (1992) with `k`
///   dimensions for rows in the estimate, the F limit for new or removed
///   rows ([`ControlLimit`] with `p = k`). With `k < p` the scores come from
///   the same rows' eigenvectors, so these laws are the usual
///   approximation, not exact (common practice);
/// * `Q` — [`ResidualLaw`] from the left-out eigenvalues, the same for
///   both phases.
///
/// Every signal carries the per-variable contributions to both statistics.
///
/// **Cautions.** The limits assume independent, multivariate normal
/// in-control rows and a clean Phase I; autocorrelated processes (common
/// with many sensors sampled fast) signal far more often than the nominal
/// rate, and need a model of that dependence first. A signal is a prompt to
/// investigate, not a verdict on the process or the product: what follows
/// belongs to local procedures and qualified people.
///
/// # Example
/// ```
/// use mvdist::control_chart::{ComponentChart, ComponentCount, ComponentOptions};
/// use ndarray::Array2;
///
/// // Six sensors driven by two underlying factors, plus a little noise.
/// let history = Array2::from_shape_fn((60, 6), |(i, j)| {
///     let (a, b) = (((i * 7) % 11) as f64, ((i * 5) % 13) as f64);
///     let noise = (((i * 31 + j * 17) % 23) as f64 - 11.0) * 0.01;
///     if j < 3 { a * (1.0 + j as f64) + noise } else { b * (j as f64 - 2.0) + noise }
/// });
/// let options = ComponentOptions::default().with_components(ComponentCount::Fixed { components: 2 });
/// let chart = ComponentChart::phase_one(history.view(), &options)?;
/// // A new row whose first sensor no longer follows its factor: Q signals.
/// let mut new = history.slice(ndarray::s![0..1, ..]).to_owned();
/// new[[0, 0]] += 3.0;
/// let point = &chart.monitor(new.view())?[0];
/// assert!(point.residual_signal);
/// let why = point.diagnosis.as_ref().ok_or("a signal has a diagnosis")?;
/// assert_eq!(why.largest_residual(1), vec![0]);
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ComponentChart {
    model: ComponentModel,
    options: ComponentOptions,
    residual_law: Option<ResidualLaw>,
    points: Vec<ComponentPoint>,
    rounds: Vec<ComponentRound>,
    reached_round_cap: bool,
}

/// The limits that apply to points of one phase.
struct Limits {
    t_squared: ControlLimit,
    t_squared_upper: f64,
    residual: Option<(ResidualLaw, f64)>,
}

impl ComponentChart {
    /// Phase I on historical rows (in time order).
    ///
    /// # Errors
    /// Those of [`ComponentModel::fit`]; [`Error::TooFewRows`] unless the
    /// estimate keeps at least `k + 2` rows (also after removal); those of
    /// [`ResidualLaw::new`] for the chosen method.
    pub fn phase_one(rows: ArrayView2<'_, f64>, options: &ComponentOptions) -> Result<Self> {
        let m = rows.nrows();
        let mut status = vec![PointStatus::InEstimate; m];
        let max_rounds = match options.removal {
            SignalRemoval::Keep => 0,
            SignalRemoval::RefitUntilClean { max_rounds } => max_rounds,
        };
        let mut rounds = Vec::new();
        let mut reached_round_cap = false;
        let model = loop {
            let kept: Vec<usize> = (0..m)
                .filter(|&i| status[i] == PointStatus::InEstimate)
                .collect();
            let model = ComponentModel::fit(
                rows.select(Axis(0), &kept).view(),
                options.components,
                options.scaling,
            )?;
            let limits = Self::limits_for(&model, options, true)?;
            let kept_rows = rows.select(Axis(0), &kept);
            let (t2, q) = statistics(&model, kept_rows.view())?;
            // (row of the input, position among the kept rows)
            let signalling: Vec<(usize, usize)> = kept
                .iter()
                .enumerate()
                .filter(|&(r, _)| limits.exceeds(t2[r], q[r]))
                .map(|(r, &i)| (i, r))
                .collect();
            let signals: Vec<usize> = signalling.iter().map(|&(i, _)| i).collect();
            rounds.push(ComponentRound {
                round: rounds.len() + 1,
                in_estimate: kept.len(),
                components: model.components(),
                t_squared_limit: limits.t_squared_upper,
                residual_limit: limits.residual.map(|(_, u)| u),
                signals: signals.clone(),
            });
            if signals.is_empty() || options.removal == SignalRemoval::Keep {
                break model;
            }
            if rounds.len() > max_rounds {
                reached_round_cap = true;
                break model;
            }
            let round = rounds.len();
            for &(i, r) in &signalling {
                status[i] = PointStatus::Removed {
                    round,
                    t_squared_at_removal: t2[r],
                };
            }
        };
        let residual_law = model.residual_law(options.residual_limit)?;
        let mut chart = ComponentChart {
            model,
            options: options.clone(),
            residual_law,
            points: Vec::new(),
            rounds,
            reached_round_cap,
        };
        chart.points = chart.chart_points(rows, &status)?;
        Ok(chart)
    }

    fn limits_for(
        model: &ComponentModel,
        options: &ComponentOptions,
        in_sample: bool,
    ) -> Result<Limits> {
        let (m, k) = (model.observations(), model.components());
        let t_squared = if in_sample {
            ControlLimit::individuals_phase_one(m, k)?
        } else {
            ControlLimit::individuals_phase_two(m, k)?
        };
        let t_squared_upper = t_squared.upper(options.false_alarm)?;
        let residual = match model.residual_law(options.residual_limit)? {
            Some(law) => Some((law, law.upper(options.false_alarm.alpha())?)),
            None => None,
        };
        Ok(Limits {
            t_squared,
            t_squared_upper,
            residual,
        })
    }

    fn chart_points(
        &self,
        rows: ArrayView2<'_, f64>,
        status: &[PointStatus],
    ) -> Result<Vec<ComponentPoint>> {
        let (t2, q) = statistics(&self.model, rows)?;
        let phase_one = Self::limits_for(&self.model, &self.options, true)?;
        let phase_two = Self::limits_for(&self.model, &self.options, false)?;
        let mut out = Vec::with_capacity(rows.nrows());
        for (i, &s) in status.iter().enumerate() {
            let limits = if s == PointStatus::InEstimate {
                &phase_one
            } else {
                &phase_two
            };
            let t_squared_signal = t2[i] > limits.t_squared_upper;
            let residual_signal = limits.residual.is_some_and(|(_, u)| q[i] > u);
            let diagnosis = if t_squared_signal || residual_signal {
                let row: Vec<f64> = rows.row(i).to_vec();
                Some(self.model.contributions(&row)?)
            } else {
                None
            };
            out.push(ComponentPoint {
                index: i,
                t_squared: t2[i],
                t_squared_limit: limits.t_squared_upper,
                t_squared_p_value: limits.t_squared.p_value(t2[i]),
                residual: q[i],
                residual_limit: limits.residual.map(|(_, u)| u),
                residual_p_value: limits.residual.map(|(law, _)| law.p_value(q[i])),
                t_squared_signal,
                residual_signal,
                status: s,
                diagnosis,
            });
        }
        Ok(out)
    }

    /// Phase II: charts new rows against the Phase I model.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a different number of columns;
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column.
    pub fn monitor(&self, rows: ArrayView2<'_, f64>) -> Result<Vec<ComponentPoint>> {
        check_columns(rows, self.model.dim())?;
        if rows.nrows() == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        self.chart_points(rows, &vec![PointStatus::Monitored; rows.nrows()])
    }

    /// The fitted component model (for batch statistics, see
    /// [`ComponentModel::statistics_into`]).
    pub fn model(&self) -> &ComponentModel {
        &self.model
    }

    /// The options the chart was built with.
    pub fn options(&self) -> &ComponentOptions {
        &self.options
    }

    /// The law of `Q`, or `None` when every component is kept.
    pub fn residual_law(&self) -> Option<ResidualLaw> {
        self.residual_law
    }

    /// The limit of `T²` for Phase I rows in the estimate (`in_sample`) or
    /// for new rows.
    ///
    /// # Errors
    /// Not expected once the chart exists.
    pub fn t_squared_limit(&self, in_sample: bool) -> Result<f64> {
        Ok(Self::limits_for(&self.model, &self.options, in_sample)?.t_squared_upper)
    }

    /// The limit of `Q` (the same for both phases), or `None`.
    ///
    /// # Errors
    /// Not expected once the chart exists.
    pub fn residual_limit(&self) -> Result<Option<f64>> {
        match self.residual_law {
            Some(law) => Ok(Some(law.upper(self.options.false_alarm.alpha())?)),
            None => Ok(None),
        }
    }

    /// Every Phase I row, in input order, against the final model.
    pub fn phase_one_points(&self) -> &[ComponentPoint] {
        &self.points
    }

    /// The Phase I rounds (one when nothing was removed).
    pub fn rounds(&self) -> &[ComponentRound] {
        &self.rounds
    }

    /// Whether removal stopped at its round cap with signals remaining.
    pub fn reached_round_cap(&self) -> bool {
        self.reached_round_cap
    }
}

impl Limits {
    fn exceeds(&self, t2: f64, q: f64) -> bool {
        t2 > self.t_squared_upper || self.residual.is_some_and(|(_, u)| q > u)
    }
}

fn statistics(model: &ComponentModel, rows: ArrayView2<'_, f64>) -> Result<(Vec<f64>, Vec<f64>)> {
    let n = rows.nrows();
    let mut t2 = vec![0.0; n];
    let mut q = vec![0.0; n];
    model.statistics_into(rows, &mut t2, &mut q)?;
    Ok((t2, q))
}
