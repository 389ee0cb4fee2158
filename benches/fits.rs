//! Benchmarks of the fits and the regimen search: the dose-history fit and the log-linear fit
//! as the dose record and the levels grow (10 to 10,000), the full report as the levels grow,
//! doses and levels grown together, and the regimen search on the demo's fitted k and V.

use std::fmt::Write;
use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use ebb::core::case::Case;
use ebb::core::casefile::CaseFile;
use ebb::core::model::Disposition;
use ebb::core::regimen::{self, RegimenOptions};
use ebb::core::{fit, history, report};
use ebb::demo::DEMO_CASE;

/// An invented case: `doses` infusions of 120 mg over 0.5 h every 8 h, then `levels` levels
/// after the last one, one minute apart from 1 h on, falling as e^(-0.12 t) with a little
/// alternating scatter so the fit has residuals.
fn case(doses: usize, levels: usize) -> Case {
    let start = chrono::NaiveDate::from_ymd_opt(2026, 1, 1)
        .and_then(|d| d.and_hms_opt(6, 0, 0))
        .expect("a fixed valid date");
    let at = |min: i64| (start + chrono::Duration::minutes(min)).format("%Y-%m-%dT%H:%M:%S");
    let mut s = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
    for i in 0..doses as i64 {
        let _ = write!(
            s,
            "[[dose]]\ntime = {}\namount_mg = 120.0\nroute = \"infusion\"\ninfusion_h = 0.5\n",
            at(480 * i)
        );
    }
    let last = 480 * (doses as i64 - 1);
    for j in 0..levels as i64 {
        let h = 1.0 + j as f64 / 60.0;
        let scatter = if j % 2 == 0 { 1.02 } else { 0.98 };
        let _ = write!(
            s,
            "[[level]]\ntime = {}\nvalue = {}\n",
            at(last + 60 + j),
            7.0 * (-0.12 * h).exp() * scatter
        );
    }
    s.push_str("[targets]\npeak = [5.0, 10.0]\ntrough_max = 2.0\n");
    CaseFile::parse(&s)
        .and_then(|f| f.validate())
        .expect("the generated case is valid")
}

const SIZES: [usize; 4] = [10, 100, 1_000, 10_000];

fn bench_history_by_doses(c: &mut Criterion) {
    let mut g = c.benchmark_group("dose-history fit by number of doses (3 levels)");
    g.sample_size(20);
    for n in SIZES {
        let case = case(n, 3);
        g.bench_with_input(BenchmarkId::from_parameter(n), &case, |b, case| {
            b.iter(|| history::fit(black_box(case)).expect("fits"))
        });
    }
    g.finish();
}

fn bench_by_levels(c: &mut Criterion) {
    let mut g = c.benchmark_group("dose-history fit by number of levels (10 doses)");
    g.sample_size(20);
    for n in SIZES {
        let case = case(10, n);
        g.bench_with_input(BenchmarkId::from_parameter(n), &case, |b, case| {
            b.iter(|| history::fit(black_box(case)).expect("fits"))
        });
    }
    g.finish();
    let mut g = c.benchmark_group("log-linear fit by number of levels (10 doses)");
    g.sample_size(20);
    for n in SIZES {
        let case = case(10, n);
        g.bench_with_input(BenchmarkId::from_parameter(n), &case, |b, case| {
            b.iter(|| fit::fit_log_linear(black_box(case)).expect("fits"))
        });
    }
    g.finish();
    let mut g = c.benchmark_group("full report by number of levels (10 doses)");
    g.sample_size(20);
    for n in SIZES {
        let case = case(10, n);
        g.bench_with_input(BenchmarkId::from_parameter(n), &case, |b, case| {
            b.iter(|| report::build(black_box(case)).expect("reports"))
        });
    }
    g.finish();
}

/// Doses and levels grown together (ten doses to each level), in steps of four: a cost linear
/// in the record grows about four times a step, a cost in their product sixteen times.
fn bench_together(c: &mut Criterion) {
    let mut g = c.benchmark_group("dose-history report, doses and levels together");
    g.sample_size(10);
    for n in [250, 1_000, 4_000, 16_000] {
        let case = case(n, n / 10);
        g.bench_with_input(BenchmarkId::from_parameter(n), &case, |b, case| {
            b.iter(|| {
                let f = history::fit(black_box(case)).expect("fits");
                report::build_from_fit(case, &f).expect("reports")
            })
        });
    }
    g.finish();
}

fn bench_regimen(c: &mut Criterion) {
    let case = CaseFile::parse(DEMO_CASE)
        .and_then(|f| f.validate())
        .expect("the demo case is valid");
    let fitted = fit::fit(&case).expect("the demo fits");
    let v = fitted.volume_l.expect("the demo has a volume");
    let route = regimen::design_route(&case).expect("the demo has a route");
    let targets = regimen::targets_mg_l(&case.targets, case.drug.scale.per_mg_l);
    let opts = RegimenOptions::default();
    c.bench_function("regimen search on the demo (k, V, targets)", |b| {
        b.iter(|| {
            let s = regimen::suggest(
                &black_box(Disposition::One { k: fitted.k, v }),
                route,
                &targets,
                &opts,
                Some(8.0),
            );
            assert!(!s.is_empty());
            s
        })
    });
    // The search with every infusion time it may try, the widest it gets.
    let wide = RegimenOptions {
        infusion_h: vec![0.5, 1.0, 1.5, 2.0, 3.0, 4.0],
        ..RegimenOptions::default()
    };
    c.bench_function("regimen search on the demo, six infusion times", |b| {
        b.iter(|| {
            regimen::suggest(
                &black_box(Disposition::One { k: fitted.k, v }),
                route,
                &targets,
                &wide,
                Some(8.0),
            )
        })
    });
}

criterion_group!(
    benches,
    bench_regimen,
    bench_history_by_doses,
    bench_by_levels,
    bench_together
);
criterion_main!(benches);
