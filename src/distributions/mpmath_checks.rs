//! Far-tail checks of the three distributions against mpmath at 60 digits
//! (fixture `tests/fixtures/far_tails.json`, written by
//! `tests/reference/make_far_tail_fixtures.py`). They live here, not with
//! the integration tests, because the Beta cases supply the complement
//! `1 − x` exactly, which only these internal types accept. A malformed
//! fixture fails the test through `?` with the file and the field.

use super::{BetaDistribution, ChiSquared, FDistribution};
use serde_json::Value;

type Checked = Result<(), Box<dyn std::error::Error>>;

fn fixture(name: &str) -> Result<Value, Box<dyn std::error::Error>> {
    let path = format!("{}/tests/fixtures/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).map_err(|e| format!("{path}: {e}"))?;
    Ok(serde_json::from_str(&text).map_err(|e| format!("{path}: {e}"))?)
}

fn num(v: &Value, what: &str) -> Result<f64, String> {
    v.as_f64()
        .ok_or_else(|| format!("fixture field {what} is not a number"))
}

fn list<'a>(v: &'a Value, what: &str) -> Result<&'a Vec<Value>, String> {
    v.as_array()
        .ok_or_else(|| format!("fixture field {what} is not a list"))
}

fn vector(v: &Value) -> Result<Vec<f64>, String> {
    list(v, "params")?
        .iter()
        .map(|x| num(x, "params"))
        .collect()
}

fn rel(a: f64, b: f64) -> f64 {
    if a == b {
        return 0.0;
    }
    (a - b).abs() / b.abs().max(f64::MIN_POSITIVE)
}

#[test]
fn far_tails_with_moderate_shapes_match_mpmath_at_60_digits() -> Checked {
    // Source: mpmath at 60 digits (tests/reference/make_far_tail_fixtures.py),
    // each tail integrated from its own edge. Shapes between 5 and 100,
    // probabilities down to 1e-300: where a prefactor written around the
    // centre of the law used to lose digits (F(20, 20) at x = 1e17 was 0,
    // true 9.2e-166; χ²(21) below 1e-20 was 0, true 5.8e-221).
    let f = fixture("far_tails.json")?;
    let mut worst = (0.0f64, String::new());
    for case in list(&f["cases"], "cases")? {
        let dist = case["dist"].as_str().ok_or("fixture field dist")?;
        let params = vector(&case["params"])?;
        let x = num(&case["x"], "x")?;
        let (cdf, sf) = (num(&case["cdf"], "cdf")?, num(&case["sf"], "sf")?);
        let (lo, up) = match dist {
            "beta" => BetaDistribution::new(params[0], params[1])?
                .tails_with_complement(x, num(&case["y"], "y")?),
            "f" => FDistribution::new(params[0], params[1])?.tails(x),
            _ => ChiSquared::new(params[0])?.tails(x),
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
    Ok(())
}

#[test]
fn far_quantiles_match_mpmath_at_60_digits() -> Checked {
    // Source: as above; quantiles at 1e-300 (F(30, 30): 3.357e20, where
    // the loss in the prefactor gave 3.6e16), and the Beta lower quantiles
    // behind in-sample cutoffs near α → 1.
    let f = fixture("far_tails.json")?;
    let mut worst = (0.0f64, String::new());
    for q in list(&f["quantiles"], "quantiles")? {
        let dist = q["dist"].as_str().ok_or("fixture field dist")?;
        let params = vector(&q["params"])?;
        let alpha = num(&q["alpha"], "alpha")?;
        let (got, want) = match dist {
            "f" => (
                FDistribution::new(params[0], params[1])?.isf(alpha)?,
                num(&q["isf"], "isf")?,
            ),
            "chi2" => (
                ChiSquared::new(params[0])?.isf(alpha)?,
                num(&q["isf"], "isf")?,
            ),
            _ => {
                let (x, y) =
                    BetaDistribution::new(params[0], params[1])?.isf_with_complement(alpha)?;
                match q.get("isf_complement") {
                    Some(c) => (y, num(c, "isf_complement")?),
                    None => (x, num(&q["isf"], "isf")?),
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
    Ok(())
}
