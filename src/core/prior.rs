//! A published population model as a drug profile states it, declaratively: each parameter's
//! typical value with a few named covariate forms, its between-patient variability, the
//! residual error of a level, how its authors computed creatinine clearance, and the
//! population it was built on. Plain data, checked; `population` evaluates it for one patient
//! and `bayes` turns it into an estimate.

use crate::core::error::{Error, Result};

/// A patient quantity a covariate term may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Covariate {
    /// Total body weight, kg.
    WeightKg,
    /// Ideal body weight (Devine), kg.
    IdealWeightKg,
    /// Adjusted body weight, IBW + 0.4 x (TBW − IBW), kg.
    AdjustedWeightKg,
    /// Height, cm.
    HeightCm,
    /// Age, years.
    AgeYears,
    /// Creatinine clearance by the model's own rule, mL/min.
    CrclMlMin,
    /// The same in L/h (× 0.06).
    CrclLPerH,
    /// Serum creatinine, µmol/L.
    CreatinineUmolL,
    /// 1 when on intermittent haemodialysis, else 0.
    Dialysis,
    /// 1 for a woman, else 0.
    Female,
    /// 1 for a man, else 0.
    Male,
    /// The total daily dose of the current regimen, mg/day.
    DailyDoseMg,
}

impl Covariate {
    /// Every covariate with its profile spelling.
    pub const ALL: [(Covariate, &'static str); 12] = [
        (Covariate::WeightKg, "weight_kg"),
        (Covariate::IdealWeightKg, "ideal_weight_kg"),
        (Covariate::AdjustedWeightKg, "adjusted_weight_kg"),
        (Covariate::HeightCm, "height_cm"),
        (Covariate::AgeYears, "age_years"),
        (Covariate::CrclMlMin, "crcl_ml_min"),
        (Covariate::CrclLPerH, "crcl_l_h"),
        (Covariate::CreatinineUmolL, "creatinine_umol_l"),
        (Covariate::Dialysis, "dialysis"),
        (Covariate::Female, "female"),
        (Covariate::Male, "male"),
        (Covariate::DailyDoseMg, "daily_dose_mg"),
    ];

    /// The profile spelling.
    pub fn name(self) -> &'static str {
        Covariate::ALL
            .iter()
            .find(|(c, _)| *c == self)
            .map_or("", |(_, n)| n)
    }

    /// The covariate a profile spells `name`.
    pub fn parse(name: &str) -> Option<Covariate> {
        Covariate::ALL
            .iter()
            .find(|(_, n)| *n == name)
            .map(|(c, _)| *c)
    }
}

/// How one covariate changes a typical value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Form {
    /// × (x / reference)^exponent.
    Power {
        /// The covariate value at which the term is 1.
        reference: f64,
        /// The exponent.
        exponent: f64,
    },
    /// × (1 + slope·(x − reference)).
    Linear {
        /// The covariate value at which the term is 1.
        reference: f64,
        /// Fractional change per unit of the covariate.
        slope: f64,
    },
    /// × e^(slope·(x − reference)).
    Exponential {
        /// The covariate value at which the term is 1.
        reference: f64,
        /// Change of the log per unit of the covariate.
        slope: f64,
    },
    /// + slope·(x − reference), added to the typical value before any multiplying term.
    ///
    /// A constant added after them is the parameter's `add_after_terms`.
    Add {
        /// The covariate value at which the term adds nothing.
        reference: f64,
        /// Change per unit of the covariate, in the parameter's unit.
        slope: f64,
    },
    /// × value when the covariate is 1 (or, with `at_least`, when it is at least that much).
    Factor {
        /// The multiplier.
        value: f64,
        /// A threshold for a numeric covariate (e.g. age 70 or more); None for a yes/no one.
        at_least: Option<f64>,
    },
}

/// One covariate term of a parameter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Term {
    /// The patient quantity used.
    pub of: Covariate,
    /// How it acts.
    pub form: Form,
    /// A covariate above this is taken as this in the term (a guard the profile states, e.g.
    /// an age factor that would reach zero); None: the patient's value as it is.
    pub cap: Option<f64>,
}

/// One structural parameter: typical value, covariate terms and between-patient variability.
///
/// Its value for a patient is (typical + every `Add` term) × every multiplying term +
/// `add_after_terms`.
#[derive(Debug, Clone, PartialEq)]
pub struct Parameter {
    /// The typical value before the terms, in the parameter's unit (L/h, 1/h or L).
    pub typical: f64,
    /// Covariate terms, applied in order: every `Add` first, then the multiplying ones.
    pub terms: Vec<Term>,
    /// A constant added after every term, in the parameter's unit (a non-renal clearance
    /// beside a renal part that the terms form); 0 for none.
    pub add_after_terms: f64,
    /// Between-patient SD of the log (ω); None when the model fixes the parameter.
    pub omega: Option<f64>,
}

