//! The Bayesian estimate from a population model: it gives the population values back with no
//! level, moves toward the dose-history fit as levels are added, takes creatinine clearance as
//! a covariate, finds the minimum an independent minimiser finds, and its intervals cover the
//! truth as often as they claim. The first models here are built in the test and invented:
//! these are self-consistency checks, not drug values; the built-in models are checked against
//! their published equations at the end.

use ebb::core::bayes::{self, Population};
use ebb::core::case::{Patient, Sex};
use ebb::core::casefile::{CaseFile, Defaults};
use ebb::core::fit::{self, Method};
use ebb::core::history::fit_points;
use ebb::core::model::{self, Administration, Route, Schedule};
use ebb::core::population;
use ebb::core::prior::{Covariate, Elimination, Form, Model, Parameter, Residual, Term};
use ebb::core::{json, renal, report};
use rand::rngs::StdRng;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};

fn per_weight() -> Term {
    Term {
        of: Covariate::WeightKg,
        form: Form::Power {
            reference: 1.0,
            exponent: 1.0,
        },
        cap: None,
    }
}

/// k = 0.01 + 0.003 x CrCl (1/h), V = 0.3 L/kg, ω 0.35 and 0.25, 10 % proportional error.
fn model_on_k() -> Model {
    Model {
        name: "invented-k".into(),
        label: "invented for the test".into(),
        elimination_kind: Elimination::RateConstant,
        elimination: Parameter {
            typical: 0.01,
            terms: vec![Term {
                of: Covariate::CrclMlMin,
                form: Form::Add {
                    reference: 0.0,
                    slope: 0.003,
                },
                cap: None,
            }],
            add_after_terms: 0.0,
            omega: Some(0.35),
        },
        volume: Parameter {
            typical: 0.3,
            terms: vec![per_weight()],
            add_after_terms: 0.0,
            omega: Some(0.25),
        },
        peripheral: None,
        correlation: 0.0,
        residual: Residual {
            additive_mg_l: 0.0,
            proportional: 0.1,
            exponent: 1.0,
        },
        apparent: false,
        crcl: renal::TOTAL_WEIGHT,
        envelope: Vec::new(),
        excludes_dialysis: false,
        a_priori: true,
        population: String::new(),
        assumptions: Vec::new(),
        sources: vec!["invented for the test".into()],
    }
}

/// CL = 4.5 L/h, V = 0.3 L/kg, correlated η, combined error.
fn model_on_clearance() -> Model {
    Model {
        name: "invented-cl".into(),
        elimination_kind: Elimination::Clearance,
        elimination: Parameter {
            typical: 4.5,
            terms: Vec::new(),
            add_after_terms: 0.0,
            omega: Some(0.3),
        },
        correlation: 0.4,
        residual: Residual {
            additive_mg_l: 0.2,
            proportional: 0.1,
            exponent: 1.0,
        },
        ..model_on_k()
    }
}

fn evaluate(m: &Model, p: &Patient) -> Population {
    population::evaluate(m, p, None, 1.0).unwrap()
}

fn patient() -> Patient {
    Patient {
        weight_kg: Some(60.0),
        age_years: Some(65.0),
        sex: Some(Sex::Female),
        creatinine_mg_dl: Some(1.0),
        ..Patient::default()
    }
}

fn doses() -> Vec<Administration> {
    (0..6)
        .map(|i| Administration {
            t: 12.0 * i as f64,
            amount_mg: 100.0,
            route: Route::Infusion { hours: 0.5 },
        })
        .collect()
}

#[test]
fn covariate_sets_the_typical_k_and_weight_the_volume() {
    let pop = evaluate(&model_on_k(), &patient());
    let crcl = renal::creatinine_clearance(&patient()).unwrap().ml_min;
    assert_eq!(pop.creatinine_clearance.unwrap().ml_min, crcl);
    assert!((pop.k_per_h - (0.01 + 0.003 * crcl)).abs() < 1e-15);
    assert!((pop.volume_l - 18.0).abs() < 1e-12);
    assert!((pop.clearance_l_per_h - pop.k_per_h * 18.0).abs() < 1e-12);
    // A patient with half the clearance gets a lower typical k.
    let older = Patient {
        creatinine_mg_dl: Some(2.0),
        ..patient()
    };
    let low = evaluate(&model_on_k(), &older);
    assert!((low.k_per_h - (0.01 + 0.003 * crcl / 2.0)).abs() < 1e-15);
    // Without sex the covariate cannot be formed: the field is named.
    let no_sex = Patient {
        sex: None,
        ..patient()
    };
    let e = population::evaluate(&model_on_k(), &no_sex, None, 1.0)
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("patient.sex:"), "{e}");
    let no_weight = Patient {
        weight_kg: None,
        ..patient()
    };
    let e = population::evaluate(&model_on_k(), &no_weight, None, 1.0)
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("patient.weight_kg:"), "{e}");
}

