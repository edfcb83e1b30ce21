//! `mvdist chart --kind mewma|mcusum`: charts for small sustained shifts of
//! the mean. The in-control mean and covariance come from the historical
//! rows (optionally after a T² Phase I with removal of signals) or from a
//! model file; the limit is given or designed by simulation for a target
//! in-control average run length. Historical rows are charted
//! retrospectively and new rows from a fresh zero state; a CSV of points
//! and an SVG are written.

use crate::chart::{
    finish_report, label_field, monitor_new_rows, points_error, points_file, ChartArgs, ChartKind,
};
use crate::fit::explain_fit_error;
use crate::output::{csv_field, load_model_file, number_field, write_atomically};
use crate::table::read_table;
use crate::CliError;
use mvdist::control_chart::run_length::{
    average_run_lengths, limit_for_average_run_length, RunLengthEstimate, RunLengthOptions,
};
use mvdist::control_chart::{
    shift_chart_svg, ChartScheme, ControlChart, EwmaCovariance, FalseAlarmRate, InControlEstimate,
    McusumChart, McusumOptions, MewmaChart, MewmaOptions, PhaseOneOptions, PointStatus, ShiftPoint,
    SignalRemoval,
};
use ndarray::ArrayView2;

/// The chart of either kind.
enum ShiftChart {
    Mewma(MewmaChart),
    Mcusum(McusumChart),
}

impl ShiftChart {
    fn monitor(&self, rows: ArrayView2<'_, f64>) -> mvdist::Result<Vec<ShiftPoint>> {
        match self {
            ShiftChart::Mewma(c) => c.monitor(rows),
            ShiftChart::Mcusum(c) => c.monitor(rows),
        }
    }
}

/// Options of the other chart kinds, refused here with a reason.
fn check_options(args: &ChartArgs) -> Result<(), CliError> {
    let kind = if args.kind == ChartKind::Mewma {
        "mewma"
    } else {
        "mcusum"
    };
    let refuse = |what: &str| Err(CliError(format!("{what} with --kind {kind}")));
    if args.subgroup_size.is_some() {
        return refuse("--subgroup-size does not apply (the chart takes individual rows)");
    }
    if args.start_model.is_some() {
        return refuse("--start-model does not apply; give --in-control-model to take the in-control mean and covariance from a model file,");
    }
    if args.components.is_some() || args.explained.is_some() || args.no_scaling {
        return refuse("--components, --explained and --no-scaling do not apply");
    }
    if args.kind == ChartKind::Mcusum && (args.smoothing.is_some() || args.asymptotic_covariance) {
        return refuse("--smoothing and --asymptotic-covariance apply to --kind mewma, not");
    }
    if args.kind == ChartKind::Mewma && args.reference_value.is_some() {
        return refuse("--reference-value applies to --kind mcusum, not");
    }
    if args.alpha.is_some() && !args.remove_signals {
        return refuse("--alpha sets the T² screen of --remove-signals only; give --arl (the in-control average run length) or --limit");
    }
    if args.in_control_model.is_some() && args.remove_signals {
        return refuse("--remove-signals screens DATA for the estimate; it cannot be combined with --in-control-model");
    }
    Ok(())
}

/// `name (share)` of the `top` variables with the largest sequential terms
/// of a signal.
fn top_variables(point: &ShiftPoint, top: usize, names: &[String]) -> String {
    let Some(d) = &point.diagnosis else {
        return String::new();
    };
    let total = d.contributions.total();
    d.contributions
        .in_order()
        .into_iter()
        .take(top)
        .map(|(j, t)| {
            let share = if total > 0.0 { t / total } else { 0.0 };
            format!("{} ({share:.3})", names.get(j).map_or("?", |s| s.as_str()))
        })
        .collect::<Vec<_>>()
        .join("; ")
}

fn run_length_text(r: &RunLengthEstimate) -> String {
    format!(
        "{:.1} ± {:.1}{}",
        r.average,
        r.standard_error,
        if r.censored > 0 {
            format!(
                " ({} of {} runs cut at {} rows)",
                r.censored, r.runs, r.max_steps
            )
        } else {
            String::new()
        }
    )
}

