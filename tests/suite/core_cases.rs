//! Every valid fixture in tests/cases/valid against figures worked out here by hand formulas
//! (contract v1), and every invalid fixture against a key phrase of its message.
//!
//! The numbers in the fixtures are invented; the expected figures are computed in each test
//! from the contract's equations written out afresh, not by calling the code under test.

use std::f64::consts::LN_2;
use std::path::{Path, PathBuf};

use chrono::{Duration, NaiveDateTime};
use ebb::core::case::Case;
use ebb::core::casefile;
use ebb::core::json;
use ebb::core::report::{self, Report};
use serde_json::Value;

fn fixture(dir: &str, name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/cases")
        .join(dir)
        .join(name)
}

/// The validated case, its report and the report's JSON.
fn load(name: &str) -> (Case, Report, Value) {
    let case = casefile::load(&fixture("valid", name)).unwrap_or_else(|e| panic!("{e}"));
    let r = report::build(&case).unwrap_or_else(|e| panic!("{name}: {e}"));
    let v: Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    (case, r, v)
}

fn text_of(case: &Case, r: &Report) -> String {
    let mut out = Vec::new();
    report::write_text(&mut out, case, r).unwrap();
    String::from_utf8(out).unwrap()
}

/// Relative agreement to 1e-9 (hand formula against the report).
#[track_caller]
fn same(got: f64, want: f64) {
    assert!(
        ((got - want) / want).abs() < 1e-9,
        "got {got}, hand formula {want}"
    );
}

#[track_caller]
fn num(v: &Value) -> f64 {
    v.as_f64()
        .unwrap_or_else(|| panic!("expected a number, got {v}"))
}

fn clock(s: &str) -> NaiveDateTime {
    NaiveDateTime::parse_from_str(s, "%Y-%m-%dT%H:%M").unwrap()
}

/// `from` plus `hours`, rounded up to the whole minute, as ISO 8601 to the minute.
fn plus_up(from: &str, hours: f64) -> String {
    let secs = hours * 3600.0;
    // A hundredth of a second of slack for float noise in whole-minute results.
    let minutes = ((secs - 0.01) / 60.0).ceil() as i64;
    (clock(from) + Duration::minutes(minutes))
        .format("%Y-%m-%dT%H:%M")
        .to_string()
}

/// Least squares of y on x written out: (slope, intercept, r², SE of the slope).
fn least_squares(xs: &[f64], ys: &[f64]) -> (f64, f64, f64, f64) {
    let n = xs.len() as f64;
    let (sx, sy): (f64, f64) = (xs.iter().sum(), ys.iter().sum());
    let sxx: f64 = xs.iter().map(|x| x * x).sum::<f64>() - sx * sx / n;
    let sxy: f64 = xs.iter().zip(ys).map(|(x, y)| x * y).sum::<f64>() - sx * sy / n;
    let syy: f64 = ys.iter().map(|y| y * y).sum::<f64>() - sy * sy / n;
    let b = sxy / sxx;
    let a = (sy - b * sx) / n;
    let rss = syy - b * sxy;
    let r2 = sxy * sxy / (sxx * syy);
    let se = (rss / (n - 2.0) / sxx).sqrt();
    (b, a, r2, se)
}

/// Student t 0.975 quantile with 2 degrees of freedom in closed form: the CDF is
/// 1/2 + t/(2·sqrt(2 + t²)), so t = a·sqrt(2/(1 - a²)) with a = 2·0.975 - 1 = 0.95
/// (4.303 in any t table, e.g. NIST/SEMATECH e-Handbook of Statistical Methods, 1.4.7.2).
fn t975_df2() -> f64 {
    let a: f64 = 0.95;
    a * (2.0 / (1.0 - a * a)).sqrt()
}

