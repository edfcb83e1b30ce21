//! `mvdist compare-means`: Hotelling T² tests of mean vectors on CSV files.

use crate::fit::explain_fit_error;
use crate::table::{read_table, read_table_named, ColumnChoice};
use crate::CliError;
use mvdist::classification::Rule;
use mvdist::mean_tests::{
    one_sample, paired, scatter_equality, two_sample, two_sample_unequal_scatter, MeanComparison,
    MeanInterval, MeanTestKind, ScatterEquality,
};
use mvdist::Error;
use serde::Serialize;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct CompareMeansArgs {
    /// CSV file of the first (or only) sample.
    pub first: PathBuf,
    /// CSV file of the second sample; it must have the first file's variables.
    pub second: Option<PathBuf>,
    /// Target mean for a one-sample test, one value per variable, comma-separated.
    #[arg(
        long,
        value_delimiter = ',',
        allow_hyphen_values = true,
        conflicts_with = "second"
    )]
    pub target: Option<Vec<f64>>,
    /// The two files hold paired measurements: row i of each is the same unit.
    #[arg(long, conflicts_with = "unequal_scatter")]
    pub paired: bool,
    /// Do not assume equal scatter matrices (Krishnamoorthy–Yu approximation).
    #[arg(long)]
    pub unequal_scatter: bool,
    /// Level of the confidence intervals (1 − alpha) and of the decision shown.
    #[arg(long, default_value_t = 0.05)]
    pub alpha: f64,
    /// Write the result as JSON on standard output instead of a table.
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub columns: ColumnChoice,
    /// Leave out rows with a missing value (empty, NA, NaN) instead of stopping
    /// (not allowed with --paired, where it would break the pairing).
    #[arg(long)]
    pub skip_incomplete: bool,
}

const CAUTION: &str = "the p-value assumes independent rows from multivariate normal populations; a small p-value is evidence of a difference in means, not proof that it matters: read the intervals for its size, and let qualified people decide what follows";

#[derive(Serialize)]
struct Report<'a> {
    format: &'static str,
    files: Vec<String>,
    variables: &'a [String],
    test: &'a MeanComparison,
    alpha: f64,
    rejected_at_alpha: bool,
    intervals: &'a [MeanInterval],
    scatter_equality: Option<&'a ScatterEquality>,
    caution: &'static str,
}

/// A message naming files and columns for a library error.
fn explain(args: &CompareMeansArgs, names: &[String], rows: usize, e: Error) -> CliError {
    match e {
        Error::InGroup { group, cause: error } => {
            let path = if group == 0 {
                &args.first
            } else {
                args.second.as_ref().unwrap_or(&args.first)
            };
            explain_fit_error(path, names, rows, *error)
        }
        Error::TooFewRows { needed, columns, .. } if args.second.is_some() => CliError(format!(
            "{} and {}: too few rows for {columns} variables; at least {needed} are needed in all (use more rows or fewer --columns)",
            args.first.display(),
            args.second.as_ref().map_or_else(String::new, |p| p.display().to_string())
        )),
        other => explain_fit_error(&args.first, names, rows, other),
    }
}

pub fn run(args: &CompareMeansArgs) -> Result<(), CliError> {
    if !(args.alpha > 0.0 && args.alpha < 1.0) {
        return Err(CliError(format!(
            "--alpha {} is not between 0 and 1",
            args.alpha
        )));
    }
    if args.second.is_none() && (args.paired || args.unequal_scatter) {
        return Err(CliError(
            "--paired and --unequal-scatter compare two files; give a second CSV file".into(),
        ));
    }
    if args.paired && args.skip_incomplete {
        return Err(CliError(
            "--skip-incomplete cannot be used with --paired: leaving out a row would misalign the pairs".into(),
        ));
    }
    let a = read_table(&args.first, &args.columns, args.skip_incomplete)?;
    let p = a.names.len();
    let rows_a = mvdist::data::rows_from_slice(&a.data, p)?;
    let mut files = vec![args.first.display().to_string()];
    let (test, scatter) = match &args.second {
        None => {
            let target = args.target.as_ref().ok_or_else(|| {
                CliError(format!(
                    "a one-sample comparison needs --target with {p} values ({}), or give a second CSV file",
                    a.names.join(", ")
                ))
            })?;
            if target.len() != p {
                return Err(CliError(format!(
                    "--target has {} values but there are {p} variables ({})",
                    target.len(),
                    a.names.join(", ")
                )));
            }
            let test =
                one_sample(rows_a, target).map_err(|e| explain(args, &a.names, a.rows, e))?;
            (test, None)
        }
        Some(second) => {
            let b = read_table_named(
                second,
                &a.names,
                args.columns.label.as_deref(),
                args.skip_incomplete,
            )?;
            files.push(second.display().to_string());
            let rows_b = mvdist::data::rows_from_slice(&b.data, p)?;
            let total = a.rows + b.rows;
            if args.paired {
                if a.rows != b.rows {
                    return Err(CliError(format!(
                        "--paired needs one row per pair in each file: {} has {} rows, {} has {}",
                        args.first.display(),
                        a.rows,
                        second.display(),
                        b.rows
                    )));
                }
                let test =
                    paired(rows_a, rows_b).map_err(|e| explain(args, &a.names, a.rows, e))?;
                (test, None)
            } else {
                let test = if args.unequal_scatter {
                    two_sample_unequal_scatter(rows_a, rows_b)
                } else {
                    two_sample(rows_a, rows_b)
                }
                .map_err(|e| explain(args, &a.names, total, e))?;
                (test, scatter_equality(&[rows_a, rows_b]).ok())
            }
        }
    };
    let intervals = test.intervals(args.alpha)?;
    let rejected = test.rejects(args.alpha)?;
    if args.json {
        let report = Report {
            format: "mvdist-mean-comparison",
            files,
            variables: &a.names,
            test: &test,
            alpha: args.alpha,
            rejected_at_alpha: rejected,
            intervals: &intervals,
            scatter_equality: scatter.as_ref(),
            caution: CAUTION,
        };
        say!("{}", serde_json::to_string_pretty(&report)?);
        return Ok(());
    }
    print_table(
        args,
        &a.names,
        &test,
        &intervals,
        rejected,
        scatter.as_ref(),
    );
    Ok(())
}

