//! `mvdist fit`: estimate location and scatter and write a model file.

use crate::table::{read_table, ColumnChoice};
use crate::CliError;
use mvdist::model_file::ModelFile;
use mvdist::robust::McdOptions;
use mvdist::shrinkage::OasFormula;
use mvdist::{DistanceModel, Divisor, Error};
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
}

#[derive(clap::Args)]
pub struct FitArgs {
    /// CSV file of reference rows (header row first).
    pub data: PathBuf,
    /// Where to write the model file (JSON).
    #[arg(long)]
    pub out: PathBuf,
    /// How to estimate location and scatter.
    #[arg(long, value_enum, default_value = "classical")]
    pub estimator: EstimatorChoice,
    /// With --estimator mcd: fraction of rows in the MCD subset, h = floor(FRACTION·n)
    /// (default h = floor((n + p + 1)/2), the most robust choice).
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
    let table = read_table(&args.data, &args.columns, args.skip_incomplete)?;
    let p = table.names.len();
    let is_mcd = matches!(args.estimator, EstimatorChoice::Mcd);
    if !is_mcd && (args.support.is_some() || args.seed.is_some()) {
        return Err(CliError(
            "--support and --seed apply to --estimator mcd only".into(),
        ));
    }
    let rows = mvdist::data::rows_from_slice(&table.data, p)?;
    let model = match args.estimator {
        EstimatorChoice::Classical => DistanceModel::fit_with_divisor(rows, Divisor::Unbiased),
        EstimatorChoice::LedoitWolf => DistanceModel::fit_ledoit_wolf(rows),
        EstimatorChoice::Oas => DistanceModel::fit_oas(rows, OasFormula::Published),
        EstimatorChoice::Mcd => {
            let mut settings = McdOptions::default().with_seed(args.seed.unwrap_or(0));
            if let Some(f) = args.support {
                if !(f > 0.0 && f <= 1.0) {
                    return Err(CliError(format!(
                        "--support {f}: the support fraction must be in (0, 1]"
                    )));
                }
                settings = settings.with_support_fraction(f);
            }
            DistanceModel::fit_mcd(rows, &settings)
        }
    }
    .map_err(|e| explain_fit_error(&args.data, &table.names, table.rows, e))?;
    let file = ModelFile::new(table.names.clone(), model)?;
    crate::output::save_model_file(&file, &args.out, args.binary)?;
    println!(
        "fitted a {} model on {} rows × {} variables ({}); wrote {}",
        clap::ValueEnum::to_possible_value(&args.estimator)
            .map_or_else(String::new, |v| v.get_name().to_string()),
        table.rows,
        p,
        table.names.join(", "),
        args.out.display()
    );
    Ok(())
}
