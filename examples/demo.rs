//! The whole job on an invented scenario: a brewery watches its
//! fermentations.
//!
//! Six correlated measurements are taken on every batch. A reference period
//! of 150 batches (which, as in real life, contains a few bad batches) is
//! checked and cleaned, a model is fitted, and a stream of 60 new batches is
//! scored with calibrated p-values and a false-discovery-rate adjustment.
//! The report names the flagged batches and the measurements that drove
//! each flag. A Hotelling T² control chart then replays the same story as
//! process monitoring: Phase I on the reference period (removing signals
//! until the estimate is clean), Phase II on the new batches, with the
//! Mason–Tracy–Young decomposition of each signal. Three SVG charts are
//! written to the folder given as the first argument (default
//! `demo-output`).
//!
//! Run it with `cargo run --release --example demo`. All data are generated
//! here with a fixed seed.

use mvdist::calibration::Reference;
use mvdist::control_chart::{
    chart_svg, ControlChart, FalseAlarmRate, PhaseOneOptions, PointStatus, SignalRemoval,
};
use mvdist::{Adjustment, ContributionOrder, DistanceModel, RowOrigin};
use ndarray::{Array2, Axis};
use plotters::prelude::*;
use std::error::Error;
use std::path::{Path, PathBuf};

const VARIABLES: [&str; 6] = [
    "original_gravity",
    "final_gravity",
    "ph",
    "ferment_temp_c",
    "days_to_terminal",
    "bitterness_ibu",
];

/// A small seeded generator (SplitMix64 with Box–Muller normals).
struct Seeded(u64);

