//! Model files: a fitted model with its variable names, as versioned JSON.
//!
//! The layout (our own, stable within a format version):
//!
//! ```json
//! {
//!   "format": "mvdist-model",
//!   "format_version": 2,
//!   "variables": ["gravity", "ph"],
//!   "n": 120,
//!   "location": [1.048, 4.31],
//!   "scatter": [[1.2e-5, 3.1e-5], [3.1e-5, 0.0121]],
//!   "estimator": { "kind": "classical", "divisor": "unbiased" },
//!   "calibration": { "squared_distances": [0.08, 0.71, 1.9, 4.4] },
//!   "checksum": "crc32:5a1c03f2"
//! }
//! ```
//!
//! * `format` and `format_version` identify the file; a file from a newer
//!   format version is refused with a message saying so.
//! * `variables` are the column names, in the order of `location` and of the
//!   rows and columns of `scatter`.
//! * `n` is the number of rows the model was fitted on (it sets the Beta and
//!   F references).
//! * `scatter` is the `p × p` matrix as nested rows; loading re-validates it
//!   (a scatter that is no longer positive definite is refused).
//! * `estimator` records how the location and scatter were estimated.
//! * `calibration` (format version 2, optional) holds the squared distances
//!   of held-out reference rows in increasing order, for distribution-free
//!   p-values ([`crate::held_out`]). Version 1 files have no such field and
//!   read as models without calibration rows.
//! * `checksum` is the CRC-32 of the compact JSON of all other fields, in
//!   the order above, as eight hex digits. It is always written; on loading
//!   it is verified when present (a hand-written file may leave it out).
//!
//! The same content has a compact binary form ([`ModelFile::to_bytes`]),
//! with its own magic bytes, format version and CRC-32; [`ModelFile::load`]
//! reads either.
//!
//! **Compatibility promise.** A build reads every format version up to its
//! own ([`FORMAT_VERSION`]) and refuses newer ones with a message saying so.
//! Within a format version, fields are only ever added as optional ones.
//!
//! Floating-point values are written with the shortest representation that
//! reads back to the same `f64`, so a save–load round trip is exact.
//!
//! # Example
//! ```
//! use mvdist::{model_file::ModelFile, DistanceModel};
//! use ndarray::array;
//!
//! let rows = array![[1.0, 2.0], [2.0, 2.9], [3.0, 4.2], [4.0, 4.8]];
//! let file = ModelFile::new(vec!["a".into(), "b".into()], DistanceModel::fit(rows.view())?)?;
//! let text = file.to_json();
//! let back = ModelFile::from_json(&text)?;
//! assert_eq!(back, file);
//! # Ok::<(), mvdist::Error>(())
//! ```

mod binary;
mod crc32;

use crate::calibration::EmpiricalReference;
use crate::error::{Error, Result};
use crate::estimate::FitMethod;
use crate::model::DistanceModel;
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};
use std::path::Path;

/// The format version this build writes and the newest it reads.
pub const FORMAT_VERSION: u32 = 2;

const FORMAT_NAME: &str = "mvdist-model";

/// A fitted model together with the names of its variables.
#[derive(Clone, Debug, PartialEq)]
pub struct ModelFile {
    variables: Vec<String>,
    model: DistanceModel,
}

#[derive(Serialize, Deserialize)]
struct FileData {
    format: String,
    format_version: u32,
    variables: Vec<String>,
    n: usize,
    location: Vec<f64>,
    scatter: Scatter,
    estimator: FitMethod,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    calibration: Option<EmpiricalReference>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    checksum: Option<String>,
}

fn checksum_of(data: &FileData) -> String {
    // The compact JSON of plain data cannot fail to serialize.
    let text = serde_json::to_string(data).unwrap_or_default();
    format!("crc32:{:08x}", crc32::crc32(text.as_bytes()))
}

#[derive(Deserialize)]
struct Header {
    format: Option<String>,
    format_version: Option<u32>,
}

/// Checks the `format` and `format_version` fields of a serialized value
/// (a model file, a classifier, a drift model): the name must be `name`
/// and the version between 1 and `newest`.
///
/// # Errors
/// [`Error::Format`] saying which field is wrong and what to do.
pub(crate) fn check_format(
    what: &str,
    name: &str,
    newest: u32,
    found_name: Option<&str>,
    found_version: Option<u32>,
) -> Result<()> {
    if found_name != Some(name) {
        return Err(Error::Format {
            reason: format!("not a {what} (the \"format\" field is not \"{name}\")"),
        });
    }
    match found_version {
        Some(v) if (1..=newest).contains(&v) => Ok(()),
        Some(0) => Err(Error::Format {
            reason: format!("{what} format version 0 does not exist; the file is damaged"),
        }),
        Some(v) => Err(Error::Format {
            reason: format!(
                "{what} format version {v} is newer than this build reads ({newest}); upgrade mvdist"
            ),
        }),
        None => Err(Error::Format {
            reason: format!("the {what}'s \"format_version\" field is missing"),
        }),
    }
}

