//! The Tod 1998 amikacin model (two compartments; a clearance with a constant added after its
//! covariate terms, a power residual error): its typical values for a man and a woman and at
//! the age cap, hand-worked from the published equation; the power residual against its
//! formula, and exponent 1 giving the usual combined error exactly; its Bayesian estimate
//! against an independent minimiser; a case through `ebb report`, `--json` and `ebb note`;
//! and the profile checks that refuse nonsense in the new fields.

use ebb::core::bayes;
use ebb::core::casefile::CaseFile;
use ebb::core::fitted::Method;
use ebb::core::model::{Administration, Route, TwoCompartment};
use ebb::core::population::Population;
use ebb::core::prior::Residual;
use ebb::core::warning::Code;

use super::bayes_prior::nelder_mead;
use super::population_two::{estimate_two, level, macro_rates};

/// Names the Tod model in a case (the amikacin profile's default is Steffens 2025).
const TOD: &str = "[fit]\nmodel = \"tod-1998\"\n";

fn case(patient: &str, extra: &str) -> String {
    format!(
        "[patient]\n{patient}\n[drug]\nprofile = \"amikacin\"\nlevel_unit = \"mg/L\"\n{TOD}{extra}"
    )
}

const MAN: &str = "weight_kg = 70.0\nage_years = 60.0\nsex = \"male\"\ncreatinine_mg_dl = 1.0";
const WOMAN: &str =
    "weight_kg = 55.0\nage_years = 72.0\nsex = \"female\"\ncreatinine_umol_l = 110.0";

fn population(text: &str) -> Population {
    let file = CaseFile::parse(text).unwrap();
    let case = ebb::cli::analyse_parsed(&file, None)
        .unwrap()
        .case
        .expect("a valid case");
    bayes::population_of(&case).unwrap()
}