/// What the elimination parameter is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Elimination {
    /// Clearance, L/h.
    Clearance,
    /// Elimination rate constant, 1/h.
    RateConstant,
}

/// Which weight enters Cockcroft-Gault.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CrclWeight {
    /// Total body weight.
    Total,
    /// Ideal body weight (Devine).
    Ideal,
    /// Adjusted body weight.
    Adjusted,
}

/// How the model's authors computed creatinine clearance (Cockcroft-Gault with these choices).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrclRule {
    /// The weight in the formula.
    pub weight: CrclWeight,
    /// Serum creatinine below this (mg/dL) is raised to it before the formula.
    pub min_creatinine_mg_dl: Option<f64>,
    /// ... but only from this age (years) up; None: at every age.
    pub min_creatinine_from_age: Option<f64>,
    /// Clearance above this (mL/min) is lowered to it.
    pub max_ml_min: Option<f64>,
}

/// The residual error of one level predicted at c mg/L:
/// Var = additive² + (proportional·c^exponent)² (exponent 1: the usual combined error; a
/// power model, SD = proportional·c^b, has no additive part and exponent b).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Residual {
    /// Additive SD, mg/L.
    pub additive_mg_l: f64,
    /// Proportional SD, a fraction (of c^exponent).
    pub proportional: f64,
    /// The power of the prediction in the proportional part; 1 for the usual proportional
    /// error.
    pub exponent: f64,
}

impl Residual {
    /// The variance of a level predicted at `c` mg/L.
    pub fn variance(&self, c: f64) -> f64 {
        // Exponent 1 takes c itself, so the usual combined error is computed exactly as it
        // always was; a power takes |c| (the square does not see the sign).
        let scaled = if self.exponent == 1.0 {
            c
        } else {
            c.abs().powf(self.exponent)
        };
        self.additive_mg_l * self.additive_mg_l + (self.proportional * scaled).powi(2)
    }
}

/// A range of a covariate the model's population covered.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    /// The covariate.
    pub of: Covariate,
    /// Lowest value studied.
    pub low: f64,
    /// Highest value studied.
    pub high: f64,
}

/// The peripheral compartment of a two-compartment model: the intercompartmental clearance Q
/// (L/h) and the peripheral volume V2 (L), each a parameter like the others.
#[derive(Debug, Clone, PartialEq)]
pub struct Peripheral {
    /// Intercompartmental clearance, L/h.
    pub q: Parameter,
    /// Peripheral volume, L.
    pub v2: Parameter,
}

/// A published population model: one compartment (clearance or k, and volume), or two (with
/// a `peripheral` compartment; the elimination is then the central clearance and the volume
/// the central volume V1).
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    /// The first author and year, lower case (e.g. "buelga-2005"); the case's `[fit] model`.
    pub name: String,
    /// A line for people: whose model, which patients.
    pub label: String,
    /// What the elimination parameter is.
    pub elimination_kind: Elimination,
    /// Clearance or k.
    pub elimination: Parameter,
    /// Volume, L (the central volume V1 of a two-compartment model).
    pub volume: Parameter,
    /// The peripheral compartment of a two-compartment model; None for one compartment.
    pub peripheral: Option<Peripheral>,
    /// Correlation of the elimination and volume η (0 when none was published).
    pub correlation: f64,
    /// The residual error.
    pub residual: Residual,
    /// Whether CL and V are apparent (÷F, fitted to oral doses): they are then multiplied by
    /// the profile's oral bioavailability so that every projection can apply F as usual.
    pub apparent: bool,
    /// How creatinine clearance is computed for this model (when a term uses it).
    pub crcl: CrclRule,
    /// The covariate ranges of the population studied.
    pub envelope: Vec<Range>,
    /// Whether patients on haemodialysis were left out of the population.
    pub excludes_dialysis: bool,
    /// Whether its typical values may stand alone before any level (false: only a wide prior
    /// for estimates from levels).
    pub a_priori: bool,
    /// The population in words (size, setting, country).
    pub population: String,
    /// What the model assumes that the case does not record (co-medication and the like).
    pub assumptions: Vec<String>,
    /// The published work, cited in full.
    pub sources: Vec<String>,
}