#[test]
fn two_point_infusion_with_dose_record_volume() {
    let (case, r, v) = load("two_point_infusion.toml");
    let k = (20.0f64 / 10.0).ln() / 8.0;
    let f = &v["fit"];
    assert_eq!(f["method"], "two-point");
    assert_eq!(f["levels_used"], 2);
    same(num(&f["k_per_h"]), k);
    same(num(&f["half_life_h"]), 8.0);
    for key in ["r_squared", "k_ci95_per_h", "half_life_ci95_h"] {
        assert!(f[key].is_null(), "{key} must be null for two points");
    }
    // Dose record: the 1000 mg 1 h infusion at 08:00, with V = 1, at the first level (11:00).
    let r0 = 1000.0;
    let s = r0 / k * (1.0 - (-k).exp()) * (-2.0 * k).exp();
    let vol = s / 20.0;
    same(num(&f["volume_l"]), vol);
    assert_eq!(f["volume_method"], "dose record");
    same(num(&f["clearance_l_per_h"]), k * vol);
    // Plan 1000 mg over 1 h every 12 h.
    let p = &v["plan"];
    let acc = 1.0 / (1.0 - (-12.0 * k).exp());
    let peak = r0 * (1.0 - (-k).exp()) / (k * vol) * acc;
    same(num(&p["accumulation_factor"]), acc);
    same(num(&p["peak_ss"]), peak);
    same(num(&p["trough_ss"]), peak * (-11.0 * k).exp());
    same(num(&p["auc24_ss"]), 1000.0 / (k * vol) * 24.0 / 12.0);
    same(num(&p["time_to_90pct_ss_h"]), -(0.1f64.ln()) / k);
    same(num(&p["time_to_95pct_ss_h"]), -(0.05f64.ln()) / k);
    same(num(&p["time_to_97pct_ss_h"]), -(0.03f64.ln()) / k);
    assert!(p["meets_targets"].is_null(), "no targets: null");
    // Threshold 5.0 from t0 = 19:00 (the last level, after the end of the infusion) where
    // the model is 10.0: one half-life more, past midnight.
    let t = &v["threshold"];
    assert_eq!(t["reached_at"], "2027-03-03T03:00");
    assert!(t["reached_at_ci95"].is_null());
    assert_eq!(
        r.threshold.as_ref().unwrap().t0.iso_minute(),
        "2027-03-02T19:00"
    );
    same(r.threshold.as_ref().unwrap().c0, 10.0);
    // Washout from the end of the infusion (09:00), one row per 8 h half-life.
    let w = v["washout"].as_array().unwrap();
    assert_eq!(w.len(), 5);
    let c_end = r0 / (k * vol) * (1.0 - (-k).exp());
    for (i, row) in w.iter().enumerate() {
        let n = i as i32 + 1;
        same(num(&row["level"]), c_end * 0.5f64.powi(n));
        same(num(&row["fraction_remaining"]), 0.5f64.powi(n));
    }
    assert_eq!(w[0]["at"], "2027-03-02T17:00");
    assert_eq!(w[1]["at"], "2027-03-03T01:00");
    assert_eq!(w[4]["at"], "2027-03-04T01:00");
    let text = text_of(&case, &r);
    assert!(text.contains("in 8 h 0 min"), "{text}");
}

#[test]
fn log_linear_bolus_with_interval() {
    let (_, _, v) = load("log_linear_bolus.toml");
    // Hours after the 08:00 dose, and the levels.
    let xs = [2.0, 6.0, 12.0, 18.0];
    let ys = [30.1f64, 22.0, 14.2, 9.1].map(f64::ln);
    let (b, a, r2, se) = least_squares(&xs, &ys);
    let k = -b;
    let f = &v["fit"];
    assert_eq!(f["method"], "log-linear");
    assert_eq!(f["levels_used"], 4);
    same(num(&f["k_per_h"]), k);
    same(num(&f["half_life_h"]), LN_2 / k);
    same(num(&f["r_squared"]), r2);
    let half = t975_df2() * se;
    let (lo, hi) = (k - half, k + half);
    same(num(&f["k_ci95_per_h"][0]), lo);
    same(num(&f["k_ci95_per_h"][1]), hi);
    same(num(&f["half_life_ci95_h"][0]), LN_2 / hi);
    same(num(&f["half_life_ci95_h"][1]), LN_2 / lo);
    // Dose record, one bolus: V = D / C(dose time) on the fitted line.
    let vol = 500.0 / a.exp();
    same(num(&f["volume_l"]), vol);
    same(num(&f["clearance_l_per_h"]), k * vol);
    // Threshold 2.0 from t0 = the last level (next day 02:00, 18 h after the dose).
    let c0 = (a - 18.0 * k).exp();
    let t = &v["threshold"];
    assert_eq!(
        t["reached_at"],
        plus_up("2027-03-03T02:00", (c0 / 2.0).ln() / k)
    );
    assert_eq!(
        t["reached_at_ci95"][0],
        plus_up("2027-03-03T02:00", (c0 / 2.0).ln() / hi)
    );
    assert_eq!(
        t["reached_at_ci95"][1],
        plus_up("2027-03-03T02:00", (c0 / 2.0).ln() / lo)
    );
    assert!(v["plan"].is_null());
}

