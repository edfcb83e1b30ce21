//! `mvdist fit`: estimate location and scatter and write a model file.

use crate::table::{read_table, read_table_with_gaps, ColumnChoice};
use crate::CliError;
use mvdist::held_out::{fit_holding_out, CalibrationCheck, HoldOutOptions};
use mvdist::incomplete::EmOptions;
use mvdist::model_file::ModelFile;
use mvdist::ndarray::ArrayView2;
use mvdist::robust::{McdOptions, RegularizedMcdOptions};
use mvdist::shrinkage::OasFormula;
use mvdist::{DistanceModel, Divisor, Error, FitMethod};
use std::path::{Path, PathBuf};

#[derive(Clone, Copy, Debug, clap::ValueEnum)]
pub enum EstimatorChoice {
    /// Sample mean and covariance (n − 1 divisor).
    Classical,
    /// Sample mean and Ledoit–Wolf shrinkage covariance (works with fewer rows than variables).
    LedoitWolf,
    /// Sample mean and OAS shrinkage covariance (Chen et al. 2010, Eq. 23).
    Oas,
    /// Reweighted minimum covariance determinant (FastMCD): robust to outlying rows.
    Mcd,
    /// Minimum regularized covariance determinant (MRCD): robust to outlying
    /// rows, and works with about as many or more variables than rows.
    Mrcd,
    /// Maximum likelihood from rows with empty cells (EM algorithm): the only
    /// estimator that reads empty cells as missing rather than stopping.
    Em,
}

#[derive(clap::Args)]
pub struct FitArgs {
    /// Print a JSON summary of the run on standard output (not with --out -).
    #[arg(long)]
    pub json: bool,
    /// CSV file of reference rows (header row first).
    pub data: PathBuf,
    /// Where to write the model file (JSON).
    #[arg(long)]
    pub out: PathBuf,
    /// How to estimate location and scatter.
    #[arg(long, value_enum, default_value = "classical")]
    pub estimator: EstimatorChoice,
    /// With --estimator mcd or mrcd: fraction of rows in the subset, h = floor(FRACTION·n)
    /// (mcd default h = floor((n + p + 1)/2), the most robust choice; mrcd default 0.75,
    /// allowed 0.5 to 1).
    #[arg(long, value_name = "FRACTION")]
    pub support: Option<f64>,
    /// With --estimator mcd: seed of the random subset draws (equal seeds, equal models).
    #[arg(long, value_name = "N")]
    pub seed: Option<u64>,
    #[command(flatten)]
    pub columns: ColumnChoice,
    /// Leave out rows with a missing value (empty, NA, NaN) instead of stopping.
    #[arg(long)]
    pub skip_incomplete: bool,
    /// Write the compact binary model file instead of JSON.
    #[arg(long)]
    pub binary: bool,
    /// Hold out this fraction of the rows (chosen at random) as calibration
    /// rows: the model is fitted on the others and keeps their squared
    /// distances, for distribution-free p-values (`score --p-values held-out`)
    /// and a check of the F cutoffs, printed here.
    #[arg(long, value_name = "FRACTION")]
    pub hold_out: Option<f64>,
    /// With --hold-out: seed of the random split (default 0).
    #[arg(long, value_name = "N", requires = "hold_out")]
    pub hold_out_seed: Option<u64>,
    /// With --hold-out: write the Q–Q chart of the held-out rows against the
    /// F law to this SVG file.
    #[arg(long, value_name = "FILE", requires = "hold_out")]
    pub calibration_chart: Option<PathBuf>,
}

/// Turns a library error about fitting into a message naming columns.
pub fn explain_fit_error(path: &Path, names: &[String], rows: usize, e: Error) -> CliError {
    let name = |j: usize| {
        names
            .get(j)
            .map_or_else(|| format!("#{j}"), |n| format!("'{n}'"))
    };
    CliError(match e {
        Error::TooFewRows { needed, columns, .. } => format!(
            "{}: {rows} complete rows are too few for {columns} variables; at least {needed} are needed (use more rows or fewer --columns)",
            path.display()
        ),
        Error::ZeroVariance { column } => format!(
            "{}: column {} is constant (zero variance); leave it out with --exclude",
            path.display(),
            name(column)
        ),
        Error::ZeroRobustScale { column } => format!(
            "{}: column {} has a robust scale of zero (about half of its values are tied); leave it out with --exclude",
            path.display(),
            name(column)
        ),
        Error::ExactFit { hyperplane } => {
            let terms: Vec<String> = hyperplane
                .coefficients()
                .iter()
                .enumerate()
                .filter(|(_, a)| a.abs() > 1e-9)
                .map(|(j, a)| format!("{a:.6}·{}", name(j)))
                .collect();
            format!(
                "{}: exact fit: {} of {rows} rows satisfy {} = {:.6} (at least {} are needed for a robust fit); leave out one of these columns with --exclude, or check why so many rows are tied",
                path.display(),
                hyperplane.rows().len(),
                terms.join(" + "),
                hyperplane.offset(),
                hyperplane.subset_size()
            )
        }
        Error::Collinear { column, .. } => format!(
            "{}: column {} is a linear combination of the columns before it ({}); leave it out with --exclude",
            path.display(),
            name(column),
            (0..column).map(name).collect::<Vec<_>>().join(", ")
        ),
        other => format!("{}: {other}", path.display()),
    })
}