fn print_table(
    args: &CompareMeansArgs,
    names: &[String],
    test: &MeanComparison,
    intervals: &[MeanInterval],
    rejected: bool,
    scatter: Option<&ScatterEquality>,
) {
    let second = args
        .second
        .as_ref()
        .map_or_else(String::new, |p| p.display().to_string());
    let first = args.first.display().to_string();
    let sizes = test.sample_sizes();
    let (title, estimate) = match test.kind() {
        MeanTestKind::OneSample => (
            "one sample against a target mean".to_string(),
            "mean".to_string(),
        ),
        MeanTestKind::Paired => (
            "paired samples".to_string(),
            format!("mean of {first} − {second}, row by row"),
        ),
        MeanTestKind::TwoSamplePooled => (
            "two independent samples, pooled scatter".to_string(),
            format!("mean of {first} − mean of {second}"),
        ),
        MeanTestKind::TwoSampleUnequalScatter => (
            "two independent samples, unequal scatters (Krishnamoorthy–Yu approximation)"
                .to_string(),
            format!("mean of {first} − mean of {second}"),
        ),
    };
    say!("Hotelling T² test: {title}");
    match sizes {
        [n] => say!("  {first}: {n} rows; {} variables", names.len()),
        [n1, n2] => say!(
            "  {first}: {n1} rows; {second}: {n2} rows; {} variables",
            names.len()
        ),
        _ => {}
    }
    say!(
        "  T² = {:.6}   F = {:.6} on ({}, {}) degrees of freedom   p = {:.4e}",
        test.t_squared(),
        test.f_statistic(),
        trim(test.numerator_dof()),
        trim(test.denominator_dof()),
        test.p_value()
    );
    say!(
        "  at alpha = {}: {}",
        args.alpha,
        if rejected {
            "the means differ (equality rejected)"
        } else {
            "no evidence that the means differ"
        }
    );
    let level = format!("{}%", trim(100.0 * (1.0 - args.alpha)));
    let width = names
        .iter()
        .map(|n| n.chars().count())
        .max()
        .unwrap_or(8)
        .max(8);
    say!();
    say!(
        "  {:<width$}  {:>12}  {:>12}  {:>12}  {:>27}  {:>27}",
        "variable",
        "estimate",
        "hypothesized",
        "std. error",
        format!("simultaneous {level}"),
        format!("Bonferroni {level}")
    );
    for (iv, h) in intervals.iter().zip(test.hypothesized()) {
        say!(
            "  {:<width$}  {:>12.6}  {:>12.6}  {:>12.6}  {:>27}  {:>27}",
            names[iv.variable],
            iv.estimate,
            h,
            iv.standard_error,
            format!(
                "[{:.6}, {:.6}]",
                iv.simultaneous.lower, iv.simultaneous.upper
            ),
            format!("[{:.6}, {:.6}]", iv.bonferroni.lower, iv.bonferroni.upper)
        );
    }
    say!("  estimate: {estimate}");
    if let Some(m) = scatter {
        let rule = m.suggested_rule(0.001).unwrap_or(Rule::Linear);
        say!(
            "\nScatter equality (Box's M): M = {:.4}, χ² = {:.4} on {} dof, p = {:.3e}{}",
            m.statistic(),
            m.chi_square().value(),
            m.chi_square()
                .reference()
                .degrees_of_freedom()
                .first()
                .map_or_else(|| "-".to_string(), |&d| trim(d)),
            m.p_value(),
            match rule {
                Rule::Quadratic if test.kind() == MeanTestKind::TwoSamplePooled =>
                    "; the scatters differ at 0.001: consider --unequal-scatter",
                Rule::Quadratic => "; the scatters differ at 0.001",
                _ => "; equal scatters are plausible at 0.001",
            }
        );
    }
    say!();
    note!("note: {CAUTION}.");
}

fn trim(v: f64) -> String {
    if v.fract() == 0.0 {
        format!("{v:.0}")
    } else {
        format!("{v:.3}")
    }
}