/// The clearance of Tod et al., Antimicrob Agents Chemother 1998;42:849-856, Table 4 (read in
/// population-models.md, AMK-A), written out here: θsex x 6 x (0.985 - age/100) x WT / SCr
/// [µmol/L] + 1.66 L/h, θsex 0.797 for men and 0.640 for women.
fn tod_clearance(male: bool, age: f64, weight: f64, scr_umol_l: f64) -> f64 {
    let theta = if male { 0.797 } else { 0.640 };
    theta * 6.0 * (0.985 - age / 100.0) * weight / scr_umol_l + 1.66
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

#[test]
fn tod_1998_typical_values_for_a_man_and_a_woman() {
    // A man of 60, 70 kg, creatinine 1.0 mg/dL = 88.4 µmol/L (1 mg/dL = 88.4 µmol/L,
    // drug-facts.md, the Cockcroft-Gault SI row): hand-worked from the clearance equation of
    // Tod 1998, Table 4, 0.797 x 6 x 0.385 x 70 / 88.4 + 1.66 = 3.1179 L/h; the design notes
    // give 3.12 L/h for this reference patient (population-models.md, AMK-A).
    let man = population(&case(MAN, ""));
    assert_eq!(man.model, "tod-1998");
    let cl = tod_clearance(true, 60.0, 70.0, 88.4);
    assert!((cl - 3.1179).abs() < 1e-4, "{cl}");
    let t = man.two.expect("two compartments");
    assert!(rel(t.cl, cl) < 1e-9, "{} vs {cl}", t.cl);
    assert!(rel(man.clearance_l_per_h, cl) < 1e-9);
    // V1 8.92 L, Q 4.43 L/h, V2 11.4 L, no weight scaling (Tod 1998, Table 4).
    assert_eq!((t.v1, t.q, t.v2), (8.92, 4.43, 11.4));
    assert_eq!(man.volume_l, 8.92);
    // k stands for the terminal rate constant β.
    assert!((man.k_per_h - macro_rates(&t).1).abs() < 1e-12);

    // A woman of 72, 55 kg, creatinine entered as 110 µmol/L: 0.640 x 6 x 0.265 x 55 / 110
    // + 1.66 = 2.1688 L/h (hand-worked from the same equation).
    let woman = population(&case(WOMAN, ""));
    let cl = tod_clearance(false, 72.0, 55.0, 110.0);
    assert!((cl - 2.1688).abs() < 1e-4, "{cl}");
    let t = woman.two.unwrap();
    assert!(rel(t.cl, cl) < 1e-9, "{} vs {cl}", t.cl);
    assert_eq!((t.v1, t.q, t.v2), (8.92, 4.43, 11.4));

    // Diagonal between-patient variability, CV 21, 15, 30 and 25 % as ω² = ln(1 + CV²)
    // (Tod 1998, Table 4; the log-normal identity).
    let w = |cv: f64| (1.0f64 + cv * cv).ln().sqrt();
    let om = man.omega_two();
    for (i, cv) in [0.21, 0.15, 0.30, 0.25].into_iter().enumerate() {
        assert!((om[i].unwrap() - w(cv)).abs() < 1e-12, "{i}: {om:?}");
    }
    assert_eq!(man.correlation, 0.0);
    // Power residual error: Var(ε) = 0.189, b = 0.939 (Tod 1998, Table 4).
    assert!((man.residual.proportional.powi(2) - 0.189).abs() < 1e-15);
    assert_eq!(man.residual.exponent, 0.939);
    assert_eq!(man.residual.additive_mg_l, 0.0);

    // The model reads serum creatinine, not a Cockcroft-Gault clearance: none is said to be
    // used (one is formed only to compare with the population's range).
    assert_eq!(man.creatinine_clearance, None);
    assert!(
        !man.warnings
            .iter()
            .any(|w| w.code() == Code::OutsidePopulation),
        "{:?}",
        man.warnings
    );
}

#[test]
fn the_age_factor_is_held_at_the_oldest_patient_studied() {
    // Tod 1998 studied ages 18-85 (Table 1); its age factor (0.985 - age/100) reaches 0 at
    // 98.5 years. ebb caps the age at 85 in the clearance (our guard, not the paper's): a man
    // of 95 or of 101 gets the clearance of a man of 85 with the same weight and creatinine,
    // hand-worked from the Table 4 equation at age 85.
    let at_85 = tod_clearance(true, 85.0, 60.0, 100.0);
    for age in ["95.0", "101.0"] {
        let text = case(
            &format!(
                "weight_kg = 60.0\nage_years = {age}\nsex = \"male\"\ncreatinine_umol_l = 100.0"
            ),
            "",
        );
        let p = population(&text);
        let t = p.two.unwrap();
        assert!(rel(t.cl, at_85) < 1e-9, "{age}: {} vs {at_85}", t.cl);
        // The renal part stays above 0, and the age outside the population is said.
        assert!(t.cl > 1.66 + 0.1, "{}", t.cl);
        assert!(
            p.warnings
                .iter()
                .any(|w| w.code() == Code::OutsidePopulation
                    && w.text().starts_with(&format!(
                        "age {} years is outside the 18–85 years",
                        age.trim_end_matches(".0")
                    ))),
            "{:?}",
            p.warnings
        );
        assert!(
            p.warnings.iter().any(|w| w
                .text()
                .contains("this cap is ebb's guard, not the paper's")),
            "{:?}",
            p.warnings
        );
    }
    // Below the cap the published equation holds as printed.
    let p = population(&case(
        "weight_kg = 60.0\nage_years = 84.0\nsex = \"male\"\ncreatinine_umol_l = 100.0",
        "",
    ));
    let cl = tod_clearance(true, 84.0, 60.0, 100.0);
    assert!(rel(p.two.unwrap().cl, cl) < 1e-9);
}

#[test]
fn a_patient_without_sex_or_creatinine_is_named() {
    let file = CaseFile::parse(&case(
        "weight_kg = 70.0\nage_years = 60.0\ncreatinine_mg_dl = 1.0",
        "",
    ))
    .unwrap();
    let case_ = ebb::cli::analyse_parsed(&file, None).unwrap().case.unwrap();
    let e = bayes::population_of(&case_).unwrap_err().to_string();
    assert!(
        e.starts_with("patient.sex: missing; the population model tod-1998 uses sex"),
        "{e}"
    );
    let file = CaseFile::parse(&case(
        "weight_kg = 70.0\nage_years = 60.0\nsex = \"male\"",
        "",
    ))
    .unwrap();
    let case_ = ebb::cli::analyse_parsed(&file, None).unwrap().case.unwrap();
    let e = bayes::population_of(&case_).unwrap_err().to_string();
    assert!(e.starts_with("patient.creatinine_mg_dl: missing"), "{e}");
}

#[test]
fn the_power_residual_is_its_formula_and_exponent_1_the_usual_error() {
    // Tod 1998, Table 4: y = ŷ + ε·ŷ^b, Var(ε) = 0.189, b = 0.939, so Var = 0.189 x ŷ^1.878
    // (hand-worked; population-models.md, AMK-A).
    let tod = Residual {
        additive_mg_l: 0.0,
        proportional: 0.189f64.sqrt(),
        exponent: 0.939,
    };
    for c in [0.5f64, 3.0, 25.0, 60.0] {
        let want = 0.189 * c.powf(1.878);
        assert!(rel(tod.variance(c), want) < 1e-12, "{c}");
    }
    // SD = √0.189 x ŷ^0.939 (√0.189 = 0.4347, printed 0.435 in the notes): at 25 mg/L,
    // 0.4347 x 20.54 = 8.93 mg/L (hand-worked).
    assert!((tod.variance(25.0).sqrt() - 8.93).abs() < 0.005);
    // With an additive part too: add² + prop²·ŷ^(2b) (the definition, self-consistency).
    let both = Residual {
        additive_mg_l: 0.5,
        ..tod
    };
    assert!(rel(both.variance(10.0), 0.25 + 0.189 * 10f64.powf(1.878)) < 1e-12);
    // Exponent 1 is the combined error add² + (prop·ŷ)², bit for bit.
    for (a, p) in [(0.0, 0.38), (3.4, 0.227), (0.13, 0.24), (3.52, 0.0)] {
        let r = Residual {
            additive_mg_l: a,
            proportional: p,
            exponent: 1.0,
        };
        for c in [0.0, 0.1, 1.7, 14.0, 38.25, 250.0] {
            assert_eq!(
                r.variance(c).to_bits(),
                (a * a + (p * c).powi(2)).to_bits(),
                "{a} {p} {c}"
            );
        }
    }
}

/// Three 500-mg infusions over 0.5 h every 12 h, as `(start h, mg, hours)` and as ebb's
/// administrations.
fn three_doses() -> (Vec<(f64, f64, f64)>, Vec<Administration>) {
    let doses: Vec<(f64, f64, f64)> = (0..3).map(|i| (12.0 * i as f64, 500.0, 0.5)).collect();
    let given = doses
        .iter()
        .map(|&(t, mg, h)| Administration {
            t,
            amount_mg: mg,
            route: Route::Infusion { hours: h },
        })
        .collect();
    (doses, given)
}

#[test]
fn the_tod_map_is_the_minimum_an_independent_minimiser_finds() {
    // The reference man; a peak 30 min after the end of the third infusion (in the
    // distribution phase, as the model describes it) and a trough. The objective is written
    // out here from its definition (population-models.md, "How a program uses these models"):
    // Σ (y − ŷ)²/Var + ln Var + ηᵀΩ⁻¹η, with Var = 0.189·ŷ^1.878 (Tod 1998, Table 4) and η on
    // CL, V1, Q and V2 (diagonal Ω).
    let pop = population(&case(MAN, ""));
    let (doses, given) = three_doses();
    let pts = [(25.0, 30.0), (35.75, 3.1)];
    let typical = pop.two.unwrap();
    let om = pop.omega_two().map(|w| w.unwrap());
    let obj = |x: &[f64]| {
        let t = TwoCompartment {
            cl: typical.cl * x[0].exp(),
            v1: typical.v1 * x[1].exp(),
            q: typical.q * x[2].exp(),
            v2: typical.v2 * x[3].exp(),
        };
        let mut total = 0.0;
        for &(ti, y) in &pts {
            let yhat = level(&t, &doses, ti);
            let var = 0.189 * yhat.powf(2.0 * 0.939);
            total += (y - yhat).powi(2) / var + var.ln();
        }
        total + (0..4).map(|i| (x[i] / om[i]).powi(2)).sum::<f64>()
    };
    let nm = nelder_mead(&obj, &[0.0; 4]);
    let (e, _) = estimate_two(&given, &pts, &pop);
    for i in 0..4 {
        assert!((e.eta[i] - nm[i]).abs() < 1e-4, "{:?} vs {nm:?}", e.eta);
    }
    assert!(obj(&e.eta) <= obj(&nm) + 1e-9);
    // ebb's objective agrees with the one written here.
    let sched = ebb::core::model::Schedule::new(&given);
    assert!((bayes::objective(&pop, &sched, &pts, &[], &e.eta) - obj(&e.eta)).abs() < 1e-9);
}

/// An invented patient for the end-to-end case (not a check against the outside world).
fn bedside_case() -> String {
    let mut s = String::from(
        "schema = 1\n[patient]\nlabel = \"Bed 4, haematology (invented)\"\nweight_kg = 70.0\nage_years = 60\nsex = \"male\"\ncreatinine_umol_l = 88.4\n\
         [drug]\nname = \"amikacin\"\nprofile = \"amikacin\"\nlevel_unit = \"mg/L\"\n\
         [fit]\nmethod = \"bayesian\"\nmodel = \"tod-1998\"\n",
    );
    for t in [
        "2027-04-01T08:00:00",
        "2027-04-01T20:00:00",
        "2027-04-02T08:00:00",
    ] {
        s += &format!(
            "[[dose]]\ntime = {t}\namount_mg = 500.0\nroute = \"infusion\"\ninfusion_h = 0.5\n"
        );
    }
    s += "[[level]]\ntime = 2027-04-02T09:00:00\nvalue = 30.0\n";
    s += "[[level]]\ntime = 2027-04-02T19:45:00\nvalue = 3.1\n";
    s += "[plan]\ndose_mg = 500.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 0.5\n";
    s
}

#[test]
fn a_bayesian_tod_case_runs_through_report_json_and_note() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("amikacin.toml");
    std::fs::write(&path, bedside_case()).unwrap();
    let run = |args: &[&str]| {
        let out = crate::common::ebb().args(args).arg(&path).output().unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8(out.stdout).unwrap()
    };
    let json: serde_json::Value = serde_json::from_str(&run(&["report", "--json"])).unwrap();
    let fit = &json["fit"];
    assert_eq!(fit["method"], "bayesian");
    assert_eq!(fit["model"], "tod-1998");
    assert_eq!(fit["compartments"], 2);
    assert_eq!(fit["levels_used"], 2);
    // The disposition the JSON gives is one two-compartment model: its terminal half-life
    // is ln 2/β and its distribution half-life ln 2/α (macro-constants written out in
    // population_two.rs).
    let t = TwoCompartment {
        cl: fit["clearance_l_per_h"].as_f64().unwrap(),
        v1: fit["volume_l"].as_f64().unwrap(),
        q: fit["intercompartmental_clearance_l_per_h"]
            .as_f64()
            .unwrap(),
        v2: fit["peripheral_volume_l"].as_f64().unwrap(),
    };
    let (alpha, beta) = macro_rates(&t);
    let ln2 = std::f64::consts::LN_2;
    assert!(rel(fit["half_life_h"].as_f64().unwrap(), ln2 / beta) < 1e-9);
    assert!(rel(fit["k_per_h"].as_f64().unwrap(), beta) < 1e-9);
    assert!(
        rel(
            fit["distribution_half_life_h"].as_f64().unwrap(),
            ln2 / alpha
        ) < 1e-9
    );
    // Distribution over in well under an hour, terminal half-life of hours (amikacin 2-3 h
    // with normal kidney function [AccessPharm-AG in the profile]; the model's typical
    // patient: a few hours).
    assert!(
        ln2 / alpha < 1.0 && ln2 / beta > 2.0 && ln2 / beta < 8.0,
        "{alpha} {beta}"
    );
    // The population values and where they came from; no Cockcroft-Gault clearance is said
    // to be a covariate of a model that reads serum creatinine.
    let pop = &fit["population"];
    assert!(
        rel(
            pop["clearance_l_per_h"].as_f64().unwrap(),
            tod_clearance(true, 60.0, 70.0, 88.4)
        ) < 1e-9
    );
    assert!(pop["creatinine_clearance_ml_min"].is_null());
    assert!(pop["sources"][0]
        .as_str()
        .unwrap()
        .starts_with("Tod M, Lortholary O"));
    // The peak target is read 30 min after the end of the infusion (1 h after its start,
    // the profile's sampling), below the end-of-infusion peak of a two-compartment model.
    let plan = &json["plan"];
    assert_eq!(plan["peak_sampled_after_h"], 0.5);
    assert!(plan["peak_sampled_ss"].as_f64().unwrap() < plan["peak_ss"].as_f64().unwrap());
    let warnings: Vec<&str> = json["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w.as_str().unwrap())
        .collect();
    assert!(
        warnings.iter().any(|w| w.starts_with(
            "population model tod-1998 (two compartments): chosen in the case ([fit] model) over the drug profile's default steffens-2025"
        )),
        "{warnings:?}"
    );
    assert!(
        !warnings.iter().any(|w| w.contains("Cockcroft-Gault")),
        "{warnings:?}"
    );

    // The text report and the note say two compartments, the distribution half-life and the
    // terminal half-life.
    let text = run(&["report"]);
    for want in [
        "Figures assume linear two-compartment kinetics",
        "  model       two compartments: distribution half-life ",
        " (terminal)",
        " L central ",
        " L peripheral ",
        "  model       tod-1998: Tod 1998: febrile, severely neutropenic adults",
        "peak 0.5 h after the end at steady state",
    ] {
        assert!(text.contains(want), "{want}\n{text}");
    }
    let population_line = text
        .lines()
        .find(|l| l.starts_with("  population  "))
        .unwrap();
    assert!(
        !population_line.contains("Cockcroft-Gault"),
        "{population_line}"
    );
    let note = run(&["note"]);
    for want in [
        "Linear two-compartment model, first-order elimination (distribution half-life ",
        "k and half-life are the terminal phase's",
        "tod-1998",
    ] {
        assert!(note.contains(want), "{want}\n{note}");
    }
}

#[test]
fn before_any_level_the_tod_model_gives_an_a_priori_regimen() {
    // Tod 1998 may stand alone before the first level (Steffens 2025 may not): AUC24 at
    // steady state = daily dose / CL (hand-worked: 1000 mg a day over the Table 4 clearance).
    let text = case(
        MAN,
        "[plan]\nstart = 2027-03-02T08:00:00\ndose_mg = 500.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 0.5\n",
    );
    let a = ebb::cli::analyse_parsed(&CaseFile::parse(&text).unwrap(), None).unwrap();
    let fit = a.fit.clone().unwrap();
    assert_eq!(fit.method, Method::Population);
    assert_eq!(fit.compartments(), 2);
    let r = a.finished().unwrap().report;
    let j: serde_json::Value = serde_json::from_str(&ebb::core::json::to_json(&r)).unwrap();
    let cl = tod_clearance(true, 60.0, 70.0, 88.4);
    let auc = j["plan"]["auc24_ss"].as_f64().unwrap();
    assert!(rel(auc, 1000.0 / cl) < 1e-9, "{auc}");
}

fn amikacin_text() -> String {
    std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("drug-profiles/amikacin.toml"),
    )
    .unwrap()
}

