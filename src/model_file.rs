//! Model files: a fitted model with its variable names, as versioned JSON.
//!
//! The layout (our own, stable within a format version):
//!
//! ```json
//! {
//!   "format": "mvdist-model",
//!   "format_version": 1,
//!   "variables": ["gravity", "ph"],
//!   "n": 120,
//!   "location": [1.048, 4.31],
//!   "scatter": [[1.2e-5, 3.1e-5], [3.1e-5, 0.0121]],
//!   "estimator": { "kind": "classical", "divisor": "unbiased" }
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

use crate::error::{Error, Result};
use crate::model::{DistanceModel, Estimator};
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};

/// The format version this build writes and the newest it reads.
pub const FORMAT_VERSION: u32 = 1;

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
    estimator: Estimator,
}

#[derive(Deserialize)]
struct Header {
    format: Option<String>,
    format_version: Option<u32>,
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
            estimator: self.model.estimator().clone(),
        };
        // Serializing plain numbers, strings and vectors cannot fail.
        serde_json::to_string_pretty(&data).unwrap_or_default()
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
        match header.format.as_deref() {
            Some(FORMAT_NAME) => {}
            _ => {
                return Err(Error::Format {
                    reason: format!(
                        "not a model file (the \"format\" field is not \"{FORMAT_NAME}\")"
                    ),
                })
            }
        }
        match header.format_version {
            Some(v) if v <= FORMAT_VERSION && v >= 1 => {}
            Some(v) => {
                return Err(Error::Format {
                    reason: format!(
                        "format version {v} is newer than this build reads ({FORMAT_VERSION}); upgrade mvdist"
                    ),
                })
            }
            None => {
                return Err(Error::Format {
                    reason: "the \"format_version\" field is missing".into(),
                })
            }
        }
        let data: FileData = serde_json::from_str(text).map_err(|e| Error::Format {
            reason: e.to_string(),
        })?;
        let model = DistanceModel::from_parts(data.location, data.scatter, data.n, data.estimator)
            .map_err(|e| Error::Format {
                reason: e.to_string(),
            })?;
        ModelFile::new(data.variables, model).map_err(|e| Error::Format {
            reason: e.to_string(),
        })
    }
}
