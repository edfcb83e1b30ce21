//! The T² control chart: Phase I estimation with its limit, Phase II
//! monitoring, and diagnosis of signals.

use super::diagnosis::{diagnose_centred, rated_terms_along};
use super::{
    ChartPoint, ControlLimit, FalseAlarmRate, PhaseOneOptions, PhaseOneRound, PhaseOneStart,
    PointStatus, RatedTerm, SignalDiagnosis, SignalRemoval,
};
use crate::calibration::RowOrigin;
use crate::data::{check_columns, check_finite, check_row_finite};
use crate::distance::squared_distances_to;
use crate::error::{Error, Result};
use crate::moments::{Divisor, GroupMoments, MomentAccumulator};
use crate::scatter::Scatter;
use ndarray::{Array2, ArrayView2, Axis};
use serde::{Deserialize, Serialize};

/// What is charted: individual observations or means of subgroups of
/// consecutive rows.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ChartDesign {
    /// One point per row.
    Individuals,
    /// One point per `size` consecutive rows (their mean).
    Subgroups {
        /// Rows per subgroup.
        size: usize,
    },
}

/// A Hotelling T² control chart after Phase I.
///
/// **Phase I** ([`individuals`](Self::individuals),
/// [`subgroups`](Self::subgroups)) estimates the in-control location and
/// scatter from historical data, charts every historical point against the
/// Phase I limit and, if asked, removes signalling points and re-estimates
/// until the estimate is clean (see [`SignalRemoval`]). **Phase II**
/// ([`monitor`](Self::monitor)) charts new points against the estimate with
/// the Phase II limit. Limits are in [`ControlLimit`]. Every signal carries
/// a [`SignalDiagnosis`].
///
/// **Cautions.** The limits assume that in-control points are independent
/// and multivariate normal; autocorrelated data (common in continuous
/// processes) produce far more false alarms than the nominal rate. A signal
/// is a prompt to investigate the process, not a verdict about it: what
/// follows belongs to local procedures and qualified people.
///
/// # Example
/// ```
/// use mvdist::control_chart::{ControlChart, FalseAlarmRate, PhaseOneOptions, SignalRemoval};
/// use ndarray::array;
///
/// let history = array![
///     [10.1, 4.9], [9.8, 5.2], [10.3, 5.1], [9.9, 4.8], [10.0, 5.0], [10.2, 5.3],
///     [9.7, 4.9], [10.1, 5.0], [9.9, 5.1], [10.0, 4.7], [10.4, 5.2], [9.6, 4.8],
/// ];
/// let settings = PhaseOneOptions::default()
///     .with_false_alarm(FalseAlarmRate::per_point(0.01)?)
///     .with_removal(SignalRemoval::RefitUntilClean { max_rounds: 5 });
/// let chart = ControlChart::individuals(history.view(), &settings)?;
/// assert!(chart.phase_one_points().iter().all(|p| !p.signal));
///
/// let new = array![[10.0, 5.0], [10.0, 6.5]];
/// let points = chart.monitor(new.view())?;
/// assert!(!points[0].signal && points[1].signal);
/// let why = points[1].diagnosis.as_ref().ok_or("the point should signal")?;
/// assert_eq!(why.terms[0].variable, 1); // the second variable is out of range
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ChartData")]
pub struct ControlChart {
    design: ChartDesign,
    location: Vec<f64>,
    /// Scatter of a charted point: `S` (individuals) or `S_p / n`
    /// (subgroups), so that `T² = cᵀ scatter⁻¹ c`.
    point_scatter: Scatter,
    in_estimate: usize,
    false_alarm: FalseAlarmRate,
    diagnosis_depth: usize,
    points: Vec<ChartPoint>,
    rounds: Vec<PhaseOneRound>,
    reached_round_cap: bool,
}

/// The serialized form of a [`ControlChart`], checked on the way in: the
/// location matches the scatter, the subgroup size is at least 2, and the
/// estimate holds enough points for both limits.
#[derive(Deserialize)]
struct ChartData {
    design: ChartDesign,
    location: Vec<f64>,
    point_scatter: Scatter,
    in_estimate: usize,
    false_alarm: FalseAlarmRate,
    diagnosis_depth: usize,
    points: Vec<ChartPoint>,
    rounds: Vec<PhaseOneRound>,
    reached_round_cap: bool,
}

