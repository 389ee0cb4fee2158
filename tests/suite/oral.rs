//! Oral absorption: formulations from the drug profile, the absorbed peak, the lithium
//! 12-hour level, the absorption-phase warning, and the absorbed course's bounds.

use std::path::{Path, PathBuf};

use ebb::core::model::{self, Route};
use proptest::prelude::*;

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

/// A lithium case (built-in profile): seven evening doses of `dose` mg of carbonate by mouth,
/// levels `levels` as (hours after the last dose, mmol/L), a plan of `plan_dose` mg every
/// 24 h, and `extra` lines for the last dose. Invented data.
fn lithium(dose: f64, levels: &[(u32, f64)], plan_dose: f64, extra: &str) -> String {
    let mut text = String::from(
        "[patient]\nweight_kg = 70.0\n[drug]\nprofile = \"lithium\"\nlevel_unit = \"mmol/L\"\n",
    );
    for day in 2..=8 {
        text += &format!(
            "[[dose]]\ntime = 2027-03-0{day}T20:00:00\namount_mg = {dose:?}\nroute = \"oral\"\n"
        );
    }
    text += extra;
    for (h, v) in levels {
        let (day, hour) = (8 + (20 + h) / 24, (20 + h) % 24);
        text += &format!("[[level]]\ntime = 2027-03-{day:02}T{hour:02}:00:00\nvalue = {v:?}\n");
    }
    text += &format!("[plan]\ndose_mg = {plan_dose:?}\ninterval_h = 24.0\nroute = \"oral\"\n");
    text
}

fn analyse(text: &str) -> ebb::analysis::Analysis {
    let tmp = tempfile::tempdir().unwrap();
    let path = write(tmp.path(), "case.toml", text);
    ebb::cli::analyse_file(&path, None).unwrap()
}

fn json(a: &ebb::analysis::Analysis) -> serde_json::Value {
    let mut out = Vec::new();
    ebb::cli::write_report(&mut out, a, "case.toml", true).unwrap();
    serde_json::from_slice(&out).unwrap()
}

#[test]
fn the_lithium_12_hour_level_is_hand_worked_from_the_bateman_equation() {
    // 800 mg of lithium carbonate every 24 h, F 0.9, ka 0.293 /h (Jin et al., Front
    // Pharmacol 2022;13:913935, Table 2), k 0.0289 /h, V 50 L. Hand-worked from the
    // Bateman equation summed over every earlier dose (the steady-state form
    // C(t) = F·D·ka/(V·(ka − k))·[e^(−k·t)/(1 − e^(−k·τ)) − e^(−ka·t)/(1 − e^(−ka·τ))],
    // Gibaldi M, Perrier D, Pharmacokinetics, 2nd ed., 1982, ch. 3 — from memory,
    // unverified), in 30-digit arithmetic: 22.10262130 mg/L of carbonate at 12 h, which is
    // 0.5982574450 mmol/L of lithium at 36.945 mg per mmol; the peak 6.151154872 h after the
    // dose at 0.6522835471 mmol/L.
    let route = Route::oral_absorbed(0.9, 0.293, 0.0);
    let at_12 = model::steady_level(800.0, route, 24.0, 0.0289, 50.0, 12.0);
    assert!((at_12 - 22.102_621_304_177_26).abs() < 1e-12, "{at_12}");
    assert!((at_12 / 36.945 - 0.598_257_444_963_520_3).abs() < 1e-13);
    let ss = model::steady_state(800.0, route, 24.0, 0.0289, 50.0);
    assert!((ss.peak_after_h - 6.151_154_872_134_354).abs() < 1e-12);
    assert!((ss.peak_mg_l / 36.945 - 0.652_283_547_107_146_1).abs() < 1e-13);
}