impl Seeded {
    fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        (((z ^ (z >> 31)) >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

/// One healthy batch: correlated through shared latent factors.
fn healthy_batch(rng: &mut Seeded) -> [f64; 6] {
    let z: Vec<f64> = (0..6).map(|_| rng.normal()).collect();
    [
        1.050 + 0.0020 * z[0],
        1.010 + 0.0015 * (0.70 * z[0] + 0.71 * z[1]),
        4.30 + 0.08 * (0.50 * z[1] + 0.87 * z[4]),
        19.5 + 0.5 * z[2],
        6.5 + 0.6 * (-0.6 * z[2] + 0.8 * z[3]),
        32.0 + 2.5 * (0.40 * z[0] + 0.92 * z[5]),
    ]
}

fn batches(rng: &mut Seeded, n: usize) -> Array2<f64> {
    let mut x = Array2::zeros((n, 6));
    for mut row in x.outer_iter_mut() {
        for (v, b) in row.iter_mut().zip(healthy_batch(rng)) {
            *v = b;
        }
    }
    x
}

fn main() -> Result<(), Box<dyn Error>> {
    let out_dir = PathBuf::from(
        std::env::args()
            .nth(1)
            .unwrap_or_else(|| "demo-output".into()),
    );
    std::fs::create_dir_all(&out_dir)?;
    let mut rng = Seeded(20_261_201);
    let alpha = 0.01;

    // Reference period: 150 batches, three of them stuck fermentations
    // (final gravity high, slow to finish) and one with a wild pH reading.
    let mut reference = batches(&mut rng, 150);
    for &i in &[17, 64, 118] {
        reference[(i, 1)] += 0.008;
        reference[(i, 4)] += 3.0;
    }
    reference[(92, 2)] -= 0.45;

    println!(
        "== 1. Checking the reference period ({} batches × {} measurements)",
        reference.nrows(),
        reference.ncols()
    );
    let first = DistanceModel::fit(reference.view())?;
    let in_sample = first.score(reference.view(), RowOrigin::InSample)?;
    let suspect = in_sample.flags(alpha, Adjustment::BenjaminiHochberg)?;
    let removed: Vec<usize> = (0..reference.nrows()).filter(|&i| suspect[i]).collect();
    for &i in &removed {
        let why = first.explain(
            reference.row(i).as_slice().unwrap_or(&[]),
            ContributionOrder::LargestFirst,
        )?;
        println!(
            "   reference batch {:>3}: d² = {:6.1}, p = {:.1e}  (driven by {})",
            i + 1,
            in_sample.squared_distances()[i],
            in_sample.p_values()[i],
            drivers(&why, 2)
        );
    }
    println!("   {} suspicious reference batches set aside (Beta reference for in-sample rows, BH at {alpha})", removed.len());
    let keep: Vec<usize> = (0..reference.nrows()).filter(|i| !suspect[*i]).collect();
    let clean = reference.select(Axis(0), &keep);

    println!(
        "\n== 2. Fitting the model on {} clean batches",
        clean.nrows()
    );
    let model = DistanceModel::fit(clean.view())?;
    println!(
        "   log det Σ = {:.2}, condition number = {:.1}",
        model.scatter().log_determinant(),
        model.scatter().condition_number()?
    );
    let cutoff = model.cutoff(alpha, RowOrigin::New)?;
    println!(
        "   cutoff for a new batch at α = {alpha}: d² > {cutoff:.2} (F reference, n = {}, p = 6)",
        model.sample_size()
    );

    // New batches: 60, with four faults of different kinds.
    let mut new = batches(&mut rng, 60);
    new[(11, 3)] += 3.0; // temperature excursion
    new[(11, 4)] -= 1.5;
    new[(26, 1)] += 0.0045; // final gravity high for its original gravity
    new[(26, 0)] -= 0.0030;
    new[(40, 2)] -= 0.35; // pH drop: possible infection
    new[(54, 5)] += 13.0; // hop dosing error

    println!(
        "\n== 3. Scoring {} new batches (F reference, Benjamini–Hochberg at {alpha})",
        new.nrows()
    );
    let scores = model.score(new.view(), RowOrigin::New)?;
    let adjusted = scores.adjusted_p_values(Adjustment::BenjaminiHochberg)?;
    let flags = scores.flags(alpha, Adjustment::BenjaminiHochberg)?;
    println!(
        "   {:>5}  {:>7}  {:>9}  {:>9}  drivers (share of d²)",
        "batch", "d²", "p", "adj. p"
    );
    for i in (0..new.nrows()).filter(|&i| flags[i]) {
        let why = model.explain(
            new.row(i).as_slice().unwrap_or(&[]),
            ContributionOrder::LargestFirst,
        )?;
        println!(
            "   {:>5}  {:>7.1}  {:>9.1e}  {:>9.1e}  {}",
            i + 1,
            scores.squared_distances()[i],
            scores.p_values()[i],
            adjusted[i],
            drivers(&why, 2)
        );
    }
    let count = flags.iter().filter(|f| **f).count();
    println!("   {count} of {} new batches flagged", new.nrows());
    println!(
        "\nCaution: these flags assume the clean reference batches are multivariate normal and that the model fits them;\n\
         a flag is evidence for a closer look, not a verdict. Release decisions belong to your quality procedure and qualified people."
    );

    let reference_d2 = model.squared_distances(clean.view())?.to_vec();
    new_batches_chart(
        &out_dir.join("new_batches.svg"),
        scores.squared_distances(),
        &flags,
        cutoff,
    )?;
    qq_chart(&out_dir.join("reference_qq.svg"), &reference_d2, 6)?;
    t2_chart_section(&reference, &new, &out_dir.join("t2_chart.svg"))?;
    println!(
        "\ncharts written to {}/ (new_batches.svg, reference_qq.svg, t2_chart.svg)",
        out_dir.display()
    );
    Ok(())
}

/// Section 4: the same data as a T² control chart with diagnosed signals.
fn t2_chart_section(
    reference: &Array2<f64>,
    new: &Array2<f64>,
    svg: &Path,
) -> Result<(), Box<dyn Error>> {
    let settings = PhaseOneOptions::default()
        .with_false_alarm(FalseAlarmRate::from_average_run_length(370.0)?)
        .with_removal(SignalRemoval::RefitUntilClean { max_rounds: 10 });
    let chart = ControlChart::individuals(reference.view(), &settings)?;
    let removed: Vec<usize> = chart
        .phase_one_points()
        .iter()
        .filter(|p| matches!(p.status, PointStatus::Removed { .. }))
        .map(|p| p.index + 1)
        .collect();
    println!(
        "\n== 4. T² control chart (in-control ARL 370, α = {:.5} per batch)",
        settings.false_alarm().alpha()
    );
    println!(
        "   Phase I: {} rounds, reference batches removed: {removed:?}; estimate from {} batches",
        chart.rounds().len(),
        chart.in_estimate()
    );
    let points = chart.monitor(new.view())?;
    let names: Vec<String> = VARIABLES.iter().map(|v| v.to_string()).collect();
    println!(
        "   Phase II: UCL = {:.2}; signals with their decomposition terms above cutoff (value > cutoff):",
        points.first().map_or(f64::NAN, |p| p.upper_limit)
    );
    for p in points.iter().filter(|p| p.signal) {
        let Some(d) = &p.diagnosis else { continue };
        let show = |terms: Vec<&mvdist::control_chart::RatedTerm>| {
            terms
                .iter()
                .take(2)
                .map(|t| format!("{} = {:.1} > {:.1}", t.label(&names), t.value, t.cutoff))
                .collect::<Vec<_>>()
                .join("; ")
        };
        let (range, broken) = (show(d.out_of_range()), show(d.broken_relationships()));
        println!("   batch {:>3}: T² = {:6.1}", p.index + 1, p.t_squared);
        if !range.is_empty() {
            println!("        out of range: {range}");
        }
        if !broken.is_empty() {
            println!("        broken relationship: {broken}");
        }
    }
    println!(
        "   (\"a | b\": a is unusual given b; a signal is a prompt to investigate, not a verdict)"
    );
    std::fs::write(
        svg,
        chart_svg(
            &chart,
            &points,
            "Fermentation batches: T² chart (Phase I reference, Phase II new)",
        )?,
    )?;
    Ok(())
}

/// "name (share), name (share)" for the `k` largest terms.
fn drivers(c: &mvdist::Contributions, k: usize) -> String {
    let total = c.total();
    let mut terms: Vec<(usize, f64)> = c.terms().iter().copied().enumerate().collect();
    terms.sort_by(|a, b| b.1.total_cmp(&a.1));
    terms
        .iter()
        .take(k)
        .map(|&(j, t)| format!("{} ({:.0}%)", VARIABLES[j], 100.0 * t / total))
        .collect::<Vec<_>>()
        .join(", ")
}

fn new_batches_chart(
    path: &Path,
    d2: &[f64],
    flags: &[bool],
    cutoff: f64,
) -> Result<(), Box<dyn Error>> {
    let root = SVGBackend::new(path, (900, 480)).into_drawing_area();
    root.fill(&WHITE)?;
    let top = d2.iter().copied().fold(cutoff, f64::max) * 1.35;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            "New batches: squared distance to the reference",
            ("sans-serif", 20),
        )
        .margin(15)
        .x_label_area_size(40)
        .y_label_area_size(60)
        .build_cartesian_2d(0.0..(d2.len() as f64 + 1.0), 0.0..top)?;
    chart.configure_mesh().x_desc("batch").y_desc("d²").draw()?;
    chart
        .draw_series(LineSeries::new(
            [(0.0, cutoff), (d2.len() as f64 + 1.0, cutoff)],
            RED.stroke_width(2),
        ))?
        .label(format!("cutoff at α = 0.01 (d² = {cutoff:.1})"))
        .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], RED));
    chart
        .draw_series(d2.iter().zip(flags).enumerate().map(|(i, (&d, &f))| {
            let style = if f { RED.filled() } else { BLUE.filled() };
            Circle::new((i as f64 + 1.0, d), 4, style)
        }))?
        .label("batch (red: flagged after BH adjustment)")
        .legend(|(x, y)| Circle::new((x + 10, y), 4, BLUE.filled()));
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperLeft)
        .border_style(BLACK)
        .background_style(WHITE)
        .draw()?;
    root.present()?;
    Ok(())
}

