//! A T² chart drawn as a standalone SVG document (written by hand: the
//! library has no plotting dependency).

use super::{ChartPoint, ControlChart, PointStatus};
use crate::calibration::RowOrigin;
use crate::error::Result;
use std::fmt::Write;

const WIDTH: f64 = 900.0;
const HEIGHT: f64 = 490.0;
const LEFT: f64 = 72.0;
const RIGHT: f64 = 24.0;
const TOP: f64 = 72.0;
const BOTTOM: f64 = 84.0;

/// Escapes text for XML.
pub(crate) fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// The vertical axis: linear from 0, or logarithmic when the largest value
/// dwarfs the limits.
struct Axis {
    log: bool,
    lo: f64,
    hi: f64,
}

impl Axis {
    fn new(values: &[f64], limits: &[f64]) -> Axis {
        let top_limit = limits.iter().copied().fold(0.0f64, f64::max);
        let top = values.iter().copied().fold(top_limit, f64::max).max(1e-12);
        if top > 8.0 * top_limit.max(1e-12) {
            let smallest = values
                .iter()
                .copied()
                .filter(|v| *v > 0.0)
                .fold(top_limit.max(1e-12), f64::min);
            let lo = 10f64.powf((smallest.log10()).floor().max(top.log10() - 12.0));
            let hi = 10f64.powf(top.log10().ceil());
            Axis { log: true, lo, hi }
        } else {
            Axis {
                log: false,
                lo: 0.0,
                hi: nice_step(top * 1.1 / 5.0) * (top * 1.1 / nice_step(top * 1.1 / 5.0)).ceil(),
            }
        }
    }

    fn y(&self, v: f64) -> f64 {
        let frac = if self.log {
            (v.max(self.lo).log10() - self.lo.log10()) / (self.hi.log10() - self.lo.log10())
        } else {
            (v - self.lo) / (self.hi - self.lo)
        };
        let frac = if frac.is_finite() {
            frac.clamp(0.0, 1.0)
        } else {
            0.0
        };
        HEIGHT - BOTTOM - frac * (HEIGHT - TOP - BOTTOM)
    }

