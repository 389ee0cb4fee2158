//! The Bayesian estimate: it gives the population values back with no level, moves toward the
//! dose-history fit as levels are added, and takes creatinine clearance as a covariate. The
//! priors are built here and invented: these are self-consistency checks, not drug values.

use ebb::core::bayes::{self, Population, Prior, Typical};
use ebb::core::case::{Patient, Sex};
use ebb::core::casefile::{CaseFile, Defaults};
use ebb::core::fit::{self, Method};
use ebb::core::history::fit_points;
use ebb::core::model::{self, Administration, Route};
use ebb::core::{json, renal, report};
use rand::rngs::StdRng;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};

fn prior_on_k() -> Prior {
    Prior {
        typical: Typical::RateConstant {
            per_h: 0.01,
            per_ml_min: Some(0.003),
        },
        v_l_per_kg: 0.3,
        omega_k: 0.35,
        omega_v: 0.25,
        residual_sd: 0.1,
        sources: vec!["invented for the test".into()],
    }
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
    let pop = bayes::population(&prior_on_k(), &patient()).unwrap();
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
    let low = bayes::population(&prior_on_k(), &older).unwrap();
    assert!((low.k_per_h - (0.01 + 0.003 * crcl / 2.0)).abs() < 1e-15);
    // Without sex the covariate cannot be formed: the field is named.
    let no_sex = Patient {
        sex: None,
        ..patient()
    };
    let e = bayes::population(&prior_on_k(), &no_sex)
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("patient.sex:"), "{e}");
    let no_weight = Patient {
        weight_kg: None,
        ..patient()
    };
    let e = bayes::population(&prior_on_k(), &no_weight)
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("patient.weight_kg:"), "{e}");
}

#[test]
fn no_level_gives_the_prior_back() {
    for prior in [
        prior_on_k(),
        Prior {
            typical: Typical::Clearance {
                l_per_h: 4.5,
                per_ml_min: None,
            },
            ..prior_on_k()
        },
    ] {
        let pop: Population = bayes::population(&prior, &patient()).unwrap();
        let s = bayes::estimate_points(&doses(), &[], &pop).unwrap();
        assert!(
            (s.k / pop.k_per_h - 1.0).abs() < 1e-12,
            "{} {}",
            s.k,
            pop.k_per_h
        );
        assert!((s.v / pop.volume_l - 1.0).abs() < 1e-12);
        assert!((s.k * s.v / pop.clearance_l_per_h - 1.0).abs() < 1e-12);
        // Its spread is the prior's: omega on ln k (or ln CL) and on ln V.
        let sp = s.spread.unwrap();
        assert!((sp.se_ln_v() - prior.omega_v).abs() < 1e-9);
        assert!((sp.se_ln([1.0, 0.0]) - prior.omega_k).abs() < 1e-9 || pop.on_clearance);
        if pop.on_clearance {
            assert!((sp.se_ln([1.0, 1.0]) - prior.omega_k).abs() < 1e-9);
        }
        assert!((sp.quantile - 1.959964).abs() < 1e-6);
        let summary = bayes::summarise(&pop, s.k, s.v, &prior.sources);
        assert!(summary.elimination_shift_sd.abs() < 1e-9);
        assert!(summary.volume_shift_sd.abs() < 1e-9);
    }
}

#[test]
fn more_levels_move_it_to_the_dose_history_fit() {
    let pop = bayes::population(&prior_on_k(), &patient()).unwrap();
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
        ((kk / pop.k_per_h).ln() / pop.omega[0]).powi(2)
            + ((vv / pop.volume_l).ln() / pop.omega[1]).powi(2)
    };
    let (mut last_gap, mut last_cost) = (f64::INFINITY, 0.0);
    for n in [1, 2, 4, 8, 16, 64, 256] {
        let pts: Vec<(f64, f64)> = times(n)
            .into_iter()
            .map(|t| (t, model::superpose(&doses, k, v, t)))
            .collect();
        let s = bayes::estimate_points(&doses, &pts, &pop).unwrap();
        let gap = (s.k / k).ln().abs().max((s.v / v).ln().abs());
        let cost = prior_cost(s.k, s.v);
        assert!(
            cost >= last_cost - 1e-12,
            "{n} levels: prior cost {cost} after {last_cost}"
        );
        assert!(gap < last_gap, "{n} levels: gap {gap} after {last_gap}");
        (last_gap, last_cost) = (gap, cost);
        if n >= 2 {
            let dh = fit_points(&doses, &pts).unwrap();
            assert!((dh.k / k - 1.0).abs() < 1e-6);
        }
    }
    assert!(last_gap < 0.005, "{last_gap}");
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
        let b = bayes::estimate_points(&doses, &pts, &pop).unwrap();
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
        prior: Some(prior_on_k()),
        ..Defaults::default()
    };
    let pop = bayes::population(&prior_on_k(), &patient()).unwrap();
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
    let (_, same) = at(typical);
    assert!((same.k / pop.k_per_h - 1.0).abs() < 1e-6, "{}", same.k);
    let (c, high) = at(2.0 * typical);
    assert!(high.k < pop.k_per_h);
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
        prior: Some(prior_on_k()),
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
