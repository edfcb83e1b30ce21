//! `mvdist chart`: a Hotelling T² control chart from CSV files — Phase I on
//! historical rows, optional Phase II on new rows — written as a CSV of
//! points (with limits and diagnoses) and an SVG picture.

use crate::fit::explain_fit_error;
use crate::output::{csv_field, load_model_file, number_field, write_atomically, PendingFile};
use crate::table::{read_table, read_table_named, ColumnChoice};
use crate::CliError;
use mvdist::control_chart::{
    chart_svg, ChartPoint, ControlChart, FalseAlarmRate, PhaseOneOptions, PhaseOneStart,
    PointStatus, SignalRemoval,
};
use mvdist::RowOrigin;
use std::path::PathBuf;

#[derive(Clone, Copy, Debug, PartialEq, clap::ValueEnum)]
pub enum StartReference {
    /// F reference: the start model is a classical fit on other rows.
    F,
    /// χ² reference: the start model's parameters are taken as known (e.g. a robust fit).
    Chi2,
}

#[derive(Clone, Copy, Debug, PartialEq, clap::ValueEnum)]
pub enum ChartKind {
    /// Hotelling T² on every variable (individuals or subgroups).
    T2,
    /// T² on principal components with the squared prediction error Q.
    Components,
    /// Multivariate EWMA, for small sustained shifts of the mean.
    Mewma,
    /// Crosier's multivariate CUSUM, for small sustained shifts of the mean.
    Mcusum,
}

#[derive(Clone, Copy, Debug, PartialEq, clap::ValueEnum)]
pub enum ResidualLimitArg {
    /// Jackson–Mudholkar normal approximation (falls back to the scaled chi-square where it is undefined).
    JacksonMudholkar,
    /// Box's scaled chi-square g·χ²_h.
    ScaledChiSquare,
}

#[derive(clap::Args)]
pub struct ChartArgs {
    /// Print a JSON summary of the run on standard output (not with --out -).
    #[arg(long)]
    pub json: bool,
    /// What is charted.
    #[arg(long, value_enum, default_value = "t2")]
    pub kind: ChartKind,
    /// With --kind components: the number of components to keep.
    #[arg(long, conflicts_with = "explained")]
    pub components: Option<usize>,
    /// With --kind components: keep the fewest components explaining this fraction of the variance [default: 0.9].
    #[arg(long)]
    pub explained: Option<f64>,
    /// With --kind components: centre the variables only, instead of scaling each to unit variance.
    #[arg(long)]
    pub no_scaling: bool,
    /// With --kind components: how the limit of Q is computed.
    #[arg(long, value_enum, default_value = "jackson-mudholkar")]
    pub residual_limit: ResidualLimitArg,
    /// With --kind components, mewma or mcusum: how many top contributing variables to list for each signal.
    #[arg(long, default_value_t = 3)]
    pub top: usize,
    /// With --kind mewma: the smoothing constant λ in (0, 1] [default: 0.1].
    #[arg(long)]
    pub smoothing: Option<f64>,
    /// With --kind mewma: standardize by the asymptotic covariance λ/(2−λ)·Σ instead of the exact one of each row (the form of published limit tables).
    #[arg(long)]
    pub asymptotic_covariance: bool,
    /// With --kind mcusum: the reference value k ≥ 0 in units of the generalized norm [default: 0.5].
    #[arg(long)]
    pub reference_value: Option<f64>,
    /// With --kind mewma or mcusum: the control limit h, instead of one designed by simulation for --arl.
    #[arg(long, conflicts_with = "arl")]
    pub limit: Option<f64>,
    /// With --kind mewma or mcusum: a shift size δ (in Mahalanobis units) whose average run length to report; repeat for several.
    #[arg(long = "shift")]
    pub shifts: Vec<f64>,
    /// With --kind mewma or mcusum: simulated runs for the limit design and the run lengths.
    #[arg(long, default_value_t = 10_000)]
    pub runs: usize,
    /// With --kind mewma or mcusum: seed of the run-length simulation [default: a fixed seed].
    #[arg(long)]
    pub seed: Option<u64>,
    /// With --kind mewma or mcusum: take the in-control mean and covariance from this model file instead of estimating them from DATA.
    #[arg(long)]
    pub in_control_model: Option<PathBuf>,
    /// CSV file of historical rows (Phase I), in time order.
    pub data: PathBuf,
    /// CSV file of new rows to monitor (Phase II), with the same variables.
    #[arg(long)]
    pub new: Option<PathBuf>,
    /// Where to write the charted points with limits and diagnoses (CSV).
    #[arg(long)]
    pub out: PathBuf,
    /// Where to write the chart picture (SVG).
    #[arg(long)]
    pub svg: Option<PathBuf>,
    /// False-alarm probability per point.
    #[arg(long, conflicts_with = "arl")]
    pub alpha: Option<f64>,
    /// In-control average run length instead of --alpha (alpha = 1/ARL).
    #[arg(long)]
    pub arl: Option<f64>,
    /// Chart means of subgroups of this many consecutive rows.
    #[arg(long)]
    pub subgroup_size: Option<usize>,
    /// Remove Phase I signals and re-estimate until none remain.
    #[arg(long)]
    pub remove_signals: bool,
    /// With --remove-signals, the most removal rounds.
    #[arg(long, default_value_t = 10)]
    pub max_rounds: usize,
    /// Most conditioning variables in the decomposition of a signal.
    #[arg(long, default_value_t = 1)]
    pub depth: usize,
    /// A model file (from `mvdist fit` or another estimator) that screens the
    /// Phase I rows before the first estimate (individual observations only).
    #[arg(long)]
    pub start_model: Option<PathBuf>,
    /// How the start model's distances are referred.
    #[arg(long, value_enum, default_value = "f")]
    pub start_reference: StartReference,
    /// Title of the SVG chart.
    #[arg(long)]
    pub title: Option<String>,
    #[command(flatten)]
    pub columns: ColumnChoice,
    /// Leave out rows with a missing value (individual observations only).
    #[arg(long)]
    pub skip_incomplete: bool,
}

