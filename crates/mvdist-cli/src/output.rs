//! Output files that appear only when complete: written under a temporary
//! name in the same folder and renamed on success; removed on failure.

use crate::CliError;
use mvdist::model_file::ModelFile;
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

/// A file being written; it takes its final name only in [`finish`](Self::finish).
pub struct PendingFile {
    temp: PathBuf,
    target: PathBuf,
    writer: Option<BufWriter<File>>,
}

impl PendingFile {
    pub fn create(target: &Path) -> Result<Self, CliError> {
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
            temp,
            target: target.to_path_buf(),
            writer: Some(BufWriter::new(file)),
        })
    }

    pub fn writer(&mut self) -> &mut BufWriter<File> {
        // Present from creation until `finish` consumes `self`.
        self.writer
            .as_mut()
            .unwrap_or_else(|| unreachable!("writer taken only in finish"))
    }

    pub fn finish(mut self) -> Result<(), CliError> {
        if let Some(w) = self.writer.take() {
            let file = w
                .into_inner()
                .map_err(|e| CliError(format!("{}: {e}", self.target.display())))?;
            file.sync_all()
                .map_err(|e| CliError(format!("{}: {e}", self.target.display())))?;
        }
        std::fs::rename(&self.temp, &self.target)
            .map_err(|e| CliError(format!("{}: {e}", self.target.display())))?;
        Ok(())
    }
}

impl Drop for PendingFile {
    fn drop(&mut self) {
        if self.writer.is_some() || self.temp.exists() {
            self.writer.take();
            let _ = std::fs::remove_file(&self.temp);
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
    ModelFile::load(path).map_err(|e| match e {
        mvdist::Error::Io { path, reason, .. } => {
            CliError(format!("cannot read the model file {path}: {reason}"))
        }
        other => CliError(format!("{}: {other}", path.display())),
    })
}

/// Writes a model file (JSON, or binary with `binary`) atomically.
pub fn save_model_file(file: &ModelFile, path: &Path, binary: bool) -> Result<(), CliError> {
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
