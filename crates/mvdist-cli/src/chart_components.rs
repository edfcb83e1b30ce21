//! `mvdist chart --kind components`: T² on principal components with the
//! squared prediction error Q, Phase I on historical rows and optional
//! Phase II on new rows; a CSV of points and an SVG with both panels.

use crate::chart::{
    finish_report, label_field, monitor_new_rows, points_error, points_file, status_text,
    ChartArgs, ResidualLimitArg,
};
use crate::fit::explain_fit_error;
use crate::output::{csv_field, number_field, write_atomically};
use crate::table::read_table;
use crate::CliError;
use mvdist::control_chart::{
    component_chart_svg, ComponentChart, ComponentContributions, ComponentCount, ComponentOptions,
    ComponentPoint, FalseAlarmRate, PointStatus, ResidualLimitMethod, SignalRemoval,
    VariableScaling,
};

/// `name (share)` of the `top` largest terms, shares of the statistic.
fn top_list(terms: &[f64], order: Vec<usize>, names: &[String]) -> String {
    let total: f64 = terms.iter().sum();
    order
        .iter()
        .map(|&j| {
            let share = if total > 0.0 { terms[j] / total } else { 0.0 };
            format!("{} ({share:.3})", names[j])
        })
        .collect::<Vec<_>>()
        .join("; ")
}

fn top_fields(d: Option<&ComponentContributions>, top: usize, names: &[String]) -> String {
    match d {
        Some(d) => format!(
            "{},{}",
            csv_field(&top_list(&d.t_squared, d.largest_t_squared(top), names)),
            csv_field(&top_list(&d.residual, d.largest_residual(top), names))
        ),
        None => ",".into(),
    }
}

