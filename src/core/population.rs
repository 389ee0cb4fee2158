//! A population model evaluated for one patient: the covariates it uses (creatinine clearance
//! by the model's own rule, body size), the typical k, V and CL (and, for two compartments,
//! CL, V1, Q and V2), the between-patient spread,
//! the residual error, where the patient lies outside the population studied — and, after an
//! estimate, how far it moved from the typical values.

use crate::core::case::{Patient, Sex};
use crate::core::error::{Error, Result};
use crate::core::model::{Disposition, TwoCompartment};
use crate::core::prior::{Covariate, Elimination, Form, Model, Residual};
use crate::core::renal::{self, BodySize, CreatinineClearance};
use crate::core::warning::{Code, Warning};

/// The population values for one patient.
#[derive(Debug, Clone, PartialEq)]
pub struct Population {
    /// The model's name (first author and year).
    pub model: String,
    /// The model in words.
    pub label: String,
    /// Typical k for this patient, 1/h (two compartments: the terminal rate constant β).
    pub k_per_h: f64,
    /// Typical V for this patient, L (two compartments: the central volume V1).
    pub volume_l: f64,
    /// Typical CL for this patient, L/h.
    pub clearance_l_per_h: f64,
    /// Whether the elimination parameter is CL (true) or k (false).
    pub on_clearance: bool,
    /// Between-patient SD of ln(elimination) and of ln V (None: fixed at the typical value).
    pub omega: [Option<f64>; 2],
    /// Correlation of the two.
    pub correlation: f64,
    /// The typical two-compartment disposition (CL, V1, Q, V2) for this patient; None for a
    /// one-compartment model.
    pub two: Option<TwoCompartment>,
    /// Between-patient SD of ln Q and of ln V2 (None: fixed; both None for one compartment).
    pub omega_peripheral: [Option<f64>; 2],
    /// Residual error of a level.
    pub residual: Residual,
    /// The creatinine clearance used, when the model uses one.
    pub creatinine_clearance: Option<CreatinineClearance>,
    /// The recorded weight, kg.
    pub weight_kg: Option<f64>,
    /// Ideal and adjusted weight and BMI.
    pub body: BodySize,
    /// The daily dose used, when the model uses one, mg/day.
    pub daily_dose_mg: Option<f64>,
    /// The other patient values the model's terms read (age, sex, serum creatinine, height,
    /// ideal or adjusted weight), in words with their unit ("age 60 years", "male"), in the
    /// order of `Covariate::ALL`: weight, creatinine clearance and the daily dose are above.
    pub other_covariates: Vec<String>,
    /// Where the patient lies outside the model's population, and what it assumes.
    pub warnings: Vec<Warning>,
}

impl Population {
    /// The prior covariance of (η elimination, η V); a fixed parameter has no variance.
    pub fn omega_matrix(&self) -> [[f64; 2]; 2] {
        let (a, b) = (self.omega[0].unwrap_or(0.0), self.omega[1].unwrap_or(0.0));
        [
            [a * a, self.correlation * a * b],
            [self.correlation * a * b, b * b],
        ]
    }

    /// k and V for between-patient deviations `eta` (elimination, volume).
    pub fn k_and_v(&self, eta: [f64; 2]) -> (f64, f64) {
        let v = self.volume_l * eta[1].exp();
        if self.on_clearance {
            (self.clearance_l_per_h * eta[0].exp() / v, v)
        } else {
            (self.k_per_h * eta[0].exp(), v)
        }
    }

    /// The between-patient SDs of the logs of (CL, V1, Q, V2) of a two-compartment model, in
    /// the order of `Disposition::params` (None: held at the typical value).
    pub fn omega_two(&self) -> [Option<f64>; 4] {
        [
            self.omega[0],
            self.omega[1],
            self.omega_peripheral[0],
            self.omega_peripheral[1],
        ]
    }

