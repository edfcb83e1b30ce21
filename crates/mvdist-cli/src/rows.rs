//! Reading rows from any supported table file, one row at a time.
//!
//! The format follows the file name: `.parquet` is Parquet, `.arrow`,
//! `.feather` and `.ipc` are Arrow IPC files, `.arrows` an Arrow IPC
//! stream; anything else (and standard input, `-`) is CSV. Columnar files
//! carry their column names in their schema; a variable column must hold
//! numbers (integers, floating point or decimals, converted to f64); nulls
//! and floating-point NaN are missing values, as empty cells and `NA` are in
//! CSV. Places are named as `file, line N` for CSV (the header is line 1)
//! and `file, row N` (1-based data row) for columnar files.

use crate::table::{parse_record, read_error, Layout, RowOutcome, Source};
use crate::CliError;
use arrow::array::{Array, ArrayRef, AsArray, RecordBatch, RecordBatchReader};
use arrow::datatypes::{DataType, Float64Type, SchemaRef};
use std::fs::File;
use std::path::Path;

/// The kinds of files read.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    Csv,
    Parquet,
    ArrowFile,
    ArrowStream,
}

impl Format {
    /// The format of `path`, from its extension.
    pub fn of(path: &Path) -> Format {
        let ext = path
            .extension()
            .map(|e| e.to_string_lossy().to_ascii_lowercase());
        match ext.as_deref() {
            Some("parquet") | Some("pq") => Format::Parquet,
            Some("arrow") | Some("feather") | Some("ipc") => Format::ArrowFile,
            Some("arrows") => Format::ArrowStream,
            _ => Format::Csv,
        }
    }
}

type Batches = Box<dyn Iterator<Item = Result<RecordBatch, arrow::error::ArrowError>>>;

/// The current batch of a columnar file, with the layout's columns as f64
/// and the label as text.
struct Batch {
    values: Vec<arrow::array::Float64Array>,
    label: Option<arrow::array::StringArray>,
    len: usize,
}

/// A columnar file being read batch by batch.
pub struct Columnar {
    schema: SchemaRef,
    batches: Batches,
    batch: Option<Batch>,
    next_in_batch: usize,
    row: u64,
}

/// Rows of a table file.
pub enum RowReader {
    Csv {
        reader: csv::Reader<Source>,
        record: csv::StringRecord,
    },
    Columnar(Box<Columnar>),
}

fn columnar_error(path: &Path, e: impl std::fmt::Display) -> CliError {
    CliError(format!(
        "{}: cannot read it as {}: {e}",
        path.display(),
        match Format::of(path) {
            Format::Parquet => "a Parquet file",
            Format::ArrowFile => "an Arrow IPC file",
            _ => "an Arrow IPC stream",
        }
    ))
}

impl RowReader {
    /// Opens `path` and reads its column names.
    pub fn open(path: &Path) -> Result<(RowReader, Vec<String>), CliError> {
        let format = if crate::output::is_stdio(path) {
            Format::Csv
        } else {
            Format::of(path)
        };
        if format == Format::Csv {
            let (reader, headers) = crate::table::open(path)?;
            return Ok((
                RowReader::Csv {
                    reader,
                    record: csv::StringRecord::new(),
                },
                headers,
            ));
        }
        let file = File::open(path)
            .map_err(|e| CliError(format!("{}: cannot open: {e}", path.display())))?;
        let (schema, batches): (SchemaRef, Batches) = match format {
            Format::Parquet => {
                let builder =
                    parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder::try_new(file)
                        .map_err(|e| columnar_error(path, e))?;
                let reader = builder
                    .with_batch_size(8192)
                    .build()
                    .map_err(|e| columnar_error(path, e))?;
                (reader.schema(), Box::new(reader))
            }
            Format::ArrowFile => {
                let reader = arrow::ipc::reader::FileReader::try_new(file, None)
                    .map_err(|e| columnar_error(path, e))?;
                (reader.schema(), Box::new(reader))
            }
            _ => {
                let reader =
                    arrow::ipc::reader::StreamReader::try_new(std::io::BufReader::new(file), None)
                        .map_err(|e| columnar_error(path, e))?;
                (reader.schema(), Box::new(reader))
            }
        };
        let headers: Vec<String> = schema.fields().iter().map(|f| f.name().clone()).collect();
        if headers.is_empty() {
            return Err(CliError(format!(
                "{}: the file has no columns",
                path.display()
            )));
        }
        Ok((
            RowReader::Columnar(Box::new(Columnar {
                schema,
                batches,
                batch: None,
                next_in_batch: 0,
                row: 0,
            })),
            headers,
        ))
    }