fn rate(args: &ChartArgs) -> Result<FalseAlarmRate, CliError> {
    match (args.alpha, args.arl) {
        (Some(a), _) => FalseAlarmRate::per_point(a)
            .map_err(|_| CliError(format!("--alpha {a} is not between 0 and 1"))),
        (None, Some(l)) => FalseAlarmRate::from_average_run_length(l)
            .map_err(|_| CliError(format!("--arl {l} is not a number greater than 1"))),
        (None, None) => Ok(FalseAlarmRate::default()),
    }
}

pub fn run(args: &ChartArgs) -> Result<(), CliError> {
    crate::output::check_json_target(args.json, &args.out)?;
    let rate = rate(args)?;
    let shift_only = args.smoothing.is_some()
        || args.asymptotic_covariance
        || args.reference_value.is_some()
        || args.limit.is_some()
        || !args.shifts.is_empty()
        || args.seed.is_some()
        || args.in_control_model.is_some();
    match args.kind {
        ChartKind::Mewma | ChartKind::Mcusum => return crate::chart_shift::run(args),
        _ if shift_only => {
            return Err(CliError(
                "--smoothing, --asymptotic-covariance, --reference-value, --limit, --shift, --seed and --in-control-model apply to --kind mewma or mcusum".into(),
            ))
        }
        ChartKind::Components => return crate::chart_components::run(args, rate),
        ChartKind::T2 => {}
    }
    if args.components.is_some() || args.explained.is_some() || args.no_scaling {
        return Err(CliError(
            "--components, --explained and --no-scaling apply to --kind components".into(),
        ));
    }
    if args.subgroup_size.is_some() && args.skip_incomplete {
        return Err(CliError(
            "--skip-incomplete cannot be used with --subgroup-size: leaving out a row would shift the subgroups".into(),
        ));
    }
    if args.subgroup_size.is_some() && args.start_model.is_some() {
        return Err(CliError(
            "--start-model screens individual observations; it cannot be used with --subgroup-size"
                .into(),
        ));
    }
    let history = read_table(&args.data, &args.columns, args.skip_incomplete)?;
    let names = history.names.clone();
    let p = names.len();
    let start = match &args.start_model {
        None => PhaseOneStart::AllRows,
        Some(path) => {
            let file = load_model_file(path)?;
            if file.variables() != names.as_slice() {
                return Err(CliError(format!(
                    "{}: the start model's variables ({}) are not the chart's ({})",
                    path.display(),
                    file.variables().join(", "),
                    names.join(", ")
                )));
            }
            PhaseOneStart::ScreenWith {
                model: file.model().clone(),
                origin: match args.start_reference {
                    StartReference::F => RowOrigin::New,
                    StartReference::Chi2 => RowOrigin::KnownParameters,
                },
            }
        }
    };
    let settings = PhaseOneOptions::default()
        .with_false_alarm(rate)
        .with_removal(if args.remove_signals {
            SignalRemoval::RefitUntilClean {
                max_rounds: args.max_rounds,
            }
        } else {
            SignalRemoval::Keep
        })
        .with_start(start)
        .with_diagnosis_depth(args.depth);
    let rows = mvdist::data::rows_from_slice(&history.data, p)?;
    let chart = match args.subgroup_size {
        None => ControlChart::individuals(rows, &settings),
        Some(n) => ControlChart::subgroups(rows, n, &settings),
    }
    .map_err(|e| match e {
        mvdist::Error::ShapeMismatch { expected, found, .. } if args.subgroup_size.is_some() => CliError(format!(
            "{}: {found} rows do not divide into subgroups of {}; give a multiple ({expected} rows, for example)",
            args.data.display(),
            args.subgroup_size.unwrap_or(1)
        )),
        mvdist::Error::InvalidParameter { name, reason } => CliError(format!("{}: invalid {name}: {reason}", args.data.display())),
        other => explain_fit_error(&args.data, &names, history.rows, other),
    })?;

    let (new_points, new_labels) = match read_new_rows(args, &names)? {
        None => (Vec::new(), Vec::new()),
        Some(t) => {
            let path = args.new.as_deref().unwrap_or(args.data.as_path());
            let pts = chart
                .monitor(mvdist::data::rows_from_slice(&t.data, p)?)
                .map_err(|e| match e {
                    mvdist::Error::ShapeMismatch { found, .. } => CliError(format!(
                        "{}: {found} rows do not divide into subgroups of {}",
                        path.display(),
                        args.subgroup_size.unwrap_or(1)
                    )),
                    other => CliError(format!("{}: {other}", path.display())),
                })?;
            (pts, t.labels)
        }
    };

    // Points CSV.
    let size = args.subgroup_size.unwrap_or(1);
    let mut out = points_file(
        args,
        &["phase", "point", "first_row", "last_row"],
        &[
            "status",
            "t2",
            "ucl",
            "p_value",
            "signal",
            "top_term",
            "top_term_value",
            "top_term_cutoff",
            "terms_over_cutoff",
            "out_of_range",
            "broken_relationships",
            "top_variable",
            "top_share",
        ],
    )?;
    let io = |e: std::io::Error| points_error(args, e);
    for (phase, points, labels) in [
        (1, chart.phase_one_points(), &history.labels),
        (2, new_points.as_slice(), &new_labels),
    ] {
        for pt in points {
            let first = pt.index * size + 1;
            let label = label_field(args, labels, pt.index * size);
            let diag = match &pt.diagnosis {
                Some(d) => {
                    let top = d.terms.first();
                    let share = if d.t_squared > 0.0 {
                        d.contributions.terms()[d.contributions.top_variable()] / d.t_squared
                    } else {
                        0.0
                    };
                    let list = |terms: Vec<&mvdist::control_chart::RatedTerm>| {
                        terms
                            .iter()
                            .map(|t| t.label(&names))
                            .collect::<Vec<_>>()
                            .join("; ")
                    };
                    format!(
                        "{},{},{},{},{},{},{},{share:.4}",
                        csv_field(&top.map_or_else(String::new, |t| t.label(&names))),
                        top.map_or(f64::NAN, |t| t.value),
                        top.map_or(f64::NAN, |t| t.cutoff),
                        d.exceeding().count(),
                        csv_field(&list(d.out_of_range())),
                        csv_field(&list(d.broken_relationships())),
                        csv_field(&names[d.contributions.top_variable()])
                    )
                }
                None => ",,,,,,,".to_string(),
            };
            writeln!(
                out.writer(),
                "{phase},{},{first},{}{label},{},{},{},{},{},{diag}",
                pt.index + 1,
                first + size - 1,
                status_text(&pt.status),
                number_field(pt.t_squared),
                number_field(pt.upper_limit),
                number_field(pt.p_value),
                pt.signal
            )
            .map_err(io)?;
        }
    }
    out.finish()?;
    if let Some(svg) = &args.svg {
        let title = args.title.clone().unwrap_or_else(|| {
            format!(
                "T² chart: {} ({})",
                args.data
                    .file_name()
                    .map_or_else(String::new, |f| f.to_string_lossy().into_owned()),
                names.join(", ")
            )
        });
        write_atomically(svg, &chart_svg(&chart, &new_points, &title)?)?;
    }

    // Summary.
    let unit = if size > 1 {
        format!("subgroups of {size} rows")
    } else {
        "rows".to_string()
    };
    let removed = chart
        .phase_one_points()
        .iter()
        .filter(|p| matches!(p.status, PointStatus::Removed { .. }))
        .count();
    let remaining = chart
        .phase_one_points()
        .iter()
        .filter(|p| p.status == PointStatus::InEstimate && p.signal)
        .count();
    note!(
        "Phase I: {} {unit} × {p} variables ({}); false-alarm rate {} per point (ARL {:.0})",
        chart.phase_one_points().len(),
        names.join(", "),
        rate.alpha(),
        rate.average_run_length()
    );
    note!(
        "  estimate from {} points; Phase I UCL = {:.4}; {removed} removed in {} round(s){}; {remaining} signal(s) among the points kept",
        chart.in_estimate(),
        chart.upper_limit(RowOrigin::InSample)?,
        chart.rounds().len().saturating_sub(1),
        if chart.reached_round_cap() { " (stopped at --max-rounds with signals left)" } else { "" }
    );
    let phase_two_ucl = chart.upper_limit(RowOrigin::New)?;
    if args.new.is_some() {
        let signals = new_points.iter().filter(|p| p.signal).count();
        note!(
            "Phase II: {} new points, UCL = {phase_two_ucl:.4}: {signals} signal(s)",
            new_points.len()
        );
    } else {
        note!("  Phase II UCL for new points: {phase_two_ucl:.4}");
    }
    let signals: Vec<(usize, &ChartPoint)> = chart
        .phase_one_points()
        .iter()
        .map(|p| (1, p))
        .chain(new_points.iter().map(|p| (2, p)))
        .filter(|(_, p)| p.signal)
        .collect();
    for (phase, pt) in signals.iter().take(12) {
        if let Some(d) = &pt.diagnosis {
            let top = d.terms.first();
            let range: Vec<String> = d.out_of_range().iter().map(|t| t.label(&names)).collect();
            let broken: Vec<String> = d
                .broken_relationships()
                .iter()
                .take(3)
                .map(|t| t.label(&names))
                .collect();
            note!(
                "  Phase {} point {}: T² = {:.3} > {:.3}; largest term {} = {:.3} (cutoff {:.3}); out of range: {}; broken relationships: {}",
                if *phase == 1 { "I" } else { "II" },
                pt.index + 1,
                pt.t_squared,
                pt.upper_limit,
                top.map_or_else(String::new, |t| t.label(&names)),
                top.map_or(f64::NAN, |t| t.value),
                top.map_or(f64::NAN, |t| t.cutoff),
                if range.is_empty() { "none".to_string() } else { range.join(", ") },
                if broken.is_empty() { "none".to_string() } else { broken.join("; ") },
            );
        }
    }
    let count = |pts: &[ChartPoint]| pts.iter().filter(|p| p.signal).count();
    finish_report(
        signals.len(),
        args,
        "the limits assume independent, multivariate normal in-control data",
        serde_json::json!({
            "alpha": rate.alpha(),
            "subgroup_size": size,
            "phase_one_points": chart.phase_one_points().len(),
            "in_estimate": chart.in_estimate(),
            "removed": removed,
            "phase_one_limit": chart.upper_limit(RowOrigin::InSample)?,
            "phase_two_limit": phase_two_ucl,
            "phase_one_signals": count(chart.phase_one_points()),
            "phase_two_points": new_points.len(),
            "phase_two_signals": count(&new_points),
        }),
    )
}

