//! Two-compartment population models and the choice of model: the typical values of Goti 2018
//! (vancomycin, with and without haemodialysis) and Staatz 2006 (gentamicin) for the
//! reference patient, hand-worked from the published equations; the Bayesian estimate of a
//! two-compartment model against a Nelder-Mead minimum of the objective written out here, and
//! against the truth with many exact levels; a level in the distribution phase used as drawn;
//! `[fit] model` naming the model.

use ebb::core::bayes;
use ebb::core::casefile::CaseFile;
use ebb::core::fitted::{Fit, Method};
use ebb::core::model::{Administration, Route, TwoCompartment};
use ebb::core::population::Population;
use ebb::core::warning::Code;

use super::bayes_prior::nelder_mead;

/// The reference patient of our population-model notes: a man of 60 years, 70 kg, 175 cm,
/// serum creatinine 1.0 mg/dL; Cockcroft-Gault (Cockcroft & Gault, Nephron 1976;16:31-41) on
/// total weight: (140 - 60) x 70 / 72 = 77.78 mL/min.
fn reference(profile: &str, extra: &str) -> String {
    format!(
        "[patient]\nweight_kg = 70.0\nheight_cm = 175.0\nage_years = 60.0\nsex = \"male\"\ncreatinine_mg_dl = 1.0\n\
         [drug]\nprofile = \"{profile}\"\nlevel_unit = \"mg/L\"\n{extra}"
    )
}

const CRCL: f64 = 80.0 * 70.0 / 72.0;

fn population(text: &str) -> Population {
    let file = CaseFile::parse(text).unwrap();
    let case = ebb::cli::analyse_parsed(&file, None)
        .unwrap()
        .case
        .expect("a valid case");
    bayes::population_of(&case).unwrap()
}

fn fit_of(text: &str) -> Fit {
    let file = CaseFile::parse(text).unwrap();
    let a = ebb::cli::analyse_parsed(&file, None).unwrap();
    assert!(a.stop.is_none(), "{:?}", a.stop);
    a.fit.expect("a fit")
}

/// α and β of a two-compartment model, the roots of λ² − (k10 + k12 + k21)·λ + k10·k21 = 0
/// (written out here from the quadratic formula).
pub(super) fn macro_rates(t: &TwoCompartment) -> (f64, f64) {
    let (k10, k12, k21) = (t.cl / t.v1, t.q / t.v1, t.q / t.v2);
    let b = k10 + k12 + k21;
    let root = (b * b - 4.0 * k10 * k21).sqrt();
    ((b + root) / 2.0, (b - root) / 2.0)
}

/// The level (mg/L) at `t` after constant-rate infusions `(start, mg, hours)`, each mode's
/// infusion response summed over the doses, written out here.
pub(super) fn level(t2: &TwoCompartment, doses: &[(f64, f64, f64)], t: f64) -> f64 {
    let (alpha, beta) = macro_rates(t2);
    let k21 = t2.q / t2.v2;
    let d = t2.v1 * (alpha - beta);
    let modes = [(alpha, (alpha - k21) / d), (beta, (k21 - beta) / d)];
    let mut c = 0.0;
    for &(start, mg, hours) in doses {
        let s = t - start;
        if s <= 0.0 {
            continue;
        }
        let rate = mg / hours;
        for (lam, a) in modes {
            c += if s <= hours {
                rate * a / lam * (1.0 - (-lam * s).exp())
            } else {
                rate * a / lam * (1.0 - (-lam * hours).exp()) * (-lam * (s - hours)).exp()
            };
        }
    }
    c
}

fn goti_dose_record() -> String {
    let mut s = String::new();
    for day in 2..4 {
        for hour in ["08", "20"] {
            s.push_str(&format!(
                "[[dose]]\ntime = 2027-03-0{day}T{hour}:00:00\namount_mg = 1000.0\nroute = \"infusion\"\ninfusion_h = 1.0\n"
            ));
        }
    }
    s
}

