//! Haemodialysis sessions, marked and not modelled, through the binary: the report, the JSON,
//! the note and the plot of the invented demo case `vancomycin_haemodialysis.toml` (a
//! vancomycin patient on haemodialysis with Monday and Wednesday sessions).

use crate::common;

const CASE: &str = "tests/cases/valid/vancomycin_haemodialysis.toml";
const NOT_MODELLED: &str =
    "Dialysis sessions are marked, not modelled: the projections remove no drug during a session.";

fn stdout(args: &[&str]) -> String {
    let out = common::ebb().args(args).output().unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

#[test]
fn the_report_lists_the_sessions_and_says_they_are_not_modelled() {
    let text = stdout(&["report", CASE]);
    let section = text
        .split("Dialysis sessions\n")
        .nth(1)
        .and_then(|s| s.split("\n\n").next())
        .unwrap_or_else(|| panic!("no section:\n{text}"));
    assert_eq!(
        section.lines().collect::<Vec<_>>(),
        [
            format!("  {NOT_MODELLED}").as_str(),
            "  session 1  Mon 1 Mar 08:00 to 12:00  (4 h)",
            "  session 2  Wed 3 Mar 08:00 to 12:00  (4 h)",
            // The pre-dialysis range 15-20 mg/L of the 2020 revised vancomycin guideline
            // (Rybak MJ et al., Am J Health-Syst Pharm 2020;77(11):835-864), as the profile's
            // haemodialysis strategy gives it; level 2 is 18.4 mg/L, 30 min before session 2.
            "  last pre-dialysis level: level 2, 18.4 mg/L, 0.5 h before session 2; pre-dialysis range 15-20 mg/L [Rybak20]: within",
            "  the strategy gives each dose after a session [Rybak20] (from memory, unverified): the next dose is due at the end of session 2, Wed 3 Mar 12:00",
        ]
    );
    // Level 3, drawn 2 h after session 2 ended, is flagged; the warning says projections
    // after session 2 are too high. Session 1 ended before the first dose: not named.
    assert!(text.contains("  - level 3 (14.2 mg/L) was drawn 2 h after the end of dialysis_session 2, within the 6 h the level may still rebound after a session (from memory, unverified): it is not a pre-dialysis level; it is not in the fit\n"), "{text}");
    assert!(text.contains(&format!("  - {NOT_MODELLED} So every projected level after dialysis_session 2 (Wed 3 Mar 08:00), and every steady-state figure for a patient who goes on dialysing, are too high by what the sessions remove")), "{text}");
}

#[test]
fn the_json_carries_the_sessions_and_the_pre_dialysis_level() {
    let v: serde_json::Value = serde_json::from_str(&stdout(&["report", CASE, "--json"])).unwrap();
    assert_eq!(
        v["dialysis_sessions"],
        serde_json::json!([
            { "start": "2027-03-01T08:00", "end": "2027-03-01T12:00", "duration_h": 4.0 },
            { "start": "2027-03-03T08:00", "end": "2027-03-03T12:00", "duration_h": 4.0 },
        ])
    );
    let d = &v["dialysis"];
    assert_eq!(d["modelled"], false);
    assert_eq!(d["statement"], NOT_MODELLED);
    assert_eq!(
        d["pre_dialysis_level"],
        serde_json::json!({ "level": 2, "value": 18.4, "session": 2, "hours_before": 0.5,
                            "range": [15.0, 20.0], "within": true })
    );
    assert_eq!(
        d["next_dose_due"],
        serde_json::json!({ "session": 2, "at": "2027-03-03T12:00",
                            "source": "[Rybak20] (from memory, unverified)" })
    );
    let codes: Vec<&str> = v["warning_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    assert!(codes.contains(&"dialysis-not-modelled"), "{codes:?}");
    assert_eq!(
        codes.iter().filter(|c| **c == "not-pre-dialysis").count(),
        1
    );
    // Levels 1 and 2 lie between the sessions: no session inside the fit.
    assert!(!codes.contains(&"fit-across-session"), "{codes:?}");
    assert!(!codes.contains(&"pre-dialysis-range"), "{codes:?}");
    // The case sets [patient] dialysis = true: no covariate warning.
    assert!(!codes.contains(&"dialysis-covariate"), "{codes:?}");
    // The fit is the two-point one over levels 1 and 2 (26 and 18.4 mg/L, 33.5 h apart):
    // k = ln(26/18.4)/33.5 (the contract's two-point formula).
    let k = v["fit"]["k_per_h"].as_f64().unwrap();
    assert!((k - (26.0f64 / 18.4).ln() / 33.5).abs() < 1e-12, "{k}");
}

#[test]
fn a_case_without_sessions_has_empty_dialysis_keys() {
    let v: serde_json::Value = serde_json::from_str(&stdout(&[
        "report",
        "tests/cases/valid/two_point_infusion.toml",
        "--json",
    ]))
    .unwrap();
    assert_eq!(v["dialysis_sessions"], serde_json::json!([]));
    assert!(v["dialysis"].is_null());
    assert!(!v["warnings"].to_string().contains("marked, not modelled"));
}

#[test]
fn the_note_lists_the_sessions_with_clock_times() {
    let text = stdout(&["note", CASE]);
    let part = text
        .split("DIALYSIS SESSIONS\n-----------------\n")
        .nth(1)
        .unwrap_or_else(|| panic!("{text}"));
    let lines: Vec<&str> = part.lines().take(4).collect();
    assert_eq!(
        lines,
        [
            format!("  {NOT_MODELLED}").as_str(),
            "",
            "  session 1  Mon 1 Mar 2027 08:00 to Mon 1 Mar 2027 12:00  4 h",
            "  session 2  Wed 3 Mar 2027 08:00 to Wed 3 Mar 2027 12:00  4 h",
        ]
    );
    let md = stdout(&["note", "--markdown", CASE]);
    assert!(md.contains("## Dialysis sessions\n\nDialysis sessions are marked, not modelled"));
    assert!(
        md.contains("| 2 | Wed 3 Mar 2027 08:00 | Wed 3 Mar 2027 12:00 | 4 |"),
        "{md}"
    );
}

#[test]
fn the_plot_shades_each_session_with_a_label() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("course.svg");
    let out_s = out.to_str().unwrap();
    stdout(&["plot", CASE, "-o", out_s]);
    let svg = std::fs::read_to_string(&out).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let texts: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text().map(|t| t.trim().to_string()))
        .collect();
    for label in ["dialysis 1", "dialysis 2", ebb::cli::plot::SESSION_LEGEND] {
        assert!(texts.iter().any(|t| t == label), "{label}: {texts:?}");
    }
    // The two bands (the legend's swatch is 10 px high): 4 h each, 48 h apart, so the
    // distance between their left edges is 12 times a band's width.
    let bands: Vec<(f64, f64)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("rect") && n.attribute("fill") == Some("#C8C8C8"))
        .filter(|n| n.attribute("height") != Some("10"))
        .map(|n| {
            let f = |k: &str| n.attribute(k).unwrap().parse::<f64>().unwrap();
            (f("x"), f("width"))
        })
        .collect();
    assert_eq!(bands.len(), 2, "{bands:?}");
    let ratio = (bands[1].0 - bands[0].0) / bands[1].1;
    assert!((ratio - 12.0).abs() < 1.0, "{bands:?}");
}

