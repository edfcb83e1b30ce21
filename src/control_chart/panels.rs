//! Charts with one or more stacked panels sharing a time axis, drawn as a
//! standalone SVG document (component `T²` above `Q`; the small-shift
//! charts). Written by hand: the library has no plotting dependency.

use super::svg::{escape, nice_step};
use std::fmt::Write;

const WIDTH: f64 = 900.0;
const PANEL: f64 = 300.0;
const GAP: f64 = 46.0;
const LEFT: f64 = 72.0;
const RIGHT: f64 = 24.0;
const TOP: f64 = 72.0;
const BOTTOM: f64 = 84.0;

/// One charted point of a panel.
pub(crate) struct Mark {
    pub value: f64,
    pub signal: bool,
    /// Drawn hollow (a Phase I point removed from the estimate).
    pub hollow: bool,
    pub tooltip: String,
}

/// A horizontal limit over the points `start..end`.
pub(crate) struct LimitSegment {
    pub start: usize,
    pub end: usize,
    pub value: f64,
    pub label: String,
}

/// One panel: a statistic over time with its limits.
pub(crate) struct Panel {
    pub axis_label: String,
    pub marks: Vec<Mark>,
    pub limits: Vec<LimitSegment>,
}

/// The document: a title, a line of cautions, the panels stacked, and an
/// optional divider before point `split` (Phase II), with `phase_names`
/// written above the first panel.
pub(crate) struct PanelChart {
    pub title: String,
    pub subtitle: String,
    pub panels: Vec<Panel>,
    pub split: Option<usize>,
    pub phase_names: (String, String),
}

struct Scale {
    log: bool,
    lo: f64,
    hi: f64,
    top: f64,
    bottom: f64,
}

