//! Drug profiles: every shipped file parses and sources every number; defaults reach the case;
//! each profile warning fires when it should and stays quiet when it should not; overrides
//! and broken files.
//!
//! The cases below are invented; the values checked against are the shipped profiles' own
//! (gentamicin: levels valid 0.5 h after the end of a dose [MedscapeGent][UIHC-Gent][CLN-Gent],
//! half-life 2-3 h [RenalMono-Gent], conventional targets peak 5-10 and trough below 2 mg/L
//! [UKMi-Gent][MedscapeGent]; vancomycin AUC24 400-600 [Rybak20]; digoxin oral F 0.7
//! [Lausanne-Dig]; keys as in drug-facts.md).

use crate::common;

use std::path::{Path, PathBuf};

use ebb::core::model::Route;
use ebb::profiles::schema::{citations, FROM_MEMORY};
use ebb::profiles::{parse_profile, Catalog, Origin};

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn shipped_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("drug-profiles")
}

fn shipped_files() -> Vec<(String, String)> {
    let mut out = Vec::new();
    for e in std::fs::read_dir(shipped_dir()).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "toml") {
            let stem = p.file_stem().unwrap().to_str().unwrap().to_string();
            out.push((stem, std::fs::read_to_string(&p).unwrap()));
        }
    }
    out.sort();
    out
}

// ---------------------------------------------------------------- shipped files

#[test]
fn every_shipped_profile_parses_and_is_built_in() {
    let files = shipped_files();
    let cat = Catalog::built_in().unwrap();
    let stems: Vec<&str> = files.iter().map(|(s, _)| s.as_str()).collect();
    assert_eq!(
        cat.names(),
        stems,
        "every file in drug-profiles/ is embedded"
    );
    for wanted in [
        "gentamicin",
        "tobramycin",
        "amikacin",
        "vancomycin",
        "digoxin",
        "lithium",
        "phenytoin",
        "valproic-acid",
        "carbamazepine",
        "theophylline",
    ] {
        assert!(stems.contains(&wanted), "{wanted} is shipped");
    }
    for (stem, text) in &files {
        let p = parse_profile(text, stem).unwrap_or_else(|e| panic!("{stem}: {e}"));
        assert!(p.default_strategy().is_some());
        assert!(!p.cautions.is_empty(), "{stem} has cautions");
        assert_eq!(cat.get(stem).unwrap().origin, Origin::BuiltIn);
        // The built-in is read from the JSON build.rs wrote, not from this TOML: the two
        // must give the same profile, field for field, and keep the text as written.
        assert_eq!(*cat.get(stem).unwrap().profile, p, "{stem}");
        assert_eq!(&*cat.get(stem).unwrap().text, text.as_str(), "{stem}");
        let one = Catalog::load_for(None, stem).unwrap();
        assert_eq!(*one.get(stem).unwrap().profile, p, "{stem}");
    }
}

/// Walk the raw TOML: every number must sit in a table whose `source` cites a key of
/// `[sources]` or says "from memory, unverified" (top-level `schema` is a format version).
fn check_numbers(stem: &str, at: &str, v: &toml::Value, source: Option<&str>, keys: &[String]) {
    match v {
        toml::Value::Integer(_) | toml::Value::Float(_) => {
            let s = source.unwrap_or_else(|| panic!("{stem}: {at} is a number without a source"));
            let cited = citations(s);
            assert!(
                !cited.is_empty() || s.contains(FROM_MEMORY),
                "{stem}: {at}: source \"{s}\" cites nothing"
            );
            for c in cited {
                assert!(
                    keys.iter().any(|k| k == c),
                    "{stem}: {at} cites [{c}], not in [sources]"
                );
            }
        }
        toml::Value::Array(items) => {
            for (i, item) in items.iter().enumerate() {
                check_numbers(stem, &format!("{at}[{}]", i + 1), item, source, keys);
            }
        }
        toml::Value::Table(t) => {
            let own = t.get("source").and_then(|s| s.as_str());
            for (k, item) in t {
                if at.is_empty() && k == "schema" {
                    continue;
                }
                let here = if at.is_empty() {
                    k.clone()
                } else {
                    format!("{at}.{k}")
                };
                // A table's own source covers its numbers; a nested table needs its own, except
                // inside a [model] (or each [[model]]), where the one paper's source covers
                // the whole model.
                let inherit =
                    (at == "model" || at.starts_with("model.") || at.starts_with("model["))
                        .then_some(source);
                check_numbers(stem, &here, item, own.or(inherit.flatten()), keys);
            }
        }
        _ => {}
    }
}