#[test]
fn goti_2018_typical_values_for_the_reference_patient_with_and_without_haemodialysis() {
    // Hand-worked from Goti et al., Ther Drug Monit 2018;40:212-221, Table 2:
    // CL = 4.5 x (CrCl/120)^0.8 x 0.7^DIAL L/h, Vc = 58.4 x (WT/70) x 0.5^DIAL L,
    // Vp = 38.4 x (WT/70) L, Q = 6.5 L/h; CrCl by Cockcroft-Gault in mL/min (the reference
    // patient is 60: no floor on creatinine, which is 1.0 anyway; below the 150 cap).
    let cl = 4.5 * (CRCL / 120.0).powf(0.8);
    assert!((cl - 3.1809).abs() < 1e-4, "{cl}");
    let p = population(&reference("vancomycin", ""));
    assert_eq!(p.model, "goti-2018");
    let t = p.two.expect("two compartments");
    assert!((t.cl - cl).abs() < 1e-9, "{}", t.cl);
    assert!((t.v1 - 58.4).abs() < 1e-9);
    assert!((t.q - 6.5).abs() < 1e-12);
    assert!((t.v2 - 38.4).abs() < 1e-9);
    assert!((p.clearance_l_per_h - cl).abs() < 1e-9);
    assert!((p.volume_l - 58.4).abs() < 1e-9);
    // k stands for the terminal rate constant β.
    assert!((p.k_per_h - macro_rates(&t).1).abs() < 1e-12);
    // Between-patient variability on CL, Vc and Vp (39.8, 81.6, 57.1 % CV, ω² = ln(1 + CV²)),
    // none on Q.
    let w = |cv: f64| (1.0f64 + cv * cv).ln().sqrt();
    let om = p.omega_two();
    assert!((om[0].unwrap() - w(0.398)).abs() < 1e-12);
    assert!((om[1].unwrap() - w(0.816)).abs() < 1e-12);
    assert_eq!(om[2], None);
    assert!((om[3].unwrap() - w(0.571)).abs() < 1e-12);
    assert!((p.residual.additive_mg_l - 3.4).abs() < 1e-12);
    assert!((p.residual.proportional - 0.227).abs() < 1e-12);

    // On intermittent haemodialysis: CL x 0.7 and Vc x 0.5 (the published covariate effects).
    let hd = population(&reference("vancomycin", "").replace(
        "creatinine_mg_dl = 1.0",
        "creatinine_mg_dl = 1.0\ndialysis = true",
    ));
    let h = hd.two.unwrap();
    assert!((h.cl - 0.7 * cl).abs() < 1e-9, "{}", h.cl);
    assert!((h.v1 - 0.5 * 58.4).abs() < 1e-9);
    assert!((h.v2 - 38.4).abs() < 1e-9);
    // No haemodialysis warning from Goti: its population included such patients.
    assert!(
        !hd.warnings
            .iter()
            .any(|w| w.text().contains("without patients on haemodialysis")),
        "{:?}",
        hd.warnings
    );
}