#[test]
fn the_report_gives_the_12_hour_level_and_checks_it_against_the_range() {
    // Levels 12 and 22 h after the last dose, after the absorbed peak.
    let text = lithium(800.0, &[(12, 0.62), (22, 0.47)], 800.0, "");
    let a = analyse(&text);
    let (case, report) = (a.case.as_ref().unwrap(), a.report.as_ref().unwrap());
    let fit = a.fit.as_ref().unwrap();
    let plan = report.plan.as_ref().unwrap();
    let v = report.fit.volume_l.unwrap();
    let route = case.plan.as_ref().unwrap().route;
    assert_eq!(route, Route::oral_absorbed(0.9, 0.293, 0.0));
    let want = model::steady_level(800.0, route, 24.0, fit.k, v, 12.0) / 36.945;
    let got = plan.level_12h_ss.unwrap();
    assert!((got - want).abs() < 1e-12 * want, "{got} vs {want}");
    // The lithium target is checked on that level (the strategy samples at 12 h).
    assert_eq!(plan.peak_sampled_ss, Some(got));
    assert!(plan.peak_absorbed && plan.peak_after_dose_h > 0.0 && plan.peak_after_dose_h < 24.0);
    let j = json(&a);
    assert_eq!(j["plan"]["level_12h_ss"].as_f64(), Some(got));
    assert_eq!(
        j["plan"]["peak_after_dose_h"].as_f64(),
        Some(plan.peak_after_dose_h)
    );
    // The absorbed doses are not the instant fallback: no such warning.
    let codes: Vec<&str> = j["warning_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    assert!(!codes.contains(&"oral-absorption"), "{codes:?}");
    assert!(!codes.contains(&"absorption-phase"), "{codes:?}");
    // The text says when the peak falls and gives the 12-h level.
    let mut out = Vec::new();
    ebb::cli::write_report(&mut out, &a, "case.toml", false).unwrap();
    let text_out = String::from_utf8(out).unwrap();
    assert!(
        text_out.contains("after the dose (oral absorption, first-order)"),
        "{text_out}"
    );
    assert!(text_out.contains("level 12 h after a dose"), "{text_out}");
    // The record note says how oral doses were modelled, and carries the same figures.
    let meta = ebb::core::note::NoteMeta {
        made_at: "2027-03-09 18:00".into(),
        version: "test".into(),
        source: "case.toml".into(),
    };
    let note = ebb::core::note::note_text(case, report, &meta, ebb::core::note::NoteFormat::Text);
    assert!(
        note.contains("Oral doses absorbed first-order (ka 0.293 /h, from the drug profile)"),
        "{note}"
    );
    assert!(note.contains("level 12 h after a dose"), "{note}");
    // Twice the dose puts the 12-h level above 0.6-0.8 mmol/L (NICE QS95): a warning.
    let high = analyse(&lithium(800.0, &[(12, 0.62), (22, 0.47)], 1600.0, ""));
    let w = json(&high)["warnings"].to_string();
    assert!(
        w.contains("level 12 h after a dose") && w.contains("is above"),
        "{w}"
    );
    // A drug whose strategy does not sample at 12 h has none.
    let gent = "[drug]\nprofile = \"gentamicin\"\nlevel_unit = \"mg/L\"\n[[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 400.0\nroute = \"infusion\"\ninfusion_h = 0.5\n[[level]]\ntime = 2027-03-02T10:00:00\nvalue = 12.0\n[[level]]\ntime = 2027-03-02T16:00:00\nvalue = 6.0\n[plan]\ndose_mg = 400.0\ninterval_h = 24.0\nroute = \"infusion\"\ninfusion_h = 0.5\n";
    assert!(json(&analyse(gent))["plan"]["level_12h_ss"].is_null());
}

#[test]
fn a_level_drawn_while_the_dose_is_absorbing_is_flagged() {
    // 2 h after the dose: before lithium's single-dose peak (about 8 h with ka 0.293 /h).
    let early = analyse(&lithium(800.0, &[(2, 0.75), (22, 0.47)], 800.0, ""));
    let j = json(&early);
    let w = j["warnings"].to_string();
    assert!(w.contains("absorption phase"), "{w}");
    assert!(j["warning_codes"].to_string().contains("absorption-phase"));
}

#[test]
fn an_unknown_formulation_names_the_row_and_lists_the_profiles() {
    let text = lithium(
        800.0,
        &[(12, 0.62), (22, 0.47)],
        800.0,
        "formulation = \"liquid\"\n",
    );
    let tmp = tempfile::tempdir().unwrap();
    let path = write(tmp.path(), "case.toml", &text);
    let e = ebb::cli::load_case_with(&path, None)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("dose 7: formulation: the profile has no formulation \"liquid\"; it has carbonate-tablets"),
        "{e}"
    );
    // Theophylline lists two, and a dose may name the second.
    let theo = "[drug]\nprofile = \"theophylline\"\nlevel_unit = \"mg/L\"\n[[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 300.0\nroute = \"oral\"\nformulation = \"sustained-release\"\n[[dose]]\ntime = 2027-03-02T20:00:00\namount_mg = 300.0\nroute = \"oral\"\n[[level]]\ntime = 2027-03-03T06:00:00\nvalue = 9.0\n[[level]]\ntime = 2027-03-03T07:30:00\nvalue = 8.0\n";
    let path = write(tmp.path(), "theo.toml", theo);
    let case = ebb::cli::load_case_with(&path, None).unwrap();
    // Tanigawara et al., Biol Pharm Bull 1995;18(11):1590-1598: ka 0.0773 /h; Rovei et al.,
    // Br J Clin Pharmacol 1982;14(6):769-778: ka 1.73 /h, lag 0.09 h; F 1 (complete).
    assert_eq!(case.doses[0].route, Route::oral_absorbed(1.0, 0.0773, 0.0));
    assert_eq!(case.doses[1].route, Route::oral_absorbed(1.0, 1.73, 0.09));
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    // The absorbed peak never exceeds the instant one (all of F·D at once) and never comes
    // earlier, for one dose and at steady state.
    #[test]
    fn the_absorbed_peak_is_lower_and_later_than_the_instant_one(
        k in 1e-3f64..3.0,
        ka in 1e-3f64..20.0,
        lag in 0.0f64..3.0,
        f in 0.05f64..=1.0,
        dose in 1.0f64..5000.0,
        v in 0.5f64..500.0,
        tau in 1.0f64..72.0,
    ) {
        let absorbed = Route::oral_absorbed(f, ka, lag);
        let instant = Route::oral(f);
        let one = model::single_peak(dose, absorbed, k, v);
        prop_assert!(one <= model::single_peak(dose, instant, k, v) * (1.0 + 1e-12));
        prop_assert!(model::single_peak_time(absorbed, k) >= lag);
        prop_assert!(one > 0.0 && one.is_finite());
        let ss = model::steady_state(dose, absorbed, tau, k, v);
        let ss0 = model::steady_state(dose, instant, tau, k, v);
        prop_assert!(ss.peak_mg_l <= ss0.peak_mg_l * (1.0 + 1e-12), "{ss:?} {ss0:?}");
        prop_assert!(ss.peak_after_h >= ss0.peak_after_h);
        prop_assert!(ss.trough_mg_l <= ss.peak_mg_l * (1.0 + 1e-12));
        prop_assert!((ss.auc24_mg_h_l - ss0.auc24_mg_h_l).abs() <= 1e-12 * ss0.auc24_mg_h_l);
        // And the reported peak is the highest level of the interval.
        for i in 0..=50 {
            let s = tau * i as f64 / 50.0;
            let c = model::steady_level(dose, absorbed, tau, k, v, s);
            prop_assert!(c <= ss.peak_mg_l * (1.0 + 1e-9), "{s}: {c} > {}", ss.peak_mg_l);
        }
    }
}

