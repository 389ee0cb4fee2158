//! Contract v1's "Details that are easy to get wrong", one test (or more) per rule, on small
//! invented cases written in the test. Expected figures come from hand formulas.

use std::f64::consts::LN_2;

use ebb::core::casefile::CaseFile;
use ebb::core::json;
use ebb::core::report::{self, Report};
use serde_json::Value;

const DRUG: &str = "[drug]\nlevel_unit = \"mg/L\"\n";

fn dose(time: &str, amount: Option<f64>, route: &str) -> String {
    let mut s = format!("[[dose]]\ntime = {time}\n{route}\n");
    if let Some(a) = amount {
        s += &format!("amount_mg = {a:?}\n");
    }
    s
}

fn level(time: &str, value: f64, used: bool) -> String {
    let mut s = format!("[[level]]\ntime = {time}\nvalue = {value:?}\n");
    if !used {
        s += "use = false\n";
    }
    s
}

const BOLUS: &str = "route = \"bolus\"";

fn build(text: &str) -> Result<(Report, Value), String> {
    let case = CaseFile::parse(text)
        .and_then(|f| f.validate())
        .map_err(|e| e.to_string())?;
    let r = report::build(&case).map_err(|e| e.to_string())?;
    let v = serde_json::from_str(&json::to_json(&r)).unwrap();
    Ok((r, v))
}

fn ok(text: &str) -> (Report, Value) {
    build(text).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

#[track_caller]
fn same(got: f64, want: f64) {
    assert!(
        ((got - want) / want).abs() < 1e-9,
        "got {got}, hand formula {want}"
    );
}

// "Rows in messages count from 1 in file order: dose 2, level 3."
#[test]
fn rows_count_from_one_in_file_order() {
    // The third level in the file is the earliest; messages still call it level 3.
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T16:00:00", 4.0, true)
        + &level("2027-03-02T12:00:00", 6.0, true)
        + &level("2027-03-02T09:00:00", -1.2, true);
    let e = build(&text).unwrap_err();
    assert_eq!(e, "level 3: value: must be above 0, got -1.2");
    // Doses too: the second dose in the file, given at the same time as the first.
    let text = String::from(DRUG)
        + &dose("2027-03-02T20:00:00", Some(100.0), BOLUS)
        + &dose("2027-03-02T08:00:00", Some(100.0), "route = \"iv\"");
    assert!(build(&text).unwrap_err().starts_with("dose 2: route:"));
}

// "amount_mg may be missing ...; then there is no V: volume_l, clearance_l_per_h, peak,
// trough, AUC and meets_targets are null" — also when only one dose lacks it.
#[test]
fn one_dose_without_an_amount_means_no_volume() {
    let text = String::from(DRUG)
        + &dose("2027-03-01T20:00:00", None, BOLUS)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + "[plan]\ndose_mg = 100.0\ninterval_h = 12.0\nroute = \"bolus\"\n"
        + "[targets]\ntrough_max = 5.0\n";
    let (_, v) = ok(&text);
    assert!(v["fit"]["volume_l"].is_null());
    assert!(v["fit"]["clearance_l_per_h"].is_null());
    assert!(v["plan"]["peak_ss"].is_null());
    assert!(v["plan"]["meets_targets"].is_null());
    same(
        v["plan"]["accumulation_factor"].as_f64().unwrap(),
        1.0 / (1.0 - 0.5f64.powi(3)),
    );
}

// "Windows: a window runs from the end of the infusion (inclusive) to the next dose time
// (inclusive)."
#[test]
fn a_level_at_the_exact_end_of_an_infusion_is_in_its_window() {
    let inf = "route = \"infusion\"\ninfusion_h = 1.0";
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(500.0), inf)
        + &level("2027-03-02T09:00:00", 16.0, true)
        + &level("2027-03-02T13:00:00", 8.0, true)
        + &level("2027-03-02T17:00:00", 4.0, true);
    let (r, v) = ok(&text);
    assert_eq!(v["fit"]["levels_used"], 3);
    assert_eq!(r.fit.level_rows, vec![1, 2, 3]);
    same(v["fit"]["k_per_h"].as_f64().unwrap(), LN_2 / 4.0);
}

// "A level drawn exactly at a dose time is a pre-dose level for that dose" and it closes
// the window before (inclusive), so two levels there make that window fittable.
#[test]
fn a_level_at_a_dose_time_closes_the_window_before() {
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &dose("2027-03-02T20:00:00", None, BOLUS)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + &level("2027-03-02T20:00:00", 1.0, true);
    let (r, v) = ok(&text);
    assert_eq!(r.fit.window_dose_row, 1);
    same(v["fit"]["k_per_h"].as_f64().unwrap(), 4.0f64.ln() / 6.0);
}

