//! The Q–Q chart of a [`CalibrationCheck`] as a standalone SVG document
//! (written by hand: the library has no plotting dependency).

use super::CalibrationCheck;
use crate::control_chart::svg::{escape, nice_step};
use std::fmt::Write;

const WIDTH: f64 = 640.0;
const HEIGHT: f64 = 560.0;
const LEFT: f64 = 72.0;
const RIGHT: f64 = 24.0;
const TOP: f64 = 64.0;
const BOTTOM: f64 = 96.0;

pub(super) fn qq_svg(check: &CalibrationCheck, title: &str) -> String {
    let m = check.held_out_rows;
    let top = check
        .observed
        .iter()
        .chain(&check.theoretical)
        .copied()
        .filter(|v| v.is_finite())
        .fold(0.0f64, f64::max)
        .max(1e-12);
    let step = nice_step(top * 1.05 / 5.0);
    let hi = step * (top * 1.05 / step).ceil();
    let plot_w = WIDTH - LEFT - RIGHT;
    let plot_h = HEIGHT - TOP - BOTTOM;
    let x = |v: f64| LEFT + plot_w * (v / hi).clamp(0.0, 1.0);
    let y = |v: f64| TOP + plot_h * (1.0 - (v / hi).clamp(0.0, 1.0));
    let mut s = String::new();
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{HEIGHT}" viewBox="0 0 {WIDTH} {HEIGHT}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(s, r#"<rect width="100%" height="100%" fill="white"/>"#);
    let _ = writeln!(
        s,
        r#"<text x="{LEFT}" y="28" font-size="16">{}</text>"#,
        escape(title)
    );
    let _ = writeln!(
        s,
        r##"<text x="{LEFT}" y="48" fill="#555">{m} held-out reference rows against the {} law; points on the line: the law fits</text>"##,
        escape(check.reference.kind().name())
    );
    // Grid and ticks.
    let mut t = 0.0;
    while t <= hi * (1.0 + 1e-9) {
        let _ = writeln!(
            s,
            "<line x1=\"{:.1}\" y1=\"{TOP}\" x2=\"{:.1}\" y2=\"{:.1}\" stroke=\"#eee\"/>\
             <line x1=\"{LEFT}\" y1=\"{:.1}\" x2=\"{:.1}\" y2=\"{:.1}\" stroke=\"#eee\"/>\
             <text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">{}</text>\
             <text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\">{}</text>",
            x(t),
            x(t),
            TOP + plot_h,
            y(t),
            LEFT + plot_w,
            y(t),
            x(t),
            TOP + plot_h + 16.0,
            tick(t),
            LEFT - 6.0,
            y(t) + 4.0,
            tick(t)
        );
        t += step;
    }
    let _ = writeln!(
        s,
        r##"<rect x="{LEFT}" y="{TOP}" width="{plot_w}" height="{plot_h}" fill="none" stroke="#333"/>"##
    );
    // The identity line.
    let _ = writeln!(
        s,
        r##"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#888" stroke-dasharray="6 4"/>"##,
        x(0.0),
        y(0.0),
        x(hi),
        y(hi)
    );
    // Cutoffs of the checked levels, as horizontal lines.
    for level in &check.levels {
        if level.cutoff.is_finite() && level.cutoff <= hi {
            let _ = writeln!(
                s,
                r##"<line x1="{LEFT}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#c33" stroke-width="0.8"/><text x="{:.1}" y="{:.1}" fill="#c33" text-anchor="end">cutoff at {}: {} of rows above</text>"##,
                y(level.cutoff),
                LEFT + plot_w,
                y(level.cutoff),
                LEFT + plot_w - 4.0,
                y(level.cutoff) - 4.0,
                escape(&super::check::percent(level.alpha)),
                escape(&super::check::percent(level.rate))
            );
        }
    }
    // The points.
    for (&t, &o) in check.theoretical.iter().zip(&check.observed) {
        let _ = writeln!(
            s,
            r##"<circle cx="{:.1}" cy="{:.1}" r="2.2" fill="#1f5fa8" fill-opacity="0.7"/>"##,
            x(t),
            y(o)
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">quantile of the reference law</text>"#,
        LEFT + plot_w / 2.0,
        TOP + plot_h + 36.0
    );
    let _ = writeln!(
        s,
        r#"<text x="16" y="{:.1}" transform="rotate(-90 16 {:.1})" text-anchor="middle">held-out squared distance</text>"#,
        TOP + plot_h / 2.0,
        TOP + plot_h / 2.0
    );
    let _ = writeln!(
        s,
        "<text x=\"{LEFT}\" y=\"{:.1}\" fill=\"#555\">Thresholds assume the model fits the data; a flag is evidence, not a verdict.</text>",
        HEIGHT - 24.0
    );
    s.push_str("</svg>\n");
    s
}

fn tick(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else if v.abs() >= 1000.0 || v.abs() < 0.01 {
        format!("{v:.1e}")
    } else {
        let t = format!("{v:.2}");
        t.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}