pub fn run(args: &ChartArgs) -> Result<(), CliError> {
    check_options(args)?;
    let history = read_table(&args.data, &args.columns, args.skip_incomplete)?;
    let names = history.names.clone();
    let p = names.len();
    let rows = mvdist::data::rows_from_slice(&history.data, p)?;

    // The in-control estimate, and the status of each historical row.
    let (estimate, statuses, source) = match &args.in_control_model {
        Some(path) => {
            let file = load_model_file(path)?;
            if file.variables() != names.as_slice() {
                return Err(CliError(format!(
                    "{}: the model's variables ({}) are not the chart's ({})",
                    path.display(),
                    file.variables().join(", "),
                    names.join(", ")
                )));
            }
            (
                InControlEstimate::from_model(file.model()),
                vec!["charted".to_string(); history.rows],
                format!(
                    "mean and covariance from {} (taken as known)",
                    path.display()
                ),
            )
        }
        None if args.remove_signals => {
            let rate = match args.alpha {
                Some(a) => FalseAlarmRate::per_point(a)
                    .map_err(|_| CliError(format!("--alpha {a} is not between 0 and 1")))?,
                None => FalseAlarmRate::default(),
            };
            let settings = PhaseOneOptions::default()
                .with_false_alarm(rate)
                .with_removal(SignalRemoval::RefitUntilClean {
                    max_rounds: args.max_rounds,
                });
            let screen = ControlChart::individuals(rows, &settings).map_err(|e| match e {
                mvdist::Error::InvalidParameter { name, reason } => {
                    CliError(format!("{}: invalid {name}: {reason}", args.data.display()))
                }
                other => explain_fit_error(&args.data, &names, history.rows, other),
            })?;
            let statuses = screen
                .phase_one_points()
                .iter()
                .map(|pt| match pt.status {
                    PointStatus::Removed { round, .. } => format!("removed_round_{round}"),
                    _ => "in_estimate".to_string(),
                })
                .collect();
            let removed = history.rows - screen.in_estimate();
            (
                InControlEstimate::from_chart(&screen),
                statuses,
                format!(
                    "estimated from {} of {} rows after a T² Phase I (α = {} per point) removed {removed}{}",
                    screen.in_estimate(),
                    history.rows,
                    rate.alpha(),
                    if screen.reached_round_cap() { ", stopped at --max-rounds with signals left" } else { "" }
                ),
            )
        }
        None => (
            InControlEstimate::from_rows(rows)
                .map_err(|e| explain_fit_error(&args.data, &names, history.rows, e))?,
            vec!["in_estimate".to_string(); history.rows],
            format!("estimated from all {} rows", history.rows),
        ),
    };

    let scheme = match args.kind {
        ChartKind::Mewma => ChartScheme::Mewma(
            MewmaOptions::default()
                .with_smoothing(args.smoothing.unwrap_or(0.1))
                .with_covariance(if args.asymptotic_covariance {
                    EwmaCovariance::Asymptotic
                } else {
                    EwmaCovariance::Exact
                }),
        ),
        _ => ChartScheme::Mcusum(
            McusumOptions::default().with_reference_value(args.reference_value.unwrap_or(0.5)),
        ),
    };
    let invalid = |e: mvdist::Error| match e {
        mvdist::Error::InvalidParameter { name, reason } => {
            CliError(format!("invalid {name}: {reason}"))
        }
        other => CliError(other.to_string()),
    };
    scheme.validate().map_err(invalid)?;
    let mut sim = RunLengthOptions::default().with_runs(args.runs);
    if let Some(seed) = args.seed {
        sim = sim.with_seed(seed);
    }

    // The limit: given, or designed for the target in-control ARL.
    let (limit, in_control, designed) = match args.limit {
        Some(h) => {
            let r = average_run_lengths(&scheme, p, h, &[0.0], &sim).map_err(invalid)?;
            let r = r
                .into_iter()
                .next()
                .ok_or_else(|| CliError("the run-length simulation returned nothing".into()))?;
            (h, r, None)
        }
        None => {
            let target = match args.arl {
                Some(t) => t,
                None => FalseAlarmRate::default().average_run_length(),
            };
            let d = limit_for_average_run_length(&scheme, p, target, &sim).map_err(invalid)?;
            (d.limit, d.in_control, Some(target))
        }
    };
    let shifted = average_run_lengths(&scheme, p, limit, &args.shifts, &sim).map_err(invalid)?;

    let chart = match scheme {
        ChartScheme::Mewma(o) => {
            ShiftChart::Mewma(MewmaChart::new(estimate, &o, limit).map_err(invalid)?)
        }
        ChartScheme::Mcusum(o) => {
            ShiftChart::Mcusum(McusumChart::new(estimate, &o, limit).map_err(invalid)?)
        }
    };
    let first = chart
        .monitor(rows)
        .map_err(|e| CliError(format!("{}: {e}", args.data.display())))?;
    let (second, new_labels) = monitor_new_rows(args, &names, |rows| chart.monitor(rows))?;

    // Points CSV.
    let mut out = points_file(
        args,
        &["phase", "point"],
        &[
            "status",
            "step",
            "statistic",
            "limit",
            "signal",
            "top_variables",
        ],
    )?;
    let io = |e: std::io::Error| points_error(args, e);
    let monitored = "monitored".to_string();
    for (phase, points, labels, status) in [
        (1, first.as_slice(), &history.labels, Some(&statuses)),
        (2, second.as_slice(), &new_labels, None),
    ] {
        for pt in points {
            let label = label_field(args, labels, pt.index);
            let status = status.and_then(|s| s.get(pt.index)).unwrap_or(&monitored);
            writeln!(
                out.writer(),
                "{phase},{}{label},{status},{},{},{},{},{}",
                pt.index + 1,
                pt.step,
                number_field(pt.statistic),
                number_field(pt.limit),
                pt.signal,
                csv_field(&top_variables(pt, args.top, &names))
            )
            .map_err(io)?;
        }
    }
    out.finish()?;
    let what = match scheme {
        ChartScheme::Mewma(o) => format!(
            "MEWMA (λ = {}, {} covariance)",
            o.smoothing(),
            match o.covariance() {
                EwmaCovariance::Exact => "exact",
                EwmaCovariance::Asymptotic => "asymptotic",
            }
        ),
        ChartScheme::Mcusum(o) => format!("MCUSUM (k = {})", o.reference_value()),
    };
    if let Some(svg) = &args.svg {
        let title = args.title.clone().unwrap_or_else(|| {
            format!(
                "{what}: {} ({p} variables)",
                args.data
                    .file_name()
                    .map_or_else(String::new, |f| f.to_string_lossy().into_owned()),
            )
        });
        let phases = if second.is_empty() {
            ("Phase I (retrospective)", "")
        } else {
            ("Phase I (retrospective)", "Phase II")
        };
        write_atomically(
            svg,
            &shift_chart_svg(&scheme, &first, &second, Some(&names), phases, &title),
        )?;
    }

    // Summary.
    note!("{what} chart of {p} variables; in-control {source}");
    note!(
        "  limit h = {limit:.4}{}; simulated in-control ARL {} (SE; {} runs, seed {})",
        designed.map_or_else(
            || " (given)".to_string(),
            |t| format!(" (designed for an in-control ARL of {t:.1})")
        ),
        run_length_text(&in_control),
        in_control.runs,
        in_control.seed
    );
    for r in &shifted {
        note!(
            "  ARL at a shift of size δ = {}: {}",
            r.shift,
            run_length_text(r)
        );
    }
    let count = |pts: &[ShiftPoint]| pts.iter().filter(|p| p.signal).count();
    let first_at = |pts: &[ShiftPoint], labels: &[String]| {
        pts.iter().find(|p| p.signal).map_or_else(
            || "none".to_string(),
            |p| match labels.get(p.index) {
                Some(l) if !l.is_empty() => format!("point {} ({l})", p.index + 1),
                _ => format!("point {}", p.index + 1),
            },
        )
    };
    note!(
        "Phase I (retrospective, from the zero state): {} rows, {} signal(s); first at {}",
        first.len(),
        count(&first),
        first_at(&first, &history.labels)
    );
    if args.new.is_some() {
        note!(
            "Phase II (from the zero state): {} new rows, {} signal(s); first at {}",
            second.len(),
            count(&second),
            first_at(&second, &new_labels)
        );
    }
    let signals: Vec<(usize, &ShiftPoint)> = first
        .iter()
        .map(|p| (1, p))
        .chain(second.iter().map(|p| (2, p)))
        .filter(|(_, p)| p.signal)
        .collect();
    for (phase, pt) in signals.iter().take(12) {
        note!(
            "  Phase {} point {} (step {}): {:.3} > {:.3}; largest terms {}",
            if *phase == 1 { "I" } else { "II" },
            pt.index + 1,
            pt.step,
            pt.statistic,
            pt.limit,
            top_variables(pt, args.top, &names)
        );
    }
    let first_index = |pts: &[ShiftPoint]| pts.iter().find(|p| p.signal).map(|p| p.index + 1);
    let details = serde_json::json!({
        "scheme": scheme,
        "in_control": source,
        "limit": limit,
        "designed_for_average_run_length": designed,
        "in_control_run_length": in_control,
        "shifted_run_lengths": shifted,
        "phase_one_points": first.len(),
        "phase_one_signals": count(&first),
        "phase_one_first_signal": first_index(&first),
        "phase_two_points": second.len(),
        "phase_two_signals": count(&second),
        "phase_two_first_signal": first_index(&second),
    });
    finish_report(
        signals.len(),
        args,
        "the limit and run lengths assume independent, multivariate normal in-control rows with known mean and covariance (an estimated mean and covariance make the actual in-control run length random and often shorter; autocorrelated processes signal far more often); the Phase I rows also made the estimate, so their chart is only a retrospective look",
        details,
    )
}