#[test]
fn pre_dose_level_with_use_false_gives_the_volume() {
    let (_, r, v) = load("pre_dose_bolus.toml");
    // Levels after the 20:00 bolus: 20.0 at 21:00 and 10.0 at 03:00 (6 h apart).
    let k = LN_2 / 6.0;
    let f = &v["fit"];
    same(num(&f["k_per_h"]), k);
    // The pre-dose level (3.0 at 19:30, use = false) decayed to the dose time, and the
    // fitted line at the dose time: V = D / (C0 - Cpre).
    let c_pre = 3.0 * (-0.5 * k).exp();
    let c0 = 20.0 * k.exp();
    let vol = 400.0 / (c0 - c_pre);
    same(num(&f["volume_l"]), vol);
    assert_eq!(f["volume_method"], "pre-dose level");
    assert_eq!(r.fit.pre_dose_row, Some(2));
    // Rows count from 1 in file order; the fit lists them in time order.
    assert_eq!(r.fit.level_rows, vec![3, 1]);
    assert_eq!(f["levels_used"], 2);
    // The washout starts at the last dose (20:00) and includes what is left of the first.
    let w = &v["washout"][0];
    assert_eq!(w["at"], "2027-03-03T02:00");
    same(
        num(&w["level"]),
        400.0 / vol * ((-18.0 * k).exp() + (-6.0 * k).exp()),
    );
}

#[test]
fn oral_doses_use_f_and_warn_about_absorption() {
    let (_, r, v) = load("oral_pre_dose.toml");
    let k = LN_2 / 12.0;
    let c0 = 6.0 * (4.0 * k).exp(); // fitted line at the 09:00 dose
    let c_pre = 1.2 * (-0.5 * k).exp(); // 08:30 level decayed to 09:00
    let vol = 0.8 * 250.0 / (c0 - c_pre);
    let f = &v["fit"];
    same(num(&f["k_per_h"]), k);
    same(num(&f["volume_l"]), vol);
    assert_eq!(f["volume_method"], "pre-dose level");
    let p = &v["plan"];
    let acc = 1.0 / (1.0 - (-24.0 * k).exp());
    same(acc, 4.0 / 3.0);
    let peak = 0.8 * 250.0 / vol * acc;
    same(num(&p["peak_ss"]), peak);
    same(num(&p["trough_ss"]), peak * (-24.0 * k).exp());
    same(num(&p["auc24_ss"]), 0.8 * 250.0 / (k * vol));
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("oral") && w.contains("absorption")),
        "{:?}",
        r.warnings
    );
}

#[test]
fn ng_per_ml_levels_convert_at_the_edges() {
    let (_, _, v) = load("ng_per_ml.toml");
    let k = 1.6f64.ln() / 24.0;
    // 1.6 ng/mL = 0.0016 mg/L at 16:00, 8 h after the 0.5 mg bolus.
    let vol = 0.5 * (-8.0 * k).exp() / 0.0016;
    same(num(&v["fit"]["volume_l"]), vol);
    same(num(&v["fit"]["k_per_h"]), k);
    // Threshold 0.5 ng/mL from 1.0 ng/mL at the last level: one half-life.
    assert_eq!(v["threshold"]["below"], 0.5);
    assert_eq!(
        v["threshold"]["reached_at"],
        plus_up("2027-03-03T16:00", LN_2 / k)
    );
    // Washout levels in ng/mL: the bolus's 0.5 mg / V in mg/L, x 1000, halved per row.
    let w = &v["washout"];
    same(num(&w[0]["level"]), 0.5 / vol * 1000.0 * 0.5);
    same(num(&w[3]["level"]), 0.5 / vol * 1000.0 * 0.0625);
}

