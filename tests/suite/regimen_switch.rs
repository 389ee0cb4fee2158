//! Switching agents, resuming after a procedure, and specific errors for bad switch, resume
//! and target settings.

use ebb::core::casefile::CaseFile;
use ebb::core::{json, report};

const BASE: &str = r#"
[drug]
name = "invented"
level_unit = "mg/L"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 100.0
route = "bolus"
[[level]]
time = 2027-03-02T10:00:00
value = 4.0
[[level]]
time = 2027-03-02T14:00:00
value = 2.0
[[level]]
time = 2027-03-02T18:00:00
value = 1.0
"#;

fn json_of(extra: &str) -> serde_json::Value {
    let case = CaseFile::parse(&format!("{BASE}{extra}"))
        .unwrap()
        .validate()
        .unwrap();
    let r = report::build(&case).unwrap();
    serde_json::from_str(&json::to_json(&r)).unwrap()
}

fn error_of(extra: &str) -> String {
    match CaseFile::parse(&format!("{BASE}{extra}")).and_then(|f| f.validate()) {
        Ok(_) => panic!("expected an error for {extra}"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn after_half_lives_counts_from_the_end_of_the_last_dose() {
    // The levels halve every 4 h exactly: t1/2 = 4 h; 3 half-lives after the 08:00 bolus is
    // 20:00; the level then is 4 mg/L (at 10:00) halved 10/4 times: 4·2^(-2.5).
    let j = json_of("[switch]\nto = \"next agent\"\nafter_half_lives = 3\n");
    let s = &j["switch"];
    assert_eq!(s["to"], "next agent");
    assert_eq!(s["basis"], "after_half_lives");
    assert_eq!(s["start_at"], "2027-03-02T20:00");
    assert!((s["level_at_start"].as_f64().unwrap() - 4.0 * 2f64.powf(-2.5)).abs() < 1e-9);
    // Levels exactly on a line: the interval of k has zero width.
    let ci = s["start_at_ci95"].as_array().unwrap();
    assert_eq!(ci[0], "2027-03-02T20:00");
}

#[test]
fn start_below_is_when_the_level_falls_there() {
    // From 1.0 at 18:00 halving every 4 h: 0.25 at 02:00 the next day.
    let j = json_of("[switch]\nto = \"next agent\"\nstart_below = 0.25\n");
    let s = &j["switch"];
    assert_eq!(s["basis"], "start_below");
    assert_eq!(s["start_at"], "2027-03-03T02:00");
    assert!((s["level_at_start"].as_f64().unwrap() - 0.25).abs() < 1e-6);
    assert!(j["switch"]["start_at_ci95"].is_array());
}

#[test]
fn no_switch_section_means_null() {
    assert!(json_of("")["switch"].is_null());
}

#[test]
fn resume_after_a_delay_and_below_a_level() {
    // Held: 1.0 at 18:00; procedure the next day at 08:00 (level 1·2^(-14/4) = 0.0884).
    let j =
        json_of("[threshold]\nbelow = 0.5\nprocedure = 2027-03-03T08:00:00\nresume_after_h = 6\n");
    assert_eq!(j["threshold"]["resume_at"], "2027-03-03T14:00");
    // Resume once below 0.0625 = 1/16: four half-lives after 18:00 is 10:00.
    let j = json_of(
        "[threshold]\nbelow = 0.5\nprocedure = 2027-03-03T08:00:00\nresume_below = 0.0625\n",
    );
    assert_eq!(j["threshold"]["resume_at"], "2027-03-03T10:00");
    assert!((j["threshold"]["level_at_resume"].as_f64().unwrap() - 0.0625).abs() < 1e-6);
    // Both: the later wins; already below at the procedure: resume at the procedure + delay.
    let j = json_of(
        "[threshold]\nbelow = 0.5\nprocedure = 2027-03-03T08:00:00\nresume_below = 0.5\nresume_after_h = 1\n",
    );
    assert_eq!(j["threshold"]["resume_at"], "2027-03-03T09:00");
    assert!(json_of("[threshold]\nbelow = 0.5\n")["threshold"]["resume_at"].is_null());
}

#[test]
fn bad_switch_settings_name_the_field() {
    for (extra, phrase) in [
        (
            "[switch]\nto = \"x\"\nstart_below = 1.0\nafter_half_lives = 4\n",
            "switch.after_half_lives: give start_below or after_half_lives, not both",
        ),
        ("[switch]\nto = \"x\"\n", "switch.start_below: missing"),
        ("[switch]\nstart_below = 1.0\n", "switch.to: missing"),
        (
            "[switch]\nto = \"  \"\nstart_below = 1.0\n",
            "switch.to: missing",
        ),
        (
            "[switch]\nto = \"x\"\nstart_below = -1.0\n",
            "switch.start_below: must be above 0, got -1",
        ),
        (
            "[switch]\nto = \"x\"\nafter_half_lives = 0\n",
            "switch.after_half_lives: must be above 0 and at most 20, got 0",
        ),
        (
            "[switch]\nto = \"x\"\nafter_half_lives = nan\n",
            "switch.after_half_lives: must be above 0 and at most 20",
        ),
        (
            "[switch]\nto = \"x\"\nbelow = 1.0\n",
            "unknown field `below`",
        ),
    ] {
        let e = error_of(extra);
        assert!(e.contains(phrase), "{extra:?}: {e}");
    }
}

#[test]
fn bad_resume_and_target_settings_name_the_field() {
    for (extra, phrase) in [
        (
            "[threshold]\nbelow = 0.5\nresume_below = 0.2\n",
            "threshold.resume_below: resuming is counted from the procedure",
        ),
        (
            "[threshold]\nbelow = 0.5\nresume_after_h = 4\n",
            "threshold.resume_after_h: resuming is counted from the procedure",
        ),
        (
            "[threshold]\nbelow = 0.5\nprocedure = 2027-03-03T08:00:00\nresume_after_h = -2\n",
            "threshold.resume_after_h: must be from 0 to 8760 hours, got -2",
        ),
        (
            "[threshold]\nbelow = 0.5\nprocedure = 2027-03-03T08:00:00\nresume_below = 0\n",
            "threshold.resume_below: must be above 0, got 0",
        ),
        (
            "[targets]\npeak = [10.0, 5.0]\n",
            "targets.peak: the low end 10 is above the high end 5",
        ),
        (
            "[targets]\nauc24 = [400.0]\n",
            "targets.auc24: must be [low, high], got one number",
        ),
        (
            "[targets]\ntrough_max = -1.0\n",
            "targets.trough_max: must be above 0, got -1",
        ),
        (
            "[targets]\npeak = [0.0, 5.0]\n",
            "targets.peak: must be above 0, got 0",
        ),
    ] {
        let e = error_of(extra);
        assert!(e.contains(phrase), "{extra:?}: {e}");
    }
}
