//! Reading table input: CSV (a header row, then one observation per
//! line), or the columnar formats of [`crate::rows`].
//!
//! Line numbers in messages count as a person does: the header is line 1,
//! the first data row line 2.

use crate::rows::RowReader;
use crate::CliError;
use std::fs::File;
use std::path::Path;

/// Which columns are variables.
#[derive(Clone, Debug, Default, clap::Args)]
pub struct ColumnChoice {
    /// Variables to use, comma-separated (default: every column that is not
    /// excluded and not the label).
    #[arg(long, value_delimiter = ',')]
    pub columns: Option<Vec<String>>,
    /// Columns to leave out, comma-separated.
    #[arg(long, value_delimiter = ',')]
    pub exclude: Vec<String>,
    /// A column that identifies rows (copied to the output, never a variable).
    #[arg(long)]
    pub label: Option<String>,
}

/// Selected columns: variable names and their field positions.
pub struct Layout {
    pub names: Vec<String>,
    pub fields: Vec<usize>,
    pub label: Option<usize>,
    pub header_len: usize,
}

/// A source of CSV text: a file, or standard input for the path `-`.
pub type Source = Box<dyn std::io::Read>;

pub fn open(path: &Path) -> Result<(csv::Reader<Source>, Vec<String>), CliError> {
    let file: Source = if crate::output::is_stdio(path) {
        Box::new(std::io::stdin().lock())
    } else {
        Box::new(
            File::open(path)
                .map_err(|e| CliError(format!("{}: cannot open: {e}", path.display())))?,
        )
    };
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .from_reader(file);
    let headers = reader
        .headers()
        .map_err(|e| {
            CliError(format!(
                "{}: cannot read the header row: {e}",
                path.display()
            ))
        })?
        .iter()
        .map(|h| h.trim().to_string())
        .collect::<Vec<_>>();
    if headers.is_empty() || (headers.len() == 1 && headers[0].is_empty()) {
        return Err(CliError(format!(
            "{}: the file is empty; it needs a header row naming the columns, then data rows",
            path.display()
        )));
    }
    Ok((reader, headers))
}

fn find(path: &Path, headers: &[String], name: &str) -> Result<usize, CliError> {
    headers.iter().position(|h| h == name).ok_or_else(|| {
        CliError(format!(
            "{}: unknown column '{name}'; the columns are: {}",
            path.display(),
            headers.join(", ")
        ))
    })
}

pub fn layout(path: &Path, headers: &[String], choice: &ColumnChoice) -> Result<Layout, CliError> {
    let label = choice
        .label
        .as_deref()
        .map(|l| find(path, headers, l))
        .transpose()?;
    let excluded = choice
        .exclude
        .iter()
        .map(|e| find(path, headers, e))
        .collect::<Result<Vec<_>, _>>()?;
    let fields: Vec<usize> = match &choice.columns {
        Some(cols) => cols
            .iter()
            .map(|c| find(path, headers, c))
            .collect::<Result<_, _>>()?,
        None => (0..headers.len())
            .filter(|i| Some(*i) != label && !excluded.contains(i))
            .collect(),
    };
    for (k, f) in fields.iter().enumerate() {
        if fields[..k].contains(f) {
            return Err(CliError(format!(
                "column '{}' is selected twice",
                headers[*f]
            )));
        }
        if Some(*f) == label {
            return Err(CliError(format!(
                "column '{}' cannot be both a variable and the label",
                headers[*f]
            )));
        }
    }
    if fields.is_empty() {
        return Err(CliError(format!(
            "{}: no variables are left to use",
            path.display()
        )));
    }
    Ok(Layout {
        names: fields.iter().map(|&f| headers[f].clone()).collect(),
        fields,
        label,
        header_len: headers.len(),
    })
}

/// A layout for given variable names (a model's), found by name in `headers`.
pub fn layout_for(
    path: &Path,
    headers: &[String],
    names: &[String],
    label: Option<&str>,
) -> Result<Layout, CliError> {
    let label = label.map(|l| find(path, headers, l)).transpose()?;
    let mut fields = Vec::with_capacity(names.len());
    let mut missing = Vec::new();
    for n in names {
        match headers.iter().position(|h| h == n) {
            Some(f) => fields.push(f),
            None => missing.push(n.as_str()),
        }
    }
    if !missing.is_empty() {
        return Err(CliError(format!(
            "{}: the model's variables {} are not columns of this file (its columns: {}); score a file with the same columns the model was fitted on",
            path.display(),
            missing.iter().map(|m| format!("'{m}'")).collect::<Vec<_>>().join(", "),
            headers.join(", ")
        )));
    }
    Ok(Layout {
        names: names.to_vec(),
        fields,
        label,
        header_len: headers.len(),
    })
}

pub enum RowOutcome {
    Complete,
    /// A missing value in this variable (0-based position in the layout).
    Missing(usize),
}