/// The end of every chart report: how many signals were not listed, the
/// files written, and the caution.
pub(crate) fn finish_report(
    signals: usize,
    args: &ChartArgs,
    assumption: &str,
    details: serde_json::Value,
) -> Result<(), CliError> {
    crate::output::record_flags(signals > 0);
    if signals > 12 {
        note!(
            "  … {} more signal(s) in {}",
            signals - 12,
            args.out.display()
        );
    }
    note!(
        "wrote {}{}",
        args.out.display(),
        args.svg
            .as_ref()
            .map_or_else(String::new, |s| format!(" and {}", s.display()))
    );
    let caution = format!("{assumption}; a signal is a prompt to investigate, not a verdict — decisions belong to local procedures and qualified people");
    note!("note: {caution}.");
    if args.json {
        let kind = clap::ValueEnum::to_possible_value(&args.kind)
            .map_or_else(String::new, |v| v.get_name().to_string());
        let mut summary = serde_json::json!({
            "command": "chart",
            "kind": kind,
            "data": args.data.display().to_string(),
            "new": args.new.as_ref().map(|p| p.display().to_string()),
            "signals": signals,
            "out": args.out.display().to_string(),
            "svg": args.svg.as_ref().map(|p| p.display().to_string()),
            "caution": caution,
        });
        if let (Some(all), serde_json::Value::Object(extra)) = (summary.as_object_mut(), details) {
            all.extend(extra);
        }
        crate::output::print_json(&summary)?;
    }
    Ok(())
}