#[test]
fn every_number_in_every_shipped_profile_has_a_source() {
    let mut numbers = 0;
    for (stem, text) in shipped_files() {
        let v: toml::Value = toml::from_str(&text).unwrap();
        let keys: Vec<String> = v["sources"].as_table().unwrap().keys().cloned().collect();
        check_numbers(&stem, "", &v, None, &keys);
        numbers += text.matches("source =").count();
    }
    assert!(numbers > 80, "the walk saw the sourced numbers ({numbers})");
}

#[test]
fn the_number_walk_catches_a_number_without_a_source() {
    let v: toml::Value =
        toml::from_str("[volume]\nl_per_kg = { low = 1.0, high = 2.0 }\n").unwrap();
    let r = std::panic::catch_unwind(|| check_numbers("x", "", &v, None, &[]));
    assert!(r.is_err());
}

#[test]
fn every_citation_in_shipped_text_resolves_and_every_source_is_cited() {
    for (stem, text) in shipped_files() {
        let v: toml::Value = toml::from_str(&text).unwrap();
        let sources = v["sources"].as_table().unwrap();
        let body: String = text
            .lines()
            .filter(|l| !l.trim_start().starts_with('#'))
            .take_while(|l| l.trim() != "[sources]")
            .collect::<Vec<_>>()
            .join("\n");
        let mut cited = Vec::new();
        // Only bracketed words inside quoted strings are citations (not table headers).
        for line in body.lines().filter(|l| l.contains('"')) {
            for c in citations(line) {
                assert!(sources.contains_key(c), "{stem}: [{c}] is not in [sources]");
                cited.push(c.to_string());
            }
        }
        for key in sources.keys() {
            assert!(
                cited.contains(key),
                "{stem}: [{key}] is listed but never cited"
            );
        }
    }
}

/// Hosts of unofficial copies: document-sharing sites, sites that reproduce books, papers,
/// labels or paid articles, and mirrors or proxies of PubMed. A source cites the published
/// work itself; a link beside it goes to the publisher, PubMed or PMC.
const COPY_HOSTS: &[&str] = &[
    "scribd",
    "readbag.com",
    "paperzz.com",
    "coek.info",
    "mitchmedical.us",
    "kidneydiseaseclinic.net",
    "wilddata.cn",
    "weglot.com",
    "ablesci.com",
    "paperexplained.cn",
    "lausr.org",
    "tweb-dev.unibo.it",
    "jioinstitute.edu.in",
    "47.251.13.51",
    "studylib",
    "dokumen.pub",
    "pdfcoffee",
    "doctorlib.info",
    "basicmedicalkey.com",
    "naqlafshk.com",
    "acallresources.com",
    "healthscout.com",
    "medbullets.com",
    "medluna.com",
    "unboundmedicine.com/medline",
];

/// The unofficial-copy hosts named in a source text (case-insensitive).
fn copy_hosts_in(text: &str) -> Vec<&'static str> {
    let lower = text.to_lowercase();
    COPY_HOSTS
        .iter()
        .copied()
        .filter(|h| lower.contains(h))
        .collect()
}

