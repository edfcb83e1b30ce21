//! `mvdist score`: squared distances, p-values, flags and the top variable
//! for every row of a CSV file, streamed.

use crate::output::{csv_field, load_model_file, number_field, PendingFile};
use crate::rows::RowReader;
use crate::table::{layout_for, missing_value_error, RowOutcome};
use crate::CliError;
use mvdist::model_file::ModelFile;
use mvdist::{ContributionOrder, EmpiricalPValue, Reference, RowOrigin};
use std::io::IsTerminal;
use std::path::PathBuf;

#[derive(Clone, Copy, Debug, PartialEq, clap::ValueEnum)]
pub enum AdjustChoice {
    /// Each row at level alpha on its own.
    None,
    /// Bonferroni: flag when m·p ≤ alpha (family-wise error rate).
    Bonferroni,
    /// Benjamini–Hochberg: flag at false discovery rate alpha.
    Bh,
}

#[derive(clap::Args)]
pub struct ScoreArgs {
    /// Print a JSON summary of the run on standard output (not with --out -).
    #[arg(long)]
    pub json: bool,
    /// Model file written by `mvdist fit`.
    pub model: PathBuf,
    /// CSV file of rows to score; it must have the model's columns.
    pub data: PathBuf,
    /// Where to write the scores (CSV).
    #[arg(long)]
    pub out: PathBuf,
    /// Level for flags.
    #[arg(long, default_value_t = 0.01)]
    pub alpha: f64,
    /// The rows were part of the model's fitting sample (Beta reference);
    /// by default rows are new (F reference).
    #[arg(long)]
    pub in_sample: bool,
    /// Multiple-testing adjustment for flags.
    #[arg(long, value_enum, default_value = "none")]
    pub adjust: AdjustChoice,
    /// A column copied to the output to identify rows.
    #[arg(long)]
    pub label: Option<String>,
    /// Write rows with a missing value as unscored (status "incomplete")
    /// instead of stopping.
    #[arg(long, conflicts_with = "observed_only")]
    pub skip_incomplete: bool,
    /// Score rows with missing values on their observed variables (the
    /// model's marginal on them, with a law of as many variables); the output
    /// gets a column "observed" with the number of variables each row had.
    #[arg(long)]
    pub observed_only: bool,
    /// Where p-values come from: the model's reference law (assumes
    /// multivariate normal rows), or the calibration rows held out at fit
    /// time (`fit --hold-out`; distribution-free for rows exchangeable with
    /// them), optionally with the calibration-conditional adjustment.
    #[arg(long, value_enum, default_value = "law")]
    pub p_values: PValueChoice,
    /// With --p-values held-out-conditional: the chance that the calibration
    /// rows are unlucky (the guarantee holds except with this probability;
    /// default 0.05).
    #[arg(long, value_name = "DELTA")]
    pub delta: Option<f64>,
}

#[derive(Clone, Copy, Debug, PartialEq, clap::ValueEnum)]
pub enum PValueChoice {
    /// The reference law (F for new rows, Beta for in-sample rows).
    Law,
    /// Conformal p-values from the held-out calibration rows.
    HeldOut,
    /// Held-out p-values valid given the calibration rows, except with probability --delta.
    HeldOutConditional,
}

/// One pass over the data, calling `each` for every row with its line,
/// label and values (`None` when incomplete and skipped).
fn for_each_row(
    args: &ScoreArgs,
    file: &ModelFile,
    mut each: impl FnMut(u64, Option<&str>, Option<&[f64]>) -> Result<(), CliError>,
) -> Result<(), CliError> {
    let (mut reader, headers) = RowReader::open(&args.data)?;
    let layout = layout_for(
        &args.data,
        &headers,
        file.variables(),
        args.label.as_deref(),
    )?;
    let size = std::fs::metadata(&args.data).map(|m| m.len()).unwrap_or(0);
    let progress = std::io::stderr().is_terminal()
        && size > 64 << 20
        && !crate::output::quiet()
        && reader.bytes_read().is_some();
    let mut values = Vec::with_capacity(layout.fields.len());
    let mut count = 0u64;
    while let Some((line, outcome)) = reader.next_row(&args.data, &layout, &mut values)? {
        let label = reader.label(&layout);
        match outcome {
            RowOutcome::Complete => each(line, label, Some(&values))?,
            RowOutcome::Missing(_) if args.observed_only => each(line, label, Some(&values))?,
            RowOutcome::Missing(k) => {
                if !args.skip_incomplete {
                    return Err(missing_value_error(
                        &reader.place(&args.data, line),
                        &layout.names[k],
                    ));
                }
                each(line, label, None)?;
            }
        }
        count += 1;
        if progress && count.is_multiple_of(1_000_000) {
            let done = reader.bytes_read().unwrap_or(0);
            eprint!(
                "\rmvdist: {count} rows ({:.0}%)",
                100.0 * done as f64 / size as f64
            );
        }
    }
    if progress {
        eprintln!();
    }
    if count == 0 {
        return Err(CliError(format!(
            "{}: the file has a header row but no data rows",
            args.data.display()
        )));
    }
    Ok(())
}

