//! Far-tail checks of the three distributions against mpmath at 60 digits
//! (fixture `tests/fixtures/far_tails.json`, written by
//! `tests/reference/make_far_tail_fixtures.py`). They live here, not with
//! the integration tests, because the Beta cases supply the complement
//! `1 − x` exactly, which only these internal types accept.

use super::{BetaDistribution, ChiSquared, FDistribution};
use serde_json::Value;

fn fixture(name: &str) -> Value {
    let path = format!("{}/tests/fixtures/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn vector(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn rel(a: f64, b: f64) -> f64 {
    if a == b {
        return 0.0;
    }
    (a - b).abs() / b.abs().max(f64::MIN_POSITIVE)
}

#[test]
fn far_tails_with_moderate_shapes_match_mpmath_at_60_digits() {
    // Source: mpmath at 60 digits (tests/reference/make_far_tail_fixtures.py),
    // each tail integrated from its own edge. Shapes between 5 and 100,
    // probabilities down to 1e-300: where a prefactor written around the
    // centre of the law used to lose digits (F(20, 20) at x = 1e17 was 0,
    // true 9.2e-166; χ²(21) below 1e-20 was 0, true 5.8e-221).
    let f = fixture("far_tails.json");
    let mut worst = (0.0f64, String::new());
    for case in f["cases"].as_array().unwrap() {
        let dist = case["dist"].as_str().unwrap();
        let params = vector(&case["params"]);
        let x = case["x"].as_f64().unwrap();
        let (cdf, sf) = (case["cdf"].as_f64().unwrap(), case["sf"].as_f64().unwrap());
        let (lo, up) = match dist {
            "beta" => BetaDistribution::new(params[0], params[1])
                .unwrap()
                .tails_with_complement(x, case["y"].as_f64().unwrap()),
            "f" => FDistribution::new(params[0], params[1]).unwrap().tails(x),
            _ => ChiSquared::new(params[0]).unwrap().tails(x),
        };
        for (got, want, which) in [(lo, cdf, "cdf"), (up, sf, "sf")] {
            // Each tail relative to itself where it is the smaller one; the
            // larger is then 1 to rounding.
            let e = if want <= 0.5 {
                rel(got, want)
            } else {
                (got - want).abs()
            };
            if e > worst.0 {
                worst = (
                    e,
                    format!("{dist} {params:?} x={x:e} {which}: {got:e} vs {want:e}"),
                );
            }
        }
    }
    eprintln!(
        "far tails: worst relative error {:e} ({})",
        worst.0, worst.1
    );
    assert!(worst.0 < 1e-12, "worst {:e}: {}", worst.0, worst.1);
}

#[test]
fn far_quantiles_match_mpmath_at_60_digits() {
    // Source: as above; quantiles at 1e-300 (F(30, 30): 3.357e20, where
    // the loss in the prefactor gave 3.6e16), and the Beta lower quantiles
    // behind in-sample cutoffs near α → 1.
    let f = fixture("far_tails.json");
    let mut worst = (0.0f64, String::new());
    for q in f["quantiles"].as_array().unwrap() {
        let dist = q["dist"].as_str().unwrap();
        let params = vector(&q["params"]);
        let alpha = q["alpha"].as_f64().unwrap();
        let (got, want) = match dist {
            "f" => (
                FDistribution::new(params[0], params[1])
                    .unwrap()
                    .isf(alpha)
                    .unwrap(),
                q["isf"].as_f64().unwrap(),
            ),
            "chi2" => (
                ChiSquared::new(params[0]).unwrap().isf(alpha).unwrap(),
                q["isf"].as_f64().unwrap(),
            ),
            _ => {
                let (x, y) = BetaDistribution::new(params[0], params[1])
                    .unwrap()
                    .isf_with_complement(alpha)
                    .unwrap();
                match q.get("isf_complement") {
                    Some(c) => (y, c.as_f64().unwrap()),
                    None => (x, q["isf"].as_f64().unwrap()),
                }
            }
        };
        let e = rel(got, want);
        if e > worst.0 {
            worst = (
                e,
                format!("{dist} {params:?} alpha={alpha:e}: {got:e} vs {want:e}"),
            );
        }
    }
    eprintln!(
        "far quantiles: worst relative error {:e} ({})",
        worst.0, worst.1
    );
    assert!(worst.0 < 1e-11, "worst {:e}: {}", worst.0, worst.1);
}