#[test]
fn no_level_gives_the_prior_back() {
    for m in [model_on_k(), model_on_clearance()] {
        let pop = evaluate(&m, &patient());
        let e = bayes::estimate_with_bounds(&doses(), &[], &[], &pop).unwrap();
        let s = &e.solution;
        assert!(
            (s.k / pop.k_per_h - 1.0).abs() < 1e-12,
            "{} {}",
            s.k,
            pop.k_per_h
        );
        assert!((s.v / pop.volume_l - 1.0).abs() < 1e-12);
        assert!((s.k * s.v / pop.clearance_l_per_h - 1.0).abs() < 1e-12);
        // Its spread is the population's: omega on ln k (or ln CL) and on ln V.
        let sp = s.spread.unwrap();
        let w = [m.elimination.omega.unwrap(), m.volume.omega.unwrap()];
        assert!((sp.se_ln_v() - w[1]).abs() < 1e-12);
        if pop.on_clearance {
            assert!((sp.se_ln([1.0, 1.0]) - w[0]).abs() < 1e-12);
        } else {
            assert!((sp.se_ln([1.0, 0.0]) - w[0]).abs() < 1e-12);
        }
        // The population's 90 % range: the normal quantile 1.6449 (statrs).
        assert!((sp.quantile - 1.644_854).abs() < 1e-6);
        let summary = bayes::summarise(&pop, &e, &m.sources);
        assert_eq!(summary.elimination_shift_sd, 0.0);
        assert_eq!(summary.prior_share, [Some(1.0), Some(1.0)]);
    }
}

/// A Nelder-Mead simplex written here, independent of ebb's minimiser.
pub(crate) fn nelder_mead(f: &dyn Fn(&[f64]) -> f64, x0: &[f64]) -> Vec<f64> {
    let n = x0.len();
    let mut pts: Vec<Vec<f64>> = vec![x0.to_vec()];
    for i in 0..n {
        let mut p = x0.to_vec();
        p[i] += 0.3;
        pts.push(p);
    }
    for _ in 0..5000 {
        pts.sort_by(|a, b| f(a).total_cmp(&f(b)));
        let centroid: Vec<f64> = (0..n)
            .map(|j| pts[..n].iter().map(|p| p[j]).sum::<f64>() / n as f64)
            .collect();
        let along = |t: f64| -> Vec<f64> {
            (0..n)
                .map(|j| centroid[j] + t * (pts[n][j] - centroid[j]))
                .collect()
        };
        let r = along(-1.0);
        if f(&r) < f(&pts[0]) {
            let e = along(-2.0);
            pts[n] = if f(&e) < f(&r) { e } else { r };
        } else if f(&r) < f(&pts[n - 1]) {
            pts[n] = r;
        } else {
            let c = along(0.5);
            if f(&c) < f(&pts[n]) {
                pts[n] = c;
            } else {
                let best = pts[0].clone();
                for p in pts.iter_mut().skip(1) {
                    for j in 0..n {
                        p[j] = best[j] + 0.5 * (p[j] - best[j]);
                    }
                }
            }
        }
        let spread = pts
            .iter()
            .map(|p| (f(p) - f(&pts[0])).abs())
            .fold(0.0, f64::max);
        if spread < 1e-14 {
            break;
        }
    }
    pts.sort_by(|a, b| f(a).total_cmp(&f(b)));
    pts[0].clone()
}

#[test]
fn the_estimate_is_the_minimum_an_independent_minimiser_finds() {
    // The documented objective, written out here from its definition (bayes.rs and
    // population-models.md, "How a program uses these models"), minimised by the simplex above.
    for m in [model_on_k(), model_on_clearance()] {
        let pop = evaluate(&m, &patient());
        let doses = doses();
        let pts = [(23.0, 3.1), (30.0, 6.0), (59.5, 2.2)];
        let sched = Schedule::new(&doses);
        let om = pop.omega_matrix();
        let det = om[0][0] * om[1][1] - om[0][1] * om[1][0];
        let inv = [
            [om[1][1] / det, -om[0][1] / det],
            [-om[1][0] / det, om[0][0] / det],
        ];
        let obj = |eta: &[f64]| {
            let (k, v) = pop.k_and_v([eta[0], eta[1]]);
            let mut total = 0.0;
            for &(t, y) in &pts {
                let yhat = sched.levels(k, v, &[t])[0];
                let var =
                    m.residual.additive_mg_l.powi(2) + (m.residual.proportional * yhat).powi(2);
                total += (y - yhat).powi(2) / var + var.ln();
            }
            total
                + eta[0] * eta[0] * inv[0][0]
                + 2.0 * eta[0] * eta[1] * inv[0][1]
                + eta[1] * eta[1] * inv[1][1]
        };
        let nm = nelder_mead(&obj, &[0.0, 0.0]);
        let e = bayes::estimate_with_bounds(&doses, &pts, &[], &pop).unwrap();
        assert!((e.eta[0] - nm[0]).abs() < 1e-5, "{:?} vs {nm:?}", e.eta);
        assert!((e.eta[1] - nm[1]).abs() < 1e-5, "{:?} vs {nm:?}", e.eta);
        assert!(obj(&e.eta) <= obj(&nm) + 1e-9);
    }
}

