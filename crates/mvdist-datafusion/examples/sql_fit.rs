//! Fit and score with SQL on Apache DataFusion .
//!
//! `cargo run --release -p mvdist-datafusion --example sql_fit -- [DIR]`
//!
//! Reads every CSV file in `DIR/reference/` and `DIR/new/` (each with the
//! same numeric columns), fits a model over the reference rows with
//! `mvdist_fit`, scores the new rows, and writes the scored rows as CSV into
//! `DIR/scored/`. Without `DIR`, it first writes an invented example (a
//! fixed-seed process with four correlated measurements, split over several
//! files) into `sql-demo/` and uses that.

use datafusion::dataframe::DataFrameWriteOptions;
use datafusion::prelude::{CsvReadOptions, SessionContext};
use std::error::Error;
use std::path::{Path, PathBuf};

fn write_example(dir: &Path) -> std::io::Result<()> {
    let mut state = 7u64;
    let mut uniform = move || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    let mut normal = move || {
        let (u, v) = (uniform(), uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    };
    for (part, rows, shift) in [("reference", 3, 0.0), ("new", 2, 0.0)] {
        std::fs::create_dir_all(dir.join(part))?;
        for file in 0..rows {
            let mut text = String::from("id,pressure,flow,temperature,vibration\n");
            for i in 0..500 {
                let (a, b, c) = (normal(), normal(), normal());
                let mut row = [
                    10.0 + a,
                    5.0 + 0.8 * a + 0.6 * b,
                    60.0 + 2.0 * c,
                    0.3 + 0.05 * (b + c),
                ];
                if part == "new" && i % 97 == 13 {
                    row[3] += 0.4 + shift; // a vibration fault
                }
                text += &format!(
                    "{part}{file}_{i},{},{},{},{}\n",
                    row[0], row[1], row[2], row[3]
                );
            }
            std::fs::write(dir.join(part).join(format!("part{file}.csv")), text)?;
        }
    }
    Ok(())
}

#[tokio::main]
async fn main() -> Result<(), Box<dyn Error>> {
    let dir = match std::env::args().nth(1) {
        Some(d) => PathBuf::from(d),
        None => {
            let d = PathBuf::from("sql-demo");
            write_example(&d)?;
            d
        }
    };
    let ctx = SessionContext::new();
    mvdist_datafusion::register(&ctx);
    let path = |p: &str| dir.join(p).to_string_lossy().into_owned() + "/";
    ctx.register_csv("reference", &path("reference"), CsvReadOptions::new())
        .await?;
    ctx.register_csv("incoming", &path("new"), CsvReadOptions::new())
        .await?;
    let vars = "pressure, flow, temperature, vibration";
    let scored = ctx
        .sql(&format!(
            "SELECT id, mvdist_d2(m.model, {vars}) AS d2, mvdist_p_value(m.model, {vars}) AS p_value, \
             mvdist_flag(m.model, 0.001, {vars}) AS flag \
             FROM incoming CROSS JOIN (SELECT mvdist_fit({vars}) AS model FROM reference) m ORDER BY p_value"
        ))
        .await?;
    let out = path("scored");
    scored.clone().limit(0, Some(5))?.show().await?;
    scored
        .write_csv(&out, DataFrameWriteOptions::new(), None)
        .await?;
    println!("scored rows written to {out}");
    println!("Caution: flags assume the reference rows are multivariate normal and the model fits them; a flag is evidence, not a verdict.");
    Ok(())
}
