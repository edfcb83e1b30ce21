//! The library's modules form layers, and no module imports from a layer
//! above its own (so there are no import cycles among them). The table
//! below is the map in `DEVELOPERS.md`; a new top-level module must be
//! added to it.

use std::collections::BTreeMap;
use std::path::Path;

/// Top-level modules of `src/` by layer, lowest first.
const LAYERS: &[(&str, &[&str])] = &[
    ("foundation", &["error", "data", "kernels", "distributions"]),
    (
        "estimation",
        &[
            "scatter",
            "moments",
            "estimate",
            "shrinkage",
            "robust",
            "incomplete",
        ],
    ),
    (
        "model",
        &[
            "calibration",
            "explain",
            "whitening",
            "distance",
            "model",
            "scorer",
            "drift",
            "model_file",
        ],
    ),
    (
        "analyses",
        &[
            "classification",
            "normality",
            "mean_tests",
            "control_chart",
            "held_out",
        ],
    ),
];

/// Names re-exported at the crate root, and the module that defines them.
const ROOT_NAMES: &[(&str, &str)] = &[
    ("Error", "error"),
    ("ErrorKind", "error"),
    ("Result", "error"),
    ("Hyperplane", "error"),
    ("Scatter", "scatter"),
    ("Divisor", "moments"),
    ("MomentAccumulator", "moments"),
    ("Estimate", "estimate"),
    ("FitMethod", "estimate"),
    ("Reference", "calibration"),
    ("RowOrigin", "calibration"),
    ("Adjustment", "calibration"),
    ("EmpiricalPValue", "calibration"),
    ("PValueBasis", "calibration"),
    ("ContributionOrder", "explain"),
    ("Contributions", "explain"),
    ("Whitener", "whitening"),
    ("WhiteningKind", "whitening"),
    ("DistanceModel", "model"),
    ("RowScore", "model"),
    ("ObservedContributions", "model"),
    ("ObservedRowScore", "model"),
    ("ObservedScores", "model"),
    ("Scores", "model"),
    ("Scorer", "scorer"),
];

fn layer_of(module: &str) -> Option<usize> {
    LAYERS.iter().position(|(_, mods)| mods.contains(&module))
}

/// Source without `//` comments (doc links are not imports) and without
/// unit-test modules.
fn code(text: &str) -> String {
    let text = match text.find("#[cfg(test)]\nmod tests") {
        Some(i) => &text[..i],
        None => text,
    };
    text.lines()
        .map(|l| match l.find("//") {
            Some(i) => &l[..i],
            None => l,
        })
        .collect::<Vec<_>>()
        .join("\n")
}

fn identifiers_after(text: &str, prefix: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = text;
    while let Some(i) = rest.find(prefix) {
        rest = &rest[i + prefix.len()..];
        if let Some(group) = rest.strip_prefix('{') {
            let end = group.find('}').unwrap_or(group.len());
            out.extend(
                group[..end]
                    .split(|c: char| !(c.is_alphanumeric() || c == '_'))
                    .filter(|s| !s.is_empty())
                    .map(String::from),
            );
        } else {
            let end = rest
                .find(|c: char| !(c.is_alphanumeric() || c == '_'))
                .unwrap_or(rest.len());
            out.push(rest[..end].to_string());
        }
    }
    out
}

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            rust_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

#[test]
fn no_module_imports_from_a_layer_above() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let roots: BTreeMap<&str, &str> = ROOT_NAMES.iter().copied().collect();
    let mut modules = Vec::new();
    for entry in std::fs::read_dir(&src).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_stem().unwrap().to_string_lossy().to_string();
        if name != "lib" {
            modules.push((name, path));
        }
    }
    let mut violations = Vec::new();
    for (module, path) in &modules {
        let own = layer_of(module)
            .unwrap_or_else(|| panic!("src/{module}: add it to a layer in tests/it/layers.rs"));
        let mut files = Vec::new();
        if path.is_dir() {
            rust_files(path, &mut files);
        } else {
            files.push(path.clone());
        }
        for file in files {
            let text = code(&std::fs::read_to_string(&file).unwrap());
            for name in identifiers_after(&text, "crate::") {
                let target = roots.get(name.as_str()).copied().unwrap_or(name.as_str());
                if target == module {
                    continue;
                }
                if let Some(layer) = layer_of(target) {
                    if layer > own {
                        violations.push(format!(
                            "{} ({}) imports {target} ({})",
                            file.strip_prefix(&src).unwrap().display(),
                            LAYERS[own].0,
                            LAYERS[layer].0
                        ));
                    }
                }
            }
        }
    }
    assert!(violations.is_empty(), "{violations:#?}");
}

#[test]
fn the_checker_sees_an_upward_import() {
    // The parser finds both forms of import.
    let text = code("use crate::{model::DistanceModel, Scatter};\nlet x = crate::robust::fit(); // crate::normality\n");
    assert_eq!(
        identifiers_after(&text, "crate::"),
        ["model", "DistanceModel", "Scatter", "robust"]
    );
    assert!(layer_of("robust") < layer_of("model"));
}
