//! SQL functions for Apache DataFusion over [`mvdist`] models.
//!
//! Register them on a session with [`register`], then fit and score in SQL:
//!
//! ```sql
//! -- One model over the whole table; partial fits from partitions merge
//! -- without approximation (up to the order of rounding).
//! SELECT mvdist_fit(a, b, c) AS model FROM reference;
//! -- Score rows against a model (the JSON text `mvdist_fit` returned).
//! SELECT id, mvdist_d2(m.model, a, b, c) AS d2,
//!        mvdist_p_value(m.model, a, b, c) AS p_value,
//!        mvdist_flag(m.model, 0.01, a, b, c) AS flag
//! FROM batches CROSS JOIN (SELECT mvdist_fit(a, b, c) AS model FROM reference) m;
//! ```
//!
//! * `mvdist_fit(x1, …, xp)` is an aggregate over `p` numeric columns. Its
//!   state is a [`MomentAccumulator`] (serialized as JSON), so partial fits
//!   computed on partitions or executors merge without approximation; its value is a model
//!   file in the JSON form of [`mvdist::model_file`] (variables named after
//!   the argument columns), which [`ModelFile::from_json`] reads.
//! * `mvdist_d2(model, x1, …, xp)`: the squared distance (`DOUBLE`).
//! * `mvdist_p_value(model, x1, …, xp)`: the p-value for new rows (F
//!   reference).
//! * `mvdist_flag(model, alpha, x1, …, xp)`: whether the p-value is at most
//!   `alpha`. A flag is evidence for a closer look, not a verdict.
//!
//! Each row is scored with its own model value, so rows joined to different
//! models (one per group, say) are scored against their own; the model text
//! is parsed once per distinct model in a batch. A row with
//! a NULL in any variable, or a NULL model, scores as NULL; NULLs in `mvdist_fit`'s
//! input and non-numeric arguments are errors with a message naming the
//! argument.

#![deny(missing_docs)]
#![warn(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use datafusion::arrow::array::{Array, ArrayRef, BooleanArray, Float64Array, StringArray};
use datafusion::arrow::compute::cast;
use datafusion::arrow::datatypes::{DataType, Field, FieldRef};
use datafusion::common::{DataFusionError, Result, ScalarValue};
use datafusion::execution::FunctionRegistry;
use datafusion::logical_expr::function::{AccumulatorArgs, StateFieldsArgs};
use datafusion::logical_expr::{
    Accumulator, AggregateUDF, AggregateUDFImpl, ColumnarValue, ScalarFunctionArgs, ScalarUDF,
    ScalarUDFImpl, Signature, Volatility,
};
use datafusion::prelude::SessionContext;
use mvdist::calibration::RowOrigin;
use mvdist::model_file::ModelFile;
use mvdist::moments::{Divisor, MomentAccumulator};
use mvdist::DistanceModel;
use std::collections::HashMap;
use std::sync::Arc;

fn error(function: &str, message: impl std::fmt::Display) -> DataFusionError {
    DataFusionError::Execution(format!("{function}: {message}"))
}

fn plan_error(function: &str, message: impl std::fmt::Display) -> DataFusionError {
    DataFusionError::Plan(format!("{function}: {message}"))
}

/// Coerces numeric arguments to `DOUBLE` and refuses anything else.
fn numeric_arguments(function: &str, types: &[DataType], skip: usize) -> Result<Vec<DataType>> {
    types
        .iter()
        .enumerate()
        .map(|(k, t)| {
            if k < skip {
                return Ok(t.clone());
            }
            if t.is_numeric() || *t == DataType::Null {
                Ok(DataType::Float64)
            } else {
                Err(plan_error(
                    function,
                    format!("argument {} has type {t}; pass numeric columns (cast them or leave them out)", k + 1),
                ))
            }
        })
        .collect()
}

/// Registers `mvdist_fit`, `mvdist_d2`, `mvdist_p_value` and `mvdist_flag`
/// on a DataFusion session.
///
/// # Example
/// ```
/// # #[tokio::main(flavor = "current_thread")]
/// # async fn main() -> datafusion::common::Result<()> {
/// use datafusion::prelude::SessionContext;
/// let ctx = SessionContext::new();
/// mvdist_datafusion::register(&ctx);
/// let df = ctx
///     .sql("SELECT mvdist_fit(a, b) AS model FROM (VALUES (1.0, 2.0), (2.0, 2.9), (3.0, 4.2), (4.0, 4.8)) AS t(a, b)")
///     .await?;
/// let batches = df.collect().await?;
/// assert_eq!(batches[0].num_rows(), 1);
/// # Ok(())
/// # }
/// ```
pub fn register(ctx: &SessionContext) {
    ctx.register_udaf(AggregateUDF::from(FitFunction::new()));
    for kind in SCORE_KINDS {
        ctx.register_udf(ScalarUDF::from(ScoreFunction::new(kind)));
    }
}