#[test]
fn the_copy_host_check_catches_a_sharing_site_and_passes_a_publisher() {
    assert_eq!(
        copy_hosts_in("Rybak MJ, Clin Infect Dis 2006 — https://JA.Scribd.com/document/1"),
        vec!["scribd"]
    );
    assert_eq!(
        copy_hosts_in("PMID 7726530 — https://suppr.wilddata.cn/browses/detail/pubmed/7726530"),
        vec!["wilddata.cn"]
    );
    assert!(copy_hosts_in(
        "Nicolau DP, et al. Antimicrob Agents Chemother 1995;39(3):650–655. \
         PMID 7793867 — https://pubmed.ncbi.nlm.nih.gov/7793867/"
    )
    .is_empty());
}

#[test]
fn no_built_in_source_links_to_an_unofficial_copy() {
    let cat = Catalog::built_in().unwrap();
    let mut seen = 0;
    for (stem, text) in shipped_files() {
        assert!(cat.get(&stem).is_some(), "{stem} is built in");
        let v: toml::Value = toml::from_str(&text).unwrap();
        for (key, source) in v["sources"].as_table().unwrap() {
            let source = source.as_str().unwrap();
            let hosts = copy_hosts_in(source);
            assert!(
                hosts.is_empty(),
                "{stem}: [sources] {key} points to an unofficial copy ({}): cite the published \
                 work itself (authors, title, journal, year;volume(issue):pages, DOI or PMID); \
                 got \"{source}\"",
                hosts.join(", ")
            );
            seen += 1;
        }
    }
    assert!(seen > 100, "the check read every source ({seen})");
}

// ---------------------------------------------------------------- cases and defaults

const GENT: &str = r#"
[drug]
name = "gentamicin"
profile = "gentamicin"
level_unit = "UNIT"

[[dose]]
time = 2027-03-02T06:00:00
amount_mg = 140.0
route = "infusion"
infusion_h = 0.5

[[level]]
time = FIRST
value = A

[[level]]
time = 2027-03-02T13:00:00
value = B

[plan]
dose_mg = 160.0
interval_h = 8.0
route = "infusion"
infusion_h = 0.5
"#;

/// The invented gentamicin case: first level at `first`, values `a`, `b` in `unit`.
fn gent(unit: &str, first: &str, a: f64, b: f64) -> String {
    GENT.replace("UNIT", unit)
        .replace("FIRST", first)
        .replace("= A", &format!("= {a:?}"))
        .replace("= B", &format!("= {b:?}"))
}

/// Load a case text through the command-line path (built-in profiles only) and return the
/// JSON report's warnings.
fn warnings_of(text: &str) -> Vec<String> {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = write(dir, "case.toml", text);
    let mut out = Vec::new();
    ebb::cli::write_report(
        &mut out,
        &ebb::cli::analyse_file(&path, None).unwrap(),
        "case.toml",
        true,
    )
    .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w.as_str().unwrap().to_string())
        .collect()
}

fn any(ws: &[String], phrase: &str) -> bool {
    ws.iter().any(|w| w.contains(phrase))
}

#[test]
fn a_clean_gentamicin_case_brings_no_profile_warning() {
    // First level 1 h after the end of the infusion; 6.0 -> 1.2 mg/L over 5.5 h gives a
    // half-life of 2.37 h, inside 2-3 h.
    let ws = warnings_of(&gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2));
    for phrase in [
        "Gentamicin's first",
        "outside Gentamicin's typical",
        "profile works in",
        "first-order projections have limits",
        "no oral bioavailability",
    ] {
        assert!(!any(&ws, phrase), "unexpected \"{phrase}\" in {ws:?}");
    }
}

#[test]
fn a_level_inside_the_distribution_window_is_flagged_once() {
    // 10 min after the end of the infusion: inside the 30 min window.
    let ws = warnings_of(&gent("mg/L", "2027-03-02T06:40:00", 7.0, 1.2));
    assert!(
        any(
            &ws,
            "level 1 was drawn 10 min after the end of dose 1, inside Gentamicin's first 30 min"
        ),
        "{ws:?}"
    );
    assert!(any(&ws, "it is in the fit"));
    // The core's generic distribution-phase warning for the same level is not repeated.
    assert_eq!(
        ws.iter()
            .filter(|w| w.starts_with("level 1 was drawn"))
            .count(),
        1
    );
}

