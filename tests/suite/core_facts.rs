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

// ---- saturable (Michaelis-Menten) elimination: phenytoin fixtures through the analysis ----

fn saturable_of(name: &str) -> ebb::analysis::Saturable {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/cases/valid")
        .join(name);
    let file = casefile::read(&path).unwrap();
    let cat = ebb::profiles::Catalog::built_in().unwrap();
    let a = ebb::analysis::analyse(&file, &cat);
    assert!(
        a.fit.is_none() && a.report.is_none(),
        "{name}: a first-order fit"
    );
    a.saturable
        .unwrap_or_else(|| panic!("{name}: {:?}", a.stop))
}

fn has(s: &ebb::analysis::Saturable, code: &str) -> bool {
    s.report.warnings.iter().any(|w| w.code().as_str() == code)
}

// Two steady-state pairs: Km = (R2 − R1)/(R1/C1 − R2/C2), Vmax = R1 + Km·R1/C1 (the
// Michaelis-Menten equation written R = Vmax − Km·R/C; the two-level method attributed to
// Ludden TM et al., Clin Pharmacol Ther 1977;21:287-293 — citation from memory, unverified).
// Hand-worked for 300 mg/day -> 8 mg/L and 400 mg/day -> 20 mg/L (phenytoin itself, F = 1):
// Km = 100/(37.5 − 20) = 5.714286 mg/L, Vmax = 300 + 5.714286·37.5 = 514.2857 mg/day.
#[test]
fn phenytoin_two_levels_give_vmax_and_km_by_the_published_algebra() {
    let s = saturable_of("phenytoin_two_levels.toml");
    let (method, vmax, km) = s.report.algebraic;
    assert_eq!(method.name(), "two-levels");
    near(km, 5.714286, 5e-7, "Km");
    near(vmax, 514.2857, 5e-5, "Vmax");
    assert_eq!(s.report.algebra_rows, vec![1, 2]);
    // Two parameters, two levels: the record fit passes through both.
    let f = s.report.record.unwrap();
    assert!(f.km_fitted && f.rms_log < 1e-6, "{f:?}");
    assert_eq!(s.report.method.name(), "dose-record");
    // The plan's steady state is the record fit's Css = Km·R/(Vmax − R), R = 350 mg/day.
    let plan = s.report.plan.unwrap();
    let want = f.kinetics.km_mg_l * 350.0 / (f.kinetics.vmax_mg_per_day - 350.0);
    near(plan.level_ss_mg_l.unwrap(), want, 1e-9, "plan Css");
}

// Sheiner-Tozer: C/(0.2·albumin + 0.1) (Ann Pharmacother 2016;50(4):311-325, PMID
// 26825643): 6 mg/L at 3.0 g/dL -> 6/0.7 = 8.571429 mg/L. Phenytoin sodium 300 mg/day by
// mouth reaches the circulation as 300·0.92·0.86 = 237.36 mg/day; with the population Km of
// 5.7 mg/L (Grasela TH et al., Clin Pharmacokinet 1983;8(4):355-364) Vmax = R·(Km + C)/C =
// 237.36·14.271429/8.571429 = 395.2044 mg/day.
#[test]
fn phenytoin_one_level_with_low_albumin() {
    let s = saturable_of("phenytoin_one_level_albumin.toml");
    let a = s.report.adjusted.unwrap();
    near(a.adjusted_mg_l, 8.571429, 5e-7, "adjusted");
    near(s.report.decision.decision_mg_l, 8.571429, 5e-7, "deciding");
    near(
        s.report.decision.rate_mg_per_day,
        237.36,
        1e-9,
        "daily rate",
    );
    let (method, vmax, km) = s.report.algebraic;
    assert_eq!(method.name(), "one-level-population-km");
    near(km, 5.7, 0.0, "Km");
    near(vmax, 395.2044, 5e-5, "Vmax");
    // The plan's 400 mg/day is 100 mg above the current 300 at 8.6 mg/L, where common
    // practice allows 50 (the profile's increase steps); the low albumin wants a free level.
    assert!(has(&s, "large-dose-step") && has(&s, "binding-uncertain"));
    assert_eq!(s.report.max_increase_mg_per_day, Some(50.0));
}

// A free level decides over the total of the same sample: 1.4 mg/L over the free fraction
// 0.1 (common practice) = 14 mg/L. The total, 9 mg/L at albumin 2.5 g/dL in renal failure,
// adjusts to 9/(0.1·2.5 + 0.1) = 25.714 mg/L (the renal-failure form, [MedscapePHT] in the
// profile) and is shown beside it.
#[test]
fn phenytoin_free_level_decides_and_the_adjusted_total_is_shown() {
    let s = saturable_of("phenytoin_free_level.toml");
    assert_eq!(s.report.decision.row, 2);
    near(s.report.decision.decision_mg_l, 14.0, 1e-12, "deciding");
    assert_eq!(s.report.free, Some((2, 1.4)));
    let a = s.report.adjusted.unwrap();
    near(a.adjusted_mg_l, 25.714286, 5e-7, "adjusted, renal form");
    assert!(!has(&s, "binding-uncertain"));
    // The threshold time is the exact integral of the fall from the fall's start.
    let th = s.report.threshold.unwrap();
    assert_eq!(th.below_mg_l, 10.0);
    assert!(th.level_at_procedure_mg_l.unwrap() < 10.0);
}