#[test]
fn a_dialysis_patients_a_priori_auc24_is_the_daily_dose_over_the_reduced_clearance() {
    // Before any level: AUC24 at steady state = daily dose / CL (hand-worked from Goti 2018,
    // Table 2: CL x 0.7 on haemodialysis, so the same regimen gives 1/0.7 = 1.43 times the
    // AUC24). 1000 mg every 24 h.
    let plan = "[plan]\nstart = 2027-03-02T08:00:00\ndose_mg = 1000.0\ninterval_h = 24.0\nroute = \"infusion\"\ninfusion_h = 1.0\n";
    let without = fit_of(&reference("vancomycin", plan));
    let with = fit_of(&reference("vancomycin", plan).replace(
        "creatinine_mg_dl = 1.0",
        "creatinine_mg_dl = 1.0\ndialysis = true",
    ));
    let cl = 4.5 * (CRCL / 120.0).powf(0.8);
    for (f, cl) in [(&without, cl), (&with, 0.7 * cl)] {
        assert_eq!(f.method, Method::Population);
        assert_eq!(f.compartments(), 2);
        let d = f.disposition().unwrap();
        let ss = d.steady_state(1000.0, Route::Infusion { hours: 1.0 }, 24.0);
        assert!(
            (ss.auc24_mg_h_l - 1000.0 / cl).abs() < 1e-9,
            "{}",
            ss.auc24_mg_h_l
        );
    }
    // And the report's plan says the same.
    let hd_text = reference("vancomycin", plan).replace(
        "creatinine_mg_dl = 1.0",
        "creatinine_mg_dl = 1.0\ndialysis = true",
    );
    let a = ebb::cli::analyse_parsed(&CaseFile::parse(&hd_text).unwrap(), None).unwrap();
    let r = a.finished().unwrap().report;
    let j: serde_json::Value = serde_json::from_str(&ebb::core::json::to_json(&r)).unwrap();
    assert_eq!(j["fit"]["model"], "goti-2018");
    assert_eq!(j["fit"]["compartments"], 2);
    let auc = j["plan"]["auc24_ss"].as_f64().unwrap();
    assert!((auc - 1000.0 / (0.7 * cl)).abs() < 1e-6, "{auc}");
    let ratio = with.clearance_l_per_h.unwrap() / without.clearance_l_per_h.unwrap();
    assert!((ratio - 0.7).abs() < 1e-12);
    // The population's 90 % range of CL is e^(±1.645 ω_CL) around it.
    let w = (1.0f64 + 0.398 * 0.398).ln().sqrt();
    let [lo, hi] = with.clearance_ci95.unwrap();
    let c = with.clearance_l_per_h.unwrap();
    assert!((lo - c * (-1.644_854 * w).exp()).abs() < 1e-5, "{lo}");
    assert!((hi - c * (1.644_854 * w).exp()).abs() < 1e-5, "{hi}");
}

#[test]
fn staatz_2006_typical_values_for_the_reference_patient() {
    // Hand-worked from Staatz et al., Br J Clin Pharmacol 2006;61:164-176, Table 4 (all data):
    // CL = 2.81 x (1 + 0.0150 x (CrCl - 63)) L/h, V1 = 0.251 x WT, V2 = 0.156 x WT L,
    // Q = 1.45 L/h; CrCl by Cockcroft-Gault in mL/min, creatinine below 60 µmol/L raised to it.
    let p = population(&reference("gentamicin", ""));
    assert_eq!(p.model, "staatz-2006");
    let t = p.two.unwrap();
    let cl = 2.81 * (1.0 + 0.015 * (CRCL - 63.0));
    assert!((cl - 3.4329).abs() < 1e-4, "{cl}");
    assert!((t.cl - cl).abs() < 1e-9, "{}", t.cl);
    assert!((t.v1 - 0.251 * 70.0).abs() < 1e-9);
    assert!((t.v2 - 0.156 * 70.0).abs() < 1e-9);
    assert!((t.q - 1.45).abs() < 1e-12);
    // Variability on CL (27 %) and V2 (84 %) only.
    let om = p.omega_two();
    assert!(om[0].is_some() && om[1].is_none() && om[2].is_none() && om[3].is_some());
    // Creatinine 0.5 mg/dL (44 µmol/L) is raised to 60 µmol/L = 0.67873 mg/dL first.
    let low = population(
        &reference("gentamicin", "").replace("creatinine_mg_dl = 1.0", "creatinine_mg_dl = 0.5"),
    );
    let crcl = 80.0 * 70.0 / (72.0 * 60.0 / 88.4);
    assert!(
        (low.creatinine_clearance.unwrap().ml_min - crcl).abs() < 0.01,
        "{:?}",
        low.creatinine_clearance
    );
    // The summary values stay available by name.
    let s = population(&reference(
        "gentamicin",
        "[fit]\nmodel = \"summary-values\"\n",
    ));
    assert_eq!(s.model, "summary-values");
    assert!(s.two.is_none());
}