const SCORE_KINDS: [ScoreKind; 3] = [
    ScoreKind::SquaredDistance,
    ScoreKind::PValue,
    ScoreKind::Flag,
];

/// Registers the same functions on any function registry, such as a
/// `SessionState` built by hand.
///
/// Use this when the engine builds its sessions from a state rather than a
/// `SessionContext`: a distributed scheduler and its executors decode the
/// query plan against the functions of the state they were started with, so
/// the functions must be in that state (see the Ballista section of the
/// README).
///
/// # Errors
/// Whatever the registry reports (DataFusion's `SessionState` does not fail).
///
/// # Example
/// ```
/// use datafusion::execution::{FunctionRegistry, SessionStateBuilder};
/// let mut state = SessionStateBuilder::new().with_default_features().build();
/// mvdist_datafusion::register_with(&mut state)?;
/// assert!(state.udaf("mvdist_fit").is_ok());
/// assert!(state.udf("mvdist_p_value").is_ok());
/// # Ok::<(), datafusion::common::DataFusionError>(())
/// ```
pub fn register_with(registry: &mut dyn FunctionRegistry) -> Result<()> {
    registry.register_udaf(Arc::new(AggregateUDF::from(FitFunction::new())))?;
    for kind in SCORE_KINDS {
        registry.register_udf(Arc::new(ScalarUDF::from(ScoreFunction::new(kind))))?;
    }
    Ok(())
}

/// The `mvdist_fit` aggregate.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct FitFunction {
    signature: Signature,
}

impl FitFunction {
    /// The aggregate, ready to register with `SessionContext::register_udaf`.
    pub fn new() -> Self {
        FitFunction {
            signature: Signature::user_defined(Volatility::Immutable),
        }
    }
}

impl Default for FitFunction {
    fn default() -> Self {
        Self::new()
    }
}

impl AggregateUDFImpl for FitFunction {
    fn name(&self) -> &str {
        "mvdist_fit"
    }

    fn signature(&self) -> &Signature {
        &self.signature
    }

    fn return_type(&self, _arg_types: &[DataType]) -> Result<DataType> {
        Ok(DataType::Utf8)
    }

    fn coerce_types(&self, arg_types: &[DataType]) -> Result<Vec<DataType>> {
        if arg_types.is_empty() {
            return Err(plan_error("mvdist_fit", "pass at least one numeric column"));
        }
        numeric_arguments("mvdist_fit", arg_types, 0)
    }

    fn accumulator(&self, acc_args: AccumulatorArgs) -> Result<Box<dyn Accumulator>> {
        let names: Vec<String> = acc_args
            .expr_fields
            .iter()
            .map(|f| f.name().clone())
            .collect();
        let state = MomentAccumulator::new(names.len()).map_err(|e| plan_error("mvdist_fit", e))?;
        Ok(Box::new(FitAccumulator {
            names,
            state,
            buffer: Vec::new(),
        }))
    }

    fn state_fields(&self, args: StateFieldsArgs) -> Result<Vec<FieldRef>> {
        Ok(vec![Arc::new(Field::new(
            format!("{}[moments]", args.name),
            DataType::Utf8,
            true,
        ))])
    }
}

#[derive(Debug)]
struct FitAccumulator {
    names: Vec<String>,
    state: MomentAccumulator,
    buffer: Vec<f64>,
}

/// Copies `p` columns into a row-major buffer, or names the first NULL.
fn rows_of(function: &str, columns: &[ArrayRef], buffer: &mut Vec<f64>) -> Result<usize> {
    let n = columns.first().map_or(0, |c| c.len());
    let p = columns.len();
    buffer.clear();
    buffer.resize(n * p, 0.0);
    for (j, column) in columns.iter().enumerate() {
        let column = cast(column, &DataType::Float64)?;
        let values = column
            .as_any()
            .downcast_ref::<Float64Array>()
            .ok_or_else(|| error(function, format!("argument {} is not numeric", j + 1)))?;
        if values.null_count() > 0 {
            let row = (0..n).find(|&i| values.is_null(i)).unwrap_or(0);
            return Err(error(
                function,
                format!(
                    "argument {} is NULL in row {row} of a batch; filter NULLs out first",
                    j + 1
                ),
            ));
        }
        for (i, v) in values.values().iter().enumerate() {
            buffer[i * p + j] = *v;
        }
    }
    Ok(n)
}

