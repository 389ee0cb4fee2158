//! Turn a profile's `[population]` values into the core's Bayesian priors, when it has them all.
//!
//! A prior needs a typical elimination (clearance, else k, else half-life) with its
//! between-patient CV, a volume per kg with its CV, and the residual error of a level. The CVs
//! become SDs of the logs: ω = sqrt(ln(1 + CV²)) (the log-normal identity, common practice).
//! A half-life CV carries over to k unchanged, since ln k = ln ln 2 − ln t½.

use crate::core::bayes::{Prior, Typical};
use crate::profiles::schema::{Estimate, Profile};

/// The SD of the log of a log-normal quantity with coefficient of variation `cv_percent`.
pub fn log_sd(cv_percent: f64) -> f64 {
    let cv = cv_percent / 100.0;
    (1.0 + cv * cv).ln().sqrt()
}

fn with_cv(e: &Option<Estimate>) -> Option<(&Estimate, f64)> {
    let e = e.as_ref()?;
    let cv = e.cv_percent?;
    Some((e, log_sd(cv)))
}

/// The profile's priors, or None when a value, its CV or the residual error is missing.
pub fn prior_of(profile: &Profile) -> Option<Prior> {
    let pop = profile.population.as_ref()?;
    let (typical, omega_k, elim) = if let Some((e, w)) = with_cv(&pop.clearance_l_per_h) {
        (
            Typical::Clearance {
                l_per_h: e.value,
                per_ml_min: None,
            },
            w,
            e,
        )
    } else if let Some((e, w)) = with_cv(&pop.k_per_h) {
        (
            Typical::RateConstant {
                per_h: e.value,
                per_ml_min: None,
            },
            w,
            e,
        )
    } else {
        let (e, w) = with_cv(&pop.half_life_h)?;
        (
            Typical::RateConstant {
                per_h: std::f64::consts::LN_2 / e.value,
                per_ml_min: None,
            },
            w,
            e,
        )
    };
    let (vol, omega_v) = with_cv(&pop.volume_l_per_kg)?;
    let residual = pop.residual_error_percent.as_ref()?;
    let mut sources: Vec<String> = Vec::new();
    for e in [elim, vol, residual] {
        if !sources.contains(&e.source) {
            sources.push(e.source.clone());
        }
    }
    let prior = Prior {
        typical,
        v_l_per_kg: vol.value,
        omega_k,
        omega_v,
        residual_sd: log_sd(residual.value),
        sources,
    };
    prior.check().ok().map(|_| prior)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gentamicin_needs_a_residual_error_to_give_priors() {
        let cat = crate::profiles::Catalog::built_in().unwrap();
        let g = cat.get("gentamicin").unwrap().profile.clone();
        let mut without = g.clone();
        without.population.as_mut().unwrap().residual_error_percent = None;
        assert_eq!(prior_of(&without), None);
        let mut with = g.clone();
        let pop = with.population.as_mut().unwrap();
        pop.residual_error_percent = Some(Estimate {
            value: 15.0,
            cv_percent: None,
            source: "invented for the test".into(),
            note: None,
        });
        let p = prior_of(&with).unwrap();
        let pop = g.population.as_ref().unwrap();
        let (hl, v) = (
            pop.half_life_h.as_ref().unwrap(),
            pop.volume_l_per_kg.as_ref().unwrap(),
        );
        assert_eq!(
            p.typical,
            Typical::RateConstant {
                per_h: std::f64::consts::LN_2 / hl.value,
                per_ml_min: None
            }
        );
        assert_eq!(p.v_l_per_kg, v.value);
        assert_eq!(p.omega_k, log_sd(hl.cv_percent.unwrap()));
        assert_eq!(p.omega_v, log_sd(v.cv_percent.unwrap()));
        assert_eq!(p.residual_sd, log_sd(15.0));
        assert!(p.sources.contains(&"invented for the test".to_string()));
    }

    #[test]
    fn log_sd_of_a_cv() {
        // sqrt(ln(1 + 0.3²)) = 0.29356 (the log-normal identity; common practice).
        assert!((log_sd(30.0) - 0.293_560).abs() < 1e-6);
    }
}
