//! Regimen design: suggestions re-simulated by superposition, the loading dose, the
//! proportional fallback without V, and the suggestions in the report JSON.

use ebb::core::case::Targets;
use ebb::core::casefile::CaseFile;
use ebb::core::json;
use ebb::core::model::{Disposition, Route};
use ebb::core::regimen::{self, LoadingBasis, RegimenOptions, MAX_SUGGESTIONS};
use ebb::core::report;
use proptest::prelude::*;
use proptest::test_runner::FileFailurePersistence;

/// One dose's level `s` hours after it starts, written here apart from the crate's model:
/// bolus F·D/V·e^(-ks); infusion R0/(kV)(1-e^(-ks)) while running, then decaying.
fn one_dose(d: f64, route: Route, k: f64, v: f64, s: f64) -> f64 {
    if s <= 0.0 {
        return 0.0;
    }
    match route {
        Route::Infusion { hours } => {
            let r0 = d / hours;
            let run = s.min(hours);
            r0 / (k * v) * (1.0 - (-k * run).exp()) * (-k * (s - run)).exp()
        }
        Route::Bolus => d / v * (-k * s).exp(),
        Route::Oral {
            f,
            absorption: None,
        } => f * d / v * (-k * s).exp(),
        Route::Oral {
            f,
            absorption: Some(a),
        } => {
            // The Bateman equation as printed, away from ka = k.
            let u = s - a.lag_h;
            if u <= 0.0 {
                return 0.0;
            }
            let ka = a.ka_per_h;
            f * d * ka / (v * (ka - k)) * ((-k * u).exp() - (-ka * u).exp())
        }
    }
}

/// Sum of `n` doses every `tau` hours from time 0.
fn course(d: f64, route: Route, tau: f64, n: usize, k: f64, v: f64, t: f64) -> f64 {
    (0..n)
        .map(|i| one_dose(d, route, k, v, t - i as f64 * tau))
        .sum()
}

