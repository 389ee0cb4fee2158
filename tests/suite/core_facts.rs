//! Facts of the trade and a published-equation worked example, through the public API.

use std::path::Path;

use ebb::core::casefile;
use ebb::core::model::{self, Route};
use ebb::core::projection;
use ebb::core::report::{self, Report};

fn report_of(name: &str) -> Report {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/cases/valid")
        .join(name);
    let case = casefile::load(&path).unwrap_or_else(|e| panic!("{e}"));
    report::build(&case).unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// |got - want| within half a unit of the last digit the source printed.
fn near(got: f64, want: f64, half_unit: f64, what: &str) {
    assert!(
        (got - want).abs() <= half_unit,
        "{what}: got {got}, source says {want}"
    );
}

// Half-life = ln 2 / k (common practice); check values from drug-facts.md "Facts of the
// trade": k = 0.1 /h -> 6.9315 h; t1/2 = 24 h -> k = 0.028881 /h (Bourne, Basic
// Pharmacokinetics, ch. 6).
#[test]
fn half_life_is_ln2_over_k() {
    near(model::half_life(0.1), 6.9315, 5e-5, "t1/2 at k 0.1");
    near(
        std::f64::consts::LN_2 / 24.0,
        0.028881,
        5e-7,
        "k at t1/2 24 h",
    );
    for k in [1e-4, 0.01, 0.2566, 1.0, 7.5] {
        assert_eq!(model::half_life(k), std::f64::consts::LN_2 / k);
    }
}

// 90 %, 95 %, 97 % of steady state after 3.32, 4.32, 5.06 half-lives (common practice;
// drug-facts.md gives 3.32 -> 0.90 from 1 - 2^-n, Bourne ch. 6).
#[test]
fn fractions_of_steady_state_fall_at_the_known_half_life_multiples() {
    for k in [0.02, 0.27566, 1.3] {
        let th = model::half_life(k);
        for (f, n) in [(0.90, 3.32), (0.95, 4.32), (0.97, 5.06)] {
            near(
                model::time_to_fraction_of_ss(f, k) / th,
                n,
                0.005,
                "half-lives",
            );
        }
    }
}

// The plan's times to steady state in the report are those same multiples (common practice).
#[test]
fn the_report_gives_the_times_to_steady_state_in_half_lives() {
    let r = report_of("sawchuk_zaske_pre_dose_level.toml");
    let p = r.plan.expect("the fixture has a plan");
    let th = r.fit.half_life_h;
    for (got, n) in p.time_to_ss_h.iter().zip([3.32, 4.32, 5.06]) {
        near(got / th, n, 0.005, "report half-lives");
    }
}

// Fraction remaining after n half-lives is 0.5^n (common practice; drug-facts.md: n = 1:
// 0.5, 3: 0.125, 5: 0.03125).
#[test]
fn washout_rows_keep_half_per_half_life() {
    let r = report_of("sawchuk_zaske_pre_dose_level.toml");
    assert_eq!(r.washout.len(), 5);
    let first = r.washout[0].level * 2.0;
    for (i, row) in r.washout.iter().enumerate() {
        let n = i as i32 + 1;
        assert_eq!(row.half_lives, n as u32);
        assert_eq!(row.fraction_remaining, 0.5f64.powi(n));
        // The model's level falls by the same fraction from the end of the last dose.
        assert!((row.level / first - 0.5f64.powi(n)).abs() < 1e-9);
    }
    assert_eq!(r.washout[2].fraction_remaining, 0.125);
    assert_eq!(r.washout[4].fraction_remaining, 0.03125);
}

// Time to fall from C0 to C is ln(C0/C)/k: lithium 1.0 -> 0.4 mmol/L with t1/2 24 h takes
// 31.73 h (drug-facts.md "Facts of the trade", fraction-remaining row).
#[test]
fn time_to_fall_matches_the_lithium_example() {
    let k = std::f64::consts::LN_2 / 24.0;
    near(
        projection::hours_to_fall(1.0, 0.4, k),
        31.73,
        0.005,
        "hours",
    );
    assert_eq!(projection::hours_to_fall(0.3, 0.4, k), 0.0);
}

// Sawchuk-Zaske worked example, drug-facts.md "Facts of the trade" (computed there from the
// published equations: Sawchuk RJ, Zaske DE, J Pharmacokinet Biopharm 1976;4:183-195, from
// memory, unverified; infusion equations per Bourne, Basic Pharmacokinetics ch. 6):
// gentamicin 120 mg over 0.5 h q8h; 6.0 mg/L at 1.0 h and 1.0 mg/L at 7.5 h after the start
// -> k 0.27566 /h, t1/2 2.515 h, Cmax 6.887 mg/L, Cmin 0.8712 mg/L, V 18.29 L, CL 5.043 L/h.
fn check_sawchuk_zaske(r: &Report, volume_method: &str) {
    let f = &r.fit;
    assert_eq!(f.method, "two-point");
    assert_eq!(f.level_rows.len(), 2);
    near(f.k_per_h, 0.27566, 5e-6, "k");
    near(f.half_life_h, 2.515, 5e-4, "t1/2");
    near(f.volume_l.unwrap(), 18.29, 5e-3, "V");
    near(f.clearance_l_per_h.unwrap(), 5.043, 5e-4, "CL");
    assert_eq!(f.volume_method, Some(volume_method));
    let ss = model::steady_state(
        120.0,
        Route::Infusion { hours: 0.5 },
        8.0,
        f.k_per_h,
        f.volume_l.unwrap(),
    );
    near(ss.peak_mg_l, 6.887, 5e-4, "Cmax");
    near(ss.trough_mg_l, 0.8712, 5e-5, "Cmin");
    // The report's plan (the same regimen) carries the same figures.
    let p = r.plan.as_ref().unwrap();
    assert_eq!(p.peak_ss, Some(ss.peak_mg_l));
    assert_eq!(p.trough_ss, Some(ss.trough_mg_l));
}

#[test]
fn sawchuk_zaske_example_by_pre_dose_level() {
    let r = report_of("sawchuk_zaske_pre_dose_level.toml");
    check_sawchuk_zaske(&r, "pre-dose level");
    // The pre-dose level is level 1 of the file.
    assert_eq!(r.fit.pre_dose_row, Some(1));
    assert_eq!(r.fit.level_rows, vec![2, 3]);
}

#[test]
fn sawchuk_zaske_example_by_a_long_dose_record() {
    let r = report_of("sawchuk_zaske_dose_record.toml");
    check_sawchuk_zaske(&r, "dose record");
    assert_eq!(r.fit.pre_dose_row, None);
}