#[test]
fn the_two_compartment_map_is_the_minimum_an_independent_minimiser_finds() {
    // Goti 2018 for the reference patient; a trough, a level 15 min after the end of an
    // infusion (distribution phase) and one in mid-interval. The objective is written out
    // here from its definition (population-models.md, "How a program uses these models"),
    // with the two-compartment level from the macro-constants above; η on CL, Vc and Vp.
    let pop = population(&reference("vancomycin", ""));
    let doses: Vec<(f64, f64, f64)> = (0..4).map(|i| (12.0 * i as f64, 1000.0, 1.0)).collect();
    let given = infusions(&doses);
    let pts = [(35.9, 14.0), (37.25, 38.0), (42.0, 24.0)];
    let typical = pop.two.unwrap();
    let om = pop.omega_two().map(|w| w.unwrap_or(0.0));
    let (add, prop) = (pop.residual.additive_mg_l, pop.residual.proportional);
    let obj = |x: &[f64]| {
        let t = TwoCompartment {
            cl: typical.cl * x[0].exp(),
            v1: typical.v1 * x[1].exp(),
            q: typical.q,
            v2: typical.v2 * x[2].exp(),
        };
        let mut total = 0.0;
        for &(ti, y) in &pts {
            let yhat = level(&t, &doses, ti);
            let var = add * add + (prop * yhat).powi(2);
            total += (y - yhat).powi(2) / var + var.ln();
        }
        total + (x[0] / om[0]).powi(2) + (x[1] / om[1]).powi(2) + (x[2] / om[3]).powi(2)
    };
    let nm = nelder_mead(&obj, &[0.0, 0.0, 0.0]);
    let (e, _) = estimate_two(&given, &pts, &pop);
    assert_eq!(e.eta[2], 0.0, "Q stays at its typical value");
    for (i, j) in [(0, 0), (1, 1), (3, 2)] {
        assert!((e.eta[i] - nm[j]).abs() < 1e-5, "{:?} vs {nm:?}", e.eta);
    }
    let x = [e.eta[0], e.eta[1], e.eta[3]];
    assert!(obj(&x) <= obj(&nm) + 1e-9);
    // ebb's objective agrees with the one written here.
    let sched = ebb::core::model::Schedule::new(&given);
    assert!((bayes::objective(&pop, &sched, &pts, &[], &x) - obj(&x)).abs() < 1e-9);
    // The posterior covariance is that of ln(CL, V1, Q, V2): Q's row is zero.
    assert!(e.cov_eta[2].iter().all(|c| *c == 0.0));
    assert!(e.cov_eta[0][0] > 0.0 && e.cov_eta[0][0] < om[0] * om[0]);
}

#[test]
fn with_many_exact_levels_the_estimate_approaches_the_truth() {
    // A patient away from the typical values (self-consistency: levels computed here from
    // the macro-constants, exact). The residual error is made small here: with the model's
    // own (3.4 mg/L + 22.7 %) the ln Var term of the objective leans every level's prediction
    // down by the same share however many levels there are (docs/methods-history.md).
    let mut pop = population(&reference("vancomycin", ""));
    pop.residual.additive_mg_l = 0.01;
    pop.residual.proportional = 0.01;
    let typical = pop.two.unwrap();
    let truth = TwoCompartment {
        cl: typical.cl * 1.4,
        v1: typical.v1 * 0.6,
        q: typical.q,
        v2: typical.v2 * 1.3,
    };
    let doses: Vec<(f64, f64, f64)> = (0..6).map(|i| (12.0 * i as f64, 1250.0, 1.5)).collect();
    let given = infusions(&doses);
    let pts: Vec<(f64, f64)> = (0..120)
        .map(|i| 0.6 + i as f64 * 0.6)
        .map(|t| (t, level(&truth, &doses, t)))
        .collect();
    let (e, two) = estimate_two(&given, &pts, &pop);
    let rel = |a: f64, b: f64| (a / b - 1.0).abs();
    assert!(rel(two.cl, truth.cl) < 0.02, "{:?} vs {truth:?}", two);
    assert!(rel(two.v1, truth.v1) < 0.05, "{:?} vs {truth:?}", two);
    assert!(rel(two.v2, truth.v2) < 0.05, "{:?} vs {truth:?}", two);
    // And the interval narrows far below the population's spread.
    let om = pop.omega_two()[0].unwrap();
    assert!(e.cov_eta[0][0].sqrt() < om / 5.0, "{:?}", e.cov_eta);
}