#[test]
fn its_95_percent_interval_covers_the_truth_about_95_percent_of_the_time() {
    // Patients drawn from the model itself (η from the prior, levels with the model's residual
    // error), one estimate each from two levels: the 95 % interval of clearance should hold the
    // patient's true clearance in 93-97 % of them.
    let m = model_on_clearance();
    let pop = evaluate(&m, &patient());
    let doses = doses();
    let om = pop.omega_matrix();
    let (w0, w1, r) = (om[0][0].sqrt(), om[1][1].sqrt(), m.correlation);
    let mut rng = StdRng::seed_from_u64(11);
    let (mut inside, n) = (0, 1000);
    for _ in 0..n {
        let z0: f64 = StandardNormal.sample(&mut rng);
        let z1: f64 = StandardNormal.sample(&mut rng);
        let eta = [w0 * z0, w1 * (r * z0 + (1.0 - r * r).sqrt() * z1)];
        let (k, v) = pop.k_and_v(eta);
        let pts: Vec<(f64, f64)> = [35.0, 59.5]
            .iter()
            .map(|&t| {
                let c = model::superpose(&doses, k, v, t);
                let e: f64 = StandardNormal.sample(&mut rng);
                (t, (c + m.residual.variance(c).sqrt() * e).max(0.01))
            })
            .collect();
        let est = bayes::estimate_with_bounds(&doses, &pts, &[], &pop).unwrap();
        let s = &est.solution;
        let [lo, hi] = s.spread.unwrap().interval(s.k * s.v, [1.0, 1.0]);
        if (lo..=hi).contains(&(k * v)) {
            inside += 1;
        }
    }
    let share = inside as f64 / n as f64;
    assert!((0.93..=0.97).contains(&share), "{share}");
}

#[test]
fn more_levels_move_it_to_the_dose_history_fit() {
    let pop = evaluate(&model_on_k(), &patient());
    // This patient eliminates more slowly and has a larger volume than typical.
    let (k, v) = (0.6 * pop.k_per_h, 1.4 * pop.volume_l);
    let doses = doses();
    // Level times in a fixed shuffled order across 1.5 to 70 h (repeating after 64): the first n
    // are the levels of step n, so each step adds levels to the ones before.
    let times = |n: usize| -> Vec<f64> {
        (0..n)
            .map(|i| 1.5 + (70.0 - 1.5) * ((i * 37) % 64) as f64 / 63.0)
            .collect()
    };
    // Exact levels: the dose-history fit gives the truth. Each added level pulls the estimate
    // further from the prior (its prior cost never falls), and closer to the truth.
    let prior_cost = |kk: f64, vv: f64| {
        ((kk / pop.k_per_h).ln() / pop.omega[0].unwrap()).powi(2)
            + ((vv / pop.volume_l).ln() / pop.omega[1].unwrap()).powi(2)
    };
    let (mut last_gap, mut last_cost) = (f64::INFINITY, 0.0);
    for n in [1, 2, 4, 8, 16, 64, 256] {
        let pts: Vec<(f64, f64)> = times(n)
            .into_iter()
            .map(|t| (t, model::superpose(&doses, k, v, t)))
            .collect();
        let s = bayes::estimate_with_bounds(&doses, &pts, &[], &pop)
            .unwrap()
            .solution;
        let gap = (s.k / k).ln().abs().max((s.v / v).ln().abs());
        let cost = prior_cost(s.k, s.v);
        assert!(
            cost >= last_cost - 1e-6,
            "{n} levels: prior cost {cost} after {last_cost}"
        );
        assert!(gap < last_gap, "{n} levels: gap {gap} after {last_gap}");
        (last_gap, last_cost) = (gap, cost);
        if n >= 2 {
            let dh = fit_points(&doses, &pts).unwrap();
            assert!((dh.k / k - 1.0).abs() < 1e-6);
        }
    }
    // The ln Var term of the objective keeps a pull of order 1/n toward lower predictions.
    assert!(last_gap < 0.01, "{last_gap}");
    // Noisy levels: the gap to the dose-history fit on the same levels shrinks too.
    let mut rng = StdRng::seed_from_u64(5);
    let gap_at = |n: usize, rng: &mut StdRng| {
        let pts: Vec<(f64, f64)> = times(n)
            .into_iter()
            .map(|t| {
                let e: f64 = StandardNormal.sample(rng);
                (t, model::superpose(&doses, k, v, t) * (0.1 * e).exp())
            })
            .collect();
        let b = bayes::estimate_with_bounds(&doses, &pts, &[], &pop)
            .unwrap()
            .solution;
        let d = fit_points(&doses, &pts).unwrap();
        (b.k / d.k).ln().abs().max((b.v / d.v).ln().abs())
    };
    let few = gap_at(3, &mut rng);
    let many = gap_at(200, &mut rng);
    assert!(many < few / 5.0 && many < 0.01, "{few} then {many}");
}