impl TryFrom<ChartData> for ControlChart {
    type Error = Error;
    fn try_from(d: ChartData) -> Result<Self> {
        let p = d.point_scatter.dim();
        if d.location.len() != p {
            return Err(Error::Format {
                reason: format!(
                    "the chart's location has {} values but its scatter has {p} columns",
                    d.location.len()
                ),
            });
        }
        check_row_finite(&d.location, 0)?;
        if let ChartDesign::Subgroups { size } = d.design {
            if size < 2 {
                return Err(Error::Format {
                    reason: format!(
                        "a subgroup chart needs subgroups of at least 2 rows, not {size}"
                    ),
                });
            }
        }
        let chart = ControlChart {
            design: d.design,
            location: d.location,
            point_scatter: d.point_scatter,
            in_estimate: d.in_estimate,
            false_alarm: d.false_alarm,
            diagnosis_depth: d.diagnosis_depth,
            points: d.points,
            rounds: d.rounds,
            reached_round_cap: d.reached_round_cap,
        };
        for origin in [RowOrigin::InSample, RowOrigin::New] {
            chart.upper_limit(origin).map_err(|e| Error::Format {
                reason: format!("the chart's estimate cannot give a control limit: {e}"),
            })?;
        }
        Ok(chart)
    }
}

/// The charted vectors of Phase I and what the estimate is made from.
struct PhaseOneData<'a> {
    design: ChartDesign,
    /// One row per charted point.
    points: ArrayView2<'a, f64>,
    /// Per-subgroup moments (subgroup charts only).
    groups: Vec<MomentAccumulator>,
}

impl PhaseOneData<'_> {
    fn limit(&self, kept: usize) -> Result<ControlLimit> {
        let p = self.points.ncols();
        match self.design {
            ChartDesign::Individuals => ControlLimit::individuals_phase_one(kept, p),
            ChartDesign::Subgroups { size } => ControlLimit::subgroups_phase_one(kept, size, p),
        }
    }

    /// Location and point scatter from the kept points.
    fn fit(&self, kept: &[usize]) -> Result<(Vec<f64>, Scatter)> {
        match self.design {
            ChartDesign::Individuals => {
                let acc = MomentAccumulator::from_rows(self.points.select(Axis(0), kept).view())?;
                Ok((acc.mean().to_vec(), acc.scatter(Divisor::Unbiased)?))
            }
            ChartDesign::Subgroups { size } => {
                let groups: Vec<MomentAccumulator> =
                    kept.iter().map(|&k| self.groups[k].clone()).collect();
                let pooled = GroupMoments::from_accumulators(kept.to_vec(), groups)
                    .pooled_scatter(Divisor::Unbiased)?;
                let p = self.points.ncols();
                let mut location = vec![0.0; p];
                for &k in kept {
                    for (l, v) in location.iter_mut().zip(self.points.row(k)) {
                        *l += v;
                    }
                }
                for l in &mut location {
                    *l /= kept.len() as f64;
                }
                Ok((location, scaled(&pooled, size)?))
            }
        }
    }
}

/// `S / n` as a validated scatter.
fn scaled(s: &Scatter, n: usize) -> Result<Scatter> {
    let m: Vec<f64> = s.matrix().iter().map(|v| v / n as f64).collect();
    Scatter::from_row_major(&m, s.dim())
}

/// Subgroup means of consecutive rows, with each subgroup's moments.
fn subgroup_means(
    rows: ArrayView2<'_, f64>,
    size: usize,
) -> Result<(Array2<f64>, Vec<MomentAccumulator>)> {
    if size < 2 {
        return Err(Error::invalid(
            "subgroup size",
            format!("{size}; subgroups need at least 2 rows for a within-subgroup scatter"),
        ));
    }
    let (n, p) = rows.dim();
    if p == 0 {
        return Err(Error::Empty { what: "columns" });
    }
    if n == 0 {
        return Err(Error::Empty { what: "rows" });
    }
    if !n.is_multiple_of(size) {
        return Err(Error::ShapeMismatch {
            what: "number of rows (a multiple of the subgroup size)",
            expected: n.div_ceil(size) * size,
            found: n,
        });
    }
    check_finite(rows)?;
    let m = n / size;
    let mut means = Array2::zeros((m, p));
    let mut groups = Vec::with_capacity(m);
    for k in 0..m {
        let acc =
            MomentAccumulator::from_rows(rows.slice(ndarray::s![k * size..(k + 1) * size, ..]))
                .map_err(|e| match e {
                    Error::NonFinite { row, column, value } => Error::NonFinite {
                        row: row + k * size,
                        column,
                        value,
                    },
                    other => other,
                })?;
        for (d, v) in means.row_mut(k).iter_mut().zip(acc.mean()) {
            *d = *v;
        }
        groups.push(acc);
    }
    Ok((means, groups))
}