    /// Reads the next row's variables into `values` (NaN where missing);
    /// `None` at the end of the file. The number is the CSV line or the
    /// columnar data row.
    pub fn next_row(
        &mut self,
        path: &Path,
        layout: &Layout,
        values: &mut Vec<f64>,
    ) -> Result<Option<(u64, RowOutcome)>, CliError> {
        match self {
            RowReader::Csv { reader, record } => {
                if !reader
                    .read_record(record)
                    .map_err(|e| read_error(path, e))?
                {
                    return Ok(None);
                }
                let line = record.position().map_or(0, |p| p.line());
                let outcome = parse_record(path, record, layout, values)?;
                Ok(Some((line, outcome)))
            }
            RowReader::Columnar(c) => c.next_row(path, layout, values),
        }
    }

    /// The label of the row last read (`None` without a label column).
    pub fn label(&self, layout: &Layout) -> Option<&str> {
        match self {
            RowReader::Csv { record, .. } => layout.label.and_then(|l| record.get(l)),
            RowReader::Columnar(c) => {
                let b = c.batch.as_ref()?;
                let labels = b.label.as_ref()?;
                let i = c.next_in_batch.checked_sub(1)?;
                Some(if labels.is_null(i) {
                    ""
                } else {
                    labels.value(i)
                })
            }
        }
    }

    /// Bytes read so far, where known (CSV), for a progress report.
    pub fn bytes_read(&self) -> Option<u64> {
        match self {
            RowReader::Csv { record, .. } => record.position().map(|p| p.byte()),
            RowReader::Columnar(_) => None,
        }
    }

    /// How a place in this file is named: `file, line N` or `file, row N`.
    pub fn place(&self, path: &Path, number: u64) -> String {
        match self {
            RowReader::Csv { .. } => format!("{}, line {number}", path.display()),
            RowReader::Columnar(_) => format!("{}, row {number}", path.display()),
        }
    }
}

impl Columnar {
    fn load(&mut self, path: &Path, layout: &Layout) -> Result<bool, CliError> {
        loop {
            let Some(next) = self.batches.next() else {
                self.batch = None;
                return Ok(false);
            };
            let batch = next.map_err(|e| columnar_error(path, e))?;
            if batch.num_rows() == 0 {
                continue;
            }
            let mut values = Vec::with_capacity(layout.fields.len());
            for (k, &f) in layout.fields.iter().enumerate() {
                let column = batch.column(f);
                values.push(numbers(path, &layout.names[k], column)?);
            }
            let label = match layout.label {
                Some(l) => {
                    let column = batch.column(l);
                    let text = arrow::compute::cast(column, &DataType::Utf8).map_err(|e| {
                        CliError(format!(
                            "{}: the label column '{}' ({}) cannot be read as text: {e}",
                            path.display(),
                            self.schema.field(l).name(),
                            column.data_type()
                        ))
                    })?;
                    Some(text.as_string::<i32>().clone())
                }
                None => None,
            };
            self.batch = Some(Batch {
                values,
                label,
                len: batch.num_rows(),
            });
            self.next_in_batch = 0;
            return Ok(true);
        }
    }

    fn next_row(
        &mut self,
        path: &Path,
        layout: &Layout,
        values: &mut Vec<f64>,
    ) -> Result<Option<(u64, RowOutcome)>, CliError> {
        let exhausted = self
            .batch
            .as_ref()
            .is_none_or(|b| self.next_in_batch >= b.len);
        if exhausted && !self.load(path, layout)? {
            return Ok(None);
        }
        let Some(batch) = self.batch.as_ref() else {
            return Ok(None);
        };
        let i = self.next_in_batch;
        self.next_in_batch += 1;
        self.row += 1;
        values.clear();
        let mut missing = None;
        for (k, column) in batch.values.iter().enumerate() {
            let v = if column.is_null(i) {
                f64::NAN
            } else {
                column.value(i)
            };
            if v.is_nan() {
                missing.get_or_insert(k);
            } else if !v.is_finite() {
                return Err(CliError(format!(
                    "{}, row {}, column '{}': the value {v} is not finite",
                    path.display(),
                    self.row,
                    layout.names[k]
                )));
            }
            values.push(v);
        }
        Ok(Some((
            self.row,
            match missing {
                Some(k) => RowOutcome::Missing(k),
                None => RowOutcome::Complete,
            },
        )))
    }
}

/// A numeric column as f64; other types are refused, naming the column.
fn numbers(
    path: &Path,
    name: &str,
    column: &ArrayRef,
) -> Result<arrow::array::Float64Array, CliError> {
    let dt = column.data_type();
    let numeric = dt.is_numeric() || matches!(dt, DataType::Null);
    if !numeric {
        return Err(CliError(format!(
            "{}: column '{name}' holds {dt}, not numbers; exclude the column with --exclude or name it with --label",
            path.display()
        )));
    }
    let cast = arrow::compute::cast(column, &DataType::Float64).map_err(|e| {
        CliError(format!(
            "{}: column '{name}' ({dt}) cannot be read as numbers: {e}",
            path.display()
        ))
    })?;
    Ok(cast.as_primitive::<Float64Type>().clone())
}