fn one_level_case(value: f64, extra: &str) -> String {
    format!(
        "schema = 1\n[patient]\nweight_kg = 60.0\nage_years = 65\nsex = \"female\"\ncreatinine_mg_dl = 1.0\n\
         [drug]\nlevel_unit = \"mg/L\"\n\
         [[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 100.0\nroute = \"infusion\"\ninfusion_h = 0.5\n\
         [[dose]]\ntime = 2027-03-02T20:00:00\namount_mg = 100.0\nroute = \"infusion\"\ninfusion_h = 0.5\n\
         [[level]]\ntime = 2027-03-03T07:30:00\nvalue = {value:?}\n{extra}"
    )
}

#[test]
fn one_level_with_priors_chooses_the_bayesian_fit_and_reports_the_move() {
    let defaults = Defaults {
        prior: Some(model_on_k()),
        ..Defaults::default()
    };
    let pop = evaluate(&model_on_k(), &patient());
    // The trough the population predicts, and one twice as high (slower elimination).
    let doses: Vec<Administration> = [0.0, 12.0]
        .iter()
        .map(|&t| Administration {
            t,
            amount_mg: 100.0,
            route: Route::Infusion { hours: 0.5 },
        })
        .collect();
    let typical = model::superpose(&doses, pop.k_per_h, pop.volume_l, 23.5);
    let at = |value: f64| {
        let c = CaseFile::parse(&one_level_case(value, ""))
            .and_then(|f| f.validate_with(&defaults))
            .unwrap();
        let f = fit::fit(&c).unwrap();
        assert_eq!(f.method, Method::Bayesian);
        (c, f)
    };
    // A level at the typical prediction leaves k within a fraction of one between-patient SD
    // (the objective's ln Var term leans toward lower predictions, so not exactly on it); a
    // level twice as high moves k well below the typical value.
    let (_, same) = at(typical);
    let moved = (same.k / pop.k_per_h).ln() / 0.35;
    assert!(moved.abs() < 0.6, "{moved}");
    let (c, high) = at(2.0 * typical);
    let high_moved = (high.k / pop.k_per_h).ln() / 0.35;
    assert!(high_moved < moved - 0.5, "{high_moved} after {moved}");
    let s = high.population.as_ref().unwrap();
    assert!(s.elimination_shift_sd < 0.0);
    let r = report::build(&c).unwrap();
    assert_eq!(r.fit.method, "bayesian");
    let j: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    assert_eq!(j["fit"]["method"], "bayesian");
    assert_eq!(j["fit"]["volume_method"], "bayesian");
    assert_eq!(j["fit"]["levels_used"], 1);
    let p = &j["fit"]["population"];
    assert_eq!(p["prior_on"], "k");
    assert!((p["k_per_h"].as_f64().unwrap() / pop.k_per_h - 1.0).abs() < 1e-12);
    assert_eq!(p["weight_kg"].as_f64().unwrap(), 60.0);
    assert_eq!(p["model"], "invented-k");
    let share = p["prior_share"][0].as_f64().unwrap();
    assert!(share > 0.0 && share < 1.0, "{share}");
    let crcl = p["creatinine_clearance_ml_min"].as_f64().unwrap();
    assert!((crcl / pop.creatinine_clearance.unwrap().ml_min - 1.0).abs() < 1e-12);
    assert_eq!(
        p["elimination_shift_sd"].as_f64().unwrap(),
        s.elimination_shift_sd
    );
    assert!(j["fit"]["v_ci95_l"].is_array());
    let mut text = Vec::new();
    report::write_text(&mut text, &c, &r).unwrap();
    let text = String::from_utf8(text).unwrap();
    assert!(text.contains("Cockcroft-Gault"), "{text}");
    assert!(text.contains("between-patient SDs"), "{text}");
}

#[test]
fn asked_bayesian_with_two_levels_uses_both() {
    let defaults = Defaults {
        prior: Some(model_on_k()),
        ..Defaults::default()
    };
    let text = one_level_case(
        3.0,
        "[[level]]\ntime = 2027-03-02T12:00:00\nvalue = 5.0\n[fit]\nmethod = \"bayesian\"\n",
    );
    let c = CaseFile::parse(&text)
        .and_then(|f| f.validate_with(&defaults))
        .unwrap();
    let f = fit::fit(&c).unwrap();
    assert_eq!(f.method, Method::Bayesian);
    assert_eq!(f.used.len(), 2);
}

#[test]
fn the_built_in_gentamicin_profile_gives_a_bayesian_fit_from_one_level() {
    // One level after one dose: no two-level fit is possible, so the method falls to the
    // profile's population priors (their sources are in drug-profiles/gentamicin.toml).
    let text = r#"
[patient]
weight_kg = 70.0
age_years = 60.0
sex = "male"
creatinine_mg_dl = 1.0
[drug]
level_unit = "mg/L"
profile = "gentamicin"
[[dose]]
time = 2027-01-01T00:00:00
amount_mg = 100.0
route = "infusion"
infusion_h = 0.5
[[level]]
time = 2027-01-01T03:00:00
value = 3.0
"#;
    let file = ebb::core::casefile::CaseFile::parse(text).unwrap();
    let r = ebb::cli::analyse_parsed(&file, None)
        .unwrap()
        .finished()
        .unwrap()
        .report;
    assert_eq!(r.fit.method, "bayesian");
    // The estimate comes with its 95 % interval.
    let [lo, hi] = r.fit.k_ci95_per_h.unwrap();
    assert!(lo < r.fit.k_per_h && r.fit.k_per_h < hi);
    assert!(r.fit.volume_l.unwrap() > 0.0);
}