// "Levels drawn during an infusion or before the first dose are in no window."
#[test]
fn levels_during_an_infusion_are_left_out_and_named() {
    let inf = "route = \"infusion\"\ninfusion_h = 2.0";
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(500.0), inf)
        + &level("2027-03-02T09:00:00", 30.0, true)
        + &level("2027-03-02T12:00:00", 8.0, true)
        + &level("2027-03-02T16:00:00", 4.0, true);
    let (r, v) = ok(&text);
    assert_eq!(v["fit"]["levels_used"], 2);
    assert_eq!(r.fit.level_rows, vec![2, 3]);
    assert!(
        r.warnings.iter().any(|w| w.starts_with("level 1 ")),
        "{:?}",
        r.warnings
    );
    // Before the first dose: an error naming the level.
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(500.0), BOLUS)
        + &level("2027-03-02T07:59:00", 30.0, true);
    assert!(build(&text)
        .unwrap_err()
        .starts_with("level 1: drawn at 2027-03-02T07:59, before the first dose"));
}

// "levels_used counts the levels in the fit (n), not every level with use = true."
#[test]
fn levels_used_counts_only_the_fitted_levels() {
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 9.0, true)
        + &level("2027-03-02T14:00:00", 5.0, true)
        + &dose("2027-03-02T20:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T22:00:00", 10.0, true)
        + &level("2027-03-03T02:00:00", 5.0, true)
        + &level("2027-03-03T06:00:00", 2.5, true);
    let (r, v) = ok(&text);
    assert_eq!(v["fit"]["levels_used"], 3);
    assert_eq!(r.fit.level_rows, vec![3, 4, 5]);
}

// Volume: "the latest one if several" pre-dose levels, and only those drawn after the
// previous dose's window began (the end of its infusion).
#[test]
fn the_pre_dose_level_is_the_latest_after_the_previous_window_began() {
    let inf = "route = \"infusion\"\ninfusion_h = 1.0";
    // Dose 1 at 08:00 (to 09:00), dose 2 at 20:00 (to 21:00). A level during dose 1's
    // infusion does not count; of 12:00 and 19:00, 19:00 is the latest.
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(500.0), inf)
        + &dose("2027-03-02T20:00:00", Some(500.0), inf)
        + &level("2027-03-02T08:30:00", 5.0, false)
        + &level("2027-03-02T12:00:00", 9.0, false)
        + &level("2027-03-02T19:00:00", 3.0, false)
        + &level("2027-03-02T22:00:00", 12.0, true)
        + &level("2027-03-03T04:00:00", 6.0, true);
    let (r, v) = ok(&text);
    assert_eq!(r.fit.pre_dose_row, Some(3));
    let k = LN_2 / 6.0;
    let c_pre = 3.0 * (-k).exp(); // 19:00 decayed to 20:00
    let c_end = 12.0 * k.exp(); // the fitted line at 21:00
    let vol = 500.0 * (1.0 - (-k).exp()) / (k * (c_end - c_pre * (-k).exp()));
    same(v["fit"]["volume_l"].as_f64().unwrap(), vol);
    // With only the level during dose 1's infusion, there is no pre-dose level: the dose
    // record gives V.
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(500.0), inf)
        + &dose("2027-03-02T20:00:00", Some(500.0), inf)
        + &level("2027-03-02T08:30:00", 5.0, false)
        + &level("2027-03-02T22:00:00", 12.0, true)
        + &level("2027-03-03T04:00:00", 6.0, true);
    let (r, v) = ok(&text);
    assert_eq!(r.fit.pre_dose_row, None);
    assert_eq!(v["fit"]["volume_method"], "dose record");
    // Dose record with V = 1 at the first fitted level (22:00): dose 1 ended 13 h before,
    // dose 2 ended 1 h before.
    let unit = |after_end: f64| 500.0 / k * (1.0 - (-k).exp()) * (-k * after_end).exp();
    same(
        v["fit"]["volume_l"].as_f64().unwrap(),
        (unit(13.0) + unit(1.0)) / 12.0,
    );
}

// "Two-point fits: r_squared, k_ci95_per_h and half_life_ci95_h are null." k =
// ln(C1/C2)/(t2 - t1).
#[test]
fn two_point_fits_have_no_interval() {
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T09:10:00", 7.3, true)
        + &level("2027-03-02T17:45:00", 2.2, true)
        + "[threshold]\nbelow = 1.0\n";
    let (_, v) = ok(&text);
    let f = &v["fit"];
    same(
        f["k_per_h"].as_f64().unwrap(),
        (7.3f64 / 2.2).ln() / (8.0 + 35.0 / 60.0),
    );
    assert!(f["r_squared"].is_null() && f["k_ci95_per_h"].is_null());
    assert!(f["half_life_ci95_h"].is_null());
    assert!(v["threshold"]["reached_at_ci95"].is_null());
}

