//! One normality check on a large invented sample, timed: for measuring
//! run time and peak memory from outside, e.g.
//!
//! ```text
//! cargo build --release --example normality_at_scale
//! /usr/bin/time -v target/release/examples/normality_at_scale henze-zirkler 50000 10
//! ```
//!
//! Arguments: the check (`henze-zirkler`, `mardia`, `doornik-hansen`,
//! `royston`, `report`), the number of rows and of variables. The rows are
//! correlated standard normal values from a fixed seed, so every check
//! should find no departure (p-values spread over (0, 1)).

use mvdist::normality::{
    DoornikHansen, HenzeZirkler, Mardia, NormalityOptions, NormalityReport, RoystonH,
};
use ndarray::Array2;
use rand::{rngs::StdRng, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use std::time::Instant;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let check = args.get(1).map_or("henze-zirkler", String::as_str);
    let n: usize = args.get(2).map_or(Ok(50_000), |s| s.parse())?;
    let p: usize = args.get(3).map_or(Ok(10), |s| s.parse())?;

    let mut rng = StdRng::seed_from_u64(2024);
    let mut x = Array2::<f64>::zeros((n, p));
    for mut row in x.outer_iter_mut() {
        let mut running = 0.0;
        for v in row.iter_mut() {
            let z: f64 = StandardNormal.sample(&mut rng);
            running = 0.5 * running + z;
            *v = 100.0 + running;
        }
    }

    let start = Instant::now();
    let summary = match check {
        "henze-zirkler" => {
            let h = HenzeZirkler::compute(x.view())?;
            format!("statistic {:.6}, p-value {:.4}", h.statistic(), h.p_value())
        }
        "mardia" => {
            let m = Mardia::compute(x.view())?;
            format!(
                "skewness p-value {:.4}, kurtosis p-value {:.4}",
                m.skewness_p_value(),
                m.kurtosis_p_value()
            )
        }
        "doornik-hansen" => {
            let d = DoornikHansen::compute(x.view())?;
            format!("statistic {:.4}, p-value {:.4}", d.statistic(), d.p_value())
        }
        "royston" => {
            let r = RoystonH::compute(x.view())?;
            format!("statistic {:.4}, p-value {:.4}", r.statistic(), r.p_value())
        }
        "report" => {
            let r = NormalityReport::compute(x.view(), &NormalityOptions::default())?;
            serde_json::to_string_pretty(&r)?
        }
        other => return Err(format!("unknown check '{other}'").into()),
    };
    println!(
        "{check} on {n} rows × {p} variables: {summary} ({:.3} s)",
        start.elapsed().as_secs_f64()
    );
    Ok(())
}
