//! Criterion benchmarks (timings live here, never in tests):
//!
//! - one closed-form solve with sensitivities through `burnout::solve`, and
//!   the same through the allocation-free `burnout::solve::fast_pair::solve_pair`;
//! - a 1,000,000-point burnout-altitude scan, both branches, to CSV in memory;
//! - a 100,000-row batch, CSV in memory to CSV in memory.
//!
//! Run with `cargo bench --bench targeting`; `scripts/bench.sh` times the
//! same jobs as whole processes writing files.

use burnout::batch::{Batch, BatchOptions};
use burnout::input::problem::{problem_from_inputs, Inputs};
use burnout::report::batch::BatchCsv;
use burnout::report::scan::{ScanFormat, ScanWriter};
use burnout::report::table::DisplayUnits;
use burnout::scan::{Plan, ScanOptions};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::hint::black_box;
use std::time::Duration;

fn inputs(pairs: &[(&str, &str)]) -> Inputs {
    pairs
        .iter()
        .map(|(k, v)| (k.to_string(), v.to_string()))
        .collect()
}

fn closed_form_solve(c: &mut Criterion) {
    // Burnout 400 km up on a 185 x 35786 km transfer orbit: two branches,
    // each with its 5x3 sensitivity matrix and feasibility checks.
    let problem = problem_from_inputs(&inputs(&[
        ("burnout-alt", "400km"),
        ("periapsis-alt", "185km"),
        ("apoapsis-alt", "35786km"),
    ]))
    .expect("valid inputs");
    c.bench_function("solve closed-form pair with sensitivities", |b| {
        b.iter(|| burnout::solve(black_box(&problem)).expect("solves"))
    });
    // The same answer without heap allocation (burnout::solve::fast_pair).
    let (body, targets, r) = (
        problem.body.clone(),
        problem.targets.clone(),
        problem.burnout_radius_m.expect("burnout point given"),
    );
    c.bench_function("lean closed-form pair with sensitivities", |b| {
        b.iter(|| {
            burnout::solve::fast_pair::solve_pair(
                black_box(&body),
                black_box(&targets[0]),
                black_box(&targets[1]),
                black_box(r),
            )
            .expect("solves")
        })
    });
}

fn scan_million(c: &mut Criterion) {
    let plan = Plan::new(&inputs(&[
        ("burnout-alt", "200km..1200km/1000000"),
        ("periapsis-alt", "185km"),
        ("apoapsis-alt", "35786km"),
    ]))
    .expect("valid scan");
    let opts = ScanOptions::default();
    let writer = ScanWriter {
        format: ScanFormat::Csv,
        units: DisplayUnits::Si,
        sensitivities: false,
        branch: opts.branch,
        flight: false,
        title: None,
    };
    let mut out: Vec<u8> = Vec::with_capacity(400 << 20);
    let mut group = c.benchmark_group("scan");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(15));
    group.throughput(Throughput::Elements(plan.len() as u64));
    group.bench_function("1,000,000 altitudes, both branches, CSV in memory", |b| {
        b.iter(|| {
            out.clear();
            plan.run(&opts, &writer, &mut out, &mut |_| {})
                .expect("in-memory write");
            black_box(out.len())
        })
    });
    group.finish();
}

fn batch_hundred_thousand(c: &mut Criterion) {
    let mut input = String::from("id,burnout-alt,periapsis-alt,apoapsis-alt,branch\n");
    for i in 0..100_000 {
        input.push_str(&format!(
            "case-{i},{} km,185 km,{} km,both\n",
            190 + i % 700,
            20_000 + i % 20_000
        ));
    }
    let mut out: Vec<u8> = Vec::with_capacity(64 << 20);
    let mut group = c.benchmark_group("batch");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(10));
    group.throughput(Throughput::Elements(100_000));
    group.bench_function("100,000 rows, CSV in memory", |b| {
        b.iter(|| {
            out.clear();
            let batch = Batch::open(input.as_bytes()).expect("header");
            let s = batch
                .run(
                    &BatchCsv::default(),
                    &mut out,
                    &BatchOptions::default(),
                    &mut |_, _| {},
                )
                .expect("in-memory write");
            black_box(s.rows_written)
        })
    });
    group.finish();
}

criterion_group!(
    benches,
    closed_form_solve,
    scan_million,
    batch_hundred_thousand
);
criterion_main!(benches);