#[test]
fn a_level_set_aside_is_not_flagged_for_the_window() {
    let text = gent("mg/L", "2027-03-02T06:40:00", 7.0, 1.2).replacen(
        "value = 7.0",
        "value = 7.0\nuse = false\n",
        1,
    );
    let text = text.replace(
        "[plan]",
        "[[level]]\ntime = 2027-03-02T09:00:00\nvalue = 3.5\n\n[plan]",
    );
    let ws = warnings_of(&text);
    assert!(!any(&ws, "Gentamicin's first"), "{ws:?}");
}

#[test]
fn a_half_life_outside_the_typical_range_is_flagged() {
    // 6.0 -> 3.0 mg/L over 6 h: half-life 6 h, outside 2-3 h.
    let text = gent("mg/L", "2027-03-02T07:00:00", 6.0, 3.0);
    let ws = warnings_of(&text);
    assert!(
        any(
            &ws,
            "the fitted half-life 6 h is outside Gentamicin's typical adult range"
        ),
        "{ws:?}"
    );
    assert!(any(&ws, "plausibility flag, not an error"));
}

#[test]
fn a_level_unit_other_than_the_profiles_is_flagged_but_equal_units_are_not() {
    let ws = warnings_of(&gent("ng/mL", "2027-03-02T07:30:00", 6000.0, 1200.0));
    assert!(
        any(&ws, "the levels are entered in ng/mL but the Gentamicin profile works in mg/L: its ranges and targets were converted"),
        "{ws:?}"
    );
    // ug/mL is the same quantity as mg/L.
    let ws = warnings_of(&gent("ug/mL", "2027-03-02T07:30:00", 6.0, 1.2));
    assert!(!any(&ws, "profile works in"), "{ws:?}");
}

#[test]
fn profile_targets_are_converted_to_the_case_unit() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = write(
        dir,
        "c.toml",
        &gent("ng/mL", "2027-03-02T07:30:00", 6000.0, 1200.0),
    );
    let case = ebb::cli::load_case_with(&path, None).unwrap();
    assert_eq!(case.targets.peak, Some([5000.0, 10000.0]));
    assert_eq!(case.targets.trough_max, Some(2000.0));
}

#[test]
fn the_profile_gives_default_targets_and_the_cases_own_win() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = write(
        dir,
        "c.toml",
        &gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2),
    );
    let case = ebb::cli::load_case_with(&path, None).unwrap();
    assert_eq!(case.targets.peak, Some([5.0, 10.0]));
    assert_eq!(case.targets.trough_max, Some(2.0));
    assert_eq!(case.targets.auc24, None);

    let own = gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2) + "\n[targets]\npeak = [6.0, 9.0]\n";
    let path = write(dir, "own.toml", &own);
    let case = ebb::cli::load_case_with(&path, None).unwrap();
    assert_eq!(case.targets.peak, Some([6.0, 9.0]));
    assert_eq!(
        case.targets.trough_max, None,
        "the case's [targets] replace the profile's"
    );

    let vanc =
        gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2).replace("\"gentamicin\"", "\"vancomycin\"");
    let path = write(dir, "vanc.toml", &vanc);
    let case = ebb::cli::load_case_with(&path, None).unwrap();
    assert_eq!(case.targets.auc24, Some([400.0, 600.0]));
}

const LITHIUM: &str = r#"
[drug]
profile = "lithium"
level_unit = "mmol/L"

[[dose]]
time = 2027-03-01T20:00:00
amount_mg = 800.0
route = "oral"

[[level]]
time = 2027-03-02T08:00:00
value = 0.8

[[level]]
time = 2027-03-03T08:00:00
value = 0.4
"#;

