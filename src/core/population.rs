//! The population values for one patient (typical k, V and CL from the priors and the
//! patient's covariates) and how far an estimate moved from them.

use crate::core::renal::CreatinineClearance;
use crate::core::spread::Gaussian;

/// The population values for one patient, and the prior they make on (ln k, ln V).
#[derive(Debug, Clone, PartialEq)]
pub struct Population {
    /// Typical k for this patient, 1/h.
    pub k_per_h: f64,
    /// Typical V for this patient, L.
    pub volume_l: f64,
    /// Typical CL for this patient, L/h.
    pub clearance_l_per_h: f64,
    /// Whether the prior is on CL (true) or on k (false).
    pub on_clearance: bool,
    /// The creatinine clearance used, when the prior has a slope.
    pub creatinine_clearance: Option<CreatinineClearance>,
    /// The weight used for V, kg (the case's recorded total body weight).
    pub weight_kg: f64,
    /// The prior on (ln k, ln V).
    pub gaussian: Gaussian,
    /// Residual SD of ln(level).
    pub residual_sd: f64,
    /// Between-patient SDs of ln k (or ln CL) and ln V.
    pub omega: [f64; 2],
}

/// What the report shows of a Bayesian estimate: the population values and the move from them.
#[derive(Debug, Clone, PartialEq)]
pub struct Summary {
    /// The population values for this patient.
    pub population: Population,
    /// How far the estimate moved from the typical k (or CL), in between-patient SDs of its log.
    pub elimination_shift_sd: f64,
    /// How far the estimate moved from the typical V, in between-patient SDs of ln V.
    pub volume_shift_sd: f64,
    /// Where the priors come from.
    pub sources: Vec<String>,
}
