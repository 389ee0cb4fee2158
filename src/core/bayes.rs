//! Bayesian (maximum a posteriori) estimate of k and V from log-normal population priors and
//! one or a few levels, with creatinine clearance as a covariate where the prior has one.
//!
//! The prior: ln k (or ln CL) ~ N(ln typical, omega_k²) and ln V ~ N(ln(V/kg × weight),
//! omega_v²), independent; the levels: ln(measured) = ln(model) + ε, ε ~ N(0, residual_sd²).
//! The estimate minimises Σ(ε/residual_sd)² + Σ((ln θ − ln typical)/omega)², by the same
//! Levenberg-Marquardt as the dose-history fit (`history`); its covariance is the inverse of
//! JᵀJ/residual_sd² + prior precision (a normal approximation of the posterior), and its 95 %
//! intervals use the normal quantile 1.96. The weight is the case's recorded (total) body
//! weight, for the volume and for Cockcroft-Gault alike.

use crate::core::warning::{Code, Warning};
use statrs::distribution::{ContinuousCDF, Normal};

use crate::core::case::{Case, Patient};
use crate::core::error::{Error, Result};
use crate::core::fitted::{Fit, Method};
use crate::core::history::{self, Failure, Solution};
use crate::core::model::Administration;
pub use crate::core::population::{Population, Summary};
pub use crate::core::prior::{Prior, Typical};
use crate::core::renal;
use crate::core::spread::{Gaussian, Spread};

/// The population values for this patient: typical k (or CL) from creatinine clearance when
/// the prior has a slope, and typical V from the recorded weight.
///
/// # Errors
/// A prior number out of range (`prior.…`), or a patient field the prior needs
/// (`patient.weight_kg`, and for a slope age, sex and serum creatinine).
pub fn population(prior: &Prior, patient: &Patient) -> Result<Population> {
    prior.check()?;
    let weight = patient.weight_kg.ok_or_else(|| {
        Error::invalid(
            "patient.weight_kg",
            "missing; the population volume is given per kg of body weight",
        )
    })?;
    let (base, slope, on_clearance) = match prior.typical {
        Typical::RateConstant { per_h, per_ml_min } => (per_h, per_ml_min, false),
        Typical::Clearance {
            l_per_h,
            per_ml_min,
        } => (l_per_h, per_ml_min, true),
    };
    let crcl = match slope {
        Some(_) => Some(renal::creatinine_clearance(patient)?),
        None => None,
    };
    let elimination = base + slope.unwrap_or(0.0) * crcl.map_or(0.0, |c| c.ml_min);
    let v = prior.v_l_per_kg * weight;
    let (k, cl) = if on_clearance {
        (elimination / v, elimination)
    } else {
        (elimination, elimination * v)
    };
    if !(k.is_finite() && k > 0.0 && v.is_finite() && v > 0.0) {
        return Err(Error::invalid(
            "prior",
            "gives no positive typical k and V for this patient",
        ));
    }
    let (wk, wv) = (
        1.0 / (prior.omega_k * prior.omega_k),
        1.0 / (prior.omega_v * prior.omega_v),
    );
    // On CL: u = (ln k + ln V, ln V) ~ N((ln CL, ln V), diag(ω²)), so the precision on
    // (ln k, ln V) is Aᵀ·diag(1/ω²)·A with A = [[1, 1], [0, 1]].
    let precision = if on_clearance {
        [[wk, wk], [wk, wk + wv]]
    } else {
        [[wk, 0.0], [0.0, wv]]
    };
    Ok(Population {
        k_per_h: k,
        volume_l: v,
        clearance_l_per_h: cl,
        on_clearance,
        creatinine_clearance: crcl,
        weight_kg: weight,
        gaussian: Gaussian {
            mean: [k.ln(), v.ln()],
            precision,
        },
        residual_sd: prior.residual_sd,
        omega: [prior.omega_k, prior.omega_v],
    })
}