#[test]
fn the_profile_supplies_the_molar_mass_and_bioavailability() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = write(dir, "li.toml", LITHIUM);
    let case = ebb::cli::load_case_with(&path, None).unwrap();
    // Lithium carbonate 73.89 g/mol per two lithium ions [FDA-Li]: 36.945 mg per mmol.
    assert_eq!(case.drug.molar_mass_g_mol, Some(36.945));
    // Oral F about 90 % [SwissLi-A]; absorption ka 0.293 /h, the value Jin et al. fixed
    // (Front Pharmacol 2022;13:913935, Table 2), no lag.
    assert_eq!(case.doses[0].route, Route::oral_absorbed(0.9, 0.293, 0.0));
    // Without the profile a molar unit needs the case's own molar mass.
    let path = write(
        dir,
        "bare.toml",
        &LITHIUM.replace("profile = \"lithium\"\n", ""),
    );
    let e = ebb::cli::load_case_with(&path, None)
        .unwrap_err()
        .to_string();
    assert!(e.contains("drug.molar_mass_g_mol"), "{e}");
}

#[test]
fn partly_first_order_kinetics_bring_a_warning() {
    let ws = warnings_of(LITHIUM);
    assert!(any(&ws, "Lithium (as carbonate): first-order projections have limits here: elimination is renal and first-order, but redistribution is incomplete"), "{ws:?}");
    let ws = warnings_of(&gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2));
    assert!(!any(&ws, "first-order projections have limits"));
}

#[test]
fn an_oral_dose_of_a_drug_not_given_by_mouth_is_flagged() {
    let text = gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2).replacen(
        "route = \"infusion\"\ninfusion_h = 0.5",
        "route = \"oral\"",
        1,
    );
    let ws = warnings_of(&text);
    assert!(
        any(&ws, "the Gentamicin profile gives no oral bioavailability"),
        "{ws:?}"
    );
    let ws = warnings_of(LITHIUM);
    assert!(!any(&ws, "no oral bioavailability"), "{ws:?}");
}

const PHENYTOIN: &str = r#"
[patient]
label = "invented"

[drug]
name = "phenytoin"
profile = "phenytoin"
level_unit = "mg/L"

[[dose]]
time = 2027-03-01T20:00:00
amount_mg = 300.0
route = "oral"

[[level]]
time = 2027-03-02T08:00:00
value = 14.2
note = "pre-dose"

[[level]]
time = 2027-03-02T20:00:00
value = 12.9

[plan]
dose_mg = 350.0
interval_h = 24.0
route = "oral"
"#;

#[test]
fn phenytoin_gets_the_saturable_report_and_no_first_order_figure() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = write(dir, "p.toml", PHENYTOIN);
    let mut out = Vec::new();
    ebb::cli::write_report(
        &mut out,
        &ebb::cli::analyse_file(&path, None).unwrap(),
        "p.toml",
        false,
    )
    .unwrap();
    let text = String::from_utf8(out).unwrap();
    assert!(text
        .starts_with("CAUTION: Decision support only. Figures assume one-compartment saturable"));
    assert!(text.contains("no first-order k, half-life, AUC or washout by half-lives"));
    assert!(text.contains("level 1") && text.contains("14.2 mg/L"));
    assert!(text.contains("level 2") && text.contains("12.9 mg/L"));
    assert!(text.contains("Vmax") && text.contains("Km 5.7 mg/L"));
    assert!(
        !text.contains("Washout") && !text.contains("  k    ") && !text.contains("accumulation")
    );

    let mut out = Vec::new();
    ebb::cli::write_report(
        &mut out,
        &ebb::cli::analyse_file(&path, None).unwrap(),
        "p.toml",
        true,
    )
    .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert!(v["fit"].is_null() && v["washout"].as_array().unwrap().is_empty());
    // One level on 300 mg/day (x 0.86 by mouth = 258 mg/day) with Km 5.7 mg/L (Grasela
    // 1983): Vmax = 258·(5.7 + 12.9)/12.9 = 372 mg/day.
    let vmax = v["saturable"]["vmax_mg_per_day"].as_f64().unwrap();
    assert!((vmax - 258.0 * 18.6 / 12.9).abs() < 1e-9, "{vmax}");
}

