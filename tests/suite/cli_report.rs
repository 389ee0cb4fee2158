//! The `ebb report` command end to end: text, JSON, errors, several files, and the demo.

use std::path::{Path, PathBuf};
use std::process::Output;

use serde_json::Value;

fn ebb(args: &[&str]) -> Output {
    common::ebb()
        .args(args)
        .output()
        .expect("the ebb binary runs")
}

fn valid(name: &str) -> String {
    format!("tests/cases/valid/{name}")
}

fn out(o: &Output) -> String {
    String::from_utf8(o.stdout.clone()).unwrap()
}

fn err(o: &Output) -> String {
    String::from_utf8(o.stderr.clone()).unwrap()
}

#[test]
fn report_prints_the_caution_first_then_the_figures() {
    let o = ebb(&["report", &valid("two_point_infusion.toml")]);
    assert_eq!(o.status.code(), Some(0), "{}", err(&o));
    assert!(err(&o).is_empty(), "{}", err(&o));
    let text = out(&o);
    assert!(text.starts_with("CAUTION: "), "{text}");
    // The caution comes before the fit, the fit before the plan, threshold and washout.
    let order = [
        "CAUTION",
        "Fit:",
        "Plan:",
        "Threshold:",
        "Washout",
        "Warnings",
    ];
    let at: Vec<usize> = order
        .iter()
        .map(|w| text.find(w).unwrap_or_else(|| panic!("no {w} in\n{text}")))
        .collect();
    assert!(at.windows(2).all(|p| p[0] < p[1]), "{text}");
    // k = ln 2 / 8 h = 0.08664 /h; half-life 8 h; reached 8 h after 19:00.
    assert!(text.contains("0.08664 /h"), "{text}");
    assert!(text.contains("half-life   8 h"), "{text}");
    assert!(text.contains("in 8 h 0 min"), "{text}");
    assert!(text.contains("Wed 3 Mar 03:00"), "{text}");
}

use crate::common;
use common::{FIT, PLAN, THRESHOLD, TOP, WASHOUT};

#[test]
fn json_has_the_contract_keys_and_types() {
    let o = ebb(&["report", "--json", &valid("log_linear_bolus.toml")]);
    assert_eq!(o.status.code(), Some(0), "{}", err(&o));
    let text = out(&o);
    assert_eq!(text.lines().count(), 1, "one JSON object on one line");
    let v: Value = serde_json::from_str(&text).unwrap();
    for k in TOP {
        assert!(v.get(*k).is_some(), "{k} missing");
    }
    let f = &v["fit"];
    assert!(f["method"].is_string() && f["levels_used"].is_u64());
    for k in [
        "k_per_h",
        "half_life_h",
        "r_squared",
        "volume_l",
        "clearance_l_per_h",
    ] {
        assert!(f[k].is_number(), "fit.{k}: {}", f[k]);
    }
    assert_eq!(f["k_ci95_per_h"].as_array().unwrap().len(), 2);
    assert_eq!(f["half_life_ci95_h"].as_array().unwrap().len(), 2);
    let t = &v["threshold"];
    assert!(t["below"].is_number() && t["reached_at"].is_string());
    assert_eq!(t["reached_at_ci95"].as_array().unwrap().len(), 2);
    // ISO 8601 local date-time to the minute.
    let at = t["reached_at"].as_str().unwrap();
    assert!(
        chrono::NaiveDateTime::parse_from_str(at, "%Y-%m-%dT%H:%M").is_ok(),
        "{at}"
    );
    for row in v["washout"].as_array().unwrap() {
        for k in WASHOUT {
            assert!(row.get(*k).is_some(), "washout.{k}");
        }
        assert!(row["half_lives"].is_u64() && row["at"].is_string());
        assert!(row["level"].is_number() && row["fraction_remaining"].is_number());
    }
    assert!(v["warnings"].is_array());
    assert!(v["plan"].is_null(), "the case has no plan");
}

/// Every invalid fixture with the phrase its message must hold (its first line).
fn invalid_fixtures() -> Vec<(PathBuf, String)> {
    let dir = Path::new("tests/cases/invalid");
    let mut all: Vec<(PathBuf, String)> =
        std::fs::read_dir(Path::new(env!("CARGO_MANIFEST_DIR")).join(dir))
            .unwrap()
            .map(|e| {
                let name = e.unwrap().file_name();
                let rel = dir.join(&name);
                let text =
                    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join(&rel))
                        .unwrap();
                let phrase = text.lines().next().unwrap();
                let phrase = phrase.strip_prefix("# message: ").unwrap().to_string();
                (rel, phrase)
            })
            .collect();
    all.sort();
    all
}

#[track_caller]
fn assert_one_line_error(o: &Output, file: &str, phrase: &str) {
    assert_eq!(o.status.code(), Some(2), "{file}: {}", err(o));
    assert!(out(o).is_empty(), "{file}: stdout {:?}", out(o));
    let e = err(o);
    assert_eq!(e.lines().count(), 1, "{file}: stderr {e:?}");
    assert!(e.ends_with('\n'), "{file}: {e:?}");
    assert!(e.starts_with(&format!("{file}: ")), "{file}: {e:?}");
    assert!(e.contains(phrase), "{file}: {e:?} lacks {phrase:?}");
}