fn refused(text: &str) -> String {
    ebb::profiles::parse_profile(text, "amikacin.toml")
        .expect_err("refused")
        .to_string()
}

fn line_of(text: &str, starts: &str) -> usize {
    text.lines().position(|l| l.starts_with(starts)).unwrap() + 1
}

#[test]
fn the_profile_refuses_nonsense_in_the_new_fields() {
    let text = amikacin_text();
    assert!(ebb::profiles::parse_profile(&text, "amikacin.toml").is_ok());
    let residual = "residual = { proportional = 0.4347413023856832, exponent = 0.939";
    assert!(text.contains(residual));
    let line = line_of(&text, residual);
    for (bad, why) in [
        ("-0.939", "must be above 0, got -0.939"),
        ("0.0", "must be above 0, got 0"),
        ("nan", "must be above 0, got NaN"),
        ("inf", "must be above 0, got inf"),
    ] {
        let e = refused(&text.replace(residual, &residual.replace("0.939", bad)));
        assert!(
            e.contains(&format!("line {line}: field model[2].residual.exponent: the power of the prediction in the proportional error {why}")),
            "{e}"
        );
    }
    // A power of the prediction without a proportional error is refused too.
    let e = refused(&text.replace(residual, "residual = { additive = 1.0, exponent = 0.939"));
    assert!(
        e.contains("field model[2].residual.exponent: a power of the prediction needs a proportional error above 0"),
        "{e}"
    );
    let after = "add_after_terms = 1.66";
    let line = line_of(&text, after);
    for bad in ["inf", "-inf", "nan"] {
        let e = refused(&text.replace(after, &format!("add_after_terms = {bad}")));
        let shown = match bad {
            "nan" => "NaN",
            other => other,
        };
        assert!(
            e.contains(&format!(
                "line {line}: field model[2].clearance.add_after_terms: must be a finite number, got {shown}"
            )),
            "{e}"
        );
    }
    let cap = "cap = 85.0";
    let e = refused(&text.replace(cap, "cap = nan"));
    assert!(
        e.contains("field model[2].clearance: the cap of the term of age_years must be a finite number, got NaN"),
        "{e}"
    );
    // An unknown field beside them is still an error naming it.
    let e = refused(&text.replace(after, "add_before_terms = 1.66"));
    assert!(e.contains("add_before_terms"), "{e}");
}