/// The reference patient of our population-model notes: a man of 60 years, 70 kg, 175 cm,
/// serum creatinine 1.0 mg/dL; Cockcroft-Gault (Cockcroft & Gault, Nephron 1976;16:31-41)
/// on total weight: (140 - 60) x 70 / 72 = 77.78 mL/min.
fn reference_case(profile: &str, unit: &str, extra: &str) -> String {
    format!(
        "[patient]\nweight_kg = 70.0\nheight_cm = 175.0\nage_years = 60.0\nsex = \"male\"\ncreatinine_mg_dl = 1.0\n\
         [drug]\nprofile = \"{profile}\"\nlevel_unit = \"{unit}\"\n{extra}"
    )
}

/// Pins the vancomycin profile's one-compartment model (its default is Goti 2018).
const BUELGA: &str = "[fit]\nmodel = \"buelga-2005\"\n";

fn typical(profile: &str, unit: &str, extra: &str) -> Population {
    let file = CaseFile::parse(&reference_case(profile, unit, extra)).unwrap();
    let a = ebb::cli::analyse_parsed(&file, None).unwrap();
    let case = a.case.expect("a valid case");
    bayes::population_of(&case).unwrap()
}

#[test]
fn built_in_models_give_their_published_typical_values_for_the_reference_patient() {
    let crcl = 80.0 * 70.0 / 72.0;
    let plan = |dose: f64, tau: f64, route: &str| {
        format!("[plan]\nstart = 2027-03-02T08:00:00\ndose_mg = {dose:?}\ninterval_h = {tau:?}\nroute = \"{route}\"\n")
    };
    // Hand-worked from CL = 1.08 x CrCl [L/h], V = 0.98 x weight (Buelga et al., Antimicrob
    // Agents Chemother 2005;49:4934-4941, Table 4).
    let p = typical("vancomycin", "mg/L", BUELGA);
    assert!(
        (p.clearance_l_per_h - 1.08 * crcl * 0.06).abs() < 1e-9,
        "{}",
        p.clearance_l_per_h
    );
    assert!((p.volume_l - 0.98 * 70.0).abs() < 1e-9);
    assert_eq!(p.model, "buelga-2005");
    // CL = 1.49 x e^(0.004 x CrCl), V = 23.18 L (Steffens et al., Antibiotics 2025;14:531,
    // Table 2): 2.0335 L/h.
    let p = typical("amikacin", "mg/L", "");
    assert!((p.clearance_l_per_h - 1.49 * (0.004 * crcl).exp()).abs() < 1e-9);
    assert!((p.volume_l - 23.18).abs() < 1e-12);
    // CL/F = 6.209 x (min(CrCl, 120) / 60)^0.409, V/F = 6.0 x weight (Hirai et al., BMC
    // Pharmacol Toxicol 2022;23:14, Table 3), times the profile's oral F of 0.7 so that doses
    // count as F x dose.
    let p = typical("digoxin", "ng/mL", &plan(0.125, 24.0, "oral"));
    let f = 0.7;
    assert!((p.clearance_l_per_h - 6.209 * (crcl / 60.0).powf(0.409) * f).abs() < 1e-9);
    assert!((p.volume_l - 6.0 * 70.0 * f).abs() < 1e-9);
    // CL/F = 0.46 x (WT/70)^0.56 x (DD/1000)^0.13 x 1.12 (male), V/F = 12.84 L (the abstract
    // of Eur J Clin Pharmacol 2021, doi:10.1007/s00228-021-03246-2), at 500 mg twice daily;
    // the profile's F is 1.
    let p = typical("valproic-acid", "mg/L", &plan(500.0, 12.0, "oral"));
    assert!(
        (p.clearance_l_per_h - 0.46 * 1.12).abs() < 1e-9,
        "{}",
        p.clearance_l_per_h
    );
    assert_eq!(p.daily_dose_mg, Some(1000.0));
    // CL/F = 0.0134 x weight + 3.58, V/F = 1.97 x weight (Graves et al. 1998, PMID 9545146
    // abstract), times F = 0.85: 4.518 L/h before F.
    let p = typical("carbamazepine", "mg/L", &plan(400.0, 12.0, "oral"));
    assert!((p.clearance_l_per_h - (0.0134 * 70.0 + 3.58) * 0.85).abs() < 1e-9);
    // CL = exp(-3.78 + 0.0233 x 40) L/h/kg at PaCO2 40 mmHg (Yano et al., Biol Pharm Bull
    // 1993;16:501-505, Table III): 0.05796 x 70 = 4.057 L/h.
    let p = typical("theophylline", "mg/L", "");
    assert!((p.clearance_l_per_h - 0.05796 * 70.0).abs() < 1e-9);
    // Gentamicin, tobramycin and lithium have no one-compartment population model in the
    // profiles: gentamicin keeps its summary values (beside its two-compartment default),
    // tobramycin and lithium have none.
    assert_eq!(
        typical("gentamicin", "mg/L", "[fit]\nmodel = \"summary-values\"\n").model,
        "summary-values"
    );
    for (drug, unit) in [("tobramycin", "mg/L"), ("lithium", "mmol/L")] {
        let file = CaseFile::parse(&reference_case(drug, unit, "")).unwrap();
        let case = ebb::cli::analyse_parsed(&file, None).unwrap().case.unwrap();
        assert!(bayes::population_of(&case).is_err(), "{drug}");
    }
    // The amikacin model (Steffens 2025) is a wide prior for estimates from levels only: no
    // dose before the first level rests on it.
    let file = CaseFile::parse(&reference_case(
        "amikacin",
        "mg/L",
        &plan(1000.0, 24.0, "infusion").replace(
            "route = \"infusion\"",
            "route = \"infusion\"\ninfusion_h = 0.5",
        ),
    ))
    .unwrap();
    let stop = ebb::cli::analyse_parsed(&file, None).unwrap().stop.unwrap();
    let e = stop.to_error(None).to_string();
    assert!(e.contains("only as a wide prior"), "{e}");
}