#[test]
fn mmol_per_l_levels_use_the_molar_mass() {
    let (_, _, v) = load("mmol_per_l.toml");
    let m = 6.94;
    let k = 1.5f64.ln() / 12.0;
    let vol = 300.0 * (-4.0 * k).exp() / (1.2 * m);
    same(num(&v["fit"]["volume_l"]), vol);
    let p = &v["plan"];
    let acc = 1.0 / (1.0 - (-24.0 * k).exp());
    same(num(&p["accumulation_factor"]), 1.8);
    let peak_mmol = 300.0 / vol * acc / m;
    same(num(&p["peak_ss"]), peak_mmol);
    let trough_mmol = peak_mmol * (-24.0 * k).exp();
    same(num(&p["trough_ss"]), trough_mmol);
    same(num(&p["auc24_ss"]), 300.0 / (k * vol) / m);
    // trough_max 1.0 mmol/L; the trough is about 1.099 mmol/L, so not met.
    assert!(trough_mmol > 1.0);
    assert_eq!(p["meets_targets"], false);
    assert_eq!(
        v["threshold"]["reached_at"],
        plus_up("2027-03-03T00:00", (0.8f64 / 0.4).ln() / k)
    );
}

#[test]
fn threshold_met_already_gives_t0_for_every_time() {
    let (case, r, v) = load("threshold_met_already.toml");
    let xs = [2.0, 6.0, 10.0];
    let ys = [4.1f64, 1.9, 1.0].map(f64::ln);
    let (b, a, _, _) = least_squares(&xs, &ys);
    // The model at t0 = 18:00 (the last level): the fitted line there.
    let c0 = (a + 10.0 * b).exp();
    assert!(c0 <= 1.5);
    same(r.threshold.as_ref().unwrap().c0, c0);
    let t = &v["threshold"];
    assert_eq!(t["reached_at"], "2027-03-02T18:00");
    assert_eq!(t["reached_at_ci95"][0], "2027-03-02T18:00");
    assert_eq!(t["reached_at_ci95"][1], "2027-03-02T18:00");
    assert!(text_of(&case, &r).contains("already at or below"));
}

/// The shared latest-plan-dose patient: 100 mg bolus at 00:00, 8.0 at 02:00, 4.0 at 06:00.
fn plan_patient() -> (f64, f64) {
    let k = LN_2 / 4.0;
    let vol = 100.0 * (-2.0 * k).exp() / 8.0;
    (k, vol)
}

#[test]
fn latest_plan_dose_found() {
    let (case, r, v) = load("latest_plan_dose_found.toml");
    let (k, vol) = plan_patient();
    // At the procedure (36 h after the recorded dose) with plan doses at 12:00, 18:00,
    // 00:00 and 06:00 (24, 18, 12 and 6 h before it); 12:00 next day is the procedure
    // itself and so not before it.
    let recorded = 100.0 / vol * (-36.0 * k).exp();
    let plan = |h: f64| 50.0 / vol * (-h * k).exp();
    let with = [
        recorded + plan(24.0),
        recorded + plan(24.0) + plan(18.0),
        recorded + plan(24.0) + plan(18.0) + plan(12.0),
        recorded + plan(24.0) + plan(18.0) + plan(12.0) + plan(6.0),
    ];
    assert!(with[2] <= 2.0 && with[3] > 2.0, "{with:?}");
    let t = &v["threshold"];
    assert_eq!(t["latest_plan_dose"], "2027-03-03T00:00");
    same(num(&t["level_at_procedure"]), with[2]);
    assert!(text_of(&case, &r).contains("the last plan dose that may be given"));
}

#[test]
fn latest_plan_dose_not_found_when_holding_every_dose_is_enough() {
    let (case, r, v) = load("latest_plan_dose_hold_all.toml");
    let (k, vol) = plan_patient();
    let none = 100.0 / vol * (-15.0 * k).exp();
    let first = none + 50.0 / vol * (-3.0 * k).exp();
    assert!(none <= 1.0 && first > 1.0);
    let t = &v["threshold"];
    assert!(t["latest_plan_dose"].is_null());
    same(num(&t["level_at_procedure"]), none);
    assert!(text_of(&case, &r).contains("hold every plan dose"));
}

#[test]
fn latest_plan_dose_not_found_when_holding_is_not_enough() {
    let (case, r, v) = load("latest_plan_dose_not_enough.toml");
    let (k, vol) = plan_patient();
    let none = 100.0 / vol * (-15.0 * k).exp();
    assert!(none > 0.5);
    let t = &v["threshold"];
    assert!(t["latest_plan_dose"].is_null());
    same(num(&t["level_at_procedure"]), none);
    assert!(text_of(&case, &r).contains("NOT below even if every plan dose is held"));
}