#[test]
fn a_bayesian_two_compartment_fit_carries_its_disposition_and_spread() {
    let one = "[[level]]\ntime = 2027-03-03T19:30:00\nvalue = 15.0\n";
    let f = fit_of(&reference(
        "vancomycin",
        &format!("{}{one}", goti_dose_record()),
    ));
    assert_eq!(f.method, Method::Bayesian);
    let t = f.two.expect("two compartments");
    assert_eq!(f.compartments(), 2);
    let beta = macro_rates(&t).1;
    assert!((f.k - beta).abs() < 1e-12);
    assert!((f.half_life_h - std::f64::consts::LN_2 / beta).abs() < 1e-9);
    assert_eq!(f.volume_l, Some(t.v1));
    assert_eq!(f.clearance_l_per_h, Some(t.cl));
    assert!(f.spread.is_none());
    let ps = f.param_spread.as_ref().unwrap();
    assert!((ps.quantile - 1.959_964).abs() < 1e-6);
    assert!(ps.cov[2].iter().all(|c| *c == 0.0), "Q is fixed");
    let [lo, hi] = f.k_ci95.unwrap();
    assert!(lo < f.k && f.k < hi);
    let [hlo, hhi] = f.half_life_ci95.unwrap();
    assert!((hlo - std::f64::consts::LN_2 / hi).abs() < 1e-9);
    assert!((hhi - std::f64::consts::LN_2 / lo).abs() < 1e-9);
    let [clo, chi] = f.clearance_ci95.unwrap();
    let se = ps.cov[0][0].sqrt();
    assert!((clo - t.cl * (-ps.quantile * se).exp()).abs() < 1e-9);
    assert!((chi - t.cl * (ps.quantile * se).exp()).abs() < 1e-9);
    assert_eq!(f.population.as_ref().unwrap().population.model, "goti-2018");
    // The choice and its reason are said.
    let said: Vec<&str> = f.warnings.iter().map(|w| w.text()).collect();
    assert!(
        said.iter().any(|w| w.starts_with(
            "population model goti-2018 (two compartments): the drug profile's default: its 1,812"
        )),
        "{said:?}"
    );
}