impl Scale {
    fn new(values: &[f64], limits: &[f64], top: f64, bottom: f64) -> Scale {
        let finite = |v: &&f64| v.is_finite();
        let top_limit = limits.iter().filter(finite).copied().fold(0.0f64, f64::max);
        let top_value = values
            .iter()
            .filter(finite)
            .copied()
            .fold(top_limit, f64::max)
            .max(1e-12);
        if top_value > 8.0 * top_limit.max(1e-12) {
            let smallest = values
                .iter()
                .copied()
                .filter(|v| *v > 0.0 && v.is_finite())
                .fold(top_limit.max(1e-12), f64::min);
            let lo = 10f64.powf(smallest.log10().floor().max(top_value.log10() - 12.0));
            let hi = 10f64.powf(top_value.log10().ceil());
            Scale {
                log: true,
                lo,
                hi,
                top,
                bottom,
            }
        } else {
            let step = nice_step(top_value * 1.1 / 5.0);
            Scale {
                log: false,
                lo: 0.0,
                hi: step * (top_value * 1.1 / step).ceil(),
                top,
                bottom,
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
        self.bottom - frac * (self.bottom - self.top)
    }

    fn ticks(&self) -> Vec<f64> {
        if self.log {
            let (a, b) = (
                self.lo.log10().round() as i32,
                self.hi.log10().round() as i32,
            );
            let stride = ((b - a) / 5).max(1);
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

pub(crate) fn number_label(v: f64) -> String {
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

impl PanelChart {
    pub(crate) fn render(&self) -> String {
        let count = self.panels.iter().map(|p| p.marks.len()).max().unwrap_or(0);
        let height = TOP + self.panels.len() as f64 * (PANEL + GAP) - GAP + BOTTOM;
        let total = count.max(1) as f64;
        let plot_w = WIDTH - LEFT - RIGHT;
        let x = |k: usize| LEFT + (k as f64 + 0.5) / total * plot_w;
        let edge = |k: usize| LEFT + k as f64 / total * plot_w;
        let mut s = String::new();
        let _ = writeln!(
            s,
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height}" viewBox="0 0 {WIDTH} {height}" font-family="sans-serif" font-size="12">"#
        );
        let _ = writeln!(s, r#"<rect width="100%" height="100%" fill="white"/>"#);
        let _ = writeln!(
            s,
            r##"<text x="{0}" y="24" text-anchor="middle" font-size="17">{1}</text><text x="{0}" y="41" text-anchor="middle" font-size="11" fill="#555">{2}</text>"##,
            WIDTH / 2.0,
            escape(&self.title),
            escape(&self.subtitle)
        );
        for (n, panel) in self.panels.iter().enumerate() {
            let top = TOP + n as f64 * (PANEL + GAP);
            let bottom = top + PANEL;
            let values: Vec<f64> = panel.marks.iter().map(|m| m.value).collect();
            let limits: Vec<f64> = panel.limits.iter().map(|l| l.value).collect();
            let scale = Scale::new(&values, &limits, top, bottom);
            for t in scale.ticks() {
                let y = scale.y(t);
                let _ = writeln!(
                    s,
                    r##"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#e4e4e4"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
                    WIDTH - RIGHT,
                    LEFT - 6.0,
                    y + 4.0,
                    number_label(t)
                );
            }
            let _ = writeln!(
                s,
                r#"<path d="M{LEFT},{top} V{bottom} H{}" fill="none" stroke="black"/>"#,
                WIDTH - RIGHT
            );
            let _ = writeln!(
                s,
                r#"<text x="18" y="{0}" text-anchor="middle" transform="rotate(-90 18 {0})">{1}{2}</text>"#,
                (top + bottom) / 2.0,
                escape(&panel.axis_label),
                if scale.log { " (log scale)" } else { "" }
            );
            let stride = (count / 12).max(1);
            for k in (0..count).step_by(stride) {
                let _ = writeln!(
                    s,
                    r#"<line x1="{0:.1}" y1="{bottom}" x2="{0:.1}" y2="{1}" stroke="black"/><text x="{0:.1}" y="{2}" text-anchor="middle">{3}</text>"#,
                    x(k),
                    bottom + 4.0,
                    bottom + 17.0,
                    k + 1
                );
            }
            if let Some(split) = self.split {
                let xd = edge(split);
                let _ = writeln!(
                    s,
                    r##"<line x1="{xd:.1}" y1="{top}" x2="{xd:.1}" y2="{bottom}" stroke="#777" stroke-dasharray="4 4"/>"##
                );
                if n == 0 {
                    let _ = writeln!(
                        s,
                        r##"<text x="{:.1}" y="{}" text-anchor="middle" fill="#555">{}</text><text x="{:.1}" y="{}" text-anchor="middle" fill="#555">{}</text>"##,
                        (edge(0) + xd) / 2.0,
                        top - 8.0,
                        escape(&self.phase_names.0),
                        (xd + edge(count)) / 2.0,
                        top - 8.0,
                        escape(&self.phase_names.1)
                    );
                }
            }
            for l in &panel.limits {
                if !l.value.is_finite() {
                    continue;
                }
                let (x0, x1) = (edge(l.start), edge(l.end));
                let y = scale.y(l.value);
                let _ = writeln!(
                    s,
                    r##"<line x1="{x0:.1}" y1="{y:.1}" x2="{x1:.1}" y2="{y:.1}" stroke="#c62828" stroke-width="1.5" stroke-dasharray="7 4"/><text x="{:.1}" y="{:.1}" text-anchor="end" fill="#c62828">{} {}</text>"##,
                    x1 - 4.0,
                    y - 5.0,
                    escape(&l.label),
                    number_label((l.value * 100.0).round() / 100.0)
                );
            }
            if count > 1 {
                let path: Vec<String> = values
                    .iter()
                    .enumerate()
                    .map(|(k, v)| format!("{:.1},{:.1}", x(k), scale.y(*v)))
                    .collect();
                let _ = writeln!(
                    s,
                    r##"<polyline points="{}" fill="none" stroke="#9e9e9e" stroke-width="1"/>"##,
                    path.join(" ")
                );
            }
            // Large charts: draw only signals and a thinned set of points.
            let every = (count / 4000).max(1);
            for (k, m) in panel.marks.iter().enumerate() {
                if !m.signal && k % every != 0 {
                    continue;
                }
                let colour = if m.signal { "#c62828" } else { "#1565c0" };
                let fill = if m.hollow { "white" } else { colour };
                let _ = writeln!(
                    s,
                    r#"<circle cx="{:.1}" cy="{:.1}" r="3.2" fill="{fill}" stroke="{colour}" stroke-width="1.3"><title>{}</title></circle>"#,
                    x(k),
                    scale.y(m.value),
                    escape(&m.tooltip)
                );
            }
        }
        let bottom = height - BOTTOM;
        let _ = writeln!(
            s,
            r#"<text x="{}" y="{}" text-anchor="middle">point (in time order)</text>"#,
            LEFT + plot_w / 2.0,
            bottom + 36.0
        );
        let ly = height - 12.0;
        let _ = writeln!(
            s,
            r##"<circle cx="{}" cy="{}" r="3.2" fill="#1565c0"/><text x="{}" y="{ly}">in control</text><circle cx="{}" cy="{}" r="3.2" fill="#c62828"/><text x="{}" y="{ly}">signal</text><circle cx="{}" cy="{}" r="3.2" fill="white" stroke="#555"/><text x="{}" y="{ly}">removed from the estimate (Phase I)</text><line x1="{}" y1="{}" x2="{}" y2="{}" stroke="#c62828" stroke-width="1.5" stroke-dasharray="7 4"/><text x="{}" y="{ly}">control limit</text>"##,
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
        s
    }
}