#[test]
fn a_first_order_drug_is_not_refused() {
    let ws = warnings_of(&gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2));
    assert!(!any(&ws, "does not follow first-order"));
    let text = PHENYTOIN.replace("\"phenytoin\"\nlevel_unit", "\"carbamazepine\"\nlevel_unit");
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = write(dir, "c.toml", &text);
    let mut out = Vec::new();
    ebb::cli::write_report(
        &mut out,
        &ebb::cli::analyse_file(&path, None).unwrap(),
        "c.toml",
        false,
    )
    .unwrap();
    let text = String::from_utf8(out).unwrap();
    assert!(text.contains("Washout"));
    assert!(!text.contains("NO PROJECTION"));
}

#[test]
fn an_unknown_profile_is_an_error_at_drug_profile() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let text = gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2)
        .replace("\"gentamicin\"\nlevel", "\"gentamycin\"\nlevel");
    let path = write(dir, "c.toml", &text);
    let e = ebb::cli::load_case_with(&path, None)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("c.toml: drug.profile: no drug profile named \"gentamycin\""),
        "{e}"
    );
    assert!(e.contains("gentamicin"), "the known names are listed: {e}");
}

// ---------------------------------------------------------------- overrides

fn local_profile(display: &str, peak: (f64, f64)) -> String {
    common::local_profile(
        display,
        &format!(
            "peak = {{ low = {:?}, high = {:?}, source = \"[Local]\" }}",
            peak.0, peak.1
        ),
    )
}

#[test]
fn an_override_directory_replaces_a_built_in_and_adds_a_new_profile() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    write(
        dir,
        "gentamicin.toml",
        &local_profile("Gentamicin (local)", (6.0, 9.0)),
    );
    write(dir, "newdrug.toml", &local_profile("New drug", (1.0, 2.0)));
    write(dir, "readme.txt", "not a profile");
    let cat = Catalog::load(Some(dir)).unwrap();
    let g = cat.get("gentamicin").unwrap();
    assert_eq!(g.profile.display_name, "Gentamicin (local)");
    assert_eq!(g.origin, Origin::Replaces(dir.join("gentamicin.toml")));
    let n = cat.get("newdrug").unwrap();
    assert_eq!(n.origin, Origin::Local(dir.join("newdrug.toml")));
    assert_eq!(cat.get("vancomycin").unwrap().origin, Origin::BuiltIn);
    assert_eq!(cat.entries().len(), 11);
    let s = cat.summaries();
    let gs = s.iter().find(|s| s.name == "gentamicin").unwrap();
    assert!(gs.origin.ends_with("(replaces the built-in)"));
    assert_eq!(gs.cautions, vec!["Local protocol [Local].".to_string()]);

    // A case (kept outside the profile directory) then gets the local targets.
    let tmp_cases = tempfile::tempdir().unwrap();
    let cases = tmp_cases.path();
    let path = write(
        cases,
        "case.toml",
        &gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2),
    );
    let case = ebb::cli::load_case_with(&path, Some(dir)).unwrap();
    assert_eq!(case.targets.peak, Some([6.0, 9.0]));
    assert_eq!(case.targets.trough_max, None);
}

// ---------------------------------------------------------------- broken files

fn broken(text: &str) -> String {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = write(dir, "gentamicin.toml", text);
    let e = Catalog::load(Some(dir)).unwrap_err().to_string();
    assert!(
        e.starts_with(&path.display().to_string()),
        "names the file: {e}"
    );
    e
}