impl ControlChart {
    /// Phase I on individual observations (one point per row), with the
    /// Beta limit of Tracy, Young and Mason (1992).
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] unless at least `p + 2` rows remain in the
    /// estimate (also after screening and removal);
    /// [`Error::ZeroVariance`] or [`Error::Collinear`] for a singular
    /// covariance; [`Error::ShapeMismatch`] for a start model with other
    /// columns; [`Error::InvalidParameter`] for a conditioning depth that
    /// gives too many terms.
    pub fn individuals(rows: ArrayView2<'_, f64>, settings: &PhaseOneOptions) -> Result<Self> {
        let (n, p) = rows.dim();
        if p == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if n == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        check_finite(rows)?;
        let data = PhaseOneData {
            design: ChartDesign::Individuals,
            points: rows,
            groups: Vec::new(),
        };
        Self::phase_one(&data, settings)
    }

    /// Phase I on subgroups of `size` consecutive rows: the charted point
    /// of subgroup `j` is its mean, `T²ⱼ = n (x̄ⱼ − x̿)ᵀ S_p⁻¹ (x̄ⱼ − x̿)` with
    /// the pooled within-subgroup covariance `S_p`, against the F limit of
    /// [`ControlLimit::SubgroupsPhaseOne`]. The start must be
    /// [`PhaseOneStart::AllRows`].
    ///
    /// # Errors
    /// As [`individuals`](Self::individuals); [`Error::ShapeMismatch`]
    /// unless the rows divide into whole subgroups;
    /// [`Error::InvalidParameter`] for a size below 2, fewer than 2
    /// subgroups, or a screening start.
    pub fn subgroups(
        rows: ArrayView2<'_, f64>,
        size: usize,
        settings: &PhaseOneOptions,
    ) -> Result<Self> {
        if *settings.start() != PhaseOneStart::AllRows {
            return Err(Error::invalid(
                "start",
                "screening with a supplied model applies to individual observations only",
            ));
        }
        let (means, groups) = subgroup_means(rows, size)?;
        let data = PhaseOneData {
            design: ChartDesign::Subgroups { size },
            points: means.view(),
            groups,
        };
        Self::phase_one(&data, settings)
    }

    fn phase_one(data: &PhaseOneData<'_>, settings: &PhaseOneOptions) -> Result<Self> {
        let rate = settings.false_alarm();
        let (m, p) = data.points.dim();
        let mut status = vec![PointStatus::InEstimate; m];
        if let PhaseOneStart::ScreenWith { model, origin } = settings.start() {
            if model.dim() != p {
                return Err(Error::ShapeMismatch {
                    what: "start model columns (the data's)",
                    expected: p,
                    found: model.dim(),
                });
            }
            let reference = model.reference(*origin)?;
            let d2 = model.squared_distances(data.points)?;
            for (s, &d) in status.iter_mut().zip(d2.iter()) {
                if reference.p_value(d) <= rate.alpha() {
                    *s = PointStatus::Removed {
                        round: 0,
                        t_squared_at_removal: d,
                    };
                }
            }
        }
        let max_rounds = match settings.removal() {
            SignalRemoval::Keep => 0,
            SignalRemoval::RefitUntilClean { max_rounds } => max_rounds,
        };
        let mut rounds = Vec::new();
        let mut reached_round_cap = false;
        let (location, point_scatter, kept) = loop {
            let kept: Vec<usize> = (0..m)
                .filter(|&i| status[i] == PointStatus::InEstimate)
                .collect();
            let limit = data.limit(kept.len())?;
            let (location, scatter) = data.fit(&kept)?;
            let ucl = limit.upper(rate)?;
            let t2 = squared_distances_to(
                &location,
                &scatter,
                data.points.select(Axis(0), &kept).view(),
            )?;
            let signals: Vec<usize> = kept
                .iter()
                .zip(t2.iter())
                .filter(|(_, &t)| t > ucl)
                .map(|(&i, _)| i)
                .collect();
            rounds.push(PhaseOneRound {
                round: rounds.len() + 1,
                in_estimate: kept.len(),
                upper_limit: ucl,
                signals: signals.clone(),
            });
            if signals.is_empty() || settings.removal() == SignalRemoval::Keep {
                break (location, scatter, kept.len());
            }
            if rounds.len() > max_rounds {
                reached_round_cap = true;
                break (location, scatter, kept.len());
            }
            let round = rounds.len();
            for (&i, &t) in kept.iter().zip(t2.iter()) {
                if t > ucl {
                    status[i] = PointStatus::Removed {
                        round,
                        t_squared_at_removal: t,
                    };
                }
            }
        };
        let mut chart = ControlChart {
            design: data.design,
            location,
            point_scatter,
            in_estimate: kept,
            false_alarm: rate,
            diagnosis_depth: settings.diagnosis_depth(),
            points: Vec::new(),
            rounds,
            reached_round_cap,
        };
        chart.points = chart.chart_points(data.points, &status)?;
        Ok(chart)
    }

    /// Charts `points` (one row each) with the given statuses.
    fn chart_points(
        &self,
        points: ArrayView2<'_, f64>,
        status: &[PointStatus],
    ) -> Result<Vec<ChartPoint>> {
        let t2 = squared_distances_to(&self.location, &self.point_scatter, points)?;
        let mut limits: Vec<(RowOrigin, ControlLimit, f64)> = Vec::new();
        let mut out = Vec::with_capacity(points.nrows());
        for (i, (&t, &s)) in t2.iter().zip(status).enumerate() {
            let origin = match s {
                PointStatus::InEstimate => RowOrigin::InSample,
                _ => RowOrigin::New,
            };
            let (limit, ucl) = match limits.iter().find(|(o, _, _)| *o == origin) {
                Some(&(_, l, u)) => (l, u),
                None => {
                    let l = self.limit(origin)?;
                    let u = l.upper(self.false_alarm)?;
                    limits.push((origin, l, u));
                    (l, u)
                }
            };
            let signal = t > ucl;
            let diagnosis = if signal {
                let c = self.centred(points.row(i).iter().copied())?;
                Some(diagnose_centred(
                    &self.point_scatter,
                    &c,
                    &limit,
                    self.false_alarm,
                    self.diagnosis_depth,
                )?)
            } else {
                None
            };
            out.push(ChartPoint {
                index: i,
                t_squared: t,
                upper_limit: ucl,
                p_value: limit.p_value(t),
                signal,
                status: s,
                diagnosis,
            });
        }
        Ok(out)
    }

    fn centred(&self, x: impl Iterator<Item = f64>) -> Result<Vec<f64>> {
        let c: Vec<f64> = x.zip(&self.location).map(|(a, b)| a - b).collect();
        check_row_finite(&c, 0).map_err(|_| Error::Overflow { row: 0 })?;
        Ok(c)
    }

    /// Phase II: charts new rows against the Phase I estimate with the
    /// Phase II limit. For a subgroup chart the rows are grouped into
    /// consecutive subgroups of the Phase I size, one point each.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a different number of columns (or rows
    /// that do not divide into whole subgroups); [`Error::Empty`];
    /// [`Error::NonFinite`] naming the row and column; [`Error::Overflow`].
    pub fn monitor(&self, rows: ArrayView2<'_, f64>) -> Result<Vec<ChartPoint>> {
        check_columns(rows, self.dim())?;
        if rows.nrows() == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        match self.design {
            ChartDesign::Individuals => {
                check_finite(rows)?;
                self.chart_points(rows, &vec![PointStatus::Monitored; rows.nrows()])
            }
            ChartDesign::Subgroups { size } => {
                let (means, _) = subgroup_means(rows, size)?;
                self.chart_points(means.view(), &vec![PointStatus::Monitored; means.nrows()])
            }
        }
    }

    /// Diagnoses any point (a row, or a subgroup mean for subgroup charts)
    /// with the decomposition up to `depth` conditioning variables; `origin`
    /// chooses the Phase I or Phase II laws of the terms.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`], [`Error::NonFinite`] for a bad point; those
    /// of [`decomposition::conditional_terms`](super::decomposition::conditional_terms).
    pub fn diagnose(
        &self,
        point: &[f64],
        origin: RowOrigin,
        depth: usize,
    ) -> Result<SignalDiagnosis> {
        self.check_point(point)?;
        let c = self.centred(point.iter().copied())?;
        diagnose_centred(
            &self.point_scatter,
            &c,
            &self.limit(origin)?,
            self.false_alarm,
            depth,
        )
    }

    /// The `p` decomposition terms of `point` along `order` (a permutation
    /// of `0..p`), each with its cutoff and p-value; their values add up to
    /// the point's T².
    ///
    /// # Errors
    /// As [`diagnose`](Self::diagnose); an invalid permutation.
    pub fn decompose_along(
        &self,
        point: &[f64],
        order: &[usize],
        origin: RowOrigin,
    ) -> Result<Vec<RatedTerm>> {
        self.check_point(point)?;
        let c = self.centred(point.iter().copied())?;
        rated_terms_along(
            &self.point_scatter,
            &c,
            order,
            &self.limit(origin)?,
            self.false_alarm,
        )
    }

    fn check_point(&self, point: &[f64]) -> Result<()> {
        if point.len() != self.dim() {
            return Err(Error::ShapeMismatch {
                what: "point length (number of columns)",
                expected: self.dim(),
                found: point.len(),
            });
        }
        check_row_finite(point, 0)
    }

    /// The limit for points of the given origin.
    ///
    /// # Errors
    /// Not expected once the chart exists (the estimate has enough points);
    /// kept for hand-built values. [`Error::InvalidParameter`] for
    /// [`RowOrigin::KnownParameters`]: a chart's points are Phase I
    /// (`InSample`) or Phase II (`New`).
    pub fn limit(&self, origin: RowOrigin) -> Result<ControlLimit> {
        let p = self.dim();
        let m = self.in_estimate;
        match (self.design, origin) {
            (ChartDesign::Individuals, RowOrigin::InSample) => {
                ControlLimit::individuals_phase_one(m, p)
            }
            (ChartDesign::Individuals, RowOrigin::New) => ControlLimit::individuals_phase_two(m, p),
            (ChartDesign::Subgroups { size }, RowOrigin::InSample) => {
                ControlLimit::subgroups_phase_one(m, size, p)
            }
            (ChartDesign::Subgroups { size }, RowOrigin::New) => {
                ControlLimit::subgroups_phase_two(m, size, p)
            }
            (_, RowOrigin::KnownParameters) => Err(Error::invalid(
                "row origin",
                "a T² chart estimates its location and scatter; its points are Phase I \
                 (RowOrigin::InSample) or Phase II (RowOrigin::New)",
            )),
        }
    }

    /// The upper control limit for points of the given origin.
    ///
    /// # Errors
    /// As [`limit`](Self::limit).
    pub fn upper_limit(&self, origin: RowOrigin) -> Result<f64> {
        self.limit(origin)?.upper(self.false_alarm)
    }

    /// Individuals or subgroups.
    pub fn design(&self) -> ChartDesign {
        self.design
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.location.len()
    }

    /// The in-control location: the mean of the points in the estimate.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// The scatter of a charted point: the covariance `S` (individuals) or
    /// `S_p / n` (subgroups); `T² = cᵀ (this)⁻¹ c`.
    pub fn point_scatter(&self) -> &Scatter {
        &self.point_scatter
    }

    /// Points (observations or subgroups) in the final estimate, `m`.
    pub fn in_estimate(&self) -> usize {
        self.in_estimate
    }

    /// The chart's false-alarm rate.
    pub fn false_alarm(&self) -> FalseAlarmRate {
        self.false_alarm
    }

    /// Every Phase I point, in input order, against the final estimate.
    pub fn phase_one_points(&self) -> &[ChartPoint] {
        &self.points
    }

    /// The Phase I rounds (one when nothing was removed).
    pub fn rounds(&self) -> &[PhaseOneRound] {
        &self.rounds
    }

    /// Whether removal stopped at its round cap with signals remaining.
    pub fn reached_round_cap(&self) -> bool {
        self.reached_round_cap
    }
}