#[test]
fn no_auc_from_two_levels_is_given_for_an_absorbed_oral_dose() {
    // The trapezoid from two levels extrapolates the falling line back to the dose time, where
    // an absorbed dose has given nothing yet: it would overstate the area. The AUC24 of the
    // plan (dose / clearance) stays.
    let text = lithium(800.0, &[(12, 0.62), (22, 0.47)], 800.0, "");
    let a = analyse(&text);
    let j = json(&a);
    assert!(j["auc24_methods"].is_null(), "{}", j["auc24_methods"]);
    assert!(j["plan"]["auc24_ss"].as_f64().unwrap() > 0.0);
}

#[test]
fn the_proportional_adjustment_reads_the_line_where_the_target_is_drawn() {
    // Lithium's range is for the level 12 h after the dose (the profile's strategy). Without
    // the dose amounts there is no volume and the adjustment is proportional: the measured
    // figure must be the fitted line 12 h after the dose (here a level drawn then), not the
    // line extrapolated back to the dose time.
    let text =
        lithium(800.0, &[(12, 0.62), (22, 0.47)], 800.0, "").replace("amount_mg = 800.0\n", "");
    let a = analyse(&text);
    let j = json(&a);
    let q = &j["proportional"];
    assert!((q["measured"].as_f64().unwrap() - 0.62).abs() < 1e-9, "{q}");
    // The standard strategy's range 0.6-0.8 mmol/L (NICE quality standard 95, in the profile).
    assert!((q["target"].as_f64().unwrap() - 0.7).abs() < 1e-12);
    assert!((q["factor"].as_f64().unwrap() - 0.7 / 0.62).abs() < 1e-9);
    let mut out = Vec::new();
    ebb::cli::write_report(&mut out, &a, "case.toml", false).unwrap();
    let text = String::from_utf8(out).unwrap();
    assert!(
        text.contains("level 12 h after the end of the dose measured 0.62 mmol/L"),
        "{text}"
    );
}
