//! Model files: exact round trips in both forms, and typed errors (never a
//! panic) for random, mutated, truncated and future-version bytes.

use crate::common;
use mvdist::model_file::ModelFile;
use mvdist::DistanceModel;
use proptest::prelude::*;

/// A model of Fisher's iris measurements (open dataset; fixture from
/// scikit-learn's bundled copy).
fn iris_model() -> ModelFile {
    let f = common::fixture("iris_covariance.json");
    let x = common::matrix(&f["data"]);
    let names = ["sepal_length", "sepal_width", "petal_length", "petal_width"].map(String::from);
    ModelFile::new(names.to_vec(), DistanceModel::fit(x.view()).unwrap()).unwrap()
}

#[test]
fn both_forms_round_trip_exactly() {
    let file = iris_model();
    assert_eq!(ModelFile::from_json(&file.to_json()).unwrap(), file);
    assert_eq!(ModelFile::from_bytes(&file.to_bytes()).unwrap(), file);
    assert_eq!(
        ModelFile::from_any(file.to_json().as_bytes()).unwrap(),
        file
    );
    assert_eq!(ModelFile::from_any(&file.to_bytes()).unwrap(), file);
    let dir = tempfile::TempDir::new().unwrap();
    for binary in [false, true] {
        let path = dir.path().join(if binary { "m.bin" } else { "m.json" });
        file.save(&path, binary).unwrap();
        assert_eq!(ModelFile::load(&path).unwrap(), file);
    }
    // The operating system's kind of failure is kept, not flattened.
    let missing = ModelFile::load(&dir.path().join("missing")).unwrap_err();
    assert_eq!(missing.kind(), mvdist::ErrorKind::Io);
    assert!(matches!(
        missing,
        mvdist::Error::Io { kind: std::io::ErrorKind::NotFound, ref path, .. } if path.ends_with("missing")
    ));
}

#[test]
fn damaged_files_give_typed_errors() {
    let file = iris_model();
    let json = file.to_json();
    let reason = |r: mvdist::Result<ModelFile>| match r {
        Err(mvdist::Error::Format { reason }) => reason,
        other => panic!("expected a format error, got {other:?}"),
    };
    // A changed digit: caught by the checksum.
    let changed = json.replacen("150", "151", 1);
    assert!(reason(ModelFile::from_json(&changed)).contains("checksum mismatch"));
    // Without the checksum line the file is accepted (hand-written files).
    let unchecked: String = json
        .lines()
        .filter(|l| !l.contains("checksum"))
        .collect::<Vec<_>>()
        .join("\n");
    let unchecked = unchecked.replace("},\n}", "}\n}");
    assert_eq!(ModelFile::from_json(&unchecked).unwrap(), file);
    // Newer format versions are refused in both forms.
    let future = json.replace("\"format_version\": 2", "\"format_version\": 3");
    assert!(reason(ModelFile::from_json(&future)).contains("newer than this build reads"));
    let mut bytes = file.to_bytes();
    bytes[4] = 3;
    assert!(reason(ModelFile::from_bytes(&bytes)).contains("newer than this build reads"));
    // Truncation.
    let bytes = file.to_bytes();
    for cut in [0, 3, 5, 9, 20, bytes.len() / 2, bytes.len() - 1] {
        assert!(
            ModelFile::from_bytes(&bytes[..cut]).is_err(),
            "cut at {cut}"
        );
        assert!(ModelFile::from_json(&json[..cut.min(json.len())]).is_err());
    }
    // A scatter that is no longer positive definite (checksum recomputed so
    // that only the matrix is wrong).
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let mut v2 = v.clone();
    v2["scatter"][0][0] = serde_json::json!(-1.0);
    v2.as_object_mut().unwrap().remove("checksum");
    assert!(reason(ModelFile::from_json(&v2.to_string())).contains("positive definite"));
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2000, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn random_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..400), magic in any::<bool>()) {
        let mut b = bytes;
        if magic && b.len() >= 6 {
            b[..4].copy_from_slice(b"MVDM");
            b[4] = 1;
            b[5] = 0;
        }
        let _ = ModelFile::from_bytes(&b);
        let _ = ModelFile::from_any(&b);
        let _ = ModelFile::from_json(&String::from_utf8_lossy(&b));
    }

    #[test]
    fn every_single_byte_change_to_a_binary_file_is_caught(pos in any::<prop::sample::Index>(), xor in 1u8..=255) {
        let file = iris_model();
        let mut bytes = file.to_bytes();
        let i = pos.index(bytes.len());
        bytes[i] ^= xor;
        prop_assert!(ModelFile::from_bytes(&bytes).is_err());
    }

    #[test]
    fn mutated_json_is_rejected_or_unchanged(pos in any::<prop::sample::Index>(), byte in any::<u8>()) {
        let file = iris_model();
        let mut bytes = file.to_json().into_bytes();
        let i = pos.index(bytes.len());
        bytes[i] = byte;
        if let Ok(back) = ModelFile::from_any(&bytes) {
            prop_assert_eq!(back, file);
        }
    }
}
