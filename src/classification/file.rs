//! Saving and loading classifiers: a versioned serde form that keeps what
//! the classifier was fitted from (rule, divisor, priors, per-group
//! moments) and refits from it on load, so a loaded classifier is checked
//! exactly as a fitted one.

use super::fit::{Classifier, ClassifierOptions, Priors, Rule};
use crate::error::{Error, Result};
use crate::model_file::check_format;
use crate::moments::{Divisor, GroupMoments};
use serde::{Deserialize, Serialize};
use std::hash::Hash;

/// The `format` field of a serialized classifier.
const FORMAT_NAME: &str = "mvdist-classifier";

/// The newest classifier format version this build reads and writes.
pub const CLASSIFIER_FORMAT_VERSION: u32 = 1;

#[derive(Serialize, Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(
        serialize = "L: Serialize",
        deserialize = "L: Deserialize<'de> + Eq + Hash + Clone"
    )
)]
pub(crate) struct ClassifierData<L> {
    format: Option<String>,
    format_version: Option<u32>,
    rule: Rule,
    divisor: Divisor,
    priors: Priors<L>,
    moments: GroupMoments<L>,
}

impl<L: Eq + Hash + Clone> TryFrom<ClassifierData<L>> for Classifier<L> {
    type Error = Error;
    fn try_from(d: ClassifierData<L>) -> Result<Self> {
        check_format(
            "classifier",
            FORMAT_NAME,
            CLASSIFIER_FORMAT_VERSION,
            d.format.as_deref(),
            d.format_version,
        )?;
        let options = ClassifierOptions::new(d.rule)
            .with_priors(d.priors)
            .with_divisor(d.divisor);
        Classifier::from_group_moments(&d.moments, &options).map_err(|e| Error::Format {
            reason: format!("the saved classifier does not refit: {e}"),
        })
    }
}

impl<L> From<Classifier<L>> for ClassifierData<L> {
    fn from(c: Classifier<L>) -> Self {
        ClassifierData {
            format: Some(FORMAT_NAME.into()),
            format_version: Some(CLASSIFIER_FORMAT_VERSION),
            rule: c.rule,
            divisor: c.divisor,
            priors: c.prior_spec,
            moments: c.moments,
        }
    }
}

impl<L: Serialize + Clone> Serialize for Classifier<L> {
    /// Writes the format name and version, the rule, divisor and priors,
    /// and each group's moments.
    fn serialize<S: serde::Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        ClassifierData::from(self.clone()).serialize(s)
    }
}

impl<'de, L: Deserialize<'de> + Eq + Hash + Clone> Deserialize<'de> for Classifier<L> {
    /// Reads the form [`Serialize`] writes and refits from the moments:
    /// every check of [`Classifier::from_group_moments`] runs, and a newer
    /// format version is refused with a message saying so.
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        let data = ClassifierData::deserialize(d)?;
        Classifier::try_from(data).map_err(serde::de::Error::custom)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    fn classifier(rule: Rule) -> Classifier<String> {
        let rows = array![
            [1.0, 2.0],
            [2.0, 2.9],
            [1.5, 2.2],
            [2.2, 3.4],
            [0.8, 1.9],
            [5.0, 1.0],
            [6.1, 1.8],
            [5.5, 0.7],
            [6.0, 1.1],
            [5.2, 1.6],
        ];
        let labels: Vec<String> = ["a", "a", "a", "a", "a", "b", "b", "b", "b", "b"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        let priors = Priors::Given(vec![("a".to_string(), 0.7), ("b".to_string(), 0.3)]);
        let options = ClassifierOptions::new(rule).with_priors(priors);
        Classifier::fit(rows.view(), &labels, &options).unwrap()
    }

    #[test]
    fn round_trip_predicts_the_same() {
        for rule in [Rule::Linear, Rule::Quadratic] {
            let c = classifier(rule);
            let json = serde_json::to_string(&c).unwrap();
            assert!(json.contains("\"format\":\"mvdist-classifier\""));
            let back: Classifier<String> = serde_json::from_str(&json).unwrap();
            for x in [[1.4, 2.5], [5.5, 1.2], [3.5, 2.0], [30.0, -4.0]] {
                assert_eq!(back.predict_row(&x).unwrap(), c.predict_row(&x).unwrap());
            }
            assert_eq!(back.priors(), c.priors());
        }
    }

    #[test]
    fn loading_checks_the_format_and_the_contents() {
        let json = serde_json::to_string(&classifier(Rule::Linear)).unwrap();
        let newer = json.replace("\"format_version\":1", "\"format_version\":99");
        let e = serde_json::from_str::<Classifier<String>>(&newer).unwrap_err();
        assert!(e.to_string().contains("newer than this build"), "{e}");
        let other = json.replace("mvdist-classifier", "something-else");
        assert!(serde_json::from_str::<Classifier<String>>(&other).is_err());
        // One group left: it no longer refits.
        let value: serde_json::Value = serde_json::from_str(&json).unwrap();
        let mut one = value.clone();
        one["moments"]["labels"] = serde_json::json!(["a"]);
        one["moments"]["groups"] = serde_json::json!([value["moments"]["groups"][0]]);
        one["priors"] = serde_json::json!("equal");
        let e = serde_json::from_value::<Classifier<String>>(one).unwrap_err();
        assert!(e.to_string().contains("does not refit"), "{e}");
        // Weighted group moments (a count that its weights do not match).
        let mut weighted = value.clone();
        weighted["moments"]["groups"][0]["count"] = serde_json::json!(1_000_000_000u64);
        let e = serde_json::from_value::<Classifier<String>>(weighted).unwrap_err();
        assert!(e.to_string().contains("weights do not match"), "{e}");
    }
}