/// The rows of `--new`, read with the chart's variables (`None` without
/// the option).
pub(crate) fn read_new_rows(
    args: &ChartArgs,
    names: &[String],
) -> Result<Option<crate::table::Table>, CliError> {
    args.new
        .as_ref()
        .map(|path| {
            read_table_named(
                path,
                names,
                args.columns.label.as_deref(),
                args.skip_incomplete,
            )
        })
        .transpose()
}

/// Creates the points file (written in full or not at all) with its
/// header: `leading` columns, `label` when a label column is charted, then
/// `columns`.
pub(crate) fn points_file(
    args: &ChartArgs,
    leading: &[&str],
    columns: &[&str],
) -> Result<PendingFile, CliError> {
    let mut out = PendingFile::create(&args.out)?;
    let mut header = leading.to_vec();
    if args.columns.label.is_some() {
        header.push("label");
    }
    header.extend_from_slice(columns);
    writeln!(out.writer(), "{}", header.join(",")).map_err(|e| points_error(args, e))?;
    Ok(out)
}

/// An error writing the points file.
pub(crate) fn points_error(args: &ChartArgs, e: std::io::Error) -> CliError {
    CliError(format!("{}: {e}", args.out.display()))
}

/// `,label` of row `row` when a label column is charted (empty otherwise).
pub(crate) fn label_field(args: &ChartArgs, labels: &[String], row: usize) -> String {
    if args.columns.label.is_some() {
        format!(",{}", csv_field(labels.get(row).map_or("", |s| s.as_str())))
    } else {
        String::new()
    }
}

/// The status of a Phase I point in the points file.
pub(crate) fn status_text(s: &PointStatus) -> String {
    match s {
        PointStatus::InEstimate => "in_estimate".into(),
        PointStatus::Removed { round, .. } => format!("removed_round_{round}"),
        PointStatus::Monitored => "monitored".into(),
    }
}

/// The points of the `--new` rows charted by `monitor`, with their labels
/// (both empty without the option); errors name the file.
pub(crate) fn monitor_new_rows<P>(
    args: &ChartArgs,
    names: &[String],
    monitor: impl FnOnce(ndarray::ArrayView2<'_, f64>) -> mvdist::Result<Vec<P>>,
) -> Result<(Vec<P>, Vec<String>), CliError> {
    match read_new_rows(args, names)? {
        None => Ok((Vec::new(), Vec::new())),
        Some(t) => {
            let points =
                monitor(mvdist::data::rows_from_slice(&t.data, names.len())?).map_err(|e| {
                    let path = args.new.as_deref().unwrap_or(args.data.as_path());
                    CliError(format!("{}: {e}", path.display()))
                })?;
            Ok((points, t.labels))
        }
    }
}
