//! The dose-history fit through case files: agreement with the log-linear fit where both
//! apply, the method choice, `[fit] method`, and the report's new fields. Self-consistency
//! checks: the levels are computed in the test from a known k and V.

use ebb::core::case::Case;
use ebb::core::casefile::CaseFile;
use ebb::core::fit::{self, Method};
use ebb::core::history;
use ebb::core::model::{self, Administration, Route};
use ebb::core::{json, report, uncertainty};

const K: f64 = 0.17;
const V: f64 = 23.0;

/// Gentamicin-like doses every 8 h from 08:00 (hour 0 on the axis), 0.5 h infusions.
fn doses() -> Vec<Administration> {
    (0..4)
        .map(|i| Administration {
            t: 8.0 * i as f64,
            amount_mg: [120.0, 120.0, 140.0, 140.0][i],
            route: Route::Infusion { hours: 0.5 },
        })
        .collect()
}

/// A case file with the doses above and levels at the given hours (exact model values unless
/// `values` is given), plus any extra TOML.
fn case_text(hours: &[f64], values: Option<&[f64]>, extra: &str) -> String {
    let stamp = |h: f64| {
        let minutes = (h * 60.0).round() as i64;
        let t = chrono::NaiveDate::from_ymd_opt(2027, 3, 2)
            .unwrap()
            .and_hms_opt(8, 0, 0)
            .unwrap()
            + chrono::Duration::minutes(minutes);
        t.format("%Y-%m-%dT%H:%M:%S").to_string()
    };
    let mut s = String::from("schema = 1\n[drug]\nlevel_unit = \"mg/L\"\n");
    for d in doses() {
        s += &format!(
            "[[dose]]\ntime = {}\namount_mg = {:?}\nroute = \"infusion\"\ninfusion_h = 0.5\n",
            stamp(d.t),
            d.amount_mg
        );
    }
    for (i, &h) in hours.iter().enumerate() {
        let v = match values {
            Some(v) => v[i],
            None => model::superpose(&doses(), K, V, h),
        };
        s += &format!("[[level]]\ntime = {}\nvalue = {v:?}\n", stamp(h));
    }
    s + extra
}

fn case(text: &str) -> Case {
    CaseFile::parse(text)
        .and_then(|f| f.validate())
        .unwrap_or_else(|e| panic!("{e}"))
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

#[test]
fn agrees_with_log_linear_on_exact_levels() {
    // Three levels after dose 4 (hour 24): log-linear applies; with a pre-dose level the
    // volume is Sawchuk-Zaske's, without it the dose record's. Both must equal the joint fit.
    for hours in [&[26.0, 29.0, 31.5][..], &[23.5, 26.0, 29.0, 31.5][..]] {
        let c = case(&case_text(hours, None, ""));
        let ll = fit::fit_log_linear(&c).unwrap();
        assert_eq!(ll.method, Method::LogLinear);
        let dh = history::fit(&c).unwrap();
        assert_eq!(dh.method, Method::DoseHistory);
        let (vl, vd) = (ll.volume_l.unwrap(), dh.volume_l.unwrap());
        assert!(rel(ll.k, dh.k) < 1e-6, "k {} vs {}", ll.k, dh.k);
        assert!(rel(ll.half_life_h, dh.half_life_h) < 1e-6);
        assert!(rel(vl, vd) < 1e-6, "V {vl} vs {vd}");
        assert!(rel(ll.clearance_l_per_h.unwrap(), dh.clearance_l_per_h.unwrap()) < 1e-6);
        assert!(rel(dh.k, K) < 1e-6 && rel(vd, V) < 1e-6);
    }
}

#[test]
fn unset_method_keeps_log_linear_where_it_applies() {
    let c = case(&case_text(&[23.5, 26.0, 29.0, 31.5], None, ""));
    assert_eq!(fit::fit(&c).unwrap(), fit::fit_log_linear(&c).unwrap());
}

#[test]
fn unset_method_uses_the_dose_history_when_no_interval_holds_two() {
    // One level after each of doses 1, 2 and 4, and one during accumulation.
    let c = case(&case_text(&[2.0, 13.0, 27.0], None, ""));
    let f = fit::fit(&c).unwrap();
    assert_eq!(f.method, Method::DoseHistory);
    assert!(rel(f.k, K) < 1e-6 && rel(f.volume_l.unwrap(), V) < 1e-6);
    let r = report::build(&c).unwrap();
    assert_eq!(r.fit.method, "dose-history");
    assert_eq!(r.fit.volume_method, Some("dose-history"));
}

#[test]
fn asked_method_is_used_and_a_bad_one_is_named() {
    let text = case_text(
        &[26.0, 29.0, 31.5],
        None,
        "[fit]\nmethod = \"dose-history\"\n",
    );
    assert_eq!(fit::fit(&case(&text)).unwrap().method, Method::DoseHistory);
    let bad = case_text(&[26.0, 29.0], None, "[fit]\nmethod = \"loglinear\"\n");
    let e = CaseFile::parse(&bad)
        .and_then(|f| f.validate())
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("fit.method:"), "{e}");
    assert!(e.contains("\"loglinear\""), "{e}");
    // Asking for a Bayesian estimate without priors names the field too.
    let no_prior = case_text(&[26.0], None, "[fit]\nmethod = \"bayesian\"\n");
    let e = report::build(&case(&no_prior)).unwrap_err().to_string();
    assert!(e.starts_with("fit.method:"), "{e}");
    // Case -> TOML -> case keeps the method.
    let f = CaseFile::parse(&text).unwrap();
    let again = CaseFile::parse(&f.to_toml().unwrap()).unwrap();
    assert_eq!(again.fit, f.fit);
}