#[test]
fn the_estimate_follows_creatinine_clearance() {
    // Renal impairment: creatinine 1.0 -> 4.0 mg/dL quarters Cockcroft-Gault, and with it the
    // Buelga clearance (proportional to creatinine clearance): the half-life before any level
    // is four times as long (hand-worked from the Buelga 2005 equations, Table 4).
    let normal = typical("vancomycin", "mg/L", BUELGA);
    let text = reference_case("vancomycin", "mg/L", BUELGA)
        .replace("creatinine_mg_dl = 1.0", "creatinine_mg_dl = 4.0");
    let case = ebb::cli::analyse_parsed(&CaseFile::parse(&text).unwrap(), None)
        .unwrap()
        .case
        .unwrap();
    let impaired = bayes::population_of(&case).unwrap();
    assert!((normal.k_per_h / impaired.k_per_h - 4.0).abs() < 1e-9);
    assert!((impaired.creatinine_clearance.unwrap().ml_min - 80.0 * 70.0 / 288.0).abs() < 1e-9);
}

#[test]
fn a_new_patient_gets_a_regimen_with_the_population_range_before_any_level() {
    let text = reference_case(
        "vancomycin",
        "mg/L",
        "[fit]\nmodel = \"buelga-2005\"\n[plan]\nstart = 2027-03-02T08:00:00\ndose_mg = 1250.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 2.5\n",
    );
    let a = ebb::cli::analyse_parsed(&CaseFile::parse(&text).unwrap(), None).unwrap();
    let r = a.finished().unwrap().report;
    assert_eq!(r.fit.method, "population");
    let j: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    assert_eq!(j["fit"]["method"], "population");
    assert_eq!(j["fit"]["model"], "buelga-2005");
    assert_eq!(j["fit"]["compartments"], 1);
    assert!(j["fit"]["k_ci95_per_h"].is_null());
    assert!(j["plan"]["auc24_ss_ci95"].is_null());
    // AUC24 = daily dose / CL = 2500 / (0.0648 x 77.78) = 496.0 mg·h/L, and its 90 % range is
    // e^(±1.645 x ω_CL) around it, ω_CL = sqrt(ln(1 + 0.2816²)) (Buelga 2005, Table 4).
    let auc = j["plan"]["auc24_ss"].as_f64().unwrap();
    assert!(
        (auc - 2500.0 / (0.0648 * 80.0 * 70.0 / 72.0)).abs() < 1e-6,
        "{auc}"
    );
    let w = (1.0f64 + 0.2816 * 0.2816).ln().sqrt();
    let lo = j["plan"]["auc24_ss_pi90"][0].as_f64().unwrap();
    assert!((lo - auc * (-1.644_854 * w).exp()).abs() < 1e-3, "{lo}");
    assert_eq!(
        j["patient"]["ideal_weight_kg"]
            .as_f64()
            .map(|x| (x * 100.0).round() / 100.0),
        Some(70.46)
    );
}