    fn ticks(&self) -> Vec<f64> {
        if self.log {
            let (a, b) = (
                self.lo.log10().round() as i32,
                self.hi.log10().round() as i32,
            );
            let stride = ((b - a) / 6).max(1);
            (a..=b)
                .step_by(stride as usize)
                .map(|k| 10f64.powi(k))
                .collect()
        } else {
            let step = nice_step(self.hi / 5.0);
            let count = (self.hi / step).round() as usize;
            (0..=count).map(|k| k as f64 * step).collect()
        }
    }
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

fn label(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else if !(1e-3..1e5).contains(&v.abs()) {
        format!("{v:.0e}")
    } else if v.fract() == 0.0 {
        format!("{v:.0}")
    } else {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
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
    let values: Vec<f64> = phase_one
        .iter()
        .chain(phase_two)
        .map(|p| p.t_squared)
        .collect();
    let limits = if phase_two.is_empty() {
        vec![ucl1]
    } else {
        vec![ucl1, ucl2]
    };
    let axis = Axis::new(&values, &limits);
    let total = values.len().max(1) as f64;
    let plot_w = WIDTH - LEFT - RIGHT;
    let x = |k: usize| LEFT + (k as f64 + 0.5) / total * plot_w;
    let mut s = String::new();
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{HEIGHT}" viewBox="0 0 {WIDTH} {HEIGHT}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(s, r#"<rect width="100%" height="100%" fill="white"/>"#);
    let _ = writeln!(
        s,
        r##"<text x="{0}" y="24" text-anchor="middle" font-size="17">{1}</text><text x="{0}" y="41" text-anchor="middle" font-size="11" fill="#555">α = {2} per point (in-control ARL {3:.0}) · limits assume independent, normal in-control data · a signal is a prompt to investigate</text>"##,
        WIDTH / 2.0,
        escape(title),
        probability(chart.false_alarm().alpha()),
        chart.false_alarm().average_run_length()
    );
    // Grid, ticks and axes.
    for t in axis.ticks() {
        let y = axis.y(t);
        let _ = writeln!(
            s,
            r##"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#e4e4e4"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
            WIDTH - RIGHT,
            LEFT - 6.0,
            y + 4.0,
            label(t)
        );
    }
    let bottom = HEIGHT - BOTTOM;
    let _ = writeln!(
        s,
        r#"<path d="M{LEFT},{TOP} V{bottom} H{}" fill="none" stroke="black"/>"#,
        WIDTH - RIGHT
    );
    let stride = (values.len() / 12).max(1);
    for k in (0..values.len()).step_by(stride) {
        let _ = writeln!(
            s,
            r#"<line x1="{0:.1}" y1="{bottom}" x2="{0:.1}" y2="{1}" stroke="black"/><text x="{0:.1}" y="{2}" text-anchor="middle">{3}</text>"#,
            x(k),
            bottom + 4.0,
            bottom + 17.0,
            k + 1
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{}" y="{}" text-anchor="middle">point (in time order)</text>"#,
        LEFT + plot_w / 2.0,
        bottom + 36.0
    );
    let _ = writeln!(
        s,
        r#"<text x="18" y="{0}" text-anchor="middle" transform="rotate(-90 18 {0})">T²{1}</text>"#,
        (TOP + bottom) / 2.0,
        if axis.log { " (log scale)" } else { "" }
    );
    // Phases and limits.
    let split = phase_one.len();
    let phase_left = |k: usize| LEFT + k as f64 / total * plot_w;
    let mut segments = vec![(0usize, split, ucl1, "Phase I")];
    if !phase_two.is_empty() {
        segments.push((split, values.len(), ucl2, "Phase II"));
        let xd = phase_left(split);
        let _ = writeln!(
            s,
            r##"<line x1="{xd:.1}" y1="{TOP}" x2="{xd:.1}" y2="{bottom}" stroke="#777" stroke-dasharray="4 4"/>"##
        );
    }
    for &(a, b, ucl, name) in &segments {
        let (x0, x1) = (phase_left(a), phase_left(b));
        let y = axis.y(ucl);
        let _ = writeln!(
            s,
            r##"<line x1="{x0:.1}" y1="{y:.1}" x2="{x1:.1}" y2="{y:.1}" stroke="#c62828" stroke-width="1.5" stroke-dasharray="7 4"/><text x="{:.1}" y="{:.1}" text-anchor="end" fill="#c62828">UCL {}</text><text x="{:.1}" y="{}" text-anchor="middle" fill="#555">{name}</text>"##,
            x1 - 4.0,
            y - 5.0,
            label((ucl * 100.0).round() / 100.0),
            (x0 + x1) / 2.0,
            TOP - 8.0
        );
        if b > a + 1 {
            let path: Vec<String> = (a..b)
                .map(|k| format!("{:.1},{:.1}", x(k), axis.y(values[k])))
                .collect();
            let _ = writeln!(
                s,
                r##"<polyline points="{}" fill="none" stroke="#9e9e9e" stroke-width="1"/>"##,
                path.join(" ")
            );
        }
    }
    for (k, point) in phase_one.iter().chain(phase_two).enumerate() {
        let removed = matches!(point.status, PointStatus::Removed { .. });
        let colour = if point.signal { "#c62828" } else { "#1565c0" };
        let fill = if removed { "white" } else { colour };
        let what = match point.status {
            PointStatus::InEstimate => "Phase I".to_string(),
            PointStatus::Removed { round, .. } => format!("Phase I, removed in round {round}"),
            PointStatus::Monitored => "Phase II".to_string(),
        };
        let _ = writeln!(
            s,
            r#"<circle cx="{:.1}" cy="{:.1}" r="3.6" fill="{fill}" stroke="{colour}" stroke-width="1.4"><title>point {} ({what}): T² = {:.4}, UCL = {:.4}{}</title></circle>"#,
            x(k),
            axis.y(point.t_squared),
            k + 1,
            point.t_squared,
            point.upper_limit,
            if point.signal { ", signal" } else { "" }
        );
    }
    // Legend.
    let ly = HEIGHT - 12.0;
    let _ = writeln!(
        s,
        r##"<circle cx="{}" cy="{}" r="3.6" fill="#1565c0"/><text x="{}" y="{ly}">in control</text><circle cx="{}" cy="{}" r="3.6" fill="#c62828"/><text x="{}" y="{ly}">signal</text><circle cx="{}" cy="{}" r="3.6" fill="white" stroke="#555"/><text x="{}" y="{ly}">removed from the estimate (Phase I)</text><line x1="{}" y1="{}" x2="{}" y2="{}" stroke="#c62828" stroke-width="1.5" stroke-dasharray="7 4"/><text x="{}" y="{ly}">upper control limit (UCL)</text>"##,
        LEFT + 4.0,
        ly - 4.0,
        LEFT + 12.0,
        LEFT + 100.0,
        ly - 4.0,
        LEFT + 108.0,
        LEFT + 170.0,
        ly - 4.0,
        LEFT + 178.0,
        LEFT + 420.0,
        ly - 4.0,
        LEFT + 450.0,
        ly - 4.0,
        LEFT + 456.0,
    );
    s.push_str("</svg>\n");
    Ok(s)
}