#[test]
fn washout_goes_past_five_half_lives_to_the_threshold() {
    let (_, _, v) = load("washout_past_five_half_lives.toml");
    let (_, vol) = plan_patient();
    let w = v["washout"].as_array().unwrap();
    // 100/V x 0.5^n <= 0.1 first at n = 7.
    let level = |n: i32| 100.0 / vol * 0.5f64.powi(n);
    assert!(level(6) > 0.1 && level(7) <= 0.1);
    assert_eq!(w.len(), 7);
    for (i, row) in w.iter().enumerate() {
        let n = i as i32 + 1;
        assert_eq!(row["half_lives"], n);
        same(num(&row["level"]), level(n));
        // Every 4 h from the bolus at 00:00.
        assert_eq!(row["at"], plus_up("2027-03-02T00:00", 4.0 * n as f64));
    }
}

#[test]
fn washout_stops_at_ten_rows() {
    let (_, _, v) = load("washout_ten_rows.toml");
    let w = v["washout"].as_array().unwrap();
    assert_eq!(w.len(), 10);
    assert_eq!(w[9]["half_lives"], 10);
    assert_eq!(w[9]["fraction_remaining"], 0.5f64.powi(10));
}

/// Hand figures of the targets fixtures' plan: (peak, trough, AUC24).
fn targets_plan() -> (f64, f64, f64) {
    let k = LN_2 / 8.0;
    let r0 = 1000.0;
    let vol = r0 / k * (1.0 - (-k).exp()) * (-2.0 * k).exp() / 20.0;
    let peak = r0 * (1.0 - (-k).exp()) / (k * vol) / (1.0 - (-12.0 * k).exp());
    (peak, peak * (-11.0 * k).exp(), 1000.0 / (k * vol) * 2.0)
}

#[test]
fn targets_met() {
    let (case, r, v) = load("targets_met.toml");
    let (peak, trough, auc) = targets_plan();
    // peak [20, 40], trough <= 15, AUC24 [400, 800].
    assert!((20.0..=40.0).contains(&peak) && trough <= 15.0 && (400.0..=800.0).contains(&auc));
    assert_eq!(v["plan"]["meets_targets"], true);
    assert!(text_of(&case, &r).contains("every target met"));
}

#[test]
fn targets_unmet() {
    let (case, r, v) = load("targets_unmet.toml");
    let (_, trough, _) = targets_plan();
    assert!(trough > 5.0);
    assert_eq!(v["plan"]["meets_targets"], false);
    assert!(text_of(&case, &r).contains("NOT MET"));
}

#[test]
fn times_cross_midnight_a_leap_day_and_a_month_end() {
    let (_, _, v) = load("midnight_month_end.toml");
    let k = LN_2 / 8.0;
    same(num(&v["fit"]["k_per_h"]), k);
    // The infusion runs 23:30 to 00:30; the first level is 1 h after its end.
    let r0 = 600.0;
    let vol = r0 / k * (1.0 - (-k).exp()) * (-k).exp() / 12.0;
    same(num(&v["fit"]["volume_l"]), vol);
    // From 6.0 at 09:30 on the leap day to 1.0: log2(6) half-lives, into 1 March.
    let reached = plus_up("2028-02-29T09:30", 6.0f64.ln() / k);
    assert_eq!(reached, "2028-03-01T06:11");
    assert_eq!(v["threshold"]["reached_at"], reached);
    let w = &v["washout"];
    assert_eq!(w[0]["at"], "2028-02-29T08:30");
    assert_eq!(w[1]["at"], "2028-02-29T16:30");
    assert_eq!(w[2]["at"], "2028-03-01T00:30");
}

#[test]
fn offsets_follow_the_instants_and_carry_the_latest_offset() {
    let (_, _, v) = load("offsets.toml");
    let k = LN_2 / 6.0;
    same(num(&v["fit"]["k_per_h"]), k);
    // The dose at 21:00 UTC and the first level at 02:00 UTC are 5 h apart (6 h on the
    // wall clocks, which changed offset in between).
    let vol = 200.0 * (-5.0 * k).exp() / 8.0;
    same(num(&v["fit"]["volume_l"]), vol);
    let t = &v["threshold"];
    // 4.0 at 08:00 UTC falls to 1.0 two half-lives later: 20:00 UTC = 22:00+02:00.
    assert_eq!(t["reached_at"], "2027-03-28T22:00+02:00");
    // The procedure at 18:00 UTC is 10 h after the last level.
    same(num(&t["level_at_procedure"]), 4.0 * (-10.0 * k).exp());
    // Washout from the dose (21:00 UTC): the first row at 03:00 UTC, shown at +02:00.
    assert_eq!(v["washout"][0]["at"], "2027-03-28T05:00+02:00");
}