fn codes_of(text: &str) -> Vec<String> {
    let a = ebb::cli::analyse_parsed(&CaseFile::parse(text).unwrap(), None).unwrap();
    let r = a.finished().unwrap().report;
    let j: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    j["warning_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap().to_string())
        .collect()
}

const ONE_TROUGH: &str = "[[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 1000.0\nroute = \"infusion\"\ninfusion_h = 1.0\n\
[[dose]]\ntime = 2027-03-02T20:00:00\namount_mg = 1000.0\nroute = \"infusion\"\ninfusion_h = 1.0\n\
[[level]]\ntime = 2027-03-03T07:30:00\nvalue = VALUE\n";

#[test]
fn a_level_far_from_the_model_and_a_patient_outside_its_population_are_named() {
    // The Buelga 2005 model predicts a trough near 9 mg/L for the reference patient after two
    // 1 g doses 12 h apart (hand-worked from its typical CL 5.04 L/h and V 68.6 L); 60 mg/L
    // is beyond 3 SDs of what it allows (between-patient spread and residual error together).
    let near = codes_of(&reference_case(
        "vancomycin",
        "mg/L",
        &format!("{BUELGA}{}", ONE_TROUGH.replace("VALUE", "9.0")),
    ));
    assert!(!near.iter().any(|c| c == "level-unexpected"), "{near:?}");
    let far = codes_of(&reference_case(
        "vancomycin",
        "mg/L",
        &format!("{BUELGA}{}", ONE_TROUGH.replace("VALUE", "60.0")),
    ));
    assert!(far.iter().any(|c| c == "level-unexpected"), "{far:?}");
    // 150 kg is beyond the cohort's mean + 2 SD (64.7 + 2 x 11.3 kg, Buelga 2005 Table 1), and
    // haemodialysis patients were not studied.
    assert!(!near.iter().any(|c| c == "outside-population"), "{near:?}");
    let heavy = reference_case(
        "vancomycin",
        "mg/L",
        &format!("{BUELGA}{}", ONE_TROUGH.replace("VALUE", "9.0")),
    )
    .replace("weight_kg = 70.0", "weight_kg = 150.0\ndialysis = true");
    let text = {
        let a = ebb::cli::analyse_parsed(&CaseFile::parse(&heavy).unwrap(), None).unwrap();
        let r = a.finished().unwrap().report;
        r.warnings
            .iter()
            .map(|w| w.text().to_string())
            .collect::<Vec<_>>()
            .join("\n")
    };
    assert!(
        text.contains("weight 150 kg is outside the 42.1–87.3 kg"),
        "{text}"
    );
    assert!(
        text.contains("built without patients on haemodialysis"),
        "{text}"
    );
}

#[test]
fn height_albumin_and_dialysis_reach_the_report() {
    let text = reference_case("vancomycin", "mg/L", "").replace(
        "height_cm = 175.0",
        "height_cm = 175.0\nalbumin_g_l = 32.0\ndialysis = false",
    );
    let a = ebb::cli::analyse_parsed(&CaseFile::parse(&text).unwrap(), None).unwrap();
    let case = a.case.clone().unwrap();
    assert_eq!(case.patient.albumin_g_dl, Some(3.2));
    assert_eq!(case.patient.dialysis, Some(false));
    let r = a.finished().unwrap().report;
    let j: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
    assert_eq!(j["patient"]["albumin_g_dl"].as_f64(), Some(3.2));
    assert_eq!(j["patient"]["dialysis"], false);
    // BMI 70 / 1.75² = 22.857 (the definition).
    let bmi = j["patient"]["bmi"].as_f64().unwrap();
    assert!((bmi - 70.0 / (1.75 * 1.75)).abs() < 1e-9);
}

#[test]
fn a_level_below_the_assay_limit_bounds_the_bayesian_estimate() {
    // One trough of 15 mg/L, then a level a day later reported "<2": with the trough alone the
    // model's level then is about 3 mg/L, so the bound asks for faster elimination; a limit far above
    // the course changes almost nothing (the M3 likelihood of a censored level, Beal,
    // J Pharmacokinet Pharmacodyn 2001;28:481-504, from memory).
    let base = reference_case("vancomycin", "mg/L", &ONE_TROUGH.replace("VALUE", "15.0"));
    let k_of = |extra: &str| {
        let a =
            ebb::cli::analyse_parsed(&CaseFile::parse(&format!("{base}{extra}")).unwrap(), None)
                .unwrap();
        let r = a.finished().unwrap().report;
        assert_eq!(r.fit.method, "bayesian");
        (
            r.fit.k_per_h,
            r.warnings
                .iter()
                .map(|w| w.text().to_string())
                .collect::<Vec<_>>(),
        )
    };
    let (alone, _) = k_of("");
    let (bounded, words) = k_of("[[level]]\ntime = 2027-03-04T07:30:00\nvalue = \"<2\"\n");
    assert!(bounded > alone * 1.05, "{bounded} vs {alone}");
    assert!(
        words
            .iter()
            .any(|w| w.contains("takes it as an upper bound")),
        "{words:?}"
    );
    let (loose, _) = k_of("[[level]]\ntime = 2027-03-04T07:30:00\nvalue = \"<100\"\n");
    assert!((loose / alone - 1.0).abs() < 1e-3, "{loose} vs {alone}");
}

#[test]
fn a_plan_at_another_daily_dose_says_how_a_dose_dependent_clearance_would_move() {
    // The valproate model's clearance rises with the daily dose to the power 0.13 (Eur J Clin
    // Pharmacol 2021 abstract): from 1000 to 1500 mg/day it is 1.5^0.13 = 1.054, +5 %.
    let extra = "[[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 500.0\nroute = \"oral\"\n\
[[dose]]\ntime = 2027-03-02T20:00:00\namount_mg = 500.0\nroute = \"oral\"\n\
[[level]]\ntime = 2027-03-03T07:30:00\nvalue = 70.0\n\
[plan]\ndose_mg = 750.0\ninterval_h = 12.0\nroute = \"oral\"\n";
    let text = reference_case("valproic-acid", "mg/L", extra);
    let a = ebb::cli::analyse_parsed(&CaseFile::parse(&text).unwrap(), None).unwrap();
    let r = a.finished().unwrap().report;
    let w: Vec<String> = r.warnings.iter().map(|w| w.text().to_string()).collect();
    assert!(
        w.iter()
            .any(|x| x
                .contains("at the plan's 1500 mg/day it is +5 % against the recorded 1000 mg/day")),
        "{w:?}"
    );
}

#[test]
fn a_volume_the_model_fixes_is_said_to_be_fixed_not_given_an_interval() {
    // The built-in digoxin model (Hirai 2022, drug-profiles/digoxin.toml) gives clearance a
    // between-patient variability and the volume none: the levels move clearance only, so
    // the volume has no interval (not one of zero width) and nothing says it moved.
    let text = r#"schema = 1
[patient]
weight_kg = 65.0
age_years = 82
sex = "male"
creatinine_umol_l = 130.0
[drug]
profile = "digoxin"
level_unit = "ng/mL"
[fit]
method = "bayesian"
[[dose]]
time = 2027-05-01T09:00:00
amount_mg = 0.125
route = "oral"
[[dose]]
time = 2027-05-02T09:00:00
amount_mg = 0.125
route = "oral"
[[level]]
time = 2027-05-03T08:00:00
value = 0.9
"#;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("digoxin.toml");
    std::fs::write(&path, text).unwrap();
    let run = |args: &[&str]| {
        let out = crate::common::ebb().args(args).arg(&path).output().unwrap();
        assert!(out.status.success(), "{out:?}");
        String::from_utf8(out.stdout).unwrap()
    };
    let report = run(&["report"]);
    assert!(report.contains("Fit: Bayesian"), "{report}");
    assert!(
        report.contains(
            "L  (the model's typical value: the model does not let it vary; no interval)"
        ),
        "{report}"
    );
    assert!(
        report.contains("between-patient SDs from the population toward the levels (the model fixes the volume)"),
        "{report}"
    );
    assert!(!report.contains("and volume +0.00"), "{report}");
    let j: serde_json::Value = serde_json::from_str(&run(&["report", "--json"])).unwrap();
    assert!(j["fit"]["v_ci95_l"].is_null(), "{}", j["fit"]);
    // k (through clearance) still has its interval.
    assert!(j["fit"]["k_ci95_per_h"].is_array(), "{}", j["fit"]);
    let note = run(&["note"]);
    assert!(
        note.contains("volume: the population model's typical value (the model gives it no between-patient variability"),
        "{note}"
    );
    assert!(!note.contains("volume estimated together with k"), "{note}");
}

/// `ebb report FILE` of `text`: (success, standard output, standard error).
fn run_report(text: &str) -> (bool, String, String) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("case.toml");
    std::fs::write(&path, text).unwrap();
    let out = crate::common::ebb()
        .arg("report")
        .arg(&path)
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8(out.stdout).unwrap(),
        String::from_utf8(out.stderr).unwrap(),
    )
}