impl Model {
    /// Whether the parameters with variability include the volume.
    pub fn volume_varies(&self) -> bool {
        self.volume.omega.is_some()
    }

    /// 1 or 2.
    pub fn compartments(&self) -> u8 {
        if self.peripheral.is_some() {
            2
        } else {
            1
        }
    }

    /// Every parameter with its name in messages: elimination, volume, then q and v2.
    pub fn parameters(&self) -> Vec<(&'static str, &Parameter)> {
        let mut out = vec![("elimination", &self.elimination), ("volume", &self.volume)];
        if let Some(p) = &self.peripheral {
            out.push(("q", &p.q));
            out.push(("v2", &p.v2));
        }
        out
    }

    /// Check every number.
    ///
    /// # Errors
    /// The first impossible value, named as `model.FIELD`.
    pub fn check(&self) -> Result<()> {
        let bad = |field: &str, why: String| Err(Error::invalid(format!("model.{field}"), why));
        if self.peripheral.is_some() && self.elimination_kind != Elimination::Clearance {
            return bad(
                "k",
                "a two-compartment model gives the central clearance, not k".into(),
            );
        }
        for (name, p) in self.parameters() {
            let adds = p.terms.iter().any(|t| matches!(t.form, Form::Add { .. }));
            if !(p.typical.is_finite() && (p.typical > 0.0 || adds && p.typical >= 0.0)) {
                return bad(name, format!("typical must be above 0, got {}", p.typical));
            }
            if let Some(w) = p.omega {
                if !(w.is_finite() && w > 0.0 && w < 3.0) {
                    return bad(name, format!("omega must be above 0 and below 3, got {w}"));
                }
            }
            for t in &p.terms {
                let ok = match t.form {
                    Form::Power {
                        reference,
                        exponent,
                    } => reference.is_finite() && reference > 0.0 && exponent.is_finite(),
                    Form::Linear { reference, slope }
                    | Form::Exponential { reference, slope }
                    | Form::Add { reference, slope } => reference.is_finite() && slope.is_finite(),
                    Form::Factor { value, at_least } => {
                        value.is_finite() && value > 0.0 && at_least.is_none_or(f64::is_finite)
                    }
                };
                if !ok {
                    return bad(
                        name,
                        format!("the term of {} has an impossible number", t.of.name()),
                    );
                }
                if let Some(cap) = t.cap {
                    if !cap.is_finite() {
                        return bad(
                            name,
                            format!(
                                "the cap of the term of {} must be a finite number, got {cap}",
                                t.of.name()
                            ),
                        );
                    }
                }
            }
            if !p.add_after_terms.is_finite() {
                return bad(
                    &format!("{name}.add_after_terms"),
                    format!("must be a finite number, got {}", p.add_after_terms),
                );
            }
        }
        if self.elimination.omega.is_none() {
            return bad(
                "elimination",
                "needs a between-patient variability (omega)".into(),
            );
        }
        if !(self.correlation.is_finite() && self.correlation.abs() < 1.0) {
            return bad(
                "correlation",
                format!("must be between -1 and 1, got {}", self.correlation),
            );
        }
        let r = self.residual;
        if !(r.additive_mg_l.is_finite()
            && r.additive_mg_l >= 0.0
            && r.proportional.is_finite()
            && r.proportional >= 0.0
            && r.additive_mg_l + r.proportional > 0.0)
        {
            return bad(
                "residual",
                "needs an additive or a proportional error above 0".into(),
            );
        }
        if !(r.exponent.is_finite() && r.exponent > 0.0) {
            return bad(
                "residual.exponent",
                format!(
                    "the power of the prediction in the proportional error must be above 0, got {}",
                    r.exponent
                ),
            );
        }
        if r.exponent != 1.0 && r.proportional == 0.0 {
            return bad(
                "residual.exponent",
                "a power of the prediction needs a proportional error above 0".into(),
            );
        }
        for e in &self.envelope {
            if !(e.low.is_finite() && !e.high.is_nan() && e.low <= e.high) {
                return bad(
                    "population_range",
                    format!("{}: low must not exceed high", e.of.name()),
                );
            }
        }
        Ok(())
    }
}

/// The SD of the log of a log-normal quantity with coefficient of variation `cv_percent`:
/// ω = sqrt(ln(1 + CV²)) (the log-normal identity).
pub fn log_sd(cv_percent: f64) -> f64 {
    let cv = cv_percent / 100.0;
    (1.0 + cv * cv).ln().sqrt()
}
