//! Benchmarks of the core: parsing and validating a case, the fit, a full report, and how
//! the cost grows with the number of doses.

use std::fmt::Write;
use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use ebb::core::casefile::CaseFile;
use ebb::core::{fit, report};
use ebb::demo::DEMO_CASE;

/// An invented case with `n` infusions every 8 h and three levels after the last one.
fn case_with_doses(n: usize) -> String {
    let mut s = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
    let start = chrono::NaiveDate::from_ymd_opt(2027, 1, 1)
        .and_then(|d| d.and_hms_opt(6, 0, 0))
        .expect("a fixed valid date");
    let at = |h: i64| (start + chrono::Duration::hours(h)).format("%Y-%m-%dT%H:%M:%S");
    for i in 0..n as i64 {
        let _ = write!(
            s,
            "[[dose]]\ntime = {}\namount_mg = 120.0\nroute = \"infusion\"\ninfusion_h = 0.5\n",
            at(8 * i)
        );
    }
    let last = 8 * (n as i64 - 1);
    for (dh, v) in [(1, 6.0), (4, 2.8), (7, 1.3)] {
        let _ = write!(s, "[[level]]\ntime = {}\nvalue = {v}\n", at(last + dh));
    }
    s.push_str(
        "[plan]\ndose_mg = 140.0\ninterval_h = 8.0\nroute = \"infusion\"\ninfusion_h = 0.5\n",
    );
    let _ = write!(
        s,
        "[threshold]\nbelow = 0.5\nprocedure = {}\n",
        at(last + 72)
    );
    s
}

fn bench_demo(c: &mut Criterion) {
    c.bench_function("parse and validate the demo case", |b| {
        b.iter(|| CaseFile::parse(black_box(DEMO_CASE)).and_then(|f| f.validate()))
    });
    let case = CaseFile::parse(DEMO_CASE)
        .and_then(|f| f.validate())
        .expect("the demo case is valid");
    c.bench_function("log-linear fit of the demo case", |b| {
        b.iter(|| fit::fit(black_box(&case)))
    });
    c.bench_function("full report of the demo case (text)", |b| {
        b.iter(|| {
            let r = report::build(black_box(&case)).expect("the demo reports");
            let mut out = Vec::with_capacity(4096);
            report::write_text(&mut out, &case, &r).expect("writes to memory");
            out
        })
    });
}

fn bench_scaling(c: &mut Criterion) {
    let mut g = c.benchmark_group("report by number of doses");
    g.sample_size(20);
    for n in [10usize, 100, 1_000, 10_000] {
        let text = case_with_doses(n);
        g.bench_with_input(BenchmarkId::from_parameter(n), &text, |b, text| {
            b.iter(|| {
                let case = CaseFile::parse(text)
                    .and_then(|f| f.validate())
                    .expect("the generated case is valid");
                report::build(&case).expect("the generated case reports")
            })
        });
    }
    g.finish();
}

/// The two-compartment course over a dose record with as many sample times as doses, doses
/// and times grown together (one forward pass per mode: linear in both).
fn bench_two_compartment(c: &mut Criterion) {
    use ebb::core::model::{Administration, Disposition, Route, Schedule, TwoCompartment};
    let d = Disposition::Two(TwoCompartment {
        cl: 3.2,
        v1: 58.0,
        q: 6.5,
        v2: 38.0,
    });
    let mut g = c.benchmark_group("two-compartment course, doses and times together");
    g.sample_size(20);
    for n in [250usize, 1_000, 4_000] {
        let doses: Vec<Administration> = (0..n)
            .map(|j| Administration {
                t: j as f64 * 12.0,
                amount_mg: 1000.0,
                route: Route::Infusion { hours: 1.0 },
            })
            .collect();
        let ts: Vec<f64> = (0..n).map(|j| j as f64 * 12.0 + 5.3).collect();
        g.bench_with_input(BenchmarkId::from_parameter(n), &n, |b, _| {
            b.iter(|| d.levels(&Schedule::new(&doses), &ts))
        });
    }
    g.finish();
}

criterion_group!(benches, bench_demo, bench_scaling, bench_two_compartment);
criterion_main!(benches);
