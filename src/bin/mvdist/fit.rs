//! `mvdist fit`: estimate location and scatter and write a model file.

use crate::output::write_atomically;
use crate::table::{read_table_noting_skips, ColumnChoice};
use crate::CliError;
use mvdist::model_file::ModelFile;
use mvdist::{DistanceModel, Divisor, Error};
use std::path::{Path, PathBuf};

#[derive(Clone, Copy, Debug, clap::ValueEnum)]
pub enum EstimatorChoice {
    /// Sample mean and covariance (n − 1 divisor).
    Classical,
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
    #[command(flatten)]
    pub columns: ColumnChoice,
    /// Leave out rows with a missing value (empty, NA, NaN) instead of stopping.
    #[arg(long)]
    pub skip_incomplete: bool,
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
    let table = read_table_noting_skips(&args.data, &args.columns, args.skip_incomplete)?;
    let p = table.names.len();
    let model = match args.estimator {
        EstimatorChoice::Classical => {
            let rows = mvdist::data::rows_from_slice(&table.data, p)?;
            DistanceModel::fit_with_divisor(rows, Divisor::Unbiased)
        }
    }
    .map_err(|e| explain_fit_error(&args.data, &table.names, table.rows, e))?;
    let file = ModelFile::new(table.names.clone(), model)?;
    write_atomically(&args.out, &(file.to_json() + "\n"))?;
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
