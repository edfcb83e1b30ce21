//! Where results and notes go.
//!
//! Output files appear only when complete: written under a temporary name
//! in the same folder and renamed on success; removed on failure. The path
//! `-` is standard output instead (written as it goes). Notes (summaries,
//! cautions) go to standard error and are silenced by `--quiet`; results
//! printed on standard output go through [`say`]. A closed pipe on
//! standard output ends the program quietly with status 0, as the reader
//! asked for no more.

use crate::CliError;
use mvdist::model_file::ModelFile;
use std::fs::File;
use std::io::{BufWriter, Read, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};

static QUIET: AtomicBool = AtomicBool::new(false);
static FLAGGED: AtomicBool = AtomicBool::new(false);

/// Silences notes (`--quiet`).
pub fn set_quiet(quiet: bool) {
    QUIET.store(quiet, Ordering::Relaxed);
}

/// Whether notes are silenced.
pub fn quiet() -> bool {
    QUIET.load(Ordering::Relaxed)
}

/// Records that the run flagged rows or signalled (for `--flag-status`).
pub fn record_flags(any: bool) {
    if any {
        FLAGGED.store(true, Ordering::Relaxed);
    }
}

/// Whether the run flagged rows or signalled.
pub fn flagged() -> bool {
    FLAGGED.load(Ordering::Relaxed)
}

/// Whether `path` names standard input or output.
pub fn is_stdio(path: &Path) -> bool {
    path.as_os_str() == "-"
}

/// Standard output that ends the program quietly when the reader has gone.
pub struct PipeOut;

impl Write for PipeOut {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        closed_pipe_ends(std::io::stdout().lock().write(buf))
    }

    fn flush(&mut self) -> std::io::Result<()> {
        closed_pipe_ends(std::io::stdout().lock().flush())
    }
}

fn closed_pipe_ends<T>(r: std::io::Result<T>) -> std::io::Result<T> {
    if let Err(e) = &r {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            std::process::exit(0);
        }
    }
    r
}

/// Prints one line of a result on standard output.
pub fn say(line: std::fmt::Arguments<'_>) {
    let mut out = PipeOut;
    // Errors other than a closed pipe (which ends the program) leave
    // nothing useful to do with the line.
    let _ = out.write_fmt(line).and_then(|()| out.write_all(b"\n"));
}

/// Refuses `--json` together with `--out -`: both would go to standard
/// output.
pub fn check_json_target(json: bool, out: &Path) -> Result<(), CliError> {
    if json && is_stdio(out) {
        return Err(CliError(
            "--json and --out - both write standard output; write the results to a file, or drop --json"
                .into(),
        ));
    }
    Ok(())
}

/// Prints a run's summary as JSON on standard output (`--json`).
pub fn print_json(summary: &serde_json::Value) -> Result<(), CliError> {
    let text = serde_json::to_string_pretty(summary)
        .map_err(|e| CliError(format!("cannot write the summary as JSON: {e}")))?;
    say(format_args!("{text}"));
    Ok(())
}

/// Reads all of standard input.
pub fn read_stdin() -> Result<Vec<u8>, CliError> {
    let mut bytes = Vec::new();
    std::io::stdin()
        .lock()
        .read_to_end(&mut bytes)
        .map_err(|e| CliError(format!("standard input: {e}")))?;
    Ok(bytes)
}

enum Sink {
    File {
        temp: PathBuf,
        writer: Option<BufWriter<File>>,
    },
    Stdout(BufWriter<PipeOut>),
}

/// A file being written; it takes its final name only in [`finish`](Self::finish).
/// The path `-` writes to standard output.
pub struct PendingFile {
    target: PathBuf,
    sink: Sink,
}

impl PendingFile {
    pub fn create(target: &Path) -> Result<Self, CliError> {
        if is_stdio(target) {
            return Ok(PendingFile {
                target: target.to_path_buf(),
                sink: Sink::Stdout(BufWriter::with_capacity(1 << 16, PipeOut)),
            });
        }
        let name = target
            .file_name()
            .ok_or_else(|| CliError(format!("{}: not a file name", target.display())))?;
        let dir = match target.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        if !dir.is_dir() {
            return Err(CliError(format!(
                "{}: the folder {} does not exist",
                target.display(),
                dir.display()
            )));
        }
        let temp = dir.join(format!(
            ".{}.partial-{}",
            name.to_string_lossy(),
            std::process::id()
        ));
        let file = File::create(&temp).map_err(|e| CliError(format!("{}: {e}", temp.display())))?;
        Ok(PendingFile {
            target: target.to_path_buf(),
            sink: Sink::File {
                temp,
                writer: Some(BufWriter::with_capacity(1 << 16, file)),
            },
        })
    }

