//! Population priors as a drug profile gives them: a typical elimination (perhaps rising with
//! creatinine clearance), a volume per kg, their between-patient spread and the residual error
//! of a level. Plain data, checked; the Bayesian estimate (`bayes`) turns them into numbers
//! for one patient.

use crate::core::error::{Error, Result};

/// The typical elimination of a population, perhaps rising with creatinine clearance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Typical {
    /// k (1/h) = `per_h` + `per_ml_min` × CrCl (mL/min).
    RateConstant {
        /// k at zero creatinine clearance, or the typical k when there is no slope, 1/h.
        per_h: f64,
        /// Rise of k per mL/min of creatinine clearance, 1/h per mL/min.
        per_ml_min: Option<f64>,
    },
    /// CL (L/h) = `l_per_h` + `per_ml_min` × CrCl (mL/min).
    Clearance {
        /// CL at zero creatinine clearance, or the typical CL when there is no slope, L/h.
        l_per_h: f64,
        /// Rise of CL per mL/min of creatinine clearance, L/h per mL/min.
        per_ml_min: Option<f64>,
    },
}

/// Log-normal population priors for k (or CL) and V, with their sources.
#[derive(Debug, Clone, PartialEq)]
pub struct Prior {
    /// Typical k or CL, with an optional creatinine-clearance slope.
    pub typical: Typical,
    /// Typical volume per kg of (total) body weight, L/kg.
    pub v_l_per_kg: f64,
    /// Between-patient SD of ln k (of ln CL when `typical` is a clearance).
    pub omega_k: f64,
    /// Between-patient SD of ln V.
    pub omega_v: f64,
    /// Residual SD of ln(level) (a proportional error of about this fraction).
    pub residual_sd: f64,
    /// Where the numbers come from.
    pub sources: Vec<String>,
}

impl Prior {
    /// Check every number.
    ///
    /// # Errors
    /// The first impossible value, named as `prior.FIELD`.
    pub fn check(&self) -> Result<()> {
        let positive = |x: f64, field: &str| {
            if x.is_finite() && x > 0.0 {
                Ok(())
            } else {
                Err(Error::invalid(
                    format!("prior.{field}"),
                    format!("must be above 0, got {x}"),
                ))
            }
        };
        let at_least_zero = |x: f64, field: &str| {
            if x.is_finite() && x >= 0.0 {
                Ok(())
            } else {
                Err(Error::invalid(
                    format!("prior.{field}"),
                    format!("must be 0 or more, got {x}"),
                ))
            }
        };
        let (base, slope, name) = match self.typical {
            Typical::RateConstant { per_h, per_ml_min } => (per_h, per_ml_min, "k"),
            Typical::Clearance {
                l_per_h,
                per_ml_min,
            } => (l_per_h, per_ml_min, "clearance"),
        };
        match slope {
            None => positive(base, name)?,
            Some(s) => {
                at_least_zero(base, name)?;
                positive(s, &format!("{name}_per_ml_min"))?;
            }
        }
        positive(self.v_l_per_kg, "v_l_per_kg")?;
        positive(self.omega_k, "omega_k")?;
        positive(self.omega_v, "omega_v")?;
        positive(self.residual_sd, "residual_sd")
    }
}
