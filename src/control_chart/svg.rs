//! A T² chart drawn as a standalone SVG document (written by hand: the
//! library has no plotting dependency).

use super::panels::{LimitSegment, Mark, Panel, PanelChart};
use super::{ChartPoint, ControlChart, PointStatus};
use crate::calibration::RowOrigin;
use crate::error::Result;

/// Escapes text for XML.
pub(crate) fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// 1, 2 or 5 times a power of ten, at least `raw`.
pub(crate) fn nice_step(raw: f64) -> f64 {
    if !(raw > 0.0 && raw.is_finite()) {
        return 1.0;
    }
    let base = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * base)
        .find(|&s| s >= raw)
        .unwrap_or(10.0 * base)
}

/// A probability with four significant digits.
fn probability(p: f64) -> String {
    if p >= 1e-3 {
        let digits = 4 + (-p.log10()).floor() as usize;
        let s = format!("{p:.digits$}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        format!("{p:.3e}")
    }
}

/// The chart as an SVG document: Phase I points (removed ones hollow),
/// then `phase_two` points after a divider, each phase with its upper
/// control limit; signals in red. Every point has a tooltip with its T².
/// When the largest T² exceeds eight times the limits the vertical axis is
/// logarithmic (said on the axis).
///
/// # Errors
/// As [`ControlChart::upper_limit`].
///
/// # Example
/// ```
/// use mvdist::control_chart::{chart_svg, ControlChart, PhaseOneOptions};
/// use ndarray::array;
///
/// let history = array![[1.0, 2.0], [1.2, 2.1], [0.9, 1.8], [1.1, 2.3], [1.0, 1.9], [1.3, 2.2], [0.8, 2.0]];
/// let chart = ControlChart::individuals(history.view(), &PhaseOneOptions::default())?;
/// let new = chart.monitor(array![[1.0, 2.0], [3.0, 0.0]].view())?;
/// let svg = chart_svg(&chart, &new, "Line 3 — T² chart")?;
/// assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn chart_svg(chart: &ControlChart, phase_two: &[ChartPoint], title: &str) -> Result<String> {
    let phase_one = chart.phase_one_points();
    let ucl1 = chart.upper_limit(RowOrigin::InSample)?;
    let ucl2 = chart.upper_limit(RowOrigin::New)?;
    let split = phase_one.len();
    let total = split + phase_two.len();
    let mut limits = vec![LimitSegment {
        start: 0,
        end: split,
        value: ucl1,
        label: "UCL Phase I".into(),
    }];
    if !phase_two.is_empty() {
        limits.push(LimitSegment {
            start: split,
            end: total,
            value: ucl2,
            label: "UCL Phase II".into(),
        });
    }
    let marks = phase_one
        .iter()
        .chain(phase_two)
        .enumerate()
        .map(|(k, point)| {
            let what = match point.status {
                PointStatus::InEstimate => "Phase I".to_string(),
                PointStatus::Removed { round, .. } => format!("Phase I, removed in round {round}"),
                PointStatus::Monitored => "Phase II".to_string(),
            };
            Mark {
                value: point.t_squared,
                signal: point.signal,
                hollow: matches!(point.status, PointStatus::Removed { .. }),
                tooltip: format!(
                    "point {} ({what}): T² = {:.4}, UCL = {:.4}{}",
                    k + 1,
                    point.t_squared,
                    point.upper_limit,
                    if point.signal { ", signal" } else { "" }
                ),
            }
        })
        .collect();
    Ok(PanelChart {
        title: title.to_string(),
        subtitle: format!(
            "α = {} per point (in-control ARL {:.0}) · limits assume independent, normal in-control data · a signal is a prompt to investigate",
            probability(chart.false_alarm().alpha()),
            chart.false_alarm().average_run_length()
        ),
        panels: vec![Panel {
            axis_label: "T²".into(),
            marks,
            limits,
        }],
        split: (!phase_two.is_empty()).then_some(split),
        phase_names: ("Phase I".into(), "Phase II".into()),
    }
    .render())
}