#[test]
fn no_amounts_means_no_volume_and_the_fitted_line() {
    let (_, r, v) = load("no_amounts.toml");
    let f = &v["fit"];
    same(num(&f["k_per_h"]), LN_2 / 6.0);
    for key in ["volume_l", "volume_method", "clearance_l_per_h"] {
        assert!(f[key].is_null(), "{key}");
    }
    let p = &v["plan"];
    for key in ["peak_ss", "trough_ss", "auc24_ss", "meets_targets"] {
        assert!(p[key].is_null(), "{key}");
    }
    same(num(&p["time_to_90pct_ss_h"]), -(0.1f64.ln()) * 6.0 / LN_2);
    // t0 is the last fitted level (16:00, 8.0), not the later unused one.
    let t = &v["threshold"];
    assert_eq!(t["reached_at"], "2027-03-03T04:00");
    assert!(t["latest_plan_dose"].is_null());
    // The procedure is 20 h after the last fitted level.
    same(num(&t["level_at_procedure"]), 8.0 * 0.5f64.powf(20.0 / 6.0));
    // Washout from the last fitted level.
    let w = &v["washout"];
    assert_eq!(w[0]["at"], "2027-03-02T22:00");
    same(num(&w[0]["level"]), 4.0);
    same(num(&w[4]["level"]), 0.25);
    assert!(
        r.warnings.iter().any(|w| w.contains("amount_mg")),
        "{:?}",
        r.warnings
    );
}

#[test]
fn wide_interval_keeps_k_range_but_drops_half_life_and_time_ranges() {
    let (_, r, v) = load("wide_interval.toml");
    let xs = [1.0, 2.0, 3.0];
    let ys = [10.0f64, 3.0, 8.0].map(f64::ln);
    let (b, _, r2, se) = least_squares(&xs, &ys);
    let k = -b;
    // One degree of freedom: t(0.975, 1) = tan(0.475·pi) = 12.706 (Cauchy quantile; any
    // t table, e.g. NIST/SEMATECH e-Handbook 1.4.7.2).
    let t1 = (0.475 * std::f64::consts::PI).tan();
    let f = &v["fit"];
    same(num(&f["k_per_h"]), k);
    same(num(&f["r_squared"]), r2);
    same(num(&f["k_ci95_per_h"][0]), k - t1 * se);
    same(num(&f["k_ci95_per_h"][1]), k + t1 * se);
    assert!(num(&f["k_ci95_per_h"][0]) <= 0.0);
    assert!(f["half_life_ci95_h"].is_null());
    assert!(v["threshold"]["reached_at_ci95"].is_null());
    assert!(v["threshold"]["reached_at"].is_string());
    assert!(
        r.warnings.iter().any(|w| w.contains("95 % interval")),
        "{:?}",
        r.warnings
    );
}

#[test]
fn windows_pre_dose_at_dose_time_and_levels_during_infusion() {
    let (_, r, v) = load("windows.toml");
    // The latest window with two used levels is the second dose's (23:00 and 05:00).
    let k = LN_2 / 6.0;
    same(num(&v["fit"]["k_per_h"]), k);
    assert_eq!(r.fit.level_rows, vec![4, 5]);
    assert_eq!(r.fit.window_dose_row, 2);
    // Level 2, drawn at the second dose's own time, is its pre-dose level: no decay.
    assert_eq!(r.fit.pre_dose_row, Some(2));
    let (r0, t_inf) = (500.0, 1.0);
    let c_end = 12.0 * (2.0 * k).exp(); // fitted line at 21:00, the end of the infusion
    let vol = r0 * (1.0 - (-k * t_inf).exp()) / (k * (c_end - 2.5 * (-k * t_inf).exp()));
    same(num(&v["fit"]["volume_l"]), vol);
    assert_eq!(v["fit"]["volume_method"], "pre-dose level");
    // Level 3 was drawn during the infusion: in no window, and said so.
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("level 3") && w.contains("infusion")),
        "{:?}",
        r.warnings
    );
}