impl ModelFile {
    /// Pairs a model with its variable names.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] unless there is one name per variable;
    /// [`Error::InvalidParameter`] for an empty or repeated name.
    pub fn new(variables: Vec<String>, model: DistanceModel) -> Result<Self> {
        if variables.len() != model.dim() {
            return Err(Error::ShapeMismatch {
                what: "number of variable names",
                expected: model.dim(),
                found: variables.len(),
            });
        }
        for (i, v) in variables.iter().enumerate() {
            if v.is_empty() {
                return Err(Error::invalid(
                    "variable name",
                    format!("variable {i} has an empty name"),
                ));
            }
            if variables[..i].contains(v) {
                return Err(Error::invalid(
                    "variable name",
                    format!("'{v}' appears twice"),
                ));
            }
        }
        Ok(ModelFile { variables, model })
    }

    /// The variable names.
    pub fn variables(&self) -> &[String] {
        &self.variables
    }

    /// The model.
    pub fn model(&self) -> &DistanceModel {
        &self.model
    }

    /// The model file as pretty-printed JSON.
    pub fn to_json(&self) -> String {
        let data = FileData {
            format: FORMAT_NAME.into(),
            format_version: FORMAT_VERSION,
            variables: self.variables.clone(),
            n: self.model.sample_size(),
            location: self.model.location().to_vec(),
            scatter: self.model.scatter().clone(),
            estimator: self.model.fit_method().clone(),
            calibration: self.model.calibration().cloned(),
            checksum: None,
        };
        let checksum = checksum_of(&data);
        let data = FileData {
            checksum: Some(checksum),
            ..data
        };
        // Serializing plain numbers, strings and vectors cannot fail.
        serde_json::to_string_pretty(&data).unwrap_or_default()
    }

    /// The model file in the compact binary form (see the module docs).
    pub fn to_bytes(&self) -> Vec<u8> {
        binary::encode(self)
    }

    /// Reads the compact binary form.
    ///
    /// # Errors
    /// [`Error::Format`] for wrong magic bytes, a newer format version, a
    /// truncated or corrupted file (checksum mismatch), or invalid contents.
    pub fn from_bytes(bytes: &[u8]) -> Result<Self> {
        binary::decode(bytes)
    }

    /// Reads either form, recognizing the binary one by its magic bytes.
    ///
    /// # Errors
    /// As [`from_bytes`](Self::from_bytes) and [`from_json`](Self::from_json).
    pub fn from_any(bytes: &[u8]) -> Result<Self> {
        if bytes.starts_with(binary::MAGIC) {
            return Self::from_bytes(bytes);
        }
        let text = std::str::from_utf8(bytes).map_err(|_| Error::Format {
            reason: "neither a binary model file nor UTF-8 JSON".into(),
        })?;
        Self::from_json(text)
    }

    /// Reads a model file (either form) from disk.
    ///
    /// # Errors
    /// [`Error::Io`] if the file cannot be read; otherwise as
    /// [`from_any`](Self::from_any).
    pub fn load(path: &Path) -> Result<Self> {
        let bytes = std::fs::read(path).map_err(|e| Error::io(path, &e))?;
        Self::from_any(&bytes)
    }

    /// Writes the model file to disk, as JSON or in the binary form, under a
    /// temporary name in the same folder first and renamed on success, so a
    /// reader never sees a half-written file.
    ///
    /// # Errors
    /// [`Error::Io`] if the file cannot be written.
    pub fn save(&self, path: &Path, binary: bool) -> Result<()> {
        let bytes = if binary {
            self.to_bytes()
        } else {
            (self.to_json() + "\n").into_bytes()
        };
        let io = |e: std::io::Error| Error::io(path, &e);
        let name = path.file_name().ok_or_else(|| Error::Io {
            path: path.display().to_string(),
            kind: std::io::ErrorKind::InvalidInput,
            reason: "not a file name".into(),
        })?;
        let temp = path.with_file_name(format!(
            ".{}.partial-{}",
            name.to_string_lossy(),
            std::process::id()
        ));
        let result = std::fs::write(&temp, &bytes).and_then(|_| std::fs::rename(&temp, path));
        if result.is_err() {
            let _ = std::fs::remove_file(&temp);
        }
        result.map_err(io)
    }

    /// Reads a model file, checking its format, version and contents.
    ///
    /// # Errors
    /// [`Error::Format`] for text that is not a model file, a newer format
    /// version, mismatched lengths, or a scatter that is not positive
    /// definite (with the reason).
    pub fn from_json(text: &str) -> Result<Self> {
        let header: Header = serde_json::from_str(text).map_err(|e| Error::Format {
            reason: format!("not a model file: {e}"),
        })?;
        check_format(
            "model file",
            FORMAT_NAME,
            FORMAT_VERSION,
            header.format.as_deref(),
            header.format_version,
        )?;
        let mut data: FileData = serde_json::from_str(text).map_err(|e| Error::Format {
            reason: e.to_string(),
        })?;
        if let Some(stored) = data.checksum.take() {
            let computed = checksum_of(&data);
            if stored != computed {
                return Err(Error::Format {
                    reason: format!(
                        "checksum mismatch (stored {stored}, computed {computed}): the file was changed or corrupted"
                    ),
                });
            }
        }
        let mut model =
            DistanceModel::from_parts(data.location, data.scatter, data.n, data.estimator)
                .map_err(|e| Error::Format {
                    reason: e.to_string(),
                })?;
        if let Some(c) = data.calibration {
            model = model.with_calibration(c);
        }
        ModelFile::new(data.variables, model).map_err(|e| Error::Format {
            reason: e.to_string(),
        })
    }
}
