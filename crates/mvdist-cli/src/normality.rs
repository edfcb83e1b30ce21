//! `mvdist normality`: multivariate normality checks on a CSV file.

use crate::fit::explain_fit_error;
use crate::table::{read_table, ColumnChoice};
use crate::CliError;
use mvdist::normality::{format_p_value, NormalityOptions, NormalityReport, TestOutcome};
use std::fmt::Write as _;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct NormalityArgs {
    /// CSV file of rows to check (header row first).
    pub data: PathBuf,
    /// Print the report as JSON (keys documented in the README) instead of a table.
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub columns: ColumnChoice,
    /// Leave out rows with a missing value (empty, NA, NaN) instead of stopping.
    #[arg(long)]
    pub skip_incomplete: bool,
    /// Significance level for the readings.
    #[arg(long, default_value_t = 0.05)]
    pub alpha: f64,
    /// Also check the F cutoffs on held-out rows: fit on the rows without
    /// this fraction (a seeded random split) and count how many held-out rows
    /// exceed the cutoffs at 5%, 1% and 0.1%.
    #[arg(long, value_name = "FRACTION")]
    pub hold_out: Option<f64>,
    /// With --hold-out: write the Q–Q chart of the held-out rows to this SVG file.
    #[arg(long, value_name = "FILE", requires = "hold_out")]
    pub calibration_chart: Option<PathBuf>,
}

pub fn run(args: &NormalityArgs) -> Result<(), CliError> {
    let table = read_table(&args.data, &args.columns, args.skip_incomplete)?;
    if !(args.alpha > 0.0 && args.alpha < 1.0) {
        return Err(CliError(format!(
            "--alpha: {} is not a probability strictly between 0 and 1",
            args.alpha
        )));
    }
    let mut options = NormalityOptions::default().with_alpha(args.alpha);
    if let Some(f) = args.hold_out {
        options = options.with_calibration_check(f);
    }
    let rows = mvdist::data::rows_from_slice(&table.data, table.names.len())?;
    let report = NormalityReport::compute(rows, &options)
        .map_err(|e| explain_fit_error(&args.data, &table.names, table.rows, e))?
        .with_variable_names(table.names.clone())?;
    if args.json {
        let json = serde_json::to_string_pretty(&report)
            .map_err(|e| CliError(format!("cannot write the report as JSON: {e}")))?;
        say!("{json}");
    } else {
        say!(
            "{}",
            render(&report, &table.names, &args.data).trim_end_matches('\n')
        );
        if let Some(check) = &report.calibration {
            say!();
            say!(
                "F cutoffs on {} held-out rows (model fitted on the others):",
                check.held_out_rows
            );
            for level in check.levels() {
                say!("  {}", level.reading);
            }
        }
        if let Some(why) = &report.calibration_not_computed {
            say!();
            say!("{why}");
        }
    }
    if let (Some(check), Some(path)) = (&report.calibration, &args.calibration_chart) {
        let title = format!("Held-out rows of {}", args.data.display());
        crate::output::write_atomically(path, &check.to_svg(&title))?;
        note!(
            "mvdist: wrote the Q–Q chart of the held-out rows to {}",
            path.display()
        );
    }
    Ok(())
}

/// Compact number: fixed for ordinary magnitudes, scientific otherwise.
fn number(v: f64) -> String {
    if v == 0.0 || (1e-3..1e6).contains(&v.abs()) {
        format!("{v:.4}")
    } else {
        format!("{v:.3e}")
    }
}

fn render(report: &NormalityReport, names: &[String], path: &std::path::Path) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "normality checks of {}: {} rows × {} variables ({}), alpha {}\n",
        path.display(),
        report.rows,
        report.columns,
        names.join(", "),
        report.alpha
    );
    let _ = writeln!(
        out,
        "{:<32} {:>12} {:>8} {:>10}  result",
        "test", "statistic", "df", "p-value"
    );
    for outcome in &report.tests {
        match outcome {
            TestOutcome::Computed(s) => {
                let df = s
                    .reference
                    .degrees_of_freedom()
                    .first()
                    .copied()
                    .map_or_else(
                        || "-".to_string(),
                        |d| {
                            if d.fract() == 0.0 {
                                format!("{d:.0}")
                            } else {
                                format!("{d:.2}")
                            }
                        },
                    );
                let _ = writeln!(
                    out,
                    "{:<32} {:>12} {:>8} {:>10}  {}",
                    s.test.title(),
                    number(s.statistic),
                    df,
                    format_p_value(s.p_value),
                    if s.significant {
                        "departs from normal"
                    } else {
                        "no evidence of departure"
                    }
                );
            }
            TestOutcome::NotComputed(s) => {
                let _ = writeln!(
                    out,
                    "{:<32} not computed: {}",
                    s.test.title(),
                    s.not_computed
                );
            }
        }
    }
    let _ = writeln!(out, "\nreadings:");
    for s in report.tests.iter().filter_map(TestOutcome::summary) {
        let _ = writeln!(out, "  {}: {}", s.test.title(), s.reading);
    }
    let width = names.iter().map(|n| n.len()).max().unwrap_or(8).max(8);
    let _ = writeln!(
        out,
        "\n{:<width$} {:>10} {:>10} {:>16} {:>10}",
        "variable", "skewness", "kurtosis", "Shapiro-Wilk W", "p-value"
    );
    for (v, name) in report.per_variable.iter().zip(names) {
        let _ = writeln!(
            out,
            "{:<width$} {:>10.4} {:>10.4} {:>16} {:>10}",
            name,
            v.skewness,
            v.kurtosis,
            v.shapiro_wilk_w
                .map_or_else(|| "-".into(), |w| format!("{w:.5}")),
            v.shapiro_wilk_p_value
                .map_or_else(|| "-".into(), format_p_value),
        );
    }
    let _ = writeln!(out, "(skewness 0 and kurtosis 3 for a normal population)");
    if let Some(why) = &report.shapiro_wilk_not_computed {
        let _ = writeln!(out, "Shapiro-Wilk not computed: {why}");
    }
    let _ = writeln!(out, "\nnote: {}", report.caution);
    out
}