/// The maximum a posteriori k and V from points `(t, mg/L)` after `doses`, with any number of
/// points (none gives the population values back).
///
/// # Errors
/// A point before the first dose, or a posterior that cannot be found.
pub fn estimate_points(
    doses: &[Administration],
    points: &[(f64, f64)],
    pop: &Population,
) -> std::result::Result<Solution, Failure> {
    let problem = history::problem(doses, points, pop.residual_sd, Some(pop.gaussian))?;
    let solved = problem.solve().ok_or(Failure::NoElimination)?;
    history::check_plausible(solved.theta[0])?;
    let cov = history::inverse2(solved.info).ok_or(Failure::NotSeparable)?;
    let z = Normal::new(0.0, 1.0)
        .map(|n| n.inverse_cdf(0.975))
        .unwrap_or(1.959_963_984_540_054);
    Ok(Solution {
        k: solved.theta[0].exp(),
        v: solved.theta[1].exp(),
        spread: Some(Spread { cov, quantile: z }),
        residuals: solved.residuals,
        iterations: solved.iterations,
    })
}

/// How far an estimate lies from the population values, in between-patient SDs.
pub fn summarise(pop: &Population, k: f64, v: f64, sources: &[String]) -> Summary {
    let elimination_shift_sd = if pop.on_clearance {
        (k * v / pop.clearance_l_per_h).ln() / pop.omega[0]
    } else {
        (k / pop.k_per_h).ln() / pop.omega[0]
    };
    Summary {
        population: pop.clone(),
        elimination_shift_sd,
        volume_shift_sd: (v / pop.volume_l).ln() / pop.omega[1],
        sources: sources.to_vec(),
    }
}

/// The Bayesian estimate for a case, from its priors and every usable level.
///
/// # Errors
/// No priors (naming `fit.method`), a dose without an amount, a patient field the prior needs,
/// or a posterior that cannot be found.
pub fn fit(case: &Case) -> Result<Fit> {
    let prior = case.prior.as_ref().ok_or_else(|| {
        let profile = match &case.drug.profile {
            Some(p) => format!("the drug profile \"{p}\" gives none"),
            None => "the case names no drug profile".into(),
        };
        Error::invalid(
            "fit.method",
            format!("\"bayesian\" needs population priors, and {profile}; use \"log-linear\" or \"dose-history\""),
        )
    })?;
    let given = history::given_or_error(case, "Bayesian")?;
    let pop = population(prior, &case.patient)?;
    let (used, mut warnings) = history::usable_levels(case);
    let points: Vec<(f64, f64)> = used
        .iter()
        .map(|&i| (case.levels[i].t, case.levels[i].mg_l))
        .collect();
    let sol = estimate_points(&given, &points, &pop).map_err(|_| {
        let names: Vec<String> = used.iter().map(|&i| case.level_name(i)).collect();
        let (place, which) = if names.is_empty() {
            ("dose".to_string(), "the dose record".to_string())
        } else {
            ("level".to_string(), names.join(", "))
        };
        Error::invalid(
            place,
            format!(
                "{which}: no Bayesian estimate can be found from these and the population priors; check the times, the values and the dose record"
            ),
        )
    })?;
    if used.is_empty() {
        warnings.push(Warning::new(Code::PriorWeighs,
            "no level is in the fit: k and V are the population values for this patient, not measured ones",
        ));
    } else {
        warnings.push(Warning::new(Code::PriorWeighs, format!(
            "k and V are a Bayesian estimate from {} and population priors: with few levels they lean on the population values",
            match used.len() {
                1 => "one level".to_string(),
                n => format!("{n} levels"),
            }
        )));
    }
    let weight_words = format!(
        "the population volume uses the recorded (total) body weight, {} kg",
        pop.weight_kg
    );
    let covariates = match &pop.creatinine_clearance {
        Some(c) => format!(
            "{weight_words}; creatinine clearance {:.0} mL/min by Cockcroft-Gault with that weight",
            c.ml_min
        ),
        None => weight_words,
    };
    warnings.push(Warning::new(Code::PopulationCovariates, covariates));
    let summary = summarise(&pop, sol.k, sol.v, &prior.sources);
    Ok(history::to_fit(
        case,
        Method::Bayesian,
        used,
        &sol,
        warnings,
        Some(summary),
    ))
}