#[test]
fn a_saturable_report_says_the_sessions_are_not_modelled_too() {
    let tmp = tempfile::tempdir().unwrap();
    let path = tmp.path().join("phenytoin.toml");
    let text = std::fs::read_to_string("tests/cases/valid/phenytoin_two_levels.toml").unwrap()
        + "\n[[dialysis_session]]\nstart = 2027-01-06T13:00:00\nduration_h = 3.5\n";
    std::fs::write(&path, text).unwrap();
    let v: serde_json::Value =
        serde_json::from_str(&stdout(&["report", path.to_str().unwrap(), "--json"])).unwrap();
    assert_eq!(
        v["dialysis_sessions"],
        serde_json::json!([{ "start": "2027-01-06T13:00", "end": "2027-01-06T16:30",
                             "duration_h": 3.5 }])
    );
    assert_eq!(v["dialysis"]["statement"], NOT_MODELLED);
    assert!(
        v["warning_codes"]
            .as_array()
            .unwrap()
            .iter()
            .any(|c| c == "dialysis-not-modelled"),
        "{v}"
    );
    // The fixture does not set [patient] dialysis = true, so the albumin adjustment is not
    // in its renal form: the report says so.
    assert!(
        v["warning_codes"]
            .as_array()
            .unwrap()
            .iter()
            .any(|c| c == "dialysis-covariate"),
        "{v}"
    );
    let text = stdout(&["report", path.to_str().unwrap()]);
    assert!(text.contains(NOT_MODELLED), "{text}");
}