#[test]
fn a_level_in_the_distribution_phase_is_used_and_said_to_be_modelled() {
    // 15 min after the end of the fourth infusion: inside vancomycin's first hour.
    let early = "[[level]]\ntime = 2027-03-03T21:15:00\nvalue = 35.0\n[[level]]\ntime = 2027-03-04T07:30:00\nvalue = 14.0\n";
    // Both levels follow the same dose, so the automatic choice would be the two-point fit:
    // the Bayesian estimate is asked for.
    let text = reference(
        "vancomycin",
        &format!(
            "[fit]\nmethod = \"bayesian\"\n{}{early}",
            goti_dose_record()
        ),
    );
    let file = CaseFile::parse(&text).unwrap();
    let a = ebb::cli::analyse_parsed(&file, None).unwrap();
    let fit = a.fit.clone().unwrap();
    assert_eq!(fit.method, Method::Bayesian);
    assert_eq!(fit.used.len(), 2, "both levels are in the fit");
    let r = a.finished().unwrap().report;
    let said: Vec<String> = r.warnings.iter().map(|w| w.text().to_string()).collect();
    assert!(
        said.iter()
            .any(|w| w.starts_with("level 1 drawn in the distribution phase: the two-compartment model describes that phase")),
        "{said:?}"
    );
    assert!(
        !r.warnings
            .iter()
            .any(|w| w.level_row() == Some(1) && w.code() == Code::DistributionPhase),
        "{said:?}"
    );
    // The terminal half-life of a two-compartment fit is not held against the profile's
    // one-compartment half-life range (3-13 h).
    assert!(fit.half_life_h > 13.0, "{}", fit.half_life_h);
    assert!(
        !r.warnings
            .iter()
            .any(|w| w.code() == Code::HalfLifeImplausible),
        "{said:?}"
    );
    // With the one-compartment model the same level is still warned about.
    let buelga = text.replace(
        "method = \"bayesian\"\n",
        "method = \"bayesian\"\nmodel = \"buelga-2005\"\n",
    );
    let a = ebb::cli::analyse_parsed(&CaseFile::parse(&buelga).unwrap(), None).unwrap();
    let r = a.finished().unwrap().report;
    assert!(
        r.warnings
            .iter()
            .any(|w| w.level_row() == Some(1) && w.text().contains("would distort k")),
        "{:?}",
        r.warnings
    );
}

#[test]
fn the_case_names_its_model_and_an_unknown_name_lists_the_profiles() {
    let pick = |name: &str| {
        reference(
            "vancomycin",
            &format!("[fit]\nmodel = \"{name}\"\n{}", goti_dose_record()),
        )
    };
    let f = fit_of(&pick("buelga-2005"));
    assert!(f.two.is_none());
    assert_eq!(f.compartments(), 1);
    assert!(f
        .warnings
        .iter()
        .any(|w| w.text().starts_with("population model buelga-2005 (one compartment): chosen in the case ([fit] model) over the drug profile's default goti-2018")));
    let file = CaseFile::parse(&pick("goti-2019")).unwrap();
    let a = ebb::cli::analyse_parsed(&file, None).unwrap();
    let e = a.finished().err().unwrap().to_string();
    assert!(
        e.contains(
            "fit.model: the drug profile has no population model \"goti-2019\"; it has goti-2018, buelga-2005"
        ),
        "{e}"
    );
}

