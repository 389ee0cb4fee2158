//! What every fit method returns: the patient's fitted elimination (k, half-life, volume,
//! their uncertainty and warnings), how it was found, and the dosing window a level falls in.
//! The methods themselves live above this (`fit`, `history`, `bayes`).

use statrs::distribution::{ContinuousCDF, StudentsT};

use crate::core::case::Case;
use crate::core::model::{Disposition, TwoCompartment};
use crate::core::population::Summary;
use crate::core::spread::{ParamSpread, Spread};
use crate::core::warning::Warning;

/// The 0.975 quantile of Student's t with `df` degrees of freedom.
pub fn t975(df: usize) -> f64 {
    StudentsT::new(0.0, 1.0, df as f64)
        .map(|t| t.inverse_cdf(0.975))
        .unwrap_or(f64::INFINITY)
}

/// How the fit was made.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Two levels: k = ln(C1/C2)/(t2 - t1).
    TwoPoint,
    /// Three or more levels: least squares of ln(level) on time.
    LogLinear,
    /// k and V together from every used level against the whole dose record (`history`).
    DoseHistory,
    /// Maximum a posteriori k and V from a population model and the levels (`bayes`).
    Bayesian,
    /// The population model's typical k and V for this patient, before any level (`bayes`).
    Population,
}

impl Method {
    /// The contract's name.
    pub fn name(self) -> &'static str {
        match self {
            Method::TwoPoint => "two-point",
            Method::LogLinear => "log-linear",
            Method::DoseHistory => "dose-history",
            Method::Bayesian => "bayesian",
            Method::Population => "population",
        }
    }
}

/// How the volume was found.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum VolumeMethod {
    /// Sawchuk-Zaske, from a level drawn before the window's dose.
    PreDoseLevel,
    /// Superposition of the whole dose record at the first fitted level.
    DoseRecord,
    /// Fitted together with k by the dose-history fit.
    DoseHistory,
    /// Estimated together with k by the Bayesian fit.
    Bayesian,
    /// The population model's typical volume for this patient.
    Population,
}

impl VolumeMethod {
    /// The contract's name.
    pub fn name(self) -> &'static str {
        match self {
            VolumeMethod::PreDoseLevel => "pre-dose level",
            VolumeMethod::DoseRecord => "dose record",
            VolumeMethod::DoseHistory => "dose-history",
            VolumeMethod::Bayesian => "bayesian",
            VolumeMethod::Population => "population",
        }
    }
}

/// The patient's fitted elimination.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// How k was found.
    pub method: Method,
    /// Indices (into `case.levels`) of the levels in the fit, in time order.
    pub used: Vec<usize>,
    /// Index (into `case.doses`) of the dose whose window holds the fitted levels.
    pub window_dose: usize,
    /// Elimination rate constant, 1/h.
    pub k: f64,
    /// ln 2 / k, hours.
    pub half_life_h: f64,
    /// r² of the log-linear fit (None for two points).
    pub r_squared: Option<f64>,
    /// Standard error of k (None for two points).
    pub se_k: Option<f64>,
    /// 95 % interval of k (None for two points).
    pub k_ci95: Option<[f64; 2]>,
    /// 95 % interval of the half-life (None for two points or when k_lo <= 0).
    pub half_life_ci95: Option<[f64; 2]>,
    /// ln(mg/L) of the fitted line at t = 0 on the case axis.
    pub ln_intercept: f64,
    /// Residuals ln(measured) - ln(fitted), per used level.
    pub residuals: Vec<f64>,
    /// Volume of distribution, L.
    pub volume_l: Option<f64>,
    /// How the volume was found.
    pub volume_method: Option<VolumeMethod>,
    /// The pre-dose level used for the volume (index into `case.levels`).
    pub pre_dose_level: Option<usize>,
    /// k·V, L/h.
    pub clearance_l_per_h: Option<f64>,
    /// Warnings the fit raised.
    pub warnings: Vec<Warning>,
    /// Joint uncertainty of (ln k, ln V) (dose-history and Bayesian fits with an interval).
    pub spread: Option<Spread>,
    /// 95 % interval of V (dose-history and Bayesian fits).
    pub volume_ci95: Option<[f64; 2]>,
    /// 95 % interval of the clearance (dose-history and Bayesian fits).
    pub clearance_ci95: Option<[f64; 2]>,
    /// The population values and how far the estimate moved from them (Bayesian fits).
    pub population: Option<Summary>,
    /// The two-compartment disposition, when the fit is of one (a Bayesian fit with a
    /// two-compartment population model). `k` is then its terminal rate constant β and
    /// `volume_l` its central volume V1.
    pub two: Option<TwoCompartment>,
    /// Joint uncertainty of the two-compartment parameters (`spread` is then None).
    pub param_spread: Option<ParamSpread>,
}

impl Fit {
    /// How the body handles the drug by this fit: the two-compartment disposition when the
    /// fit is of one, else one compartment with k and the fitted volume (None without one).
    pub fn disposition(&self) -> Option<Disposition> {
        match self.two {
            Some(t) => Some(Disposition::Two(t)),
            None => self.volume_l.map(|v| Disposition::One { k: self.k, v }),
        }
    }

    /// 1 or 2.
    pub fn compartments(&self) -> u8 {
        if self.two.is_some() {
            2
        } else {
            1
        }
    }

    /// The fitted line's value (mg/L) at time `t`.
    pub fn line_mg_l(&self, t: f64) -> f64 {
        (self.ln_intercept - self.k * t).exp()
    }
}

/// Which window (index into `case.doses`) a level at time `t` falls in, if any.
/// A level at a dose's own time is a pre-dose level of that dose (it belongs to the window
/// before); one drawn during an infusion or before the first dose is in no window.
pub fn window_of(case: &Case, t: f64) -> Option<usize> {
    after_dose(case, t)
        .filter(|&(_, after)| after >= 0.0)
        .map(|(i, _)| i)
}

/// Hours after the end of a dose within which a level may still be in the distribution phase,
/// when no drug profile gives its own window (common practice: a peak is drawn 30 minutes
/// after the end of a short infusion).
pub const DISTRIBUTION_PHASE_H: f64 = 0.5;

/// The dose a level drawn at `t` follows — the latest dose started strictly before it (a level
/// at a dose time is that dose's pre-dose level) — as an index into `case.doses`, with the
/// hours from that dose's end to the level (negative: drawn during it). `None` before the
/// first dose.
pub fn after_dose(case: &Case, t: f64) -> Option<(usize, f64)> {
    let i = case.doses.partition_point(|d| d.t < t).checked_sub(1)?;
    Some((i, t - case.doses[i].end()))
}

/// Whether a level drawn `after` hours after the end of a dose (negative: during it) may be in
/// a distribution phase of `window_h` hours.
pub fn in_distribution_phase(after: f64, window_h: f64) -> bool {
    after < window_h
}
