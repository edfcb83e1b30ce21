//! The component chart drawn as SVG: `T²` above `Q`.

use super::chart::{ComponentChart, ComponentPoint};
use crate::control_chart::panels::{LimitSegment, Mark, Panel, PanelChart};
use crate::control_chart::PointStatus;

/// The component chart as an SVG document: `T²` on the components in the
/// upper panel, `Q` in the lower one, Phase I points (removed ones hollow)
/// and then `phase_two` points after a divider, each phase with its
/// limits; signals in red, tooltips with both statistics.
///
/// # Example
/// ```
/// use mvdist::control_chart::{component_chart_svg, ComponentChart, ComponentCount, ComponentOptions};
/// use ndarray::Array2;
///
/// let rows = Array2::from_shape_fn((40, 4), |(i, j)| ((i * (j + 3)) % 7) as f64 + j as f64);
/// let chart = ComponentChart::phase_one(
///     rows.view(),
///     &ComponentOptions::default().with_components(ComponentCount::Fixed { components: 2 }),
/// )?;
/// let svg = component_chart_svg(&chart, &[], "Line 3 — components");
/// assert!(svg.starts_with("<svg") && svg.contains("Q (squared prediction error)"));
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn component_chart_svg(
    chart: &ComponentChart,
    phase_two: &[ComponentPoint],
    title: &str,
) -> String {
    let one = chart.phase_one_points();
    let all: Vec<&ComponentPoint> = one.iter().chain(phase_two).collect();
    let split = one.len();
    let status = |p: &ComponentPoint| match p.status {
        PointStatus::InEstimate => "Phase I".to_string(),
        PointStatus::Removed { round, .. } => format!("Phase I, removed in round {round}"),
        PointStatus::Monitored => "Phase II".to_string(),
    };
    let tooltip = |k: usize, p: &ComponentPoint| {
        format!(
            "point {} ({}): T² = {:.4} (limit {:.4}), Q = {:.4}{}{}",
            k + 1,
            status(p),
            p.t_squared,
            p.t_squared_limit,
            p.residual,
            p.residual_limit
                .map_or_else(String::new, |l| format!(" (limit {l:.4})")),
            if p.signal() { ", signal" } else { "" }
        )
    };
    let segments = |value: &dyn Fn(&ComponentPoint) -> f64, name: &str| {
        let mut out = Vec::new();
        if let Some(first) = one.first() {
            out.push(LimitSegment {
                start: 0,
                end: split,
                value: value(first),
                label: format!("{name} Phase I"),
            });
        }
        if let Some(first) = phase_two.first() {
            out.push(LimitSegment {
                start: split,
                end: all.len(),
                value: value(first),
                label: format!("{name} Phase II"),
            });
        }
        out
    };
    // The Phase I line is the limit of the points kept in the estimate
    // (removed points are judged by the Phase II limit, in their tooltips).
    let kept_limit = one
        .iter()
        .find(|p| p.status == PointStatus::InEstimate)
        .map_or(f64::NAN, |p| p.t_squared_limit);
    let mut t2_limits = segments(&|p: &ComponentPoint| p.t_squared_limit, "limit");
    if let Some(seg) = t2_limits.first_mut() {
        seg.value = kept_limit;
    }
    let q_limit = |p: &ComponentPoint| p.residual_limit.unwrap_or(f64::NAN);
    let panels = vec![
        Panel {
            axis_label: format!("T² on {} components", chart.model().components()),
            marks: all
                .iter()
                .enumerate()
                .map(|(k, p)| Mark {
                    value: p.t_squared,
                    signal: p.t_squared_signal,
                    hollow: matches!(p.status, PointStatus::Removed { .. }),
                    tooltip: tooltip(k, p),
                })
                .collect(),
            limits: t2_limits,
        },
        Panel {
            axis_label: "Q (squared prediction error)".to_string(),
            marks: all
                .iter()
                .enumerate()
                .map(|(k, p)| Mark {
                    value: p.residual,
                    signal: p.residual_signal,
                    hollow: matches!(p.status, PointStatus::Removed { .. }),
                    tooltip: tooltip(k, p),
                })
                .collect(),
            limits: segments(&q_limit, "limit"),
        },
    ];
    let rate = chart.options().false_alarm();
    PanelChart {
        title: title.to_string(),
        subtitle: format!(
            "α = {} per point and statistic · limits assume independent, normal in-control rows · a signal is a prompt to investigate",
            rate.alpha()
        ),
        panels,
        split: (!phase_two.is_empty()).then_some(split),
        phase_names: ("Phase I".into(), "Phase II".into()),
    }
    .render()
}
