//! The small-shift charts (MEWMA, MCUSUM) drawn as SVG.

use super::panels::{LimitSegment, Mark, Panel, PanelChart};
use super::shift_run::{ChartScheme, ShiftPoint};
use super::EwmaCovariance;

/// What the statistic of a scheme is called on the chart's axis.
fn axis_label(scheme: &ChartScheme) -> String {
    match scheme {
        ChartScheme::Mewma(o) => format!(
            "MEWMA T² (λ = {}, {} covariance)",
            o.smoothing(),
            match o.covariance() {
                EwmaCovariance::Exact => "exact",
                EwmaCovariance::Asymptotic => "asymptotic",
            }
        ),
        ChartScheme::Mcusum(o) => format!("MCUSUM Y (k = {})", o.reference_value()),
    }
}

/// A small-shift chart as an SVG document: the statistic of each row of
/// `first` and then of `second` (after a divider, when both are given),
/// each stretch with its limit line `h`, signals in red, and tooltips with
/// the row, its step since the zero state, the statistic, the limit and
/// the variable with the largest term of each signal (named by `names`
/// when given, by its 1-based number otherwise). `phase_names` label the
/// two stretches (for example `("Phase I (retrospective)", "Phase II")`).
///
/// Each stretch is drawn as given: a chart restarted from the zero state
/// for the second stretch, or continued with a carried
/// [`ChartState`](super::ChartState), looks the same here; the step in
/// the tooltips tells them apart.
///
/// The subtitle states the chart's assumptions: the limit holds for
/// independent, multivariate normal in-control rows with known parameters,
/// and a signal is a prompt to investigate, not a verdict.
///
/// # Example
/// ```
/// use mvdist::control_chart::{shift_chart_svg, InControlEstimate, MewmaChart, MewmaOptions};
/// use mvdist::Scatter;
/// use ndarray::Array2;
///
/// let estimate = InControlEstimate::new(vec![0.0, 0.0], Scatter::diagonal(&[1.0, 1.0])?)?;
/// let chart = MewmaChart::new(estimate, &MewmaOptions::default(), 8.64)?;
/// let rows = Array2::from_shape_fn((30, 2), |(i, j)| if i > 20 { 1.5 } else { 0.1 * (i + j) as f64 - 1.0 });
/// let points = chart.monitor(rows.view())?;
/// let svg = shift_chart_svg(&chart.scheme(), &points, &[], None, ("Phase II", ""), "Line 3");
/// assert!(svg.starts_with("<svg") && svg.contains("MEWMA T²"));
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn shift_chart_svg(
    scheme: &ChartScheme,
    first: &[ShiftPoint],
    second: &[ShiftPoint],
    names: Option<&[String]>,
    phase_names: (&str, &str),
    title: &str,
) -> String {
    let split = first.len();
    let total = split + second.len();
    let variable = |j: usize| {
        names
            .and_then(|n| n.get(j).cloned())
            .unwrap_or_else(|| format!("variable {}", j + 1))
    };
    let mut marks = Vec::with_capacity(total);
    for (stretch, points) in [(phase_names.0, first), (phase_names.1, second)] {
        for p in points {
            let top = p.diagnosis.as_ref().map(|d| d.contributions.top_variable());
            marks.push(Mark {
                value: p.statistic,
                signal: p.signal,
                hollow: false,
                tooltip: format!(
                    "{stretch} row {} (step {}): {:.4} (limit {:.4}){}",
                    p.index + 1,
                    p.step,
                    p.statistic,
                    p.limit,
                    top.map_or_else(String::new, |j| format!(
                        ", signal, largest term {}",
                        variable(j)
                    ))
                ),
            });
        }
    }
    let mut limits = Vec::new();
    for (start, points) in [(0, first), (split, second)] {
        if let Some(p) = points.first() {
            limits.push(LimitSegment {
                start,
                end: start + points.len(),
                value: p.limit,
                label: format!("h = {}", super::panels::number_label(p.limit)),
            });
        }
    }
    PanelChart {
        title: title.to_string(),
        subtitle: "the limit assumes independent, multivariate normal in-control rows with known mean and covariance · a signal is a prompt to investigate, not a verdict".to_string(),
        panels: vec![Panel {
            axis_label: axis_label(scheme),
            marks,
            limits,
        }],
        split: (!first.is_empty() && !second.is_empty()).then_some(split),
        phase_names: (phase_names.0.to_string(), phase_names.1.to_string()),
    }
    .render()
}