/// A fixture for a saturable drug, or with a free level: it needs its drug profile.
fn names_a_strategy(name: &str) -> bool {
    let text = std::fs::read_to_string(fixture("valid", name)).unwrap();
    // A profile's strategy, or a Bayesian fit (its population model is in the profile).
    text.contains("\nstrategy = ") || text.contains("method = \"bayesian\"")
}

/// A valid fixture through the analysis with the built-in profiles: its case, report and JSON.
fn analysed(name: &str) -> (Case, Report, Value) {
    let file = casefile::read(&fixture("valid", name)).unwrap();
    let done = ebb::analysis::analyse(&file, &ebb::profiles::Catalog::built_in().unwrap())
        .finished()
        .unwrap_or_else(|e| panic!("{name}: {e}"));
    let v: Value = serde_json::from_str(&json::to_json(&done.report)).unwrap();
    (done.case, done.report, v)
}

#[test]
fn vancomycin_haemodialysis() {
    let (case, _, v) = analysed("vancomycin_haemodialysis.toml");
    // Two-point fit over levels 1 and 2 (26 and 18.4 mg/L at Mon 22:00 and Wed 07:30).
    let k = (26.0f64 / 18.4).ln() / 33.5;
    same(num(&v["fit"]["k_per_h"]), k);
    // Volume by the dose record at level 1: 1750 mg over 3 h from Mon 12:15, level 9.75 h
    // after the start; the fitted line passes through 26 mg/L there.
    let r0 = 1750.0 / 3.0;
    let vol = r0 / k * (1.0 - (-k * 3.0).exp()) * (-k * 6.75).exp() / 26.0;
    same(num(&v["fit"]["volume_l"]), vol);
    // The plan, 750 mg every 48 h: AUC24 = D/(k V) x 24/48. It removes no drug during a
    // session, which the report says.
    same(num(&v["plan"]["auc24_ss"]), 750.0 / (k * vol) * 0.5);
    assert_eq!(v["dialysis"]["modelled"], false);
    // Sessions on the axis: origin is session 1's start (Mon 08:00), the earliest time.
    let s: Vec<(f64, f64)> = case
        .dialysis_sessions
        .iter()
        .map(|s| (s.t, s.end()))
        .collect();
    assert_eq!(s, [(0.0, 4.0), (48.0, 52.0)]);
    assert_eq!(case.regimen.dialysis.pre_dialysis, Some([15.0, 20.0]));
    assert!(case.regimen.dialysis.dose_after_session);
}

#[test]
fn vancomycin_two_compartment() {
    let (_, _, v) = analysed("vancomycin_two_compartment.toml");
    let f = &v["fit"];
    assert_eq!(f["compartments"], 2);
    assert_eq!(f["model"], "goti-2018");
    let (cl, v1, v2, q) = (
        num(&f["clearance_l_per_h"]),
        num(&f["volume_l"]),
        num(&f["peripheral_volume_l"]),
        num(&f["intercompartmental_clearance_l_per_h"]),
    );
    // The macro-constants written out: α, β the roots of λ² − (k10 + k12 + k21)λ + k10·k21,
    // A = (α − k21)/(V1(α − β)), B = (k21 − β)/(V1(α − β)).
    let (k10, k12, k21) = (cl / v1, q / v1, q / v2);
    let sum = k10 + k12 + k21;
    let alpha = (sum + (sum * sum - 4.0 * k10 * k21).sqrt()) / 2.0;
    let beta = k10 * k21 / alpha;
    same(num(&f["k_per_h"]), beta);
    same(num(&f["distribution_half_life_h"]), LN_2 / alpha);
    let a = (alpha - k21) / (v1 * (alpha - beta));
    let b = (k21 - beta) / (v1 * (alpha - beta));
    // The plan, 1250 mg over 1.5 h every 12 h: each mode's steady-state infusion course,
    // R0·c/λ·(1 − e^(−λT))·e^(−λ(τ − T))/(1 − e^(−λτ)) at the trough, summed.
    let (r0, t, tau) = (1250.0 / 1.5, 1.5, 12.0);
    let mode = |c: f64, l: f64, s: f64| {
        r0 * c / l * (1.0 - (-l * t).exp()) * (-l * (s - t)).exp() / (1.0 - (-l * tau).exp())
    };
    same(
        num(&v["plan"]["trough_ss"]),
        mode(a, alpha, tau) + mode(b, beta, tau),
    );
    same(
        num(&v["plan"]["peak_ss"]),
        mode(a, alpha, t) + mode(b, beta, t),
    );
    // AUC24 = daily dose / CL.
    same(num(&v["plan"]["auc24_ss"]), 2500.0 / cl);
}