    /// The prior covariance of the η of (CL, V1, Q, V2); a fixed parameter has no variance,
    /// and only CL and V1 may be correlated.
    pub fn omega_two_matrix(&self) -> [[f64; 4]; 4] {
        let w = self.omega_two().map(|w| w.unwrap_or(0.0));
        let mut m = [[0.0; 4]; 4];
        for (i, wi) in w.iter().enumerate() {
            m[i][i] = wi * wi;
        }
        m[0][1] = self.correlation * w[0] * w[1];
        m[1][0] = m[0][1];
        m
    }

    /// The disposition for between-patient deviations `eta` of the logs of (CL, V1, Q, V2)
    /// (two compartments), or of (elimination, V) (one; the rest of `eta` unused).
    pub fn disposition(&self, eta: &[f64; 4]) -> Disposition {
        match self.two {
            Some(t) => Disposition::Two(TwoCompartment {
                cl: t.cl * eta[0].exp(),
                v1: t.v1 * eta[1].exp(),
                q: t.q * eta[2].exp(),
                v2: t.v2 * eta[3].exp(),
            }),
            None => {
                let (k, v) = self.k_and_v([eta[0], eta[1]]);
                Disposition::One { k, v }
            }
        }
    }

    /// d(ln k, ln V)/d(η elimination, η V).
    pub fn jacobian(&self) -> [[f64; 2]; 2] {
        if self.on_clearance {
            [[1.0, -1.0], [0.0, 1.0]]
        } else {
            [[1.0, 0.0], [0.0, 1.0]]
        }
    }
}

/// What the report shows of a population-based estimate: the population values and the move
/// from them.
#[derive(Debug, Clone, PartialEq)]
pub struct Summary {
    /// The population values for this patient.
    pub population: Population,
    /// How far the estimate moved from the typical elimination, in between-patient SDs.
    pub elimination_shift_sd: f64,
    /// How far the estimate moved from the typical V, in between-patient SDs (0 when fixed).
    pub volume_shift_sd: f64,
    /// Posterior variance over prior variance of η (elimination, volume): 1 when the levels
    /// add nothing, near 0 when they decide; None for a fixed parameter.
    pub prior_share: [Option<f64>; 2],
    /// For a two-compartment model, how far Q and V2 moved, in between-patient SDs (None for
    /// a fixed parameter or one compartment).
    pub peripheral_shift_sd: [Option<f64>; 2],
    /// For a two-compartment model, the posterior over prior variance of the η of Q and V2
    /// (None for a fixed parameter or one compartment).
    pub peripheral_prior_share: [Option<f64>; 2],
    /// Where the model comes from.
    pub sources: Vec<String>,
}