pub fn run(args: &ChartArgs, rate: FalseAlarmRate) -> Result<(), CliError> {
    if args.subgroup_size.is_some() || args.start_model.is_some() {
        return Err(CliError(
            "--kind components charts individual rows from every Phase I row: --subgroup-size and --start-model do not apply".into(),
        ));
    }
    let count = match (args.components, args.explained) {
        (Some(k), _) => ComponentCount::Fixed { components: k },
        (None, Some(f)) => ComponentCount::ExplainedVariance { fraction: f },
        (None, None) => ComponentCount::default(),
    };
    let options = ComponentOptions::default()
        .with_components(count)
        .with_scaling(if args.no_scaling {
            VariableScaling::Centred
        } else {
            VariableScaling::UnitVariance
        })
        .with_false_alarm(rate)
        .with_residual_limit(match args.residual_limit {
            ResidualLimitArg::JacksonMudholkar => ResidualLimitMethod::JacksonMudholkar,
            ResidualLimitArg::ScaledChiSquare => ResidualLimitMethod::ScaledChiSquare,
        })
        .with_removal(if args.remove_signals {
            SignalRemoval::RefitUntilClean {
                max_rounds: args.max_rounds,
            }
        } else {
            SignalRemoval::Keep
        });
    let history = read_table(&args.data, &args.columns, args.skip_incomplete)?;
    let names = history.names.clone();
    let p = names.len();
    let rows = mvdist::data::rows_from_slice(&history.data, p)?;
    let chart = ComponentChart::phase_one(rows, &options).map_err(|e| match e {
        mvdist::Error::InvalidParameter { name, reason } => {
            CliError(format!("{}: invalid {name}: {reason}", args.data.display()))
        }
        other => explain_fit_error(&args.data, &names, history.rows, other),
    })?;
    let (new_points, new_labels) = monitor_new_rows(args, &names, |rows| chart.monitor(rows))?;

    let mut out = points_file(
        args,
        &["phase", "point"],
        &[
            "status",
            "t2",
            "t2_limit",
            "t2_p_value",
            "q",
            "q_limit",
            "q_p_value",
            "t2_signal",
            "q_signal",
            "signal",
            "top_t2_variables",
            "top_q_variables",
        ],
    )?;
    let io = |e: std::io::Error| points_error(args, e);
    let opt = |v: Option<f64>| v.map_or_else(String::new, number_field);
    for (phase, points, labels) in [
        (1, chart.phase_one_points(), &history.labels),
        (2, new_points.as_slice(), &new_labels),
    ] {
        for pt in points {
            let label = label_field(args, labels, pt.index);
            writeln!(
                out.writer(),
                "{phase},{}{label},{},{},{},{},{},{},{},{},{},{},{}",
                pt.index + 1,
                status_text(&pt.status),
                number_field(pt.t_squared),
                number_field(pt.t_squared_limit),
                number_field(pt.t_squared_p_value),
                number_field(pt.residual),
                opt(pt.residual_limit),
                opt(pt.residual_p_value),
                pt.t_squared_signal,
                pt.residual_signal,
                pt.signal(),
                top_fields(pt.diagnosis.as_ref(), args.top, &names)
            )
            .map_err(io)?;
        }
    }
    out.finish()?;
    if let Some(svg) = &args.svg {
        let title = args.title.clone().unwrap_or_else(|| {
            format!(
                "Component chart: {} ({} variables, {} components)",
                args.data
                    .file_name()
                    .map_or_else(String::new, |f| f.to_string_lossy().into_owned()),
                p,
                chart.model().components()
            )
        });
        write_atomically(svg, &component_chart_svg(&chart, &new_points, &title))?;
    }

    let model = chart.model();
    let explained: f64 = model.explained_fractions().iter().sum();
    let removed = chart
        .phase_one_points()
        .iter()
        .filter(|p| matches!(p.status, PointStatus::Removed { .. }))
        .count();
    note!(
        "Phase I: {} rows × {p} variables; {} components explain {:.1}% of the {} variance; false-alarm rate {} per point and statistic",
        chart.phase_one_points().len(),
        model.components(),
        100.0 * explained,
        if model.scaling() == VariableScaling::UnitVariance { "standardized" } else { "centred" },
        rate.alpha()
    );
    let q_limit = chart.residual_limit()?;
    note!(
        "  model from {} rows; T² limit {:.4} (Phase I), {:.4} (new rows); Q limit {}{}; {removed} removed in {} round(s){}",
        model.observations(),
        chart.t_squared_limit(true)?,
        chart.t_squared_limit(false)?,
        q_limit.map_or_else(|| "none (every component kept)".to_string(), |q| format!("{q:.4}")),
        chart.residual_law().map_or_else(String::new, |l| format!(
            " ({})",
            match l.method() {
                ResidualLimitMethod::JacksonMudholkar => "Jackson–Mudholkar",
                ResidualLimitMethod::ScaledChiSquare => "scaled chi-square",
            }
        )),
        chart.rounds().len().saturating_sub(1),
        if chart.reached_round_cap() { " (stopped at --max-rounds with signals left)" } else { "" }
    );
    if args.new.is_some() {
        let t = new_points.iter().filter(|p| p.t_squared_signal).count();
        let q = new_points.iter().filter(|p| p.residual_signal).count();
        note!(
            "Phase II: {} new rows: {t} T² signal(s), {q} Q signal(s)",
            new_points.len()
        );
    }
    let signals: Vec<(usize, &ComponentPoint)> = chart
        .phase_one_points()
        .iter()
        .map(|p| (1, p))
        .chain(new_points.iter().map(|p| (2, p)))
        .filter(|(_, p)| p.signal())
        .collect();
    for (phase, pt) in signals.iter().take(12) {
        let d = pt.diagnosis.as_ref();
        note!(
            "  Phase {} row {}: {}{}",
            if *phase == 1 { "I" } else { "II" },
            pt.index + 1,
            if pt.t_squared_signal {
                format!(
                    "T² = {:.3} > {:.3} (mostly {}) ",
                    pt.t_squared,
                    pt.t_squared_limit,
                    d.map_or_else(String::new, |d| top_list(
                        &d.t_squared,
                        d.largest_t_squared(args.top),
                        &names
                    ))
                )
            } else {
                String::new()
            },
            if pt.residual_signal {
                format!(
                    "Q = {:.3} > {:.3} (mostly {})",
                    pt.residual,
                    pt.residual_limit.unwrap_or(f64::NAN),
                    d.map_or_else(String::new, |d| top_list(
                        &d.residual,
                        d.largest_residual(args.top),
                        &names
                    ))
                )
            } else {
                String::new()
            },
        );
    }
    let count = |pts: &[ComponentPoint], q: bool| {
        pts.iter()
            .filter(|p| {
                if q {
                    p.residual_signal
                } else {
                    p.t_squared_signal
                }
            })
            .count()
    };
    finish_report(
        signals.len(),
        args,
        "the limits assume independent, multivariate normal in-control rows (autocorrelated processes signal far more often)",
        serde_json::json!({
            "alpha": rate.alpha(),
            "components": model.components(),
            "explained_fraction": explained,
            "scaling": if model.scaling() == VariableScaling::UnitVariance { "unit_variance" } else { "centred" },
            "model_rows": model.observations(),
            "removed": removed,
            "t2_limit_phase_one": chart.t_squared_limit(true)?,
            "t2_limit_phase_two": chart.t_squared_limit(false)?,
            "q_limit": q_limit,
            "phase_one_points": chart.phase_one_points().len(),
            "phase_one_t2_signals": count(chart.phase_one_points(), false),
            "phase_one_q_signals": count(chart.phase_one_points(), true),
            "phase_two_points": new_points.len(),
            "phase_two_t2_signals": count(&new_points, false),
            "phase_two_q_signals": count(&new_points, true),
        }),
    )
}
