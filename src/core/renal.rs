//! Creatinine clearance by Cockcroft-Gault, the renal covariate of population priors.
//!
//! CrCl (mL/min) = (140 − age) × weight / (72 × SCr), × 0.85 for women; age in years, weight
//! in kg, serum creatinine in mg/dL (Cockcroft DW, Gault MH, Nephron 1976;16(1):31–41; the
//! formula as given in Taber's Medical Dictionary, "Cockcroft-Gault formula"). The weight is
//! the case's recorded (total) body weight: the case holds no height, so no ideal or adjusted
//! weight can be formed, and the report says which weight was used.

use crate::core::case::{Patient, Sex};
use crate::core::error::{Error, Result};

/// Creatinine clearance and what it was computed from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CreatinineClearance {
    /// Estimated creatinine clearance, mL/min.
    pub ml_min: f64,
    /// The weight used, kg (the case's recorded total body weight).
    pub weight_kg: f64,
    /// Age used, years.
    pub age_years: f64,
    /// Sex used.
    pub sex: Sex,
    /// Serum creatinine used, mg/dL.
    pub creatinine_mg_dl: f64,
}

/// The Cockcroft-Gault formula itself: (140 − age) × weight / (72 × SCr), × 0.85 if female.
/// No checks: callers pass validated values (see [`creatinine_clearance`]).
pub fn cockcroft_gault_ml_min(age_years: f64, weight_kg: f64, sex: Sex, scr_mg_dl: f64) -> f64 {
    let male = (140.0 - age_years) * weight_kg / (72.0 * scr_mg_dl);
    match sex {
        Sex::Female => 0.85 * male,
        Sex::Male => male,
    }
}

/// The patient's creatinine clearance by Cockcroft-Gault, with total body weight.
///
/// # Errors
/// A missing age, weight, sex or serum creatinine names the `patient.` field that is needed;
/// an age of 140 or more (no clearance left by the formula) names `patient.age_years`.
pub fn creatinine_clearance(p: &Patient) -> Result<CreatinineClearance> {
    let need = |field: &str| {
        Error::invalid(
            format!("patient.{field}"),
            "missing; creatinine clearance (Cockcroft-Gault) needs age, weight, sex and serum creatinine",
        )
    };
    let age = p.age_years.ok_or_else(|| need("age_years"))?;
    let weight = p.weight_kg.ok_or_else(|| need("weight_kg"))?;
    let sex = p.sex.ok_or_else(|| need("sex"))?;
    let scr = p.creatinine_mg_dl.ok_or_else(|| need("creatinine_mg_dl"))?;
    if !(weight.is_finite() && weight > 0.0) {
        return Err(Error::invalid(
            "patient.weight_kg",
            format!("must be above 0, got {weight}"),
        ));
    }
    if !(scr.is_finite() && scr > 0.0) {
        return Err(Error::invalid(
            "patient.creatinine_mg_dl",
            format!("must be above 0, got {scr}"),
        ));
    }
    if !(age.is_finite() && age < 140.0) {
        return Err(Error::invalid(
            "patient.age_years",
            format!("Cockcroft-Gault gives no clearance at age {age}"),
        ));
    }
    let ml_min = cockcroft_gault_ml_min(age, weight, sex, scr);
    if !(ml_min.is_finite() && ml_min > 0.0) {
        return Err(Error::invalid(
            "patient.creatinine_mg_dl",
            format!("gives no finite creatinine clearance ({scr} mg/dL)"),
        ));
    }
    Ok(CreatinineClearance {
        ml_min,
        weight_kg: weight,
        age_years: age,
        sex,
        creatinine_mg_dl: scr,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn patient(age: f64, weight: f64, sex: Sex, scr: f64) -> Patient {
        Patient {
            age_years: Some(age),
            weight_kg: Some(weight),
            sex: Some(sex),
            creatinine_mg_dl: Some(scr),
            ..Patient::default()
        }
    }

    #[test]
    fn worked_examples() {
        // drug-facts.md, Cockcroft-Gault row: woman 65 y, 60 kg, SCr 1.0 mg/dL -> 53.13 mL/min;
        // man 70 y, 80 kg, SCr 1.2 mg/dL -> 64.81 mL/min. Formula: Taber's Medical Dictionary,
        // "Cockcroft-Gault formula" [Tabers-CG]; Cockcroft DW, Gault MH, Nephron
        // 1976;16(1):31-41 (citation details from memory, unverified).
        let w = creatinine_clearance(&patient(65.0, 60.0, Sex::Female, 1.0)).unwrap();
        assert!((w.ml_min - 53.125).abs() < 1e-9, "{}", w.ml_min);
        assert_eq!((w.ml_min * 100.0).round() / 100.0, 53.13);
        let m = creatinine_clearance(&patient(70.0, 80.0, Sex::Male, 1.2)).unwrap();
        assert_eq!((m.ml_min * 100.0).round() / 100.0, 64.81, "{}", m.ml_min);
        assert_eq!(m.weight_kg, 80.0);
    }

    #[test]
    fn missing_and_impossible_inputs_name_the_field() {
        let mut p = patient(65.0, 60.0, Sex::Female, 1.0);
        p.sex = None;
        let e = creatinine_clearance(&p).unwrap_err().to_string();
        assert!(e.starts_with("patient.sex:"), "{e}");
        let mut p = patient(65.0, 60.0, Sex::Female, 1.0);
        p.weight_kg = None;
        let e = creatinine_clearance(&p).unwrap_err().to_string();
        assert!(e.starts_with("patient.weight_kg:"), "{e}");
        let e = creatinine_clearance(&patient(140.0, 60.0, Sex::Male, 1.0))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("patient.age_years:"), "{e}");
    }
}
