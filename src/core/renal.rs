//! Body size and kidney function from the patient's record: ideal and adjusted body weight,
//! BMI, and creatinine clearance by Cockcroft-Gault the way a population model's authors
//! computed it.
//!
//! CrCl (mL/min) = (140 − age) × weight / (72 × SCr), × 0.85 for women; age in years, weight
//! in kg, serum creatinine in mg/dL (Cockcroft DW, Gault MH, Nephron 1976;16(1):31–41). Which
//! weight, any floor on creatinine and any cap on the result belong to the model
//! (`prior::CrclRule`); without a model the recorded (total) weight is used and said so.
//! Ideal body weight by Devine: 50 kg (men) or 45.5 kg (women) + 2.3 kg per inch over 5 feet
//! (Devine BJ, Drug Intell Clin Pharm 1974;8:650–655, from memory); adjusted body weight
//! IBW + 0.4 × (TBW − IBW) (common practice for aminoglycosides in obesity).

use crate::core::case::{Patient, Sex};
use crate::core::error::{Error, Result};
use crate::core::format::written;
use crate::core::prior::{CrclRule, CrclWeight};

/// Body size derived from weight, height and sex.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BodySize {
    /// Ideal body weight (Devine), kg; None without height and sex.
    pub ideal_kg: Option<f64>,
    /// Adjusted body weight, kg; None without weight, height and sex.
    pub adjusted_kg: Option<f64>,
    /// Body mass index, kg/m²; None without weight and height.
    pub bmi: Option<f64>,
}

/// Ideal body weight by Devine, kg: 50 (men) or 45.5 (women) + 2.3 per inch over 60 inches.
pub fn ideal_weight_kg(height_cm: f64, sex: Sex) -> f64 {
    let base = match sex {
        Sex::Male => 50.0,
        Sex::Female => 45.5,
    };
    base + 2.3 * (height_cm / 2.54 - 60.0)
}

/// The patient's ideal and adjusted body weight and BMI, as far as the record allows.
pub fn body_size(p: &Patient) -> BodySize {
    let ideal_kg = match (p.height_cm, p.sex) {
        (Some(h), Some(s)) => Some(ideal_weight_kg(h, s)),
        _ => None,
    };
    let adjusted_kg = match (ideal_kg, p.weight_kg) {
        (Some(i), Some(w)) => Some(i + 0.4 * (w - i)),
        _ => None,
    };
    let bmi = match (p.weight_kg, p.height_cm) {
        (Some(w), Some(h)) => Some(w / (h / 100.0).powi(2)),
        _ => None,
    };
    BodySize {
        ideal_kg,
        adjusted_kg,
        bmi,
    }
}

/// Creatinine clearance and what it was computed from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CreatinineClearance {
    /// Estimated creatinine clearance, mL/min.
    pub ml_min: f64,
    /// The weight used, kg.
    pub weight_kg: f64,
    /// Which weight that is.
    pub weight: CrclWeight,
    /// Whether the creatinine was raised to the model's floor, or the result lowered to its cap.
    pub adjusted: bool,
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
    creatinine_clearance_by(p, &TOTAL_WEIGHT)
}

/// Cockcroft-Gault on total body weight with no floor and no cap.
pub const TOTAL_WEIGHT: CrclRule = CrclRule {
    weight: CrclWeight::Total,
    min_creatinine_mg_dl: None,
    min_creatinine_from_age: None,
    max_ml_min: None,
};