    pub fn writer(&mut self) -> &mut dyn Write {
        match &mut self.sink {
            Sink::Stdout(w) => w,
            // Present from creation until `finish` consumes `self`.
            Sink::File { writer, .. } => match writer {
                Some(w) => w,
                None => unreachable!("writer taken only in finish"),
            },
        }
    }

    pub fn finish(mut self) -> Result<(), CliError> {
        let target = self.target.clone();
        let err = |e: &dyn std::fmt::Display| CliError(format!("{}: {e}", target.display()));
        match &mut self.sink {
            Sink::Stdout(w) => w.flush().map_err(|e| err(&e)),
            Sink::File { temp, writer } => {
                if let Some(w) = writer.take() {
                    let file = w.into_inner().map_err(|e| err(&e))?;
                    file.sync_all().map_err(|e| err(&e))?;
                }
                std::fs::rename(&*temp, &target).map_err(|e| err(&e))
            }
        }
    }
}

impl Drop for PendingFile {
    fn drop(&mut self) {
        if let Sink::File { temp, writer } = &mut self.sink {
            if writer.is_some() || temp.exists() {
                writer.take();
                let _ = std::fs::remove_file(&*temp);
            }
        }
    }
}

/// Writes `text` to `target` atomically.
pub fn write_atomically(target: &Path, text: &str) -> Result<(), CliError> {
    write_bytes_atomically(target, text.as_bytes())
}

/// Writes `bytes` to `target` atomically.
pub fn write_bytes_atomically(target: &Path, bytes: &[u8]) -> Result<(), CliError> {
    let mut f = PendingFile::create(target)?;
    f.writer()
        .write_all(bytes)
        .map_err(|e| CliError(format!("{}: {e}", target.display())))?;
    f.finish()
}

/// A CSV field, quoted when it holds a comma, quote or line break.
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A number as a CSV field: the shorter of the shortest round-trip decimal
/// and the shortest round-trip scientific form, so a p-value of 3.8e-218
/// prints as such and not as a 220-character decimal. Both forms parse
/// back to the same `f64`.
pub fn number_field(v: f64) -> String {
    let plain = format!("{v}");
    if !v.is_finite() {
        return plain;
    }
    let scientific = format!("{v:e}");
    if scientific.len() < plain.len() {
        scientific
    } else {
        plain
    }
}

/// Reads a model file in either form (JSON or binary), naming the file in
/// the error.
pub fn load_model_file(path: &Path) -> Result<ModelFile, CliError> {
    if is_stdio(path) {
        return ModelFile::from_any(&read_stdin()?)
            .map_err(|e| CliError(format!("standard input: {e}")));
    }
    ModelFile::load(path).map_err(|e| match e {
        mvdist::Error::Io { path, reason, .. } => {
            CliError(format!("cannot read the model file {path}: {reason}"))
        }
        other => CliError(format!("{}: {other}", path.display())),
    })
}

/// Writes a model file (JSON, or binary with `binary`) atomically.
pub fn save_model_file(file: &ModelFile, path: &Path, binary: bool) -> Result<(), CliError> {
    if is_stdio(path) {
        return if binary {
            write_bytes_atomically(path, &file.to_bytes())
        } else {
            write_atomically(path, &(file.to_json() + "\n"))
        };
    }
    file.save(path, binary).map_err(|e| {
        CliError(format!(
            "{}: cannot write the model file: {e}",
            path.display()
        ))
    })
}

#[cfg(test)]
mod tests {
    use super::number_field;

    #[test]
    fn numbers_print_short_and_round_trip() {
        // The shortest form, checked by parsing back (Rust's formatting
        // gives the shortest round-trip digits in both notations).
        for v in [
            3.8e-218,
            0.05,
            1e-5,
            0.000123,
            12.5,
            1e16,
            123456789.0,
            0.0,
            -2.5e-300,
            5e-324,
            1.7976931348623157e308,
            0.1 + 0.2,
        ] {
            let s = number_field(v);
            assert_eq!(s.parse::<f64>().ok(), Some(v), "{v}: {s}");
            assert!(s.len() <= 24, "{v}: {s}");
        }
        assert_eq!(number_field(3.8e-218), "3.8e-218");
        assert_eq!(number_field(0.05), "0.05");
        assert_eq!(number_field(12.5), "12.5");
        assert_eq!(number_field(f64::NAN), "NaN");
    }
}