/// Peak, trough and AUC24 over the 20th interval of a 20-dose course.
fn twentieth(d: f64, route: Route, tau: f64, k: f64, v: f64) -> (f64, f64, f64) {
    let start = 19.0 * tau;
    // Just after a bolus (a level at the dose's own time is pre-dose), or at the infusion end.
    let peak = course(
        d,
        route,
        tau,
        20,
        k,
        v,
        start + route.infusion_h().max(1e-12),
    );
    // Just before the 21st dose (not given): the 20 doses only.
    let trough = course(d, route, tau, 20, k, v, 20.0 * tau);
    // Simpson's rule over the interval, split at the end of the infusion (a kink).
    let simpson = |a: f64, b: f64| {
        let n = 400;
        let h = (b - a) / n as f64;
        let f = |x: f64| course(d, route, tau, 20, k, v, x);
        let mut s = f(a + 1e-12) + f(b);
        for i in 1..n {
            s += f(a + i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
        }
        s * h / 3.0
    };
    let t_end = start + route.infusion_h();
    let auc = simpson(start, t_end.max(start + 1e-9)) + simpson(t_end, 20.0 * tau);
    (peak, trough, auc * 24.0 / tau)
}

fn check_meets(s: &regimen::Suggestion, t: &Targets, k: f64, v: f64) {
    let (peak, trough, auc) = twentieth(s.dose_mg, s.route, s.interval_h, k, v);
    // 20 doses reach steady state to within e^(-20·k·tau) (< 1e-6 here); allow that.
    let tol = 1e-6;
    if let Some([lo, hi]) = t.peak {
        assert!(
            peak >= lo * (1.0 - tol) && peak <= hi * (1.0 + tol),
            "peak {peak} {s:?}"
        );
    }
    if let Some(m) = t.trough_max {
        assert!(trough <= m * (1.0 + tol), "trough {trough} {s:?}");
    }
    if let Some([lo, hi]) = t.auc24 {
        assert!(
            auc >= lo * (1.0 - tol) && auc <= hi * (1.0 + tol),
            "auc {auc} {s:?}"
        );
    }
    // The suggestion's own figures agree with the simulation.
    assert!((peak / s.steady.peak_mg_l - 1.0).abs() < 1e-6);
    assert!((trough / s.steady.trough_mg_l - 1.0).abs() < 1e-6);
    assert!((auc / s.steady.auc24_mg_h_l - 1.0).abs() < 1e-6);
}

#[test]
fn aminoglycoside_style_targets_are_met_over_twenty_doses() {
    // Conventional gentamicin targets: peak 5-10, trough < 2 mg/L ([UKMi-Gent][MedscapeGent],
    // drug-facts.md); k and V near the Sawchuk-Zaske example (k 0.27566 /h, V 18.29 L).
    let t = Targets {
        peak: Some([5.0, 10.0]),
        trough_max: Some(2.0),
        auc24: None,
    };
    let (k, v) = (0.27566, 18.29);
    let route = Route::Infusion { hours: 0.5 };
    let s = regimen::suggest(
        &Disposition::One { k, v },
        route,
        &t,
        &RegimenOptions::default(),
        Some(8.0),
    );
    assert!(!s.is_empty() && s.len() <= MAX_SUGGESTIONS);
    // Ranking (docs/methods-regimen.md): closest to the middle, scores equal to two decimals
    // tie, then the shorter interval.
    for w in s.windows(2) {
        let (a, b) = ((w[0].score * 100.0).round(), (w[1].score * 100.0).round());
        assert!(a < b || (a == b && w[0].interval_h < w[1].interval_h));
    }
    for x in &s {
        assert_eq!(x.dose_mg % 10.0, 0.0, "10 mg steps");
        check_meets(x, &t, k, v);
    }
}

#[test]
fn auc_targets_are_met_over_twenty_doses() {
    // Vancomycin AUC24 400-600 mg·h/L ([Rybak20], drug-facts.md); k and V near the
    // linear-up/log-down example there (k 0.096452 /h, CL 4.059 L/h -> V 42.08 L).
    let t = Targets {
        peak: None,
        trough_max: Some(20.0),
        auc24: Some([400.0, 600.0]),
    };
    let (k, v) = (0.15, 42.08);
    let opts = RegimenOptions {
        infusion_h: vec![1.0, 2.0],
        ..RegimenOptions::default()
    };
    let s = regimen::suggest(
        &Disposition::One { k, v },
        Route::Infusion { hours: 1.0 },
        &t,
        &opts,
        Some(12.0),
    );
    assert!(!s.is_empty());
    for x in &s {
        check_meets(x, &t, k, v);
        // The middle of 400-600 within one dose step: |AUC - 500| <= 10 mg × AUC per mg.
        let per_mg = x.steady.auc24_mg_h_l / x.dose_mg;
        assert!((x.steady.auc24_mg_h_l - 500.0).abs() <= 10.0 * per_mg + 1e-9);
    }
}

#[test]
fn targets_no_regimen_can_meet_give_none() {
    // A peak of 30 with a trough below 0.1 at k = 0.05 /h cannot be had at these intervals.
    let t = Targets {
        peak: Some([29.0, 30.0]),
        trough_max: Some(0.1),
        auc24: None,
    };
    let s = regimen::suggest(
        &Disposition::One { k: 0.05, v: 20.0 },
        Route::Bolus,
        &t,
        &RegimenOptions::default(),
        None,
    );
    assert!(s.is_empty());
}

proptest! {
    // Failures are kept in proptest-regressions/ at the package root, beside the others.
    #![proptest_config(ProptestConfig {
        failure_persistence: Some(Box::new(FileFailurePersistence::Direct(
            "proptest-regressions/regimen_design.txt",
        ))),
        ..ProptestConfig::default()
    })]

    #[test]
    fn every_suggestion_meets_its_targets_when_simulated(
        k in 0.12f64..0.8,
        v in 8.0f64..80.0,
        lo in 2.0f64..30.0,
        width in 1.2f64..3.0,
        trough_frac in 0.05f64..0.8,
        bolus in any::<bool>(),
    ) {
        let t = Targets { peak: Some([lo, lo * width]), trough_max: Some(lo * trough_frac), auc24: None };
        let route = if bolus { Route::Bolus } else { Route::Infusion { hours: 0.5 } };
        for s in regimen::suggest(&Disposition::One { k, v }, route, &t, &RegimenOptions::default(), None) {
            check_meets(&s, &t, k, v);
        }
    }
}