#[test]
fn profiles_show_lists_the_models_and_why_the_default() {
    let out = crate::common::ebb()
        .args(["profiles", "show", "gentamicin"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let s = String::from_utf8(out.stdout).unwrap();
    assert!(
        s.contains("Population models (a case chooses with [fit] model; default: staatz-2006):"),
        "{s}"
    );
    assert!(s.contains("  * staatz-2006 "), "{s}");
    assert!(s.contains("    summary-values "), "{s}");
    assert!(
        s.contains("    the default because it follows creatinine clearance"),
        "{s}"
    );
}

#[test]
fn its_95_percent_interval_of_clearance_covers_the_truth_about_95_percent_of_the_time() {
    // Patients drawn from Goti 2018 itself for the reference patient (η of CL, Vc and Vp
    // from the prior, levels with the model's residual error; self-consistency), one estimate
    // each from a level an hour after an infusion and a trough: the 95 % interval of clearance
    // should hold the patient's true clearance in about 95 % of them. It holds it in about
    // 92.5 % (seeds 1-3 and 12 of 2,000 patients: 92.4-92.9 %): the Laplace approximation is a
    // little narrow for this model from two levels.
    use rand::rngs::StdRng;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};
    let pop = population(&reference("vancomycin", ""));
    let typical = pop.two.unwrap();
    let om = pop.omega_two().map(|w| w.unwrap_or(0.0));
    let doses: Vec<(f64, f64, f64)> = (0..4).map(|i| (12.0 * i as f64, 1000.0, 1.0)).collect();
    let given = infusions(&doses);
    let mut rng = StdRng::seed_from_u64(12);
    let (mut inside, n) = (0, 2000);
    for _ in 0..n {
        let mut z = [0.0; 3];
        for x in &mut z {
            *x = StandardNormal.sample(&mut rng);
        }
        let truth = TwoCompartment {
            cl: typical.cl * (om[0] * z[0]).exp(),
            v1: typical.v1 * (om[1] * z[1]).exp(),
            q: typical.q,
            v2: typical.v2 * (om[3] * z[2]).exp(),
        };
        let pts: Vec<(f64, f64)> = [38.0, 47.9]
            .iter()
            .map(|&t| {
                let c = level(&truth, &doses, t);
                let e: f64 = StandardNormal.sample(&mut rng);
                (t, (c + pop.residual.variance(c).sqrt() * e).max(0.1))
            })
            .collect();
        let (e, two) = estimate_two(&given, &pts, &pop);
        let [lo, hi] = e.param_spread().interval(two.cl, &[1.0, 0.0, 0.0, 0.0]);
        if (lo..=hi).contains(&truth.cl) {
            inside += 1;
        }
    }
    let share = inside as f64 / n as f64;
    assert!((0.91..=0.95).contains(&share), "{share}");
}

#[test]
fn an_unstated_dialysis_is_said_once_though_two_parameters_read_it() {
    // Goti 2018 reads haemodialysis in both clearance and central volume.
    let pop = population(&reference("vancomycin", ""));
    let said = pop
        .warnings
        .iter()
        .filter(|w| {
            w.to_string()
                .contains("does not say whether the patient is on haemodialysis")
        })
        .count();
    assert_eq!(said, 1, "{:?}", pop.warnings);
}

#[test]
fn a_one_compartment_fit_through_a_distribution_phase_level_points_to_the_two_compartment_model() {
    // Two vancomycin levels in one interval, the first 30 min after the end of the infusion:
    // the log-linear fit (the contract's choice for two levels) is warned about, and the
    // warning names the profile's two-compartment model, which would use the level as drawn.
    let mut text = reference("vancomycin", "");
    for h in [0.0, 12.0, 24.0] {
        text += &format!(
            "[[dose]]\ntime = 2027-04-0{}T{:02}:00:00\namount_mg = 1250.0\nroute = \"infusion\"\ninfusion_h = 1.5\n",
            1 + (8 + h as u32) / 24,
            (8 + h as u32) % 24
        );
    }
    text += "[[level]]\ntime = 2027-04-02T10:00:00\nvalue = 31.0\n";
    text += "[[level]]\ntime = 2027-04-02T19:30:00\nvalue = 16.2\n";
    let file = CaseFile::parse(&text).unwrap();
    let a = ebb::cli::analyse_parsed(&file, None).unwrap();
    let r = a.report.expect("a report");
    assert_eq!(r.fit.method, "two-point");
    let w = r
        .warnings
        .iter()
        .map(|w| w.to_string())
        .find(|w| w.starts_with("level 1 was drawn"))
        .expect("a distribution-phase warning");
    assert!(w.ends_with("or ask for the Bayesian fit ([fit] method = \"bayesian\", model \"goti-2018\"), whose two compartments describe that phase"), "{w}");
}

/// The Bayesian estimate of a two-compartment model, and its CL, V1, Q and V2.
pub(super) fn estimate_two(
    given: &[ebb::core::model::Administration],
    pts: &[(f64, f64)],
    pop: &bayes::Population,
) -> (bayes::Estimate, ebb::core::model::TwoCompartment) {
    let e = bayes::estimate_with_bounds(given, pts, &[], pop).unwrap();
    let ebb::core::model::Disposition::Two(two) = e.disposition else {
        panic!("a two-compartment model gives a two-compartment estimate");
    };
    (e, two)
}

/// The infusions `(start h, mg, hours)` as administrations.
fn infusions(doses: &[(f64, f64, f64)]) -> Vec<Administration> {
    doses
        .iter()
        .map(|&(t, mg, h)| Administration {
            t,
            amount_mg: mg,
            route: Route::Infusion { hours: h },
        })
        .collect()
}