#[test]
fn a_wrong_type_names_file_line_and_field() {
    let text = local_profile("X", (1.0, 2.0)).replace("low = 1.5", "low = \"one\"");
    let e = broken(&text);
    assert!(e.contains(": line 5: field half_life_h.low: "), "{e}");
}

#[test]
fn a_missing_source_names_file_line_and_field() {
    let text = local_profile("X", (1.0, 2.0)).replace(
        "l_per_kg = { low = 0.2, high = 0.3, source = \"[Local]\" }",
        "l_per_kg = { low = 0.2, high = 0.3 }",
    );
    let e = broken(&text);
    assert!(e.contains(": line 9: field volume.l_per_kg: "), "{e}");
    assert!(e.contains("source"), "{e}");
}

#[test]
fn an_unknown_field_names_file_line_and_field() {
    let text = local_profile("X", (1.0, 2.0)).replace(
        "label = \"Local protocol\"",
        "label = \"Local protocol\"\ncolour = \"red\"",
    );
    let e = broken(&text);
    assert!(e.contains(": line 21: field strategy[1]"), "{e}");
    assert!(e.contains("colour"), "{e}");
}

#[test]
fn an_unresolved_citation_names_file_line_and_field() {
    let text = local_profile("X", (1.0, 2.0)).replace(
        "peak = { low = 1.0, high = 2.0, source = \"[Local]\" }",
        "peak = { low = 1.0, high = 2.0, source = \"[Nowhere]\" }",
    );
    let e = broken(&text);
    assert!(
        e.contains(": line 22: field strategy[1].peak: cites [Nowhere]"),
        "{e}"
    );
}

#[test]
fn a_source_that_cites_nothing_is_refused() {
    let text = local_profile("X", (1.0, 2.0)).replace(
        "weight_source = \"[Local]\"",
        "weight_source = \"trust me\"",
    );
    let e = broken(&text);
    assert!(
        e.contains(": line 11: field volume.weight_source: the source must cite"),
        "{e}"
    );
}

#[test]
fn an_inverted_range_and_a_missing_default_strategy_are_refused() {
    let text = local_profile("X", (3.0, 2.0));
    let e = broken(&text);
    assert!(
        e.contains(": line 22: field strategy[1].peak: the low end 3 is above the high end 2"),
        "{e}"
    );
    let text = local_profile("X", (1.0, 2.0)).replace(
        "default_strategy = \"local\"",
        "default_strategy = \"other\"",
    );
    let e = broken(&text);
    assert!(
        e.contains(": line 4: field default_strategy: no strategy named \"other\""),
        "{e}"
    );
}

#[test]
fn a_toml_syntax_error_names_file_and_line() {
    let text = local_profile("X", (1.0, 2.0)).replace("weight = \"ideal\"", "weight = ideal");
    let e = broken(&text);
    assert!(e.contains(": line 10: "), "{e}");
}

#[test]
fn a_broken_profile_fails_a_case_that_uses_any_profile() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    write(dir, "gentamicin.toml", "schema = 1\n");
    let tmp_cases = tempfile::tempdir().unwrap();
    let cases = tmp_cases.path();
    let path = write(
        cases,
        "case.toml",
        &gent("mg/L", "2027-03-02T07:30:00", 6.0, 1.2),
    );
    let e = ebb::cli::load_case_with(&path, Some(dir))
        .unwrap_err()
        .to_string();
    assert!(e.contains("gentamicin.toml: line 1: "), "{e}");
    assert!(e.contains("missing field"), "{e}");
}

#[test]
fn a_saturable_prior_spread_of_zero_is_refused_by_its_field() {
    // The shipped phenytoin profile with its Km spread set to 0 %: no prior could follow.
    let text = include_str!("../../drug-profiles/phenytoin.toml").replace(
        "km_cv_percent = { value = 50.0",
        "km_cv_percent = { value = 0.0",
    );
    let e = broken(&text);
    assert!(
        e.contains("field saturable.prior.km_cv_percent: must be above 0, got 0"),
        "{e}"
    );
}