#[test]
fn a_failed_estimate_from_a_level_below_the_limit_names_that_level() {
    // Only a level reported below the assay's limit, and a weight no model can use: the
    // refusal names the level it read, not the whole dose record.
    let (ok, _, err) = run_report(
        r#"[patient]
weight_kg = 1e-9
age_years = 60
sex = "male"
creatinine_umol_l = 90.0
[drug]
profile = "gentamicin"
level_unit = "mg/L"
[fit]
method = "bayesian"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 400.0
route = "infusion"
infusion_h = 0.5
[[level]]
time = 2027-03-02T20:00:00
value = "<0.5"
"#,
    );
    assert!(!ok);
    assert!(
        err.contains(": level 1: no Bayesian estimate can be found from this level"),
        "{err}"
    );
}

#[test]
fn the_share_the_prior_keeps_is_never_above_one() {
    // Posterior over prior variance is at most 1 (the levels add no uncertainty); a Hessian
    // from a near-flat objective can give a posterior variance a little above the prior's,
    // which would make the report say the levels carry a negative share.
    let pop = evaluate(&model_on_k(), &patient());
    let mut est = bayes::estimate_with_bounds(&doses(), &[], &[], &pop).unwrap();
    let s = bayes::summarise(&pop, &est, &[]);
    assert!((s.prior_share[0].unwrap() - 1.0).abs() < 1e-12);
    est.cov_eta[0][0] *= 1.5;
    est.cov_eta[1][1] = -1e-3;
    let s = bayes::summarise(&pop, &est, &[]);
    assert_eq!(s.prior_share, [Some(1.0), Some(0.0)]);
}