pub fn run(args: &FitArgs) -> Result<(), CliError> {
    crate::output::check_json_target(args.json, &args.out)?;
    let is_em = matches!(args.estimator, EstimatorChoice::Em);
    if is_em && args.skip_incomplete {
        return Err(CliError(
            "--estimator em reads empty cells as missing; --skip-incomplete does not apply".into(),
        ));
    }
    if is_em && args.hold_out.is_some() {
        return Err(CliError(
            "--hold-out needs complete rows (held-out p-values compare distances on every variable); \
             fit with another --estimator on complete rows, or leave out --hold-out"
                .into(),
        ));
    }
    let table = if is_em {
        read_table_with_gaps(&args.data, &args.columns)?
    } else {
        read_table(&args.data, &args.columns, args.skip_incomplete)?
    };
    let p = table.names.len();
    let is_mcd = matches!(args.estimator, EstimatorChoice::Mcd);
    let is_mrcd = matches!(args.estimator, EstimatorChoice::Mrcd);
    if is_mrcd && args.seed.is_some() {
        return Err(CliError(
            "--seed applies to --estimator mcd only (the mrcd fit has no random draws)".into(),
        ));
    }
    if !is_mcd && !is_mrcd && (args.support.is_some() || args.seed.is_some()) {
        return Err(CliError(
            "--support and --seed apply to --estimator mcd only".into(),
        ));
    }
    let mut regularized = RegularizedMcdOptions::default();
    let mut settings = McdOptions::default().with_seed(args.seed.unwrap_or(0));
    if let Some(f) = args.support {
        if !(f > 0.0 && f <= 1.0) {
            return Err(CliError(format!(
                "--support {f}: the support fraction must be in (0, 1]"
            )));
        }
        if is_mrcd && !(0.5..=1.0).contains(&f) {
            return Err(CliError(format!(
                "--support {f}: with --estimator mrcd the support fraction must be in [0.5, 1]"
            )));
        }
        settings = settings.with_support_fraction(f);
        regularized = regularized.with_support_fraction(f);
    }
    let fit = |rows: ArrayView2<'_, f64>| match args.estimator {
        EstimatorChoice::Classical => DistanceModel::fit_with_divisor(rows, Divisor::Unbiased),
        EstimatorChoice::LedoitWolf => DistanceModel::fit_ledoit_wolf(rows),
        EstimatorChoice::Oas => DistanceModel::fit_oas(rows, OasFormula::Published),
        EstimatorChoice::Mcd => DistanceModel::fit_mcd(rows, &settings),
        EstimatorChoice::Mrcd => DistanceModel::fit_regularized_mcd(rows, &regularized),
        EstimatorChoice::Em => DistanceModel::fit_incomplete(rows, &EmOptions::default()),
    };
    let rows = mvdist::data::rows_from_slice(&table.data, p)?;
    let model = match args.hold_out {
        None => fit(rows),
        Some(fraction) => {
            if !(fraction > 0.0 && fraction < 1.0) {
                return Err(CliError(format!(
                    "--hold-out {fraction}: the fraction must be in (0, 1); a fifth to a third is usual"
                )));
            }
            let split = HoldOutOptions::default()
                .with_fraction(fraction)
                .with_seed(args.hold_out_seed.unwrap_or(0));
            fit_holding_out(rows, &split, fit)
        }
    }
    .map_err(|e| explain_fit_error(&args.data, &table.names, table.rows, e))?;
    let check = match model.calibration() {
        Some(_) => Some(CalibrationCheck::of_model(&model)?),
        None => None,
    };
    let fitted = model.sample_size();
    let method = model.fit_method().clone();
    let file = ModelFile::new(table.names.clone(), model)?;
    crate::output::save_model_file(&file, &args.out, args.binary)?;
    if let (Some(check), Some(path)) = (&check, &args.calibration_chart) {
        let title = format!("Held-out rows of {}", args.data.display());
        crate::output::write_atomically(path, &check.to_svg(&title))?;
    }
    let estimator = clap::ValueEnum::to_possible_value(&args.estimator)
        .map_or_else(String::new, |v| v.get_name().to_string());
    if args.json {
        crate::output::print_json(&serde_json::json!({
            "command": "fit",
            "estimator": estimator,
            "rows": fitted,
            "variables": table.names,
            "fit": method,
            "out": args.out.display().to_string(),
            "calibration": check.as_ref().map(|c| serde_json::json!({
                "held_out_rows": c.held_out_rows,
                "readings": c.levels().iter().map(|l| l.reading.clone()).collect::<Vec<_>>(),
            })),
            "caution": "thresholds assume the model fits the data; a flag is evidence for a closer look, not a verdict",
        }))?;
    }
    note!(
        "fitted a {} model on {} rows × {} variables ({}); wrote {}",
        estimator,
        fitted,
        p,
        table.names.join(", "),
        args.out.display()
    );
    if let FitMethod::ExpectationMaximization {
        iterations,
        converged,
        missing_cells,
    } = method
    {
        note!(
            "EM: {missing_cells} empty cell(s) of {}; {iterations} iteration(s), {}",
            table.rows * p,
            if converged {
                "converged"
            } else {
                "NOT converged (the estimate may be inaccurate)"
            }
        );
    }
    if let FitMethod::RegularizedMcd {
        regularization,
        subset_size,
        condition_bound,
        ..
    } = method
    {
        note!(
            "MRCD: subset of {subset_size} rows; regularization {regularization:.4} (condition bound {condition_bound}); \
             the χ² reference of its distances is approximate, rough when variables are about as many as rows or more \
             (--hold-out gives p-values that do not rely on it); a flag is evidence for a closer look, not a verdict."
        );
    }
    if let Some(check) = check {
        note!(
            "held out {} rows as calibration rows (kept in the model file)",
            check.held_out_rows
        );
        for level in check.levels() {
            note!("calibration: {}", level.reading);
        }
        if let Some(path) = &args.calibration_chart {
            note!(
                "wrote the Q–Q chart of the held-out rows to {}",
                path.display()
            );
        }
        note!("note: the check is about these data; thresholds assume the model fits the data, and a flag is evidence, not a verdict.");
    }
    Ok(())
}
