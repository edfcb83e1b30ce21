//! `mvdist classify`: fit a distance-to-centroid classifier on labelled
//! training rows and assign every row of a data file to a group.

use crate::fit::explain_fit_error;
use crate::output::{csv_field, number_field, PendingFile};
use crate::rows::RowReader;
use crate::table::{layout, layout_for, missing_value_error, ColumnChoice, RowOutcome};
use crate::CliError;
use mvdist::classification::{
    Classifier, ClassifierOptions, ConfusionMatrix, LeaveOneOut, PredictOptions, Predictions,
    Priors, Rule,
};
use mvdist::Error;
use std::path::{Path, PathBuf};

#[derive(Clone, Copy, Debug, PartialEq, clap::ValueEnum)]
pub enum RuleChoice {
    /// One pooled within-group scatter (boundaries are hyperplanes).
    Linear,
    /// Each group's own scatter (each group needs more rows than variables).
    Quadratic,
}

#[derive(Clone, Copy, Debug, PartialEq, clap::ValueEnum)]
pub enum PriorChoice {
    /// Every group equally likely beforehand.
    Equal,
    /// Groups as likely as their share of the training rows.
    Proportional,
}

#[derive(clap::Args)]
pub struct ClassifyArgs {
    /// Print a JSON summary of the run on standard output (not with --out -).
    #[arg(long)]
    pub json: bool,
    /// CSV file of labelled training rows (header row first).
    #[arg(long)]
    pub train: PathBuf,
    /// The column holding each training row's group. If DATA has it too,
    /// the accuracy on DATA is reported.
    #[arg(long)]
    pub label: String,
    /// CSV file of rows to classify; it must have the training variables.
    pub data: PathBuf,
    /// Where to write one row per input row (CSV).
    #[arg(long)]
    pub out: PathBuf,
    /// Which scatter measures distances to each group.
    #[arg(long, value_enum, default_value = "linear")]
    pub rule: RuleChoice,
    /// Prior probabilities of the groups.
    #[arg(long, value_enum, default_value = "proportional")]
    pub priors: PriorChoice,
    /// Variables to use, comma-separated (default: every training column
    /// except the label and the excluded ones).
    #[arg(long, value_delimiter = ',')]
    pub columns: Option<Vec<String>>,
    /// Columns to leave out, comma-separated.
    #[arg(long, value_delimiter = ',')]
    pub exclude: Vec<String>,
    /// Leave the group empty ("no group") for rows whose typicality is below
    /// this level for every group.
    #[arg(long)]
    pub no_group_below: Option<f64>,
    /// Print the leave-one-out confusion matrix of the training rows.
    #[arg(long)]
    pub loo: bool,
}

/// Rows of the chosen variables (row-major) with each row's label cell.
struct LabelledRows {
    names: Vec<String>,
    data: Vec<f64>,
    labels: Vec<Option<String>>,
    /// The file line of each row (the header is line 1).
    lines: Vec<u64>,
}

/// Reads every row of `path` for the variables of `layout`; missing values
/// are errors naming the line and column.
fn read_rows(
    path: &Path,
    reader: &mut RowReader,
    layout: &crate::table::Layout,
) -> Result<LabelledRows, CliError> {
    let mut data = Vec::new();
    let mut labels = Vec::new();
    let mut lines = Vec::new();
    let mut values = Vec::with_capacity(layout.fields.len());
    while let Some((line, outcome)) = reader.next_row(path, layout, &mut values)? {
        if let RowOutcome::Missing(k) = outcome {
            return Err(missing_value_error(
                &reader.place(path, line),
                &layout.names[k],
            ));
        }
        data.extend_from_slice(&values);
        lines.push(line);
        labels.push(reader.label(layout).map(|s| s.trim().to_string()));
    }
    if labels.is_empty() {
        return Err(CliError(format!(
            "{}: the file has a header row but no data rows",
            path.display()
        )));
    }
    Ok(LabelledRows {
        names: layout.names.clone(),
        data,
        labels,
        lines,
    })
}

/// Turns a library error about fitting into a message naming groups and
/// columns.
fn explain_classifier_error(
    path: &Path,
    rows: &LabelledRows,
    groups: &[String],
    args: &ClassifyArgs,
    e: Error,
) -> CliError {
    let group = |g: usize| {
        groups
            .get(g)
            .map_or_else(|| format!("#{g}"), |l| format!("'{l}'"))
    };
    let n = rows.labels.len();
    match e {
        Error::TooFewGroups { .. } => CliError(format!(
            "{}: column '{}' names only one group ({}); classification needs at least two",
            path.display(),
            args.label,
            groups.first().map_or_else(String::new, |l| format!("'{l}'"))
        )),
        Error::SmallGroup { group: g, rows: r, needed } => CliError(format!(
            "{}: group {} has {r} row(s), but the {} rule needs at least {needed} for {} variables; add rows to it, drop variables with --exclude, or use --rule linear",
            path.display(),
            group(g),
            if args.rule == RuleChoice::Quadratic { "quadratic" } else { "linear" },
            rows.names.len()
        )),
        Error::InGroup { group: g, cause } => {
            let inner = explain_fit_error(path, &rows.names, n, *cause);
            CliError(format!("in group {}: {}", group(g), inner.0))
        }
        other => explain_fit_error(path, &rows.names, n, other),
    }
}