/// The patient's creatinine clearance by Cockcroft-Gault the way `rule` says.
///
/// # Errors
/// As [`creatinine_clearance`]; an ideal or adjusted weight without height names
/// `patient.height_cm`.
pub fn creatinine_clearance_by(p: &Patient, rule: &CrclRule) -> Result<CreatinineClearance> {
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
            format!("must be above 0, got {}", written(weight)),
        ));
    }
    if !(scr.is_finite() && scr > 0.0) {
        return Err(Error::invalid(
            "patient.creatinine_mg_dl",
            format!("must be above 0, got {}", written(scr)),
        ));
    }
    if !(age.is_finite() && age < 140.0) {
        return Err(Error::invalid(
            "patient.age_years",
            format!("Cockcroft-Gault gives no clearance at age {age}"),
        ));
    }
    let weight = match rule.weight {
        CrclWeight::Total => weight,
        CrclWeight::Ideal | CrclWeight::Adjusted => {
            let size = body_size(p);
            let w = if rule.weight == CrclWeight::Ideal {
                size.ideal_kg
            } else {
                size.adjusted_kg
            };
            match w {
                Some(w) if w > 0.0 => w,
                _ => {
                    return Err(Error::invalid(
                        "patient.height_cm",
                        "missing; this model's creatinine clearance uses ideal or adjusted body weight, which needs height and sex",
                    ))
                }
            }
        }
    };
    let floor = match (rule.min_creatinine_mg_dl, rule.min_creatinine_from_age) {
        (Some(f), Some(from)) if age >= from => Some(f),
        (Some(f), None) => Some(f),
        _ => None,
    };
    let scr_used = floor.map_or(scr, |f| scr.max(f));
    let raw = cockcroft_gault_ml_min(age, weight, sex, scr_used);
    let ml_min = rule.max_ml_min.map_or(raw, |m| raw.min(m));
    let adjusted = scr_used != scr || ml_min != raw;
    if !(ml_min.is_finite() && ml_min > 0.0) {
        return Err(Error::invalid(
            "patient.creatinine_mg_dl",
            format!("gives no finite creatinine clearance ({scr} mg/dL)"),
        ));
    }
    Ok(CreatinineClearance {
        ml_min,
        weight_kg: weight,
        weight: rule.weight,
        adjusted,
        age_years: age,
        sex,
        creatinine_mg_dl: scr_used,
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
    fn devine_ideal_weight_and_model_rules() {
        // Devine BJ, Drug Intell Clin Pharm 1974;8:650-655 (from memory): a man 6 ft
        // (182.88 cm) tall has 50 + 2.3 x 12 = 77.6 kg; a woman 5 ft (152.4 cm) 45.5 kg.
        assert!((ideal_weight_kg(182.88, Sex::Male) - 77.6).abs() < 1e-9);
        assert!((ideal_weight_kg(152.4, Sex::Female) - 45.5).abs() < 1e-9);
        let mut p = patient(70.0, 100.0, Sex::Male, 0.8);
        p.height_cm = Some(182.88);
        let size = body_size(&p);
        // Adjusted: 77.6 + 0.4 x (100 - 77.6) = 86.56 kg; BMI 100 / 1.8288² = 29.90.
        assert!((size.adjusted_kg.unwrap() - 86.56).abs() < 1e-9);
        assert!((size.bmi.unwrap() - 29.899_7).abs() < 1e-3);
        // A floor of 1 mg/dL from age 60 (as Goti 2018 describe): (140-70) x 100 / 72 = 97.2.
        let rule = CrclRule {
            weight: CrclWeight::Total,
            min_creatinine_mg_dl: Some(1.0),
            min_creatinine_from_age: Some(60.0),
            max_ml_min: Some(150.0),
        };
        let c = creatinine_clearance_by(&p, &rule).unwrap();
        assert!((c.ml_min - 70.0 * 100.0 / 72.0).abs() < 1e-9);
        assert!(c.adjusted);
        // On ideal weight: (140-70) x 77.6 / (72 x 0.8) = 94.31 mL/min.
        let ideal = CrclRule {
            weight: CrclWeight::Ideal,
            ..TOTAL_WEIGHT
        };
        let c = creatinine_clearance_by(&p, &ideal).unwrap();
        assert!((c.ml_min - 70.0 * 77.6 / (72.0 * 0.8)).abs() < 1e-9);
        p.height_cm = None;
        let e = creatinine_clearance_by(&p, &ideal).unwrap_err().to_string();
        assert!(e.starts_with("patient.height_cm:"), "{e}");
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