pub fn run(args: &ScoreArgs) -> Result<(), CliError> {
    crate::output::check_json_target(args.json, &args.out)?;
    if !(args.alpha > 0.0 && args.alpha < 1.0) {
        return Err(CliError(format!(
            "--alpha {} is not between 0 and 1",
            args.alpha
        )));
    }
    let file = load_model_file(&args.model)?;
    let model = file.model();
    let origin = if args.in_sample {
        RowOrigin::InSample
    } else {
        RowOrigin::New
    };
    let reference: Reference = model
        .reference(origin)
        .map_err(|e| CliError(format!("{}: {e}", args.model.display())))?;
    let empirical = match args.p_values {
        PValueChoice::Law => None,
        PValueChoice::HeldOut => Some(EmpiricalPValue::Marginal),
        PValueChoice::HeldOutConditional => Some(EmpiricalPValue::CalibrationConditional {
            delta: args.delta.unwrap_or(0.05),
        }),
    };
    if args.delta.is_some() && args.p_values != PValueChoice::HeldOutConditional {
        return Err(CliError(
            "--delta applies to --p-values held-out-conditional only".into(),
        ));
    }
    if args.observed_only && empirical.is_some() {
        return Err(CliError(
            "--observed-only and held-out p-values do not mix: the calibration distances use \
             every variable; use --p-values law with --observed-only"
                .into(),
        ));
    }
    let calibration = match empirical {
        None => None,
        Some(kind) => {
            kind.check()
                .map_err(|e| CliError(format!("--delta: {e}")))?;
            if args.in_sample {
                return Err(CliError(
                    "--in-sample and held-out p-values do not mix: held-out p-values are for \
                     new rows"
                        .into(),
                ));
            }
            let c = model.calibration().ok_or_else(|| {
                CliError(format!(
                    "{}: the model carries no held-out calibration rows; refit with \
                     `mvdist fit --hold-out 0.25`, or use --p-values law",
                    args.model.display()
                ))
            })?;
            if args.alpha < c.smallest_p_value_of(kind) {
                eprintln!(
                    "mvdist: warning: {} calibration rows give p-values of at least {:.4}, above \
                     --alpha {}; no row can be flagged (hold out more rows)",
                    c.len(),
                    c.smallest_p_value_of(kind),
                    args.alpha
                );
            }
            Some((c, kind))
        }
    };
    // (squared distance, p-value, observed variables) of one row.
    let score = |line: u64, x: &[f64]| -> Result<(f64, f64, usize), CliError> {
        let at = |e: mvdist::Error| CliError(format!("{}, line {line}: {e}", args.data.display()));
        if x.iter().any(|v| v.is_nan()) {
            if calibration.is_some() {
                return Err(CliError(format!(
                    "{}, line {line}: held-out p-values need complete rows (the calibration \
                     distances use every variable); use --p-values law with --observed-only",
                    args.data.display()
                )));
            }
            let s = model.score_row_observed(x, origin, 0.5).map_err(at)?;
            return Ok((s.squared_distance, s.p_value, s.observed));
        }
        let d2 = model.squared_distance(x).map_err(at)?;
        let p = match &calibration {
            Some((c, kind)) => c.p_value_of(d2, *kind),
            None => reference.p_value(d2),
        };
        Ok((d2, p, x.len()))
    };

    // First pass, only with an adjustment: the number of scored rows and the
    // p-values at or below alpha (no others can be flagged), which give the
    // flag threshold. Memory is proportional to the number of such rows.
    let threshold = if args.adjust == AdjustChoice::None {
        args.alpha
    } else {
        let mut m = 0usize;
        let mut small = Vec::new();
        for_each_row(args, &file, |line, _, x| {
            if let Some(x) = x {
                let (_, p, _) = score(line, x)?;
                m += 1;
                if p <= args.alpha {
                    small.push(p);
                }
            }
            Ok(())
        })?;
        let mf = m.max(1) as f64;
        match args.adjust {
            AdjustChoice::Bonferroni => args.alpha / mf,
            _ => {
                small.sort_by(f64::total_cmp);
                small
                    .iter()
                    .enumerate()
                    .filter(|(k, &p)| p <= (*k as f64 + 1.0) * args.alpha / mf)
                    .map(|(_, &p)| p)
                    .next_back()
                    .unwrap_or(-1.0)
            }
        }
    };

    let mut out = PendingFile::create(&args.out)?;
    let mut header = vec!["row".to_string()];
    if let Some(l) = &args.label {
        header.push(l.clone());
    }
    header.extend(
        [
            "d2",
            "p_value",
            "flag",
            "top_variable",
            "top_share",
            "status",
        ]
        .map(String::from),
    );
    if args.observed_only {
        header.push("observed".into());
    }
    let observed_field = |k: usize| {
        if args.observed_only {
            format!(",{k}")
        } else {
            String::new()
        }
    };
    let w = out.writer();
    let io = |e: std::io::Error| CliError(format!("{}: {e}", args.out.display()));
    writeln!(w, "{}", header.join(",")).map_err(io)?;
    let mut row = 0u64;
    let mut flagged = 0u64;
    let mut incomplete = 0u64;
    for_each_row(args, &file, |line, label, x| {
        row += 1;
        let label_field = match (&args.label, label) {
            (Some(_), Some(l)) => format!(",{}", csv_field(l)),
            (Some(_), None) => ",".to_string(),
            _ => String::new(),
        };
        match x {
            Some(x) => {
                let (d2, p, k) = score(line, x)?;
                let flag = p <= threshold;
                flagged += u64::from(flag);
                let at = |e: mvdist::Error| {
                    CliError(format!("{}, line {line}: {e}", args.data.display()))
                };
                let (top, share) = if k < x.len() {
                    let why = model
                        .explain_observed(x, ContributionOrder::LargestFirst)
                        .map_err(at)?;
                    let top = why.top_variable();
                    let term = why
                        .in_order()
                        .into_iter()
                        .find(|&(j, _)| j == top)
                        .map_or(0.0, |(_, t)| t);
                    (top, if d2 > 0.0 { term / d2 } else { 0.0 })
                } else {
                    let why = model
                        .explain(x, ContributionOrder::LargestFirst)
                        .map_err(at)?;
                    let top = why.top_variable();
                    (top, if d2 > 0.0 { why.terms()[top] / d2 } else { 0.0 })
                };
                writeln!(
                    out.writer(),
                    "{row}{label_field},{},{},{flag},{},{share:.4},ok{}",
                    number_field(d2),
                    number_field(p),
                    csv_field(&file.variables()[top]),
                    observed_field(k)
                )
                .map_err(io)?;
            }
            None => {
                incomplete += 1;
                writeln!(
                    out.writer(),
                    "{row}{label_field},,,,,,incomplete{}",
                    observed_field(0)
                )
                .map_err(io)?;
            }
        }
        Ok(())
    })?;
    out.finish()?;
    crate::output::record_flags(flagged > 0);
    if incomplete > 0 {
        note!("mvdist: skipped {incomplete} incomplete row(s); they are in the output with status \"incomplete\"");
    }
    let basis = match &calibration {
        None => format!("{} reference", reference.kind().name()),
        Some((c, EmpiricalPValue::Marginal)) => format!("held-out p-values from {} rows", c.len()),
        Some((c, _)) => format!(
            "calibration-conditional held-out p-values from {} rows, delta {}",
            c.len(),
            args.delta.unwrap_or(0.05)
        ),
    };
    note!(
        "scored {} rows against {} ({basis}, alpha {}, adjustment {}): {flagged} flagged; wrote {}",
        row - incomplete,
        args.model.display(),
        args.alpha,
        clap::ValueEnum::to_possible_value(&args.adjust)
            .map_or_else(String::new, |v| v.get_name().to_string()),
        args.out.display()
    );
    let caution = if calibration.is_some() {
        "held-out p-values assume the scored rows are exchangeable with the calibration rows (same population and process state); a flag is evidence for a closer look, not a verdict"
    } else {
        "flags assume the reference rows are multivariate normal and the model fits them; a flag is evidence for a closer look, not a verdict"
    };
    if args.json {
        crate::output::print_json(&serde_json::json!({
            "command": "score",
            "model": args.model.display().to_string(),
            "data": args.data.display().to_string(),
            "rows": row - incomplete,
            "incomplete_rows": incomplete,
            "flagged": flagged,
            "alpha": args.alpha,
            "adjustment": clap::ValueEnum::to_possible_value(&args.adjust)
                .map_or_else(String::new, |v| v.get_name().to_string()),
            "basis": basis,
            "out": args.out.display().to_string(),
            "caution": caution,
        }))?;
    }
    if calibration.is_some() {
        note!("note: held-out p-values assume the scored rows are exchangeable with the calibration rows (same population and process state); a flag is evidence for a closer look, not a verdict.");
    } else {
        note!("note: flags assume the reference rows are multivariate normal and the model fits them; a flag is evidence for a closer look, not a verdict.");
    }
    Ok(())
}
