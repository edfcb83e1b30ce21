//! Output files that appear only when complete: written under a temporary
//! name in the same folder and renamed on success; removed on failure.

use crate::CliError;
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

/// A number as a CSV field: shortest round-trip form, in exponent notation
/// when very small or very large (so that tiny p-values stay short).
pub fn number_field(v: f64) -> String {
    let a = v.abs();
    if a != 0.0 && a.is_finite() && !(1e-5..1e16).contains(&a) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}