/// Evaluate `model` for `patient`: `daily_dose_mg` is the current regimen's daily dose (for a
/// model whose clearance depends on it) and `oral_f` the profile's oral bioavailability (for
/// a model of apparent values).
///
/// # Errors
/// A patient field the model needs (named `patient.…`; the daily dose as `plan`), or a
/// model that gives no positive k and V for this patient.
pub fn evaluate(
    model: &Model,
    patient: &Patient,
    daily_dose_mg: Option<f64>,
    oral_f: f64,
) -> Result<Population> {
    model.check()?;
    let body = renal::body_size(patient);
    let in_terms = |c: Covariate| {
        model
            .parameters()
            .iter()
            .any(|(_, p)| p.terms.iter().any(|t| t.of == c))
    };
    let uses = |c: Covariate| in_terms(c) || model.envelope.iter().any(|r| r.of == c);
    // Needed by a term: an error when it cannot be formed; only checked against the
    // population's range: used when it can be formed.
    let crcl = if in_terms(Covariate::CrclMlMin) || in_terms(Covariate::CrclLPerH) {
        Some(renal::creatinine_clearance_by(patient, &model.crcl)?)
    } else if uses(Covariate::CrclMlMin) || uses(Covariate::CrclLPerH) {
        renal::creatinine_clearance_by(patient, &model.crcl).ok()
    } else {
        None
    };
    let need = |field: &str, what: &str| {
        Error::invalid(
            format!("patient.{field}"),
            format!("missing; the population model {} uses {what}", model.name),
        )
    };
    let mut assumed = Vec::new();
    let value = |c: Covariate, assumed: &mut Vec<String>| -> Result<f64> {
        Ok(match c {
            Covariate::WeightKg => patient
                .weight_kg
                .ok_or_else(|| need("weight_kg", "body weight"))?,
            Covariate::IdealWeightKg => body
                .ideal_kg
                .ok_or_else(|| need("height_cm", "ideal body weight (height and sex)"))?,
            Covariate::AdjustedWeightKg => body
                .adjusted_kg
                .ok_or_else(|| need("height_cm", "adjusted body weight (height and sex)"))?,
            Covariate::HeightCm => patient.height_cm.ok_or_else(|| need("height_cm", "height"))?,
            Covariate::AgeYears => patient.age_years.ok_or_else(|| need("age_years", "age"))?,
            Covariate::CrclMlMin => crcl.map_or(0.0, |c| c.ml_min),
            Covariate::CrclLPerH => crcl.map_or(0.0, |c| c.ml_min * 0.06),
            // As entered when entered in µmol/L; else from mg/dL (1 mg/dL = 88.4 µmol/L,
            // drug-facts.md, Cockcroft-Gault SI row).
            Covariate::CreatinineUmolL => match patient.creatinine_umol_l {
                Some(c) => c,
                None => {
                    patient
                        .creatinine_mg_dl
                        .ok_or_else(|| need("creatinine_mg_dl", "serum creatinine"))?
                        * 88.4
                }
            },
            Covariate::Dialysis => match patient.dialysis {
                Some(d) => f64::from(u8::from(d)),
                None => {
                    let said = "the case does not say whether the patient is on haemodialysis: taken as not";
                    // Several parameters may read it: say it once.
                    if !assumed.iter().any(|a| a == said) {
                        assumed.push(said.to_string());
                    }
                    0.0
                }
            },
            Covariate::Female | Covariate::Male => {
                let sex = patient.sex.ok_or_else(|| need("sex", "sex"))?;
                let female = sex == Sex::Female;
                f64::from(u8::from(female == (c == Covariate::Female)))
            }
            Covariate::DailyDoseMg => daily_dose_mg.ok_or_else(|| {
                Error::invalid(
                    "plan",
                    format!(
                        "missing; the population model {} uses the daily dose: give a plan (dose and interval) or a dose record",
                        model.name
                    ),
                )
            })?,
        })
    };
    // The covariate a term reads, lowered to the term's cap when it has one.
    let term_value = |t: &crate::core::prior::Term, assumed: &mut Vec<String>| {
        value(t.of, assumed).map(|c| t.cap.map_or(c, |cap| c.min(cap)))
    };
    let mut eval = |p: &crate::core::prior::Parameter| -> Result<f64> {
        let mut x = p.typical;
        for t in &p.terms {
            if let Form::Add { reference, slope } = t.form {
                x += slope * (term_value(t, &mut assumed)? - reference);
            }
        }
        for t in &p.terms {
            let c = term_value(t, &mut assumed)?;
            x *= match t.form {
                Form::Power {
                    reference,
                    exponent,
                } => (c / reference).powf(exponent),
                Form::Linear { reference, slope } => 1.0 + slope * (c - reference),
                Form::Exponential { reference, slope } => (slope * (c - reference)).exp(),
                Form::Add { .. } => 1.0,
                Form::Factor { value, at_least } => {
                    let on = match at_least {
                        Some(limit) => c >= limit,
                        None => c >= 0.5,
                    };
                    if on {
                        value
                    } else {
                        1.0
                    }
                }
            };
        }
        if p.add_after_terms != 0.0 {
            // The terms' part below zero is beyond the model's reach even when the constant
            // after it would hide it: NaN makes the check below name the patient's fields.
            if x.is_nan() || x < 0.0 {
                return Ok(f64::NAN);
            }
            x += p.add_after_terms;
        }
        Ok(x)
    };
    let mut elimination = eval(&model.elimination)?;
    let mut v = eval(&model.volume)?;
    let mut peripheral = match &model.peripheral {
        Some(p) => Some((eval(&p.q)?, eval(&p.v2)?)),
        None => None,
    };
    if model.apparent {
        elimination *= if model.elimination_kind == Elimination::Clearance {
            oral_f
        } else {
            1.0
        };
        v *= oral_f;
        peripheral = peripheral.map(|(q, v2)| (q * oral_f, v2 * oral_f));
    }
    let on_clearance = model.elimination_kind == Elimination::Clearance;
    let two = peripheral.map(|(q, v2)| TwoCompartment {
        cl: elimination,
        v1: v,
        q,
        v2,
    });
    let (k, cl) = match two {
        // The terminal rate constant β stands for k wherever one rate is asked for.
        Some(t) => (t.rates().1, elimination),
        None if on_clearance => (elimination / v, elimination),
        None => (elimination, elimination * v),
    };
    let peripheral_ok =
        two.is_none_or(|t| t.q.is_finite() && t.q > 0.0 && t.v2.is_finite() && t.v2 > 0.0);
    if !(k.is_finite() && k > 0.0 && v.is_finite() && v > 0.0 && peripheral_ok) {
        // Name the patient's fields the model read: one of them is beyond its reach.
        let mut fields: Vec<&str> = Vec::new();
        for t in model.parameters().iter().flat_map(|(_, p)| p.terms.iter()) {
            let f = match t.of {
                Covariate::WeightKg => "patient.weight_kg",
                Covariate::IdealWeightKg | Covariate::AdjustedWeightKg | Covariate::HeightCm => {
                    "patient.height_cm"
                }
                Covariate::AgeYears => "patient.age_years",
                Covariate::CrclMlMin | Covariate::CrclLPerH | Covariate::CreatinineUmolL => {
                    "patient.creatinine_mg_dl"
                }
                Covariate::Dialysis => "patient.dialysis",
                Covariate::Female | Covariate::Male => "patient.sex",
                Covariate::DailyDoseMg => "plan",
            };
            if !fields.contains(&f) {
                fields.push(f);
            }
        }
        let place = if fields.is_empty() {
            "patient".to_string()
        } else {
            fields.join(", ")
        };
        return Err(Error::invalid(
            place,
            format!(
                "the population model {} gives no positive typical k and volume for this patient; check these values",
                model.name
            ),
        ));
    }
    // A model whose terms read serum creatinine itself and no clearance (Tod 1998) did not
    // use a Cockcroft-Gault clearance: one formed only to compare with its population's range
    // is not said to be a covariate it used.
    let reported_crcl = if in_terms(Covariate::CreatinineUmolL)
        && !in_terms(Covariate::CrclMlMin)
        && !in_terms(Covariate::CrclLPerH)
    {
        None
    } else {
        crcl
    };
    let mut warnings = Vec::new();
    for r in &model.envelope {
        let x = match r.of {
            Covariate::CrclMlMin | Covariate::CrclLPerH => crcl.map(|c| {
                if r.of == Covariate::CrclLPerH {
                    c.ml_min * 0.06
                } else {
                    c.ml_min
                }
            }),
            other => value(other, &mut Vec::new()).ok(),
        };
        if let Some(x) = x {
            if x < r.low || x > r.high {
                let (what, unit) = covariate_words(r.of);
                let num = crate::core::format::num;
                let range = if r.high.is_finite() {
                    format!(
                        "outside the {}–{} {unit} of the patients behind the {} model",
                        num(r.low),
                        num(r.high),
                        model.name
                    )
                } else {
                    format!(
                        "below the {} {unit} that the patients behind the {} model had at least",
                        num(r.low),
                        model.name
                    )
                };
                warnings.push(Warning::new(
                    Code::OutsidePopulation,
                    format!(
                        "{what} {} {unit} is {range}: its typical values are extrapolated for this patient",
                        num(x)
                    ),
                ));
            }
        }
    }
    if model.excludes_dialysis && patient.dialysis == Some(true) {
        warnings.push(Warning::new(
            Code::OutsidePopulation,
            format!(
                "the {} model was built without patients on haemodialysis: its typical values do not describe this patient",
                model.name
            ),
        ));
    }
    for a in model.assumptions.iter().chain(assumed.iter()) {
        warnings.push(Warning::new(
            Code::ModelAssumes,
            format!("population model {}: {a}", model.name),
        ));
    }
    if model.apparent && oral_f != 1.0 {
        warnings.push(Warning::new(
            Code::ModelAssumes,
            format!(
                "population model {}: its clearance and volume are apparent (divided by F); they are multiplied by the profile's oral F = {} so that every dose is counted as F x dose",
                model.name,
                crate::core::format::num(oral_f)
            ),
        ));
    }
    let mut other_covariates = Vec::new();
    for (c, _) in Covariate::ALL {
        let reported = matches!(
            c,
            Covariate::WeightKg
                | Covariate::CrclMlMin
                | Covariate::CrclLPerH
                | Covariate::DailyDoseMg
                | Covariate::Dialysis
        );
        if reported || !in_terms(c) {
            continue;
        }
        if matches!(c, Covariate::Male | Covariate::Female) {
            let said = other_covariates
                .iter()
                .any(|w: &String| w == "male" || w == "female");
            if let (Some(sex), false) = (patient.sex, said) {
                other_covariates.push(if sex == Sex::Female { "female" } else { "male" }.into());
            }
            continue;
        }
        if let Ok(x) = value(c, &mut Vec::new()) {
            let (what, unit) = covariate_words(c);
            other_covariates.push(format!("{what} {} {unit}", crate::core::format::num(x)));
        }
    }
    Ok(Population {
        model: model.name.clone(),
        label: model.label.clone(),
        k_per_h: k,
        volume_l: v,
        clearance_l_per_h: cl,
        on_clearance,
        omega: [model.elimination.omega, model.volume.omega],
        correlation: if model.volume.omega.is_some() {
            model.correlation
        } else {
            0.0
        },
        two,
        omega_peripheral: model
            .peripheral
            .as_ref()
            .map_or([None, None], |p| [p.q.omega, p.v2.omega]),
        residual: model.residual,
        creatinine_clearance: reported_crcl,
        weight_kg: patient.weight_kg,
        body,
        daily_dose_mg: if uses(Covariate::DailyDoseMg) {
            daily_dose_mg
        } else {
            None
        },
        other_covariates,
        warnings,
    })
}