impl Accumulator for FitAccumulator {
    fn update_batch(&mut self, values: &[ArrayRef]) -> Result<()> {
        let n = rows_of("mvdist_fit", values, &mut self.buffer)?;
        let rows = mvdist::ndarray::ArrayView2::from_shape((n, self.names.len()), &self.buffer)
            .map_err(|e| error("mvdist_fit", e))?;
        self.state
            .push_rows(rows)
            .map_err(|e| error("mvdist_fit", e))
    }

    fn merge_batch(&mut self, states: &[ArrayRef]) -> Result<()> {
        let Some(states) = states.first() else {
            return Ok(());
        };
        let text = states
            .as_any()
            .downcast_ref::<StringArray>()
            .ok_or_else(|| error("mvdist_fit", "partial state is not text"))?;
        for i in 0..text.len() {
            if text.is_null(i) {
                continue;
            }
            let other: MomentAccumulator = serde_json::from_str(text.value(i))
                .map_err(|e| error("mvdist_fit", format!("partial state: {e}")))?;
            self.state
                .merge(&other)
                .map_err(|e| error("mvdist_fit", e))?;
        }
        Ok(())
    }

    fn state(&mut self) -> Result<Vec<ScalarValue>> {
        let json = serde_json::to_string(&self.state).map_err(|e| error("mvdist_fit", e))?;
        Ok(vec![ScalarValue::Utf8(Some(json))])
    }

    fn evaluate(&mut self) -> Result<ScalarValue> {
        let model =
            DistanceModel::from_accumulator(&self.state, Divisor::Unbiased).map_err(|e| {
                let e = match e {
                    mvdist::Error::ZeroVariance { column }
                    | mvdist::Error::Collinear { column, .. } => format!(
                        "{e} (column {column} is '{}')",
                        self.names.get(column).map_or("?", |s| s.as_str())
                    ),
                    other => other.to_string(),
                };
                error("mvdist_fit", e)
            })?;
        let file = ModelFile::new(self.names.clone(), model).map_err(|e| error("mvdist_fit", e))?;
        Ok(ScalarValue::Utf8(Some(file.to_json())))
    }

    fn size(&self) -> usize {
        std::mem::size_of_val(self)
            + 8 * (self.buffer.capacity() + self.state.dim() * (self.state.dim() + 3))
    }
}

/// What a scoring function returns.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ScoreKind {
    /// `mvdist_d2`: the squared distance.
    SquaredDistance,
    /// `mvdist_p_value`: the new-row (F reference) p-value.
    PValue,
    /// `mvdist_flag`: whether the p-value is at most `alpha`.
    Flag,
}

/// The scoring scalar functions.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct ScoreFunction {
    kind: ScoreKind,
    signature: Signature,
}

impl ScoreFunction {
    /// The scalar function of the given kind, ready for
    /// `SessionContext::register_udf`.
    pub fn new(kind: ScoreKind) -> Self {
        ScoreFunction {
            kind,
            signature: Signature::user_defined(Volatility::Immutable),
        }
    }

    /// Leading non-variable arguments: the model, and `alpha` for flags.
    fn leading(&self) -> usize {
        if self.kind == ScoreKind::Flag {
            2
        } else {
            1
        }
    }
}

/// The model argument: one text for every row, or one per row (as a join
/// produces; rows may carry different models).
enum ModelArgument {
    Same(String),
    PerRow(StringArray),
}

impl ModelArgument {
    fn new(function: &str, v: &ColumnarValue) -> Result<Self> {
        match v {
            ColumnarValue::Scalar(
                ScalarValue::Utf8(Some(s))
                | ScalarValue::LargeUtf8(Some(s))
                | ScalarValue::Utf8View(Some(s)),
            ) => Ok(ModelArgument::Same(s.clone())),
            ColumnarValue::Array(a) => {
                let a = cast(a, &DataType::Utf8)?;
                a.as_any()
                    .downcast_ref::<StringArray>()
                    .cloned()
                    .map(ModelArgument::PerRow)
                    .ok_or_else(|| error(function, "the model argument is not text"))
            }
            _ => Err(error(
                function,
                "the model argument must be the text returned by mvdist_fit",
            )),
        }
    }

    /// The model text of row `i`, `None` for a NULL model.
    fn text(&self, i: usize) -> Option<&str> {
        match self {
            ModelArgument::Same(s) => Some(s),
            ModelArgument::PerRow(a) => (!a.is_null(i)).then(|| a.value(i)),
        }
    }
}

/// A parsed model with its new-row reference.
struct LoadedModel {
    model: DistanceModel,
    reference: mvdist::calibration::Reference,
}

impl LoadedModel {
    fn load(function: &str, text: &str, passed: usize) -> Result<Self> {
        let file = ModelFile::from_json(text).map_err(|e| error(function, e))?;
        let p = file.model().dim();
        if passed != p {
            return Err(error(
                function,
                format!(
                    "the model has {p} variables ({}) but {passed} were passed",
                    file.variables().join(", "),
                ),
            ));
        }
        let reference = file
            .model()
            .reference(RowOrigin::New)
            .map_err(|e| error(function, e))?;
        Ok(LoadedModel {
            model: file.model().clone(),
            reference,
        })
    }
}

