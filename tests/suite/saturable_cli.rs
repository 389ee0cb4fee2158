//! The binary on phenytoin (saturable elimination): text report, JSON, note, plot, and the
//! JSON's saturable keys documented.

use crate::common;
use serde_json::Value;

fn run(args: &[&str]) -> (String, String, Option<i32>) {
    let o = common::ebb().args(args).output().unwrap();
    (
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
        o.status.code(),
    )
}

fn json(name: &str) -> Value {
    let (out, err, code) = run(&["report", "--json", &format!("tests/cases/valid/{name}")]);
    assert_eq!(code, Some(0), "{err}");
    serde_json::from_str(&out).unwrap()
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

#[test]
fn the_json_of_a_saturable_drug_has_no_first_order_figure_and_every_saturable_key() {
    for name in [
        "phenytoin_two_levels.toml",
        "phenytoin_one_level_albumin.toml",
        "phenytoin_free_level.toml",
    ] {
        let v = json(name);
        assert!(v["fit"].is_null() && v["plan"].is_null() && v["threshold"].is_null());
        assert!(v["washout"].as_array().unwrap().is_empty());
        let s = &v["saturable"];
        for key in [
            "method",
            "vmax_mg_per_day",
            "km_mg_l",
            "volume_l",
            "adjusted_level",
            "free_level",
            "dose_for_target_mg_per_day",
            "level_at_plan_ss",
            "time_to_90pct_ss_h",
        ] {
            assert!(s.get(key).is_some(), "{name}: saturable.{key} missing");
        }
        // Every key of the saturable object is named in docs/case-file.md.
        let docs = std::fs::read_to_string(
            std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/case-file.md"),
        )
        .unwrap();
        for key in s.as_object().unwrap().keys() {
            assert!(docs.contains(&format!("\"{key}\"")), "{key} undocumented");
        }
        // The dose for the target is the dose whose steady state the JSON gives, by
        // Css = Km·R/(Vmax − R) with R = dose·salt factor·F (self-consistency).
        let r = num(&s["dose_for_target_mg_per_day"])
            * num(&s["salt_factor"])
            * num(&s["bioavailability"]);
        let (vmax, km) = (num(&s["vmax_mg_per_day"]), num(&s["km_mg_l"]));
        let css = km * r / (vmax - r);
        assert!(
            (css - num(&s["level_at_target_dose_ss"])).abs() < 1e-9,
            "{name}"
        );
    }
    // First-order drugs carry `saturable: null`.
    let v = json("two_point_infusion.toml");
    assert!(v["saturable"].is_null() && v["fit"].is_object());
}

#[test]
fn the_plan_that_jumps_is_flagged_and_the_albumin_and_free_levels_are_given() {
    let v = json("phenytoin_one_level_albumin.toml");
    let codes: Vec<&str> = v["warning_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    assert!(codes.contains(&"large-dose-step"), "{codes:?}");
    assert!(codes.contains(&"binding-uncertain"), "{codes:?}");
    assert!(codes.contains(&"outside-range"), "{codes:?}");
    // 6 mg/L at albumin 3.0 g/dL: 6/(0.2·3 + 0.1) = 8.571429 (Sheiner-Tozer).
    assert!((num(&v["saturable"]["adjusted_level"]) - 6.0 / 0.7).abs() < 1e-12);
    assert!(v["saturable"]["free_level"].is_null());
    let v = json("phenytoin_free_level.toml");
    assert_eq!(num(&v["saturable"]["free_level"]), 1.4);
    assert_eq!(v["saturable"]["deciding_basis"], "free");
    assert!(v["saturable"]["below_threshold_at"].is_string());
}

#[test]
fn the_text_report_and_the_note_say_what_holds_and_what_does_not() {
    let (out, err, code) = run(&["report", "tests/cases/valid/phenytoin_two_levels.toml"]);
    assert_eq!(code, Some(0), "{err}");
    assert!(
        out.starts_with("CAUTION: Decision support only. Figures assume one-compartment saturable")
    );
    assert!(out.contains("no first-order k, half-life, AUC or washout by half-lives"));
    assert!(out.contains("the half-life depends on the level"));
    assert!(out.contains("Vmax 514.3 mg/day, Km 5.714 mg/L"), "{out}");
    for format in ["note.txt", "note.md"] {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join(format);
        let (_, err, code) = run(&[
            "note",
            "tests/cases/valid/phenytoin_free_level.toml",
            "-o",
            path.to_str().unwrap(),
        ]);
        assert_eq!(code, Some(0), "{err}");
        let note = std::fs::read_to_string(&path).unwrap();
        assert!(
            note.contains("saturable (Michaelis-Menten) elimination"),
            "{note}"
        );
        assert!(note.contains("free level 1.4 mg/L"), "{note}");
        assert!(note.contains("albumin 2.5 g/dL, renal failure"), "{note}");
        // The record note carries the estimate used, its ranges and the priors.
        assert!(
            note.contains("used: Bayesian fit to the dose record with population priors"),
            "{note}"
        );
        assert!(
            note.contains("95 % range (Laplace approximation at the Bayesian estimate)"),
            "{note}"
        );
        assert!(note.contains("Km 5.7 mg/L (CV 50 %)"), "{note}");
    }
}

#[test]
fn the_plot_of_a_saturable_drug_is_drawn_by_the_binary() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("p.svg");
    let (_, err, code) = run(&[
        "plot",
        "tests/cases/valid/phenytoin_two_levels.toml",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, Some(0), "{err}");
    let svg = std::fs::read_to_string(&out).unwrap();
    assert!(
        svg.contains("saturable elimination: Vmax 546 mg/day"),
        "{svg}"
    );
    assert!(roxmltree::Document::parse(&svg).is_ok());
}

#[test]
fn one_daily_dose_uses_the_bayesian_estimate_and_two_use_the_record_with_ranges() {
    // One level (Km cannot come from the levels): the Bayesian estimate, beside the record fit
    // with the population Km and the algebra, with the priors of the profile.
    let v = json("phenytoin_one_level_albumin.toml");
    let s = &v["saturable"];
    assert_eq!(s["method"], "bayesian");
    assert_eq!(s["ranges_from"], "bayesian-laplace");
    assert_eq!(
        num(&s["bayesian"]["vmax_mg_per_day"]),
        num(&s["vmax_mg_per_day"])
    );
    assert_eq!(s["record_fit"]["km_fitted"], false);
    // Priors: 415·(60/70)^0.6 mg/day and 5.7 mg/L (Grasela TH et al., Clin Pharmacokinet
    // 1983;8(4):355-364); ω = √ln(1 + CV²) for CV 20 % and 50 %, σ for 17.1 % (Ku LC et al.,
    // Ther Drug Monit 2016;38(6):728-737, Table 2), hand-worked.
    let b = &s["bayesian"];
    assert!((num(&b["prior_vmax_mg_per_day"]) - 415.0 * (60.0f64 / 70.0).powf(0.6)).abs() < 1e-9);
    assert_eq!(num(&b["prior_km_mg_l"]), 5.7);
    assert!((num(&b["omega_vmax"]) - 0.198_042_2).abs() < 1e-6);
    assert!((num(&b["omega_km"]) - 0.472_380_7).abs() < 1e-6);
    assert!((num(&b["sigma_log"]) - 0.169_769_4).abs() < 1e-6);
    // The ranges hold the estimates; the plan's 400 mg/day may be at or above Vmax, so its
    // steady state has no upper end, and the warning says so.
    let within = |r: &Value, x: f64| num(&r[0]) < x && x < num(&r[1]);
    assert!(within(&s["vmax_ci95"], num(&s["vmax_mg_per_day"])));
    assert!(within(&s["km_ci95"], num(&s["km_mg_l"])));
    assert!(within(
        &s["level_at_target_dose_ss_ci95"],
        num(&s["level_at_target_dose_ss"])
    ));
    assert!(num(&s["level_at_plan_ss_ci95"][0]) < num(&s["level_at_plan_ss"]));
    assert!(s["level_at_plan_ss_ci95"][1].is_null());
    // The plan's daily dose reaching the circulation (400·0.92·0.86) lies inside Vmax's range.
    assert!(within(&s["vmax_ci95"], 400.0 * 0.92 * 0.86));
    let codes: Vec<&str> = v["warning_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    assert!(
        codes.contains(&"near-vmax") && codes.contains(&"prior-weighs"),
        "{codes:?}"
    );
    // The exact dose for the target, by R = Vmax·C/(Km + C), lies in its range
    // (self-consistency).
    let exact = num(&s["vmax_mg_per_day"]) * 15.0 / (num(&s["km_mg_l"]) + 15.0) / (0.92 * 0.86);
    assert!(
        within(&s["dose_for_target_ci95_mg_per_day"], exact),
        "{exact}"
    );

    // Levels on two daily doses identify both: the record fit, its curvature for the ranges,
    // the Bayesian estimate beside it.
    let v = json("phenytoin_two_levels.toml");
    let s = &v["saturable"];
    assert_eq!(s["method"], "dose-record");
    assert_eq!(s["ranges_from"], "dose-record-curvature");
    assert!(s["bayesian"].is_object());
    assert!(within(&s["vmax_ci95"], num(&s["vmax_mg_per_day"])));
    assert!(within(
        &s["level_at_plan_ss_ci95"],
        num(&s["level_at_plan_ss"])
    ));
}