fn print_confusion(title: &str, groups: &[String], m: &ConfusionMatrix) {
    note!("{title} (rows: actual group, columns: assigned group)");
    let width = groups
        .iter()
        .map(|g| g.chars().count())
        .max()
        .unwrap_or(0)
        .max(6);
    let mut line = format!("{:>width$}", "");
    for g in groups {
        line += &format!("  {g:>width$}");
    }
    note!("{line}  {:>width$}", "error");
    let rates = m.group_error_rates();
    for (a, g) in groups.iter().enumerate() {
        let mut line = format!("{g:>width$}");
        for b in 0..groups.len() {
            line += &format!("  {:>width$}", m.count(a, b));
        }
        note!("{line}  {:>width$.4}", rates[a]);
    }
    note!(
        "error rate {:.4} ({} of {} rows)",
        m.error_rate(),
        m.total() - m.correct(),
        m.total()
    );
}

pub fn run(args: &ClassifyArgs) -> Result<(), CliError> {
    crate::output::check_json_target(args.json, &args.out)?;
    if let Some(level) = args.no_group_below {
        if !(level > 0.0 && level < 1.0) {
            return Err(CliError(format!(
                "--no-group-below {level} is not between 0 and 1"
            )));
        }
    }
    // Training rows.
    let (mut reader, headers) = RowReader::open(&args.train)?;
    let choice = ColumnChoice {
        columns: args.columns.clone(),
        exclude: args.exclude.clone(),
        label: Some(args.label.clone()),
    };
    let train_layout = layout(&args.train, &headers, &choice)?;
    let train = read_rows(&args.train, &mut reader, &train_layout)?;
    let mut train_labels = Vec::with_capacity(train.labels.len());
    for (i, l) in train.labels.iter().enumerate() {
        match l.as_deref() {
            Some(s) if !s.is_empty() => train_labels.push(s.to_string()),
            _ => {
                return Err(CliError(format!(
                    "{}, line {}: the label column '{}' is empty; every training row needs a group",
                    args.train.display(),
                    train.lines[i],
                    args.label
                )))
            }
        }
    }
    let p = train.names.len();
    let rows = mvdist::data::rows_from_slice(&train.data, p)?;
    let options = ClassifierOptions::new(match args.rule {
        RuleChoice::Linear => Rule::Linear,
        RuleChoice::Quadratic => Rule::Quadratic,
    })
    .with_priors(match args.priors {
        PriorChoice::Equal => Priors::Equal,
        PriorChoice::Proportional => Priors::Proportional,
    });
    let first_seen: Vec<String> = {
        let mut seen = std::collections::HashSet::new();
        train_labels
            .iter()
            .filter(|l| seen.insert(l.as_str()))
            .cloned()
            .collect()
    };
    let classifier = Classifier::fit(rows, &train_labels, &options)
        .map_err(|e| explain_classifier_error(&args.train, &train, &first_seen, args, e))?;
    let groups = classifier.labels().to_vec();

    if args.loo {
        let resub = classifier.confusion_matrix(rows, &train_labels)?;
        let loo = LeaveOneOut::estimate(rows, &train_labels, &options)
            .map_err(|e| explain_classifier_error(&args.train, &train, &groups, args, e))?;
        print_confusion(
            &format!(
                "leave-one-out confusion matrix of {} ({} rows)",
                args.train.display(),
                train_labels.len()
            ),
            &groups,
            loo.confusion(),
        );
        note!(
            "resubstitution error rate {:.4} (optimistic: each row helped fit the rule that classifies it)",
            resub.error_rate()
        );
    }

    // Rows to classify.
    let (mut reader, headers) = RowReader::open(&args.data)?;
    let has_label = headers.iter().any(|h| h == &args.label);
    let data_layout = layout_for(
        &args.data,
        &headers,
        &train.names,
        has_label.then_some(args.label.as_str()),
    )?;
    let data = read_rows(&args.data, &mut reader, &data_layout)?;
    let x = mvdist::data::rows_from_slice(&data.data, p)?;
    let predict = match args.no_group_below {
        Some(level) => PredictOptions::default().with_no_group_below(level),
        None => PredictOptions::default(),
    };

    let mut out = Predictions::new();
    classifier
        .predict_into(x, &predict, &mut out)
        .map_err(|e| match e {
            Error::Overflow { row } | Error::NonFinite { row, .. } => CliError(format!(
                "{}, line {}: {e}",
                args.data.display(),
                data.lines.get(row).copied().unwrap_or(0)
            )),
            other => CliError(format!("{}: {other}", args.data.display())),
        })?;

    let mut file = PendingFile::create(&args.out)?;
    let io = |e: std::io::Error| CliError(format!("{}: {e}", args.out.display()));
    let mut header = vec![
        "row".to_string(),
        "group".into(),
        "posterior".into(),
        "typicality".into(),
    ];
    header.extend(groups.iter().map(|g| csv_field(&format!("d2_{g}"))));
    writeln!(file.writer(), "{}", header.join(",")).map_err(io)?;
    let d2 = out.squared_distances();
    let post = out.posteriors();
    let mut no_group = 0usize;
    let mut line = String::new();
    for i in 0..out.len() {
        let g = out.assigned()[i];
        line.clear();
        let name = if out.no_group()[i] {
            no_group += 1;
            String::new()
        } else {
            csv_field(&groups[g])
        };
        line += &format!(
            "{},{name},{},{}",
            i + 1,
            number_field(post[(i, g)]),
            number_field(out.typicality()[i])
        );
        for &v in d2.row(i) {
            line.push(',');
            line += &number_field(v);
        }
        writeln!(file.writer(), "{line}").map_err(io)?;
    }
    file.finish()?;
    note!(
        "classified {} rows of {} into {} groups ({} rule, {} priors, fitted on {} rows of {}); wrote {}",
        out.len(),
        args.data.display(),
        groups.len(),
        if args.rule == RuleChoice::Linear { "linear" } else { "quadratic" },
        if args.priors == PriorChoice::Equal { "equal" } else { "proportional" },
        train_labels.len(),
        args.train.display(),
        args.out.display()
    );
    crate::output::record_flags(no_group > 0);
    if args.json {
        crate::output::print_json(&serde_json::json!({
            "command": "classify",
            "train": args.train.display().to_string(),
            "training_rows": train_labels.len(),
            "data": args.data.display().to_string(),
            "rows": out.len(),
            "groups": groups,
            "rule": if args.rule == RuleChoice::Linear { "linear" } else { "quadratic" },
            "priors": if args.priors == PriorChoice::Equal { "equal" } else { "proportional" },
            "no_group_level": args.no_group_below,
            "rows_without_group": args.no_group_below.map(|_| no_group),
            "out": args.out.display().to_string(),
            "caution": "posteriors and typicality assume each group is multivariate normal with the modelled scatter; an assignment or a \"no group\" is evidence for review, not a verdict",
        }))?;
    }
    if let Some(level) = args.no_group_below {
        note!("{no_group} row(s) atypical of every group at level {level}: their group is left empty for review");
    }
    if has_label {
        report_accuracy(args, &classifier, &data, &out);
    }
    note!("note: posteriors and typicality assume each group is multivariate normal with the modelled scatter; an assignment or a \"no group\" is evidence for review, not a verdict.");
    Ok(())
}

