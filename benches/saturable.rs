//! Benchmarks of the saturable (Michaelis-Menten) analysis of phenytoin as the dose record
//! grows (30, 365 and 2,000 daily doses, five levels): the steady-state algebra, the record
//! fit, the Bayesian estimate with its Laplace ranges, and the integrated course with its 95 %
//! band for the chart.

use std::fmt::Write;
use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use ebb::core::casefile::CaseFile;
use ebb::core::saturable_report;

/// An invented case: `days` daily oral doses of 300 mg phenytoin sodium for a 70-kg patient,
/// five levels ending on the last day, and a plan of 325 mg/day.
fn case(days: usize) -> CaseFile {
    let start = chrono::NaiveDate::from_ymd_opt(2026, 1, 1)
        .and_then(|d| d.and_hms_opt(8, 0, 0))
        .expect("a fixed valid date");
    let at = |day: i64| (start + chrono::Duration::days(day)).format("%Y-%m-%dT%H:%M:%S");
    let mut s = String::from(
        "[patient]\nweight_kg = 70.0\n[drug]\nprofile = \"phenytoin\"\nlevel_unit = \"mg/L\"\n\
         salt = \"phenytoin-sodium\"\n",
    );
    for d in 0..days as i64 {
        let _ = write!(
            s,
            "[[dose]]\ntime = {}\namount_mg = 300.0\nroute = \"oral\"\n",
            at(d)
        );
    }
    // Five levels a month apart (or a week apart on a short record), the last on the last day.
    let gap = if days > 150 { 30 } else { 7 };
    for j in (0..5i64).rev() {
        let day = days as i64 - 1 - gap * j;
        let _ = write!(
            s,
            "[[level]]\ntime = {}\nvalue = {}\n",
            at(day),
            11.0 + j as f64 * 0.2
        );
    }
    s.push_str("[plan]\ndose_mg = 325.0\ninterval_h = 24.0\nroute = \"oral\"\n");
    CaseFile::parse(&s).expect("the invented case parses")
}

fn bench_by_days(c: &mut Criterion) {
    let mut g = c.benchmark_group("saturable_by_days");
    for days in [30usize, 365, 2000] {
        let file = case(days);
        g.bench_with_input(BenchmarkId::new("analyse", days), &file, |b, f| {
            b.iter(|| black_box(ebb::cli::analyse_parsed(f, None)))
        });
        let a = ebb::cli::analyse_parsed(&file, None).expect("the case analyses");
        let (Some(case), Some(s)) = (a.case.as_ref(), a.saturable.as_ref()) else {
            continue;
        };
        let span = saturable_report::chart_span(case, &s.report);
        g.bench_with_input(BenchmarkId::new("chart_course", days), &days, |b, _| {
            b.iter(|| black_box(saturable_report::chart_course(case, &s.report, span, 160)))
        });
    }
    g.finish();
}

criterion_group!(benches, bench_by_days);
criterion_main!(benches);