/// A covariate in a sentence, and its unit ("creatinine clearance", "mL/min").
pub fn covariate_words(c: Covariate) -> (&'static str, &'static str) {
    match c {
        Covariate::WeightKg => ("weight", "kg"),
        Covariate::IdealWeightKg => ("ideal body weight", "kg"),
        Covariate::AdjustedWeightKg => ("adjusted body weight", "kg"),
        Covariate::HeightCm => ("height", "cm"),
        Covariate::AgeYears => ("age", "years"),
        Covariate::CrclMlMin => ("creatinine clearance", "mL/min"),
        Covariate::CrclLPerH => ("creatinine clearance", "L/h"),
        Covariate::CreatinineUmolL => ("serum creatinine", "µmol/L"),
        Covariate::Dialysis => ("haemodialysis", ""),
        Covariate::Female => ("female sex", ""),
        Covariate::Male => ("male sex", ""),
        Covariate::DailyDoseMg => ("daily dose", "mg"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::prior::{Parameter, Peripheral, Residual};

    fn fixed(typical: f64, omega: Option<f64>) -> Parameter {
        Parameter {
            typical,
            terms: Vec::new(),
            add_after_terms: 0.0,
            omega,
        }
    }

    /// An invented two-compartment model of apparent values (self-consistency only).
    fn apparent_two() -> Model {
        Model {
            name: "invented-two".into(),
            label: String::new(),
            elimination_kind: Elimination::Clearance,
            elimination: fixed(4.0, Some(0.3)),
            volume: fixed(20.0, Some(0.2)),
            peripheral: Some(Peripheral {
                q: fixed(2.0, None),
                v2: fixed(30.0, Some(0.5)),
            }),
            correlation: 0.5,
            residual: Residual {
                additive_mg_l: 0.1,
                proportional: 0.1,
                exponent: 1.0,
            },
            apparent: true,
            crcl: crate::core::renal::TOTAL_WEIGHT,
            envelope: Vec::new(),
            excludes_dialysis: false,
            a_priori: true,
            population: String::new(),
            assumptions: Vec::new(),
            sources: Vec::new(),
        }
    }

    #[test]
    fn an_apparent_two_compartment_model_scales_every_parameter_by_f() {
        let p = evaluate(&apparent_two(), &Patient::default(), None, 0.5).unwrap();
        let t = p.two.unwrap();
        assert_eq!((t.cl, t.v1, t.q, t.v2), (2.0, 10.0, 1.0, 15.0));
        assert_eq!(p.k_per_h, t.rates().1);
        assert_eq!(p.omega_two(), [Some(0.3), Some(0.2), None, Some(0.5)]);
        let m = p.omega_two_matrix();
        assert!((m[0][1] - 0.5 * 0.3 * 0.2).abs() < 1e-15);
        assert_eq!(m[2], [0.0; 4]);
        assert!((m[3][3] - 0.25).abs() < 1e-15);
        // η moves each parameter by e^η; Q stays without one.
        let Disposition::Two(d) = p.disposition(&[0.1, 0.0, 0.0, -0.2]) else {
            panic!("two compartments");
        };
        assert!((d.cl - 2.0 * 0.1f64.exp()).abs() < 1e-12);
        assert!((d.v2 - 15.0 * (-0.2f64).exp()).abs() < 1e-12);
        assert_eq!((d.v1, d.q), (10.0, 1.0));
    }

    #[test]
    fn a_peripheral_parameter_the_patient_cannot_have_names_the_field() {
        let mut m = apparent_two();
        m.apparent = false;
        if let Some(p) = m.peripheral.as_mut() {
            p.v2.terms.push(crate::core::prior::Term {
                of: Covariate::WeightKg,
                form: Form::Add {
                    reference: 100.0,
                    slope: 1.0,
                },
                cap: None,
            });
        }
        let patient = Patient {
            weight_kg: Some(50.0),
            ..Patient::default()
        };
        let e = evaluate(&m, &patient, None, 1.0).unwrap_err().to_string();
        assert!(e.starts_with("patient.weight_kg: "), "{e}");
    }

    /// CL = (2 − 0.02·age, age capped at `cap`) + 1 after the terms (invented numbers, for the
    /// order of the operations only).
    fn with_constant_after(cap: Option<f64>) -> Model {
        let mut m = apparent_two();
        m.apparent = false;
        m.elimination.typical = 2.0;
        m.elimination.add_after_terms = 1.0;
        m.elimination.terms.push(crate::core::prior::Term {
            of: Covariate::AgeYears,
            form: Form::Add {
                reference: 0.0,
                slope: -0.02,
            },
            cap,
        });
        m.elimination.terms.push(crate::core::prior::Term {
            of: Covariate::WeightKg,
            form: Form::Power {
                reference: 50.0,
                exponent: 1.0,
            },
            cap: None,
        });
        m
    }

    #[test]
    fn a_constant_after_the_terms_is_added_last_and_a_cap_holds_the_covariate() {
        let patient = |age: f64| Patient {
            weight_kg: Some(100.0),
            age_years: Some(age),
            ..Patient::default()
        };
        // (2 − 0.02·40) × 100/50 + 1 = 3.4: the constant is not doubled by the weight.
        let p = evaluate(&with_constant_after(None), &patient(40.0), None, 1.0).unwrap();
        assert!((p.two.unwrap().cl - 3.4).abs() < 1e-12);
        // Age 120 would make the part before the constant negative: an error naming the
        // patient's fields, not a clearance of 1 − 0.8 hidden by the constant.
        let e = evaluate(&with_constant_after(None), &patient(120.0), None, 1.0)
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with("patient.age_years, patient.weight_kg: "),
            "{e}"
        );
        // Capped at 90: (2 − 1.8) × 2 + 1 = 1.4 at any age from 90 up.
        for age in [90.0, 120.0] {
            let p = evaluate(&with_constant_after(Some(90.0)), &patient(age), None, 1.0).unwrap();
            assert!((p.two.unwrap().cl - 1.4).abs() < 1e-12, "{age}");
        }
    }
}