fn qq_chart(path: &Path, d2: &[f64], p: usize) -> Result<(), Box<dyn Error>> {
    let mut sorted = d2.to_vec();
    sorted.sort_by(f64::total_cmp);
    let chi = Reference::chi_square(p)?;
    let n = sorted.len() as f64;
    let points: Vec<(f64, f64)> = sorted
        .iter()
        .enumerate()
        .map(|(i, &d)| Ok((chi.cutoff(1.0 - (i as f64 + 0.5) / n)?, d)))
        .collect::<Result<_, mvdist::Error>>()?;
    let top = points.iter().fold(0.0f64, |m, &(x, y)| m.max(x).max(y)) * 1.05;
    let root = SVGBackend::new(path, (560, 560)).into_drawing_area();
    root.fill(&WHITE)?;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            format!("Reference distances vs χ²({p}) quantiles"),
            ("sans-serif", 20),
        )
        .margin(15)
        .x_label_area_size(40)
        .y_label_area_size(50)
        .build_cartesian_2d(0.0..top, 0.0..top)?;
    chart
        .configure_mesh()
        .x_desc("χ² quantile")
        .y_desc("sorted d²")
        .draw()?;
    chart.draw_series(LineSeries::new([(0.0, 0.0), (top, top)], BLACK))?;
    chart.draw_series(
        points
            .iter()
            .map(|&(x, y)| Circle::new((x, y), 3, BLUE.filled())),
    )?;
    root.present()?;
    Ok(())
}