fn is_missing(cell: &str) -> bool {
    matches!(
        cell.to_ascii_lowercase().as_str(),
        "" | "na" | "n/a" | "nan" | "null"
    )
}

/// Parses one record's variables into `out`.
pub fn parse_record(
    path: &Path,
    record: &csv::StringRecord,
    layout: &Layout,
    out: &mut Vec<f64>,
) -> Result<RowOutcome, CliError> {
    let line = record.position().map_or(0, |p| p.line());
    if record.len() != layout.header_len {
        return Err(CliError(format!(
            "{}, line {line}: the row has {} fields but the header has {}",
            path.display(),
            record.len(),
            layout.header_len
        )));
    }
    out.clear();
    let mut missing = None;
    for (k, &f) in layout.fields.iter().enumerate() {
        let cell = record.get(f).unwrap_or("").trim();
        if is_missing(cell) {
            missing.get_or_insert(k);
            out.push(f64::NAN);
            continue;
        }
        let v: f64 = cell.parse().map_err(|_| {
            CliError(format!(
                "{}, line {line}, column '{}': '{cell}' is not a number; exclude the column with --exclude or name it with --label",
                path.display(),
                layout.names[k]
            ))
        })?;
        if !v.is_finite() {
            return Err(CliError(format!(
                "{}, line {line}, column '{}': the value '{cell}' is not finite",
                path.display(),
                layout.names[k]
            )));
        }
        out.push(v);
    }
    Ok(match missing {
        Some(k) => RowOutcome::Missing(k),
        None => RowOutcome::Complete,
    })
}

/// A missing value at `place` (`file, line N` or `file, row N`).
pub fn missing_value_error(place: &str, column: &str) -> CliError {
    CliError(format!(
        "{place}, column '{column}': the value is missing; fill it in, or pass --skip-incomplete to leave such rows out"
    ))
}

pub fn read_error(path: &Path, e: csv::Error) -> CliError {
    match e.position() {
        Some(p) => CliError(format!("{}, line {}: {e}", path.display(), p.line())),
        None => CliError(format!("{}: {e}", path.display())),
    }
}

/// All complete rows of the chosen variables, row-major.
pub struct Table {
    pub names: Vec<String>,
    pub data: Vec<f64>,
    pub rows: usize,
    /// The label of each complete row (empty without a label column).
    pub labels: Vec<String>,
}

pub fn read_table(
    path: &Path,
    choice: &ColumnChoice,
    skip_incomplete: bool,
) -> Result<Table, CliError> {
    let (reader, headers) = RowReader::open(path)?;
    let layout = layout(path, &headers, choice)?;
    read_rows(path, reader, layout, skip_incomplete, false)
}

/// As [`read_table`], keeping rows with missing values (as NaN cells).
pub fn read_table_with_gaps(path: &Path, choice: &ColumnChoice) -> Result<Table, CliError> {
    let (reader, headers) = RowReader::open(path)?;
    let layout = layout(path, &headers, choice)?;
    read_rows(path, reader, layout, false, true)
}

/// As [`read_table`], for given variable names (another file's), found by
/// name in this file's header.
pub fn read_table_named(
    path: &Path,
    names: &[String],
    label: Option<&str>,
    skip_incomplete: bool,
) -> Result<Table, CliError> {
    let (reader, headers) = RowReader::open(path)?;
    let layout = layout_for(path, &headers, names, label)?;
    read_rows(path, reader, layout, skip_incomplete, false)
}

fn read_rows(
    path: &Path,
    mut reader: RowReader,
    layout: Layout,
    skip_incomplete: bool,
    keep_gaps: bool,
) -> Result<Table, CliError> {
    let mut data = Vec::new();
    let mut labels = Vec::new();
    let mut rows = 0;
    let mut skipped = 0;
    let mut values = Vec::with_capacity(layout.fields.len());
    while let Some((line, outcome)) = reader.next_row(path, &layout, &mut values)? {
        let keep = match outcome {
            RowOutcome::Complete => true,
            RowOutcome::Missing(_) if keep_gaps => true,
            RowOutcome::Missing(k) => {
                if skip_incomplete {
                    skipped += 1;
                    false
                } else {
                    return Err(missing_value_error(
                        &reader.place(path, line),
                        &layout.names[k],
                    ));
                }
            }
        };
        if keep {
            data.extend_from_slice(&values);
            if layout.label.is_some() {
                labels.push(reader.label(&layout).unwrap_or("").to_string());
            }
            rows += 1;
        }
    }
    if rows == 0 && skipped == 0 {
        return Err(CliError(format!(
            "{}: the file has a header row but no data rows",
            path.display()
        )));
    }
    if skipped > 0 {
        eprintln!(
            "mvdist: skipped {skipped} incomplete row(s) of {}",
            path.display()
        );
    }
    Ok(Table {
        names: layout.names,
        data,
        rows,
        labels,
    })
}
