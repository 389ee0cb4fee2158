//! The `ebb profiles` commands and the global `--profiles DIR` option, run as the binary.
//!
//! Values checked are the shipped profiles' own (gentamicin conventional peak 5-10 mg/L
//! [UKMi-Gent][MedscapeGent], as in drug-facts.md); cases are invented.

use crate::common;

use std::path::Path;
use std::process::Output;

fn ebb(args: &[&str], env: Option<(&str, &Path)>) -> Output {
    let mut c = common::ebb();
    c.args(args).env_remove("EBB_PROFILES");
    if let Some((k, v)) = env {
        c.env(k, v);
    }
    c.output().unwrap()
}

fn text(b: &[u8]) -> String {
    String::from_utf8(b.to_vec()).unwrap()
}

fn local(dir: &Path, stem: &str, display: &str) {
    let body = common::local_profile(
        display,
        "trough_max = { value = 1.5, source = \"[Local]\" }",
    );
    std::fs::write(dir.join(format!("{stem}.toml")), body).unwrap();
}

#[test]
fn profiles_lists_the_built_ins_with_their_origin() {
    let out = ebb(&["profiles"], None);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let s = text(&out.stdout);
    let lines: Vec<&str> = s.lines().collect();
    assert_eq!(lines.len(), 11, "a header and ten profiles:\n{s}");
    assert!(lines[0].starts_with("name"));
    let gent = lines.iter().find(|l| l.starts_with("gentamicin ")).unwrap();
    assert!(gent.contains("Gentamicin") && gent.contains("mg/L") && gent.ends_with("built-in"));
    assert!(s.contains("valproic-acid"));
    assert!(s.contains("lithium") && s.contains("mmol/L"));
}

#[test]
fn profiles_show_prints_one_with_its_sources() {
    let out = ebb(&["profiles", "show", "gentamicin"], None);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let s = text(&out.stdout);
    assert!(s.starts_with("Gentamicin (gentamicin; built-in)"));
    assert!(
        s.contains("peak        5–10 mg/L [UKMi-Gent][MedscapeGent]"),
        "{s}"
    );
    assert!(s.contains("conventional — Conventional (multiple daily dosing) [default]"));
    assert!(s.contains("Cautions:"));
    assert!(s.contains(
        "[Nicolau95] Nicolau DP, Freeman CD, Belliveau PP, Nightingale CH, Ross JW, Quintiliani R. \
         Experience with a once-daily aminoglycoside program"
    ));

    let out = ebb(&["profiles", "show", "gentamicin", "--toml"], None);
    assert!(out.status.success());
    let raw = text(&out.stdout);
    assert_eq!(
        raw,
        std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("drug-profiles/gentamicin.toml")
        )
        .unwrap()
    );
}

#[test]
fn profiles_show_of_an_unknown_name_fails_with_status_2() {
    let out = ebb(&["profiles", "show", "nosuch"], None);
    assert_eq!(out.status.code(), Some(2));
    assert!(out.stdout.is_empty());
    let e = text(&out.stderr);
    assert!(e.contains("no drug profile named \"nosuch\""), "{e}");
}

#[test]
fn the_profiles_option_and_the_environment_variable_override() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    local(dir, "gentamicin", "Gentamicin (ward 5)");
    local(dir, "newdrug", "New drug");
    let d = dir.to_str().unwrap();

    let out = ebb(&["--profiles", d, "profiles"], None);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let s = text(&out.stdout);
    let line = |name: &str| {
        s.lines()
            .find(|l| l.starts_with(&format!("{name} ")))
            .unwrap()
            .to_string()
    };
    assert!(line("gentamicin").contains("Gentamicin (ward 5)"));
    assert!(line("gentamicin").ends_with("gentamicin.toml (replaces the built-in)"));
    assert!(line("newdrug").ends_with("newdrug.toml (local)"));
    assert!(line("vancomycin").ends_with("built-in"));

    // The option also works after the subcommand, and the variable works without it.
    let out = ebb(&["profiles", "--profiles", d], None);
    assert!(text(&out.stdout).contains("New drug"));
    let out = ebb(&["profiles"], Some(("EBB_PROFILES", dir)));
    assert!(text(&out.stdout).contains("Gentamicin (ward 5)"));
    let out = ebb(
        &["profiles", "show", "newdrug"],
        Some(("EBB_PROFILES", dir)),
    );
    assert!(out.status.success());
    assert!(text(&out.stdout).starts_with("New drug (newdrug; "));
}

#[test]
fn a_broken_profile_directory_fails_with_file_line_and_field() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    local(dir, "gentamicin", "X");
    let p = dir.join("gentamicin.toml");
    let body = std::fs::read_to_string(&p)
        .unwrap()
        .replace("first_order = \"yes\"", "first_order = \"mostly\"");
    std::fs::write(&p, body).unwrap();
    let out = ebb(&["--profiles", dir.to_str().unwrap(), "profiles"], None);
    assert_eq!(out.status.code(), Some(2));
    let e = text(&out.stderr);
    assert!(
        e.starts_with(&format!(
            "{}: line 14: field kinetics.first_order: ",
            p.display()
        )),
        "{e}"
    );
}

const PHENYTOIN: &str = r#"
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

[[level]]
time = 2027-03-02T20:00:00
value = 12.9
"#;

#[test]
fn report_on_phenytoin_is_saturable_in_text_and_json() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let case = dir.join("p.toml");
    std::fs::write(&case, PHENYTOIN).unwrap();
    let c = case.to_str().unwrap();

    let out = ebb(&["report", c], None);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let s = text(&out.stdout);
    assert!(s.contains("Saturable (Michaelis-Menten) elimination: no first-order k"));
    assert!(s.contains("14.2 mg/L") && s.contains("12.9 mg/L"));
    assert!(!s.contains("NO PROJECTION") && !s.contains("k = "));

    let out = ebb(&["report", c, "--json"], None);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(v["fit"].is_null() && v["plan"].is_null());
    assert_eq!(v["saturable"]["method"], "one-level-population-km");
    assert_eq!(v["saturable"]["km_mg_l"], 5.7);
    // Both levels were drawn within a day of the first dose: not at steady state.
    let codes = v["warning_codes"].as_array().unwrap();
    assert!(codes.iter().any(|c| c == "not-steady-state"), "{codes:?}");
}
