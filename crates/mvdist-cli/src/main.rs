//! `mvdist`: squared generalized distances from the shell.
//!
//! ```text
//! mvdist fit DATA.csv --out MODEL.json [--columns a,b,c]
//! mvdist score MODEL.json DATA.csv --out SCORES.csv [--alpha 0.01] [--in-sample] [--adjust bh]
//! mvdist classify --train TRAIN.csv --label COLUMN DATA.csv --out OUT.csv [--rule linear|quadratic] [--priors equal|proportional] [--loo]
//! mvdist compare-means A.csv [B.csv] [--target 1,2,…] [--paired | --unequal-scatter] [--json]
//! mvdist chart DATA.csv --out POINTS.csv [--svg CHART.svg] [--new NEW.csv] [--kind t2|components|mewma|mcusum] [--alpha A | --arl N]
//! mvdist normality DATA.csv [--json] [--columns a,b,c]
//! ```
//!
//! Errors go to stderr with the file, the line (1-based, counting the
//! header as line 1) and the column; the exit code is 1 and no output file
//! is left behind. `-` reads standard input or writes standard output;
//! notes go to standard error (`--quiet` silences them).
//!
//! Exit status: 0 success (also when the reader of standard output
//! closes the pipe early); 1 an error (the message says what and where);
//! 2 a usage error (unknown option, missing argument); 3, only with
//! `--status-on-flags`, success with at least one flagged row or signal.

/// A note for the user on standard error, silenced by `--quiet`.
macro_rules! note {
    ($($t:tt)*) => {
        if !$crate::output::quiet() {
            eprintln!($($t)*);
        }
    };
}

/// One line of a result on standard output (a closed pipe ends the
/// program quietly).
macro_rules! say {
    () => {
        $crate::output::say(format_args!(""))
    };
    ($($t:tt)*) => {
        $crate::output::say(format_args!($($t)*))
    };
}

mod chart;
mod chart_components;
mod chart_shift;
mod classify;
mod compare_means;
mod fit;
mod normality;
mod output;
mod rows;
mod score;
mod table;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Fit and score multivariate distance models on CSV files (`-` for standard input or output).
#[derive(Parser)]
#[command(name = "mvdist", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
    /// Print no notes (summaries, cautions) on standard error; warnings and errors still print.
    #[arg(long, global = true)]
    quiet: bool,
    /// Exit with status 3 when the run succeeds and flags at least one row (score, classify) or charts at least one signal (chart).
    #[arg(long, global = true)]
    status_on_flags: bool,
}

#[derive(Subcommand)]
enum Command {
    /// Estimate location and scatter from reference rows and write a model file.
    Fit(fit::FitArgs),
    /// Score rows against a model file: squared distance, p-value, flag, top variable.
    Score(score::ScoreArgs),
    /// Assign rows to groups learned from labelled training rows: group, posterior, typicality, distances.
    Classify(classify::ClassifyArgs),
    /// Hotelling T² test of mean vectors: one sample vs a target, or two samples.
    CompareMeans(compare_means::CompareMeansArgs),
    /// Control charts (T², components with Q, MEWMA, MCUSUM): Phase I on historical rows, Phase II on new rows; CSV and SVG.
    Chart(Box<chart::ChartArgs>),
    /// Check multivariate normality: Mardia, Henze-Zirkler, Royston, Doornik-Hansen, per-variable shape.
    Normality(normality::NormalityArgs),
}

/// An error for the user: what went wrong, where, and what to do.
#[derive(Debug)]
pub struct CliError(pub String);

impl<E: std::fmt::Display> From<E> for CliError {
    fn from(e: E) -> Self {
        CliError(e.to_string())
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    output::set_quiet(cli.quiet);
    let result = match cli.command {
        Command::Fit(args) => fit::run(&args),
        Command::Score(args) => score::run(&args),
        Command::Classify(args) => classify::run(&args),
        Command::CompareMeans(args) => compare_means::run(&args),
        Command::Chart(args) => chart::run(&args),
        Command::Normality(args) => normality::run(&args),
    };
    match result {
        Ok(()) if cli.status_on_flags && output::flagged() => ExitCode::from(3),
        Ok(()) => ExitCode::SUCCESS,
        Err(CliError(message)) => {
            eprintln!("mvdist: error: {message}");
            ExitCode::from(1)
        }
    }
}