fn saturable(name: &str, dir: &str) -> bool {
    let text = std::fs::read_to_string(fixture(dir, name)).unwrap();
    text.contains("profile = \"phenytoin\"") || text.contains("free = true")
}

/// An invalid fixture that names a population model (`[fit] model`): its message needs the
/// profile's models.
fn names_a_model(name: &str) -> bool {
    let text = std::fs::read_to_string(fixture("invalid", name)).unwrap();
    text.contains("\nmodel = ")
}

#[test]
fn every_valid_fixture_builds_and_has_a_test_here() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases/valid");
    let source = include_str!("core_cases.rs").to_string() + include_str!("core_facts.rs");
    for entry in std::fs::read_dir(dir).unwrap() {
        let name = entry.unwrap().file_name().into_string().unwrap();
        if !name.ends_with(".toml") {
            continue;
        }
        // A saturable drug gets no first-order report: its fixtures run through the
        // analysis (tests in core_facts.rs and saturable_cli.rs).
        if saturable(&name, "valid") {
            let file = casefile::read(&fixture("valid", &name)).unwrap();
            let a = ebb::analysis::analyse(&file, &ebb::profiles::Catalog::built_in().unwrap());
            assert!(a.saturable.is_some(), "{name}: {:?}", a.stop);
        } else if names_a_strategy(&name) {
            // A profile's strategy needs the profile: through the analysis.
            analysed(&name);
        } else {
            load(&name);
        }
        assert!(
            source.contains(&format!("\"{name}\"")),
            "{name} has no test that loads it"
        );
    }
}

/// Every invalid fixture with the phrase its message must hold, read from its first line
/// (`# message: ...`). Each file holds one bad-input class.
fn invalid_fixtures() -> Vec<(String, String)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases/invalid");
    let mut out = Vec::new();
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        let text = std::fs::read_to_string(&path).unwrap();
        let phrase = text
            .lines()
            .next()
            .and_then(|l| l.strip_prefix("# message: "))
            .unwrap_or_else(|| panic!("{name} does not start with `# message: `"));
        out.push((name, phrase.to_string()));
    }
    out.sort();
    out
}

#[test]
fn every_invalid_fixture_fails_with_its_message() {
    let all = invalid_fixtures();
    // One file per class of issue 2's "Bad input" list, and a few neighbours.
    assert!(all.len() >= 20, "{} fixtures", all.len());
    for (name, phrase) in all {
        let result = if saturable(&name, "invalid") || names_a_model(&name) {
            // These need the drug profile: run the analysis as `ebb report` does.
            casefile::read(&fixture("invalid", &name)).and_then(|file| {
                let cat = ebb::profiles::Catalog::built_in().unwrap();
                ebb::analysis::analyse(&file, &cat).finished().map(|_| ())
            })
        } else {
            casefile::load(&fixture("invalid", &name))
                .and_then(|case| report::build(&case).map(|_| ()))
        };
        let message = match result {
            Ok(()) => panic!("{name} was accepted"),
            Err(e) => e.to_string(),
        };
        assert!(
            message.contains(&phrase),
            "{name}: {message:?} lacks {phrase:?}"
        );
        assert!(!message.contains('\n'), "{name}: more than one line");
    }
}

#[test]
fn a_missing_file_names_the_file() {
    let path = fixture("invalid", "no_such_case.toml");
    let e = casefile::load(&path).unwrap_err().to_string();
    assert!(
        e.contains("no_such_case.toml") && e.contains("cannot read"),
        "{e}"
    );
}

#[test]
fn a_missing_schema_means_one_and_another_is_refused() {
    let body = "[drug]\nlevel_unit = \"mg/L\"\n";
    assert!(casefile::CaseFile::parse(body).unwrap().validate().is_ok());
    let one = format!("schema = 1\n{body}");
    assert!(casefile::CaseFile::parse(&one).unwrap().validate().is_ok());
    let two = format!("schema = 2\n{body}");
    let e = casefile::CaseFile::parse(&two)
        .unwrap()
        .validate()
        .unwrap_err();
    assert!(e.to_string().starts_with("schema:"), "{e}");
}
