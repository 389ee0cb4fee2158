//! AUC24 by the linear-up/log-down trapezoid from two levels beside the k-and-V figure.

use ebb::core::casefile::CaseFile;
use ebb::core::report;

/// A bolus course of `n` doses of `d` mg every `tau` h from 2027-03-01 00:00, with levels
/// `levels` = (hours after the last dose, value) and a plan on the same interval.
fn bolus_case(d: f64, tau: f64, n: usize, levels: &[(f64, f64)]) -> String {
    let start = chrono::NaiveDate::from_ymd_opt(2027, 3, 1)
        .unwrap()
        .and_hms_opt(0, 0, 0)
        .unwrap();
    let at = |h: f64| {
        (start + chrono::Duration::seconds((h * 3600.0).round() as i64))
            .format("%Y-%m-%dT%H:%M:%S")
            .to_string()
    };
    let mut s = String::from("[drug]\nname = \"invented\"\nlevel_unit = \"mg/L\"\n");
    for i in 0..n {
        s += &format!(
            "[[dose]]\ntime = {}\namount_mg = {d:?}\nroute = \"bolus\"\n",
            at(i as f64 * tau)
        );
    }
    let last = (n - 1) as f64 * tau;
    for (h, c) in levels {
        s += &format!("[[level]]\ntime = {}\nvalue = {c:?}\n", at(last + h));
    }
    s += &format!("[plan]\ndose_mg = {d:?}\ninterval_h = {tau:?}\nroute = \"bolus\"\n");
    s
}

/// The model's level `h` hours after the last of `n` bolus doses (written here).
fn model(d: f64, tau: f64, n: usize, k: f64, v: f64, h: f64) -> f64 {
    (0..n)
        .map(|i| d / v * (-k * (h + (n - 1 - i) as f64 * tau)).exp())
        .sum()
}

#[test]
fn the_two_methods_agree_on_model_data_at_steady_state() {
    // Self-consistency: levels from the model itself after 30 doses (steady state to 1e-15).
    let (d, tau, n, k, v) = (1000.0, 12.0, 30, 0.1, 40.0);
    let lv: Vec<(f64, f64)> = [2.0, 10.0]
        .iter()
        .map(|&h| (h, model(d, tau, n, k, v, h)))
        .collect();
    let case = CaseFile::parse(&bolus_case(d, tau, n, &lv))
        .unwrap()
        .validate()
        .unwrap();
    let r = report::build(&case).unwrap();
    let a = r.advice.auc24.as_ref().unwrap();
    let kv = a.by_k_and_v.unwrap();
    assert!(
        (a.by_levels / kv - 1.0).abs() < 1e-6,
        "{} vs {kv}",
        a.by_levels
    );
    // Both equal dose / clearance scaled to 24 h.
    assert!((kv - d / (k * v) * 24.0 / tau).abs() / kv < 1e-6);
    assert_eq!(a.interval_h, 12.0);
    assert!(a.method.contains("linear-up/log-down"));
}

#[test]
fn on_scattered_data_they_differ_as_the_fit_predicts() {
    // Three equally spaced levels: the least-squares slope depends only on the end points, so
    // k stays true; raising the middle level by a factor e^δ lifts the fitted line by e^(δ/3),
    // lowers V (dose record) by that factor and raises the k-and-V AUC by e^(δ/3), while the
    // trapezoid through the true end points keeps the true AUC (self-consistency).
    let (d, tau, n, k, v) = (1000.0, 12.0, 30, 0.1, 40.0);
    let delta: f64 = 0.15;
    let lv: Vec<(f64, f64)> = [2.0, 6.0, 10.0]
        .iter()
        .map(|&h| {
            let c = model(d, tau, n, k, v, h);
            (h, if h == 6.0 { c * delta.exp() } else { c })
        })
        .collect();
    let case = CaseFile::parse(&bolus_case(d, tau, n, &lv))
        .unwrap()
        .validate()
        .unwrap();
    let r = report::build(&case).unwrap();
    let a = r.advice.auc24.as_ref().unwrap();
    let truth = d / (k * v) * 24.0 / tau;
    assert!((a.by_levels / truth - 1.0).abs() < 1e-6);
    let ratio = a.by_k_and_v.unwrap() / a.by_levels;
    assert!((ratio - (delta / 3.0).exp()).abs() < 1e-6, "{ratio}");
}

#[test]
fn published_vancomycin_example_through_a_case() {
    // drug-facts.md "AUC, linear-up / log-down" ([Chiou78], [Bebac-Trap]): 1000 mg over 1 h
    // every 12 h; 30 mg/L at 2 h and 12 mg/L at 11.5 h -> AUC24 492.42 mg·h/L.
    let text = r#"
[drug]
name = "vancomycin"
level_unit = "mg/L"
[[dose]]
time = 2027-03-01T08:00:00
amount_mg = 1000.0
route = "infusion"
infusion_h = 1.0
[[level]]
time = 2027-03-01T10:00:00
value = 30.0
[[level]]
time = 2027-03-01T19:30:00
value = 12.0
[plan]
dose_mg = 1000.0
interval_h = 12.0
route = "infusion"
infusion_h = 1.0
"#;
    let case = CaseFile::parse(text).unwrap().validate().unwrap();
    let r = report::build(&case).unwrap();
    let a = r.advice.auc24.as_ref().unwrap();
    assert!((a.by_levels - 492.42).abs() < 0.01, "{}", a.by_levels);
    let j: serde_json::Value = serde_json::from_str(&ebb::core::json::to_json(&r)).unwrap();
    assert!((j["auc24_methods"]["by_levels"].as_f64().unwrap() - 492.42).abs() < 0.01);
}

#[test]
fn the_steady_state_caveat_appears_only_before_steady_state() {
    // Model data (k 0.1 /h, V 20 L, 500 mg every 12 h), written with the test's own model.
    let (k, v, d, tau) = (0.1, 20.0, 500.0, 12.0);
    let caveat = |n: usize| {
        let levels = [
            (1.0, model(d, tau, n, k, v, 1.0)),
            (11.0, model(d, tau, n, k, v, 11.0)),
        ];
        let case = CaseFile::parse(&bolus_case(d, tau, n, &levels))
            .unwrap()
            .validate()
            .unwrap();
        let r = report::build(&case).unwrap();
        r.warnings.iter().any(|w| w.contains("not at steady state"))
    };
    // After the first dose the level before it (0) is far from the one 12 h later.
    assert!(caveat(1));
    // After 20 doses (24 half-lives) the interval starts and ends at the same level.
    assert!(!caveat(20));
}