// "reached_at_ci95 keeps the same t0 and C0 as reached_at; only k changes. ... 'The last
// level' in t0 is the last level on record, used or not."
#[test]
fn t0_is_the_last_level_on_record_even_if_unused() {
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + &level("2027-03-02T20:00:00", 3.0, false)
        + "[threshold]\nbelow = 1.0\n";
    let (r, v) = ok(&text);
    let t = r.threshold.as_ref().unwrap();
    assert_eq!(t.t0.iso_minute(), "2027-03-02T20:00");
    // The model at 20:00 is 4.0 halved 1.5 times (t1/2 = 4 h), not the unused 3.0.
    same(t.c0, 4.0 * 0.5f64.powf(1.5));
    // sqrt(2) falls to 1.0 in half a half-life: 2 h.
    assert_eq!(v["threshold"]["reached_at"], "2027-03-02T22:00");
}

// "Round these times up to the minute (later is the safe side)."
#[test]
fn threshold_times_round_up_not_to_the_nearest_minute() {
    // t1/2 = 4 h from 8.0 at 10:00 and 4.0 at 14:00; choose the threshold so the fall from
    // 4.0 takes 1 h 0.2 min: 15:00:12 must read 15:01.
    let hours = 1.0 + 0.2 / 60.0;
    let below = 4.0 * 0.5f64.powf(hours / 4.0);
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + &format!("[threshold]\nbelow = {below:?}\n");
    let (_, v) = ok(&text);
    assert_eq!(v["threshold"]["reached_at"], "2027-03-02T15:01");
}

// "Oral: the pre-dose volume is V = F·D/(C0 - Cpre). [plan] may carry bioavailability
// (default: the profile's, else 1.0). bioavailability on a non-oral dose is an error, and
// so is a plan whose infusion_h exceeds interval_h."
#[test]
fn oral_plan_bioavailability_defaults_to_one() {
    let oral = "route = \"oral\"";
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), oral)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + "[plan]\ndose_mg = 100.0\ninterval_h = 4.0\nroute = \"oral\"\n";
    let (_, v) = ok(&text);
    // Dose record with F = 1: V = 100 e^(-2k) / 8; peak = D/(V (1 - 1/2)).
    let k = LN_2 / 4.0;
    let vol = 100.0 * (-2.0 * k).exp() / 8.0;
    same(v["fit"]["volume_l"].as_f64().unwrap(), vol);
    same(v["plan"]["peak_ss"].as_f64().unwrap(), 100.0 / vol * 2.0);
    // A plan bolus with a bioavailability is refused.
    let bad = text.replace(
        "interval_h = 4.0\nroute = \"oral\"\n",
        "interval_h = 4.0\nroute = \"bolus\"\nbioavailability = 0.5\n",
    );
    let e = build(&bad).unwrap_err();
    assert!(e.starts_with("plan: bioavailability"), "{e}");
}

#[test]
fn a_plan_infusion_as_long_as_its_interval_is_allowed() {
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + "[plan]\ndose_mg = 100.0\ninterval_h = 4.0\nroute = \"infusion\"\ninfusion_h = 4.0\n";
    let (_, v) = ok(&text);
    // A continuous infusion: the peak equals the trough.
    let p = &v["plan"];
    same(
        p["peak_ss"].as_f64().unwrap(),
        p["trough_ss"].as_f64().unwrap(),
    );
}

// "Targets and threshold.below are in level_unit ...; bounds are inclusive."
#[test]
fn target_bounds_are_inclusive() {
    let base = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + "[plan]\ndose_mg = 100.0\ninterval_h = 6.0\nroute = \"bolus\"\n";
    let (_, v) = ok(&base);
    let p = &v["plan"];
    let (peak, trough, auc) = (
        p["peak_ss"].as_f64().unwrap(),
        p["trough_ss"].as_f64().unwrap(),
        p["auc24_ss"].as_f64().unwrap(),
    );
    let with = |peak_lo: f64, trough_max: f64, auc_hi: f64| {
        let t = format!(
            "[targets]\npeak = [{peak_lo:?}, {:?}]\ntrough_max = {trough_max:?}\nauc24 = [1.0, {auc_hi:?}]\n",
            peak * 2.0
        );
        ok(&(base.clone() + &t)).1["plan"]["meets_targets"].clone()
    };
    // Each figure exactly on its bound meets it.
    assert_eq!(with(peak, trough, auc), true);
    // One step past any bound does not.
    let up = |x: f64| f64::from_bits(x.to_bits() + 1);
    let down = |x: f64| f64::from_bits(x.to_bits() - 1);
    assert_eq!(with(up(peak), trough, auc), false);
    assert_eq!(with(peak, down(trough), auc), false);
    assert_eq!(with(peak, trough, down(auc)), false);
}