#[test]
fn every_bad_input_exits_2_with_one_line_naming_the_file() {
    let all = invalid_fixtures();
    assert!(all.len() >= 20);
    for (path, phrase) in &all {
        let file = path.display().to_string();
        for json in [false, true] {
            let mut args = vec!["report"];
            if json {
                args.push("--json");
            }
            args.push(&file);
            assert_one_line_error(&ebb(&args), &file, phrase);
        }
    }
}

#[test]
fn a_missing_file_exits_2_naming_it() {
    let file = "tests/cases/invalid/there_is_no_such_case.toml";
    assert_one_line_error(&ebb(&["report", file]), file, "cannot read the file");
}

#[test]
fn several_files_give_one_json_object_per_line_and_keep_going_past_a_bad_one() {
    let a = valid("two_point_infusion.toml");
    let bad = "tests/cases/invalid/level_zero.toml".to_string();
    let c = valid("offsets.toml");
    let o = ebb(&["report", "--json", &a, &bad, &c]);
    assert_eq!(o.status.code(), Some(2));
    let text = out(&o);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 2, "{text}");
    let first: Value = serde_json::from_str(lines[0]).unwrap();
    let second: Value = serde_json::from_str(lines[1]).unwrap();
    // In the order given: the infusion case, then the offsets case.
    assert_eq!(first["threshold"]["reached_at"], "2027-03-03T03:00");
    assert_eq!(second["threshold"]["reached_at"], "2027-03-28T22:00+02:00");
    let e = err(&o);
    assert_eq!(e.lines().count(), 1, "{e}");
    assert!(e.starts_with(&format!("{bad}: level 2: value")), "{e}");

    let all_good = ebb(&["report", "--json", &a, &c]);
    assert_eq!(all_good.status.code(), Some(0), "{}", err(&all_good));
    assert_eq!(out(&all_good).lines().count(), 2);
    assert!(err(&all_good).is_empty());
}

#[test]
fn several_files_as_text_each_report_in_full() {
    let a = valid("two_point_infusion.toml");
    let c = valid("offsets.toml");
    let o = ebb(&["report", &a, &c]);
    assert_eq!(o.status.code(), Some(0), "{}", err(&o));
    assert_eq!(out(&o).matches("CAUTION: ").count(), 2);
}

#[test]
fn demo_report_text_is_stable() {
    let o = ebb(&["report", "--demo"]);
    assert_eq!(o.status.code(), Some(0), "{}", err(&o));
    assert!(err(&o).is_empty());
    insta::assert_snapshot!("demo_report_text", out(&o));
}

#[test]
fn demo_report_json_parses_with_the_contract_keys() {
    let o = ebb(&["report", "--demo", "--json"]);
    assert_eq!(o.status.code(), Some(0), "{}", err(&o));
    let v: Value = serde_json::from_str(&out(&o)).unwrap();
    for k in FIT {
        assert!(v["fit"].get(*k).is_some(), "fit.{k}");
    }
    for k in PLAN {
        assert!(v["plan"].get(*k).is_some(), "plan.{k}");
    }
    for k in THRESHOLD {
        assert!(v["threshold"].get(*k).is_some(), "threshold.{k}");
    }
}

#[test]
fn targets_that_contradict_the_strategy_are_a_typed_warning_in_text_and_json() {
    // Extended-interval gentamicin: trough below 1 mg/L, no peak [SouthTeesGent]; the demo's
    // own targets are the conventional ones (peak 5-10, trough below 2 mg/L
    // [UKMi-Gent][MedscapeGent]).
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("case.toml");
    let text = ebb::demo::DEMO_CASE.replace(
        "level_unit = \"mg/L\"\n",
        "level_unit = \"mg/L\"\nstrategy = \"extended-interval\"\n",
    );
    std::fs::write(&path, text).unwrap();
    let p = path.to_str().unwrap();
    let o = ebb(&["report", "--json", p]);
    assert_eq!(o.status.code(), Some(0), "{}", err(&o));
    let j: Value = serde_json::from_str(&out(&o)).unwrap();
    let codes: Vec<&str> = j["warning_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let at = codes
        .iter()
        .position(|c| *c == "targets-not-strategy")
        .unwrap_or_else(|| panic!("{codes:?}"));
    let words = j["warnings"][at].as_str().unwrap();
    assert!(words.contains("use the case's own targets"), "{words}");
    // The suggestions follow the strategy's intervals with the case's targets (the
    // regimen the patient is on is listed as well, marked current).
    let suggestions = j["suggestions"].as_array().unwrap();
    assert!(suggestions.iter().any(|s| s["current"] == false));
    for s in suggestions.iter().filter(|s| s["current"] == false) {
        assert!(
            [24.0, 36.0, 48.0].contains(&s["interval_h"].as_f64().unwrap()),
            "{s}"
        );
    }
    let o = ebb(&["report", p]);
    assert!(
        out(&o)
            .contains("the case's own targets (peak 5–10 mg/L, trough at most 2 mg/L) contradict"),
        "{}",
        out(&o)
    );
}