#[test]
fn saving_the_case_keeps_its_sessions_and_their_comments() {
    let original = std::fs::read_to_string(CASE).unwrap().replace(
        "[[dialysis_session]]\nstart = 2027-03-03T08:00:00",
        "[[dialysis_session]]  # Wednesday, high-flux\nstart = 2027-03-03T08:00:00",
    );
    let mut file = ebb::core::casefile::CaseFile::parse(&original).unwrap();
    // An edit on screen: the plan's dose.
    file.plan.as_mut().unwrap().dose_mg = 1000.0;
    let saved = ebb::files::toml_keep::render(&file, Some(&original)).unwrap();
    assert!(saved.contains("# Wednesday, high-flux"), "{saved}");
    let again = ebb::core::casefile::CaseFile::parse(&saved).unwrap();
    assert_eq!(again, file);
    let starts: Vec<String> = again
        .dialysis_sessions
        .iter()
        .map(|s| format!("{} {}", s.start, s.duration_h))
        .collect();
    assert_eq!(starts, ["2027-03-01T08:00:00 4", "2027-03-03T08:00:00 4"]);
}

mod properties {
    use ebb::core::casefile::CaseFile;
    use ebb::core::dialysis::{self, Timing};
    use proptest::prelude::*;
    use proptest::test_runner::FileFailurePersistence;

    fn config() -> ProptestConfig {
        ProptestConfig {
            failure_persistence: Some(Box::new(FileFailurePersistence::Direct(
                "proptest-regressions/dialysis.txt",
            ))),
            ..ProptestConfig::default()
        }
    }

    /// A case with sessions starting `starts` minutes after 2027-03-01 00:00, lasting
    /// `minutes` each, and one level `level_min` minutes after that origin.
    fn case_text(sessions: &[(u32, u32)], level_min: u32) -> String {
        let at = |m: u32| {
            let t = chrono::NaiveDate::from_ymd_opt(2027, 3, 1)
                .unwrap()
                .and_hms_opt(0, 0, 0)
                .unwrap()
                + chrono::Duration::minutes(i64::from(m));
            t.format("%Y-%m-%dT%H:%M:00").to_string()
        };
        let mut s = format!(
            "[drug]\nlevel_unit = \"mg/L\"\n[[dose]]\ntime = {}\namount_mg = 1000.0\nroute = \"bolus\"\n[[level]]\ntime = {}\nvalue = 10.0\n",
            at(0),
            at(level_min)
        );
        for (start, minutes) in sessions {
            s += &format!(
                "[[dialysis_session]]\nstart = {}\nduration_h = {}\n",
                at(*start),
                f64::from(*minutes) / 60.0
            );
        }
        s
    }

    proptest! {
        #![proptest_config(config())]

        /// Sessions are accepted exactly when no two overlap (checked here pair by pair),
        /// come out in time order, and a level is placed during a session exactly when it
        /// falls after a start and up to its end.
        #[test]
        fn sessions_validate_sort_and_place_levels(
            sessions in prop::collection::vec((0u32..20_000, 1u32..=720), 1..6),
            level_min in 0u32..21_000,
        ) {
            let text = case_text(&sessions, level_min);
            let result = CaseFile::parse(&text).unwrap().validate();
            let overlap = sessions.iter().enumerate().any(|(i, a)| {
                sessions.iter().skip(i + 1).any(|b| a.0 < b.0 + b.1 && b.0 < a.0 + a.1)
            });
            match result {
                Err(e) => {
                    prop_assert!(overlap, "{e}");
                    prop_assert!(e.to_string().contains("sessions cannot overlap"), "{e}");
                }
                Ok(case) => {
                    prop_assert!(!overlap);
                    let s = &case.dialysis_sessions;
                    // Touching sessions are allowed (to the rounding of hours).
                    prop_assert!(s.windows(2).all(|w| w[0].end() <= w[1].t + 1e-9));
                    let l = case.levels[0].t;
                    let during = s.iter().any(|x| l > x.t && l <= x.end());
                    let placed = dialysis::timing(s, l);
                    prop_assert_eq!(matches!(placed, Timing::During { .. }), during);
                    if let Timing::PreDialysis { session, hours_before } = placed {
                        let x = s.iter().find(|x| x.row == session).unwrap();
                        prop_assert!((x.t - l - hours_before).abs() < 1e-9);
                        prop_assert!((0.0..=dialysis::PRE_WINDOW_H).contains(&hours_before));
                    }
                }
            }
        }
    }
}