#[test]
fn one_level_without_priors_is_a_clear_error() {
    let e = report::build(&case(&case_text(&[27.0], None, "")))
        .unwrap_err()
        .to_string();
    assert!(e.contains("level 1"), "{e}");
}

/// Noisy levels spread across the record (two after dose 1, so the dose-history fit is asked
/// for), with a plan and a threshold.
fn noisy_case() -> Case {
    let hours = [2.0, 7.9, 13.0, 20.0, 27.0, 30.0];
    let noise = [1.06, 0.95, 1.03, 0.92, 1.08, 0.97];
    let values: Vec<f64> = hours
        .iter()
        .zip(noise)
        .map(|(&h, e)| model::superpose(&doses(), K, V, h) * e)
        .collect();
    case(&case_text(
        &hours,
        Some(&values),
        "[plan]\ndose_mg = 140.0\ninterval_h = 8.0\nroute = \"infusion\"\ninfusion_h = 0.5\n\
         [threshold]\nbelow = 0.5\n[fit]\nmethod = \"dose-history\"\n",
    ))
}

#[test]
fn report_carries_the_intervals_into_every_projection() {
    let c = noisy_case();
    let f = fit::fit(&c).unwrap();
    assert_eq!(f.method, Method::DoseHistory);
    let r = report::build(&c).unwrap();
    let inside = |r: Option<[f64; 2]>, x: f64| {
        let [a, b] = r.unwrap();
        assert!(a < x && x < b, "{a} < {x} < {b}");
    };
    inside(r.fit.k_ci95_per_h, r.fit.k_per_h);
    inside(r.fit.half_life_ci95_h, r.fit.half_life_h);
    inside(r.fit.volume_ci95_l, r.fit.volume_l.unwrap());
    inside(
        r.fit.clearance_ci95_l_per_h,
        r.fit.clearance_l_per_h.unwrap(),
    );
    let p = r.plan.as_ref().unwrap();
    inside(p.peak_ss_ci95, p.peak_ss.unwrap());
    inside(p.trough_ss_ci95, p.trough_ss.unwrap());
    inside(p.auc24_ss_ci95, p.auc24_ss.unwrap());
    let t = r.threshold.as_ref().unwrap();
    let [early, late] = t.reached_at_ci95.unwrap();
    assert!(early.axis_time() < t.reached_at.axis_time());
    assert!(t.reached_at.axis_time() < late.axis_time());
    // The JSON names them as docs/methods-history.md says.
    let j: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    assert_eq!(j["fit"]["method"], "dose-history");
    assert_eq!(j["fit"]["volume_method"], "dose-history");
    assert_eq!(j["fit"]["r_squared"], serde_json::Value::Null);
    let v = j["fit"]["v_ci95_l"].as_array().unwrap();
    assert_eq!(v[0].as_f64().unwrap(), r.fit.volume_ci95_l.unwrap()[0]);
    assert!(j["fit"]["clearance_ci95_l_per_h"].is_array());
    assert!(j["plan"]["peak_ss_ci95"].is_array());
    assert!(j["plan"]["trough_ss_ci95"].is_array());
    assert!(j["plan"]["auc24_ss_ci95"].is_array());
    assert_eq!(j["fit"]["population"], serde_json::Value::Null);
}

#[test]
fn log_linear_reports_null_for_the_new_fields() {
    let c = case(&case_text(&[23.5, 26.0, 29.0, 31.5], None, ""));
    let j: serde_json::Value =
        serde_json::from_str(&json::to_json(&report::build(&c).unwrap())).unwrap();
    assert_eq!(j["fit"]["method"], "log-linear");
    assert_eq!(j["fit"]["v_ci95_l"], serde_json::Value::Null);
    assert_eq!(j["fit"]["clearance_ci95_l_per_h"], serde_json::Value::Null);
}

#[test]
fn threshold_range_is_where_the_band_crosses() {
    let c = noisy_case();
    let f = fit::fit(&c).unwrap();
    let t0 = 24.5 + 6.0; // the last level, after the end of the last dose
    let below = 0.5;
    let [early, late] = uncertainty::threshold_range(&c, &f, t0, below).unwrap();
    let at = |t: f64| uncertainty::band(&c, &f, &[t])[0];
    let (e, l) = (at(early), at(late));
    assert!((e.band.unwrap()[0] / below - 1.0).abs() < 1e-9, "{e:?}");
    assert!((l.band.unwrap()[1] / below - 1.0).abs() < 1e-9, "{l:?}");
    // The middle crosses in between, where the plain projection says.
    let mid = t0 + (f.volume_l.map(|_| at(t0).mg_l).unwrap() / below).ln() / f.k;
    assert!(early < mid && mid < late);
    assert!((at(mid).mg_l / below - 1.0).abs() < 1e-9);
}

#[test]
fn band_holds_the_curve_and_widens_away_from_the_levels() {
    let c = noisy_case();
    let f = fit::fit(&c).unwrap();
    let pts = uncertainty::band(&c, &f, &[-1.0, 5.0, 30.0, 80.0, 200.0]);
    assert_eq!(pts[0].mg_l, 0.0);
    assert!(pts[0].band.is_none());
    for p in &pts[1..] {
        let [lo, hi] = p.band.unwrap();
        assert!(lo < p.mg_l && p.mg_l < hi, "{p:?}");
    }
    let width = |p: &uncertainty::BandPoint| (p.band.unwrap()[1] / p.band.unwrap()[0]).ln();
    assert!(width(&pts[4]) > width(&pts[3]) && width(&pts[3]) > width(&pts[2]));
}