#[test]
fn loading_dose_reaches_the_target_peak_within_rounding() {
    let (k, v, step) = (0.2, 25.0, 10.0);
    for route in [
        Route::Bolus,
        Route::Infusion { hours: 0.5 },
        Route::Infusion { hours: 2.0 },
    ] {
        for target in [4.0, 8.0, 25.0] {
            let l = regimen::loading_dose(
                &Disposition::One { k, v },
                route,
                target,
                step,
                LoadingBasis::PeakTarget,
                0.0,
            )
            .unwrap();
            let peak = one_dose(l.dose_mg, route, k, v, route.infusion_h().max(1e-12));
            let per_mg = one_dose(1.0, route, k, v, route.infusion_h().max(1e-12));
            assert!(
                (peak - target).abs() <= step / 2.0 * per_mg + 1e-9,
                "{route:?} {target}"
            );
            assert!((peak - l.peak_mg_l).abs() < 1e-9);
        }
    }
}

const CASE_WITH_V: &str = r#"
[drug]
name = "invented"
level_unit = "mg/L"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 120.0
route = "infusion"
infusion_h = 0.5
[[level]]
time = 2027-03-02T09:30:00
value = 5.0
[[level]]
time = 2027-03-02T15:00:00
value = 1.2
[plan]
dose_mg = 120.0
interval_h = 8.0
route = "infusion"
infusion_h = 0.5
start = 2027-03-05T08:00:00
[targets]
peak = [5.0, 10.0]
trough_max = 2.0
"#;

#[test]
fn report_json_carries_suggestions_and_a_loading_dose() {
    let case = CaseFile::parse(CASE_WITH_V).unwrap().validate().unwrap();
    let r = report::build(&case).unwrap();
    let j: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    let s = j["suggestions"].as_array().unwrap();
    assert!(!s.is_empty() && s.len() <= 5);
    for x in s {
        for f in [
            "dose_mg",
            "interval_h",
            "infusion_h",
            "peak_ss",
            "trough_ss",
            "auc24_ss",
        ] {
            assert!(x[f].is_f64(), "{f}");
        }
        let peak = x["peak_ss"].as_f64().unwrap();
        assert!((5.0..=10.0).contains(&peak));
        assert!(x["trough_ss"].as_f64().unwrap() <= 2.0);
    }
    // The plan starts three days after the only dose, with no drug on board: the loading
    // dose aims at the middle of the peak range, 7.5 mg/L.
    let ld = j["loading_dose_mg"].as_f64().unwrap();
    let l = r.advice.loading.as_ref().unwrap();
    assert_eq!(ld, l.dose_mg);
    assert_eq!(l.target_peak, 7.5);
    assert!(j["proportional"].is_null());
    // With the plan due 8 h after the dose the drug is on board: no loading dose, and why.
    let soon = CASE_WITH_V.replace("start = 2027-03-05T08:00:00\n", "");
    let case = CaseFile::parse(&soon).unwrap().validate().unwrap();
    let r = report::build(&case).unwrap();
    assert!(r.advice.loading.is_none());
    assert!(r
        .warnings
        .iter()
        .any(|w| w.starts_with("no loading dose: the drug is on board")));
}

#[test]
fn without_amounts_the_adjustment_is_proportional() {
    let text = CASE_WITH_V.replace("amount_mg = 120.0\n", "");
    let case = CaseFile::parse(&text).unwrap().validate().unwrap();
    let r = report::build(&case).unwrap();
    let j: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    assert!(j["loading_dose_mg"].is_null());
    assert_eq!(j["suggestions"].as_array().unwrap().len(), 0);
    let q = &j["proportional"];
    // The fitted line through 5.0 at 1.5 h and 1.2 at 7 h after the dose: its value at the
    // end of the infusion (0.5 h) is the measured peak.
    let k = (5.0f64 / 1.2).ln() / 5.5;
    let peak = 5.0 * (k * 1.0).exp();
    assert!((q["measured"].as_f64().unwrap() - peak).abs() < 1e-9);
    assert_eq!(q["target"].as_f64().unwrap(), 7.5);
    assert!((q["factor"].as_f64().unwrap() - 7.5 / peak).abs() < 1e-12);
    assert_eq!(q["interval_h"].as_f64().unwrap(), 8.0);
    assert!(q["new_dose_mg"].is_null(), "the dose given is unknown");
    // The trough 8 h after the dose start, scaled by the factor.
    let trough = 1.2 * (-k * 1.0).exp() * 7.5 / peak;
    assert!((q["trough_after"].as_f64().unwrap() - trough).abs() < 1e-9);
    assert!(r.warnings.iter().any(|w| w.contains("proportional")));
}