// "latest_plan_dose ... 'before the procedure' is strict."
#[test]
fn a_plan_dose_at_the_procedure_time_is_not_before_it() {
    // One bolus at 00:00; the plan (infusions every 1.65 h from 01:39) puts its third dose
    // at 04:57, the procedure itself. It adds nothing by then, but it is not before it.
    let text = String::from(DRUG)
        + &dose("2027-03-02T00:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T01:00:00", 4.0, true)
        + &level("2027-03-02T01:30:00", 3.0, true)
        + "[plan]\ndose_mg = 10.0\ninterval_h = 1.65\nroute = \"infusion\"\ninfusion_h = 0.5\n"
        + "[threshold]\nbelow = 5.0\nprocedure = 2027-03-02T04:57:00\n";
    let (_, v) = ok(&text);
    assert_eq!(v["threshold"]["latest_plan_dose"], "2027-03-02T03:18");
}

// "With a procedure but no plan, level_at_procedure is the model value then."
#[test]
fn a_procedure_without_a_plan_gives_the_model_value() {
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true)
        + "[threshold]\nbelow = 1.0\nprocedure = 2027-03-03T02:00:00\n";
    let (_, v) = ok(&text);
    let t = &v["threshold"];
    assert!(t["latest_plan_dose"].is_null());
    same(
        t["level_at_procedure"].as_f64().unwrap(),
        4.0 * 0.5f64.powi(3),
    );
}

// "Offsets: ... a mix is an error. ... Local times use wall-clock arithmetic."
#[test]
fn local_times_use_the_wall_clock_across_a_clock_change() {
    // In much of Europe clocks went forward on 28 March 2027 at 01:00 UTC; local times
    // ignore that: 00:00 to 06:00 is 6 h.
    let text = String::from(DRUG)
        + &dose("2027-03-27T22:00:00", Some(100.0), BOLUS)
        + &level("2027-03-28T00:00:00", 8.0, true)
        + &level("2027-03-28T06:00:00", 4.0, true);
    let (_, v) = ok(&text);
    same(v["fit"]["half_life_h"].as_f64().unwrap(), 6.0);
    assert_eq!(v["washout"][0]["at"], "2027-03-28T04:00");
}

#[test]
fn mixed_local_and_offset_times_are_refused_wherever_they_are() {
    let base = String::from(DRUG)
        + &dose("2027-03-02T08:00:00+01:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00+01:00", 8.0, true)
        + &level("2027-03-02T14:00:00+01:00", 4.0, true);
    assert!(ok(&base).1["washout"][0]["at"]
        .as_str()
        .unwrap()
        .ends_with("+01:00"));
    let plan = "[plan]\ndose_mg = 100.0\ninterval_h = 6.0\nroute = \"bolus\"\nstart = 2027-03-02T20:00:00\n";
    let e = build(&(base.clone() + plan)).unwrap_err();
    assert!(e.contains("plan.start") && e.contains("throughout"), "{e}");
    let th = "[threshold]\nbelow = 1.0\nprocedure = 2027-03-03T08:00:00\n";
    let e = build(&(base + th)).unwrap_err();
    assert!(
        e.contains("threshold.procedure") && e.contains("throughout"),
        "{e}"
    );
}

// "A missing schema means 1. creatinine_mg_dl and creatinine_umol_l together are an
// error."
#[test]
fn creatinine_in_one_unit_is_fine_in_both_is_refused() {
    let base = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T10:00:00", 8.0, true)
        + &level("2027-03-02T14:00:00", 4.0, true);
    assert!(build(&format!("[patient]\ncreatinine_umol_l = 88.4\n{base}")).is_ok());
    assert!(build(&format!("[patient]\ncreatinine_mg_dl = 1.0\n{base}")).is_ok());
    let e = build(&format!(
        "[patient]\ncreatinine_mg_dl = 1.0\ncreatinine_umol_l = 88.4\n{base}"
    ))
    .unwrap_err();
    assert!(e.starts_with("patient.creatinine"), "{e}");
}

// The plan starts at the last recorded dose + interval_h unless the case says otherwise.
#[test]
fn the_plan_starts_one_interval_after_the_last_dose_by_default() {
    let text = String::from(DRUG)
        + &dose("2027-03-02T08:00:00", Some(100.0), BOLUS)
        + &dose("2027-03-02T20:00:00", Some(100.0), BOLUS)
        + &level("2027-03-02T22:00:00", 8.0, true)
        + &level("2027-03-03T02:00:00", 4.0, true)
        + "[plan]\ndose_mg = 100.0\ninterval_h = 12.0\nroute = \"bolus\"\n";
    let (r, _) = ok(&text);
    assert_eq!(
        r.plan.as_ref().unwrap().start.iso_minute(),
        "2027-03-03T08:00"
    );
}