impl ScalarUDFImpl for ScoreFunction {
    fn name(&self) -> &str {
        match self.kind {
            ScoreKind::SquaredDistance => "mvdist_d2",
            ScoreKind::PValue => "mvdist_p_value",
            ScoreKind::Flag => "mvdist_flag",
        }
    }

    fn signature(&self) -> &Signature {
        &self.signature
    }

    fn coerce_types(&self, arg_types: &[DataType]) -> Result<Vec<DataType>> {
        let lead = self.leading();
        if arg_types.len() <= lead {
            return Err(plan_error(
                self.name(),
                "pass the model, then the variables",
            ));
        }
        let mut types = numeric_arguments(self.name(), arg_types, lead)?;
        types[0] = DataType::Utf8;
        if lead == 2 {
            types[1] = DataType::Float64;
        }
        Ok(types)
    }

    fn return_type(&self, _arg_types: &[DataType]) -> Result<DataType> {
        Ok(match self.kind {
            ScoreKind::Flag => DataType::Boolean,
            _ => DataType::Float64,
        })
    }

    fn invoke_with_args(&self, args: ScalarFunctionArgs) -> Result<ColumnarValue> {
        let name = self.name();
        let n = args.number_rows;
        let lead = self.leading();
        let passed = args.args.len() - lead;
        let models = ModelArgument::new(name, &args.args[0])?;
        let alpha = if lead == 2 {
            match &args.args[1] {
                ColumnarValue::Scalar(ScalarValue::Float64(Some(a))) => *a,
                _ => return Err(error(name, "alpha must be a constant number")),
            }
        } else {
            0.0
        };
        let columns: Vec<ArrayRef> = args.args[lead..]
            .iter()
            .map(|v| v.to_array(n))
            .collect::<Result<_>>()?;
        let columns: Vec<Float64Array> = columns
            .iter()
            .map(|c| {
                let c = cast(c, &DataType::Float64)?;
                c.as_any()
                    .downcast_ref::<Float64Array>()
                    .cloned()
                    .ok_or_else(|| error(name, "a variable is not numeric"))
            })
            .collect::<Result<_>>()?;
        // Each distinct model text in the batch is parsed once; consecutive
        // rows usually carry the same one, which is checked first.
        let same_for_all = matches!(models, ModelArgument::Same(_));
        let wants_p_value = !matches!(self.kind, ScoreKind::SquaredDistance);
        let mut loaded: Vec<LoadedModel> = Vec::new();
        let mut seen: HashMap<&str, usize> = HashMap::new();
        let mut last: Option<(&str, usize)> = None;
        let mut row = vec![0.0; passed];
        let mut scores: Vec<Option<(f64, f64)>> = Vec::with_capacity(n);
        for i in 0..n {
            let Some(text) = models.text(i) else {
                scores.push(None);
                continue;
            };
            let k = match last {
                Some((t, k)) if same_for_all || t == text => k,
                _ => match seen.get(text) {
                    Some(&k) => k,
                    None => {
                        loaded.push(LoadedModel::load(name, text, passed)?);
                        seen.insert(text, loaded.len() - 1);
                        loaded.len() - 1
                    }
                },
            };
            last = Some((text, k));
            let Some(m) = loaded.get(k) else {
                return Err(error(name, "internal: model cache out of step"));
            };
            if columns.iter().any(|c| c.is_null(i)) {
                scores.push(None);
                continue;
            }
            for (r, c) in row.iter_mut().zip(&columns) {
                *r = c.value(i);
            }
            let d2 = m
                .model
                .squared_distance(&row)
                .map_err(|e| error(name, format!("row {i}: {e}")))?;
            let p_value = if wants_p_value {
                m.reference.p_value(d2)
            } else {
                f64::NAN
            };
            scores.push(Some((d2, p_value)));
        }
        let out: ArrayRef = match self.kind {
            ScoreKind::SquaredDistance => Arc::new(Float64Array::from(
                scores.iter().map(|s| s.map(|s| s.0)).collect::<Vec<_>>(),
            )),
            ScoreKind::PValue => Arc::new(Float64Array::from(
                scores.iter().map(|s| s.map(|s| s.1)).collect::<Vec<_>>(),
            )),
            ScoreKind::Flag => Arc::new(BooleanArray::from(
                scores
                    .iter()
                    .map(|s| s.map(|s| s.1 <= alpha))
                    .collect::<Vec<_>>(),
            )),
        };
        Ok(ColumnarValue::Array(out))
    }
}