/// Accuracy against DATA's own labels; labels unknown to the training rows
/// are counted and named, and left out.
fn report_accuracy(
    args: &ClassifyArgs,
    classifier: &Classifier<String>,
    data: &LabelledRows,
    out: &Predictions,
) {
    let mut actual = Vec::new();
    let mut assigned = Vec::new();
    let mut unknown: Vec<(usize, String)> = Vec::new();
    for (i, l) in data.labels.iter().enumerate() {
        let l = l.as_deref().unwrap_or("");
        match classifier.group_of(&l.to_string()) {
            Some(g) => {
                actual.push(g);
                assigned.push(out.assigned()[i]);
            }
            None => unknown.push((i, l.to_string())),
        }
    }
    if let Ok(m) = ConfusionMatrix::from_groups(&actual, &assigned, classifier.group_count()) {
        if m.total() > 0 {
            note!(
                "accuracy on the {} rows of {} whose '{}' is a training group: {:.4} ({} misassigned)",
                m.total(),
                args.data.display(),
                args.label,
                1.0 - m.error_rate(),
                m.total() - m.correct()
            );
        }
    }
    if !unknown.is_empty() {
        let mut names: Vec<&str> = unknown.iter().map(|(_, l)| l.as_str()).collect();
        names.sort_unstable();
        names.dedup();
        let shown: Vec<String> = names.iter().take(5).map(|l| format!("'{l}'")).collect();
        note!(
            "{} row(s) of {} have a '{}' that is not a training group ({}{}; first at line {}); they are left out of the accuracy",
            unknown.len(),
            args.data.display(),
            args.label,
            shown.join(", "),
            if names.len() > 5 { ", …" } else { "" },
            data.lines.get(unknown[0].0).copied().unwrap_or(0)
        );
    }
}
