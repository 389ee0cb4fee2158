//! Concentration units of measured levels and their conversion to and from mg/L.

use crate::core::error::{Error, Result};

/// The unit a case reports its levels in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LevelUnit {
    /// milligrams per litre
    MgPerL,
    /// micrograms per millilitre (equal to mg/L)
    UgPerMl,
    /// nanograms per millilitre
    NgPerMl,
    /// micrograms per litre (equal to ng/mL)
    UgPerL,
    /// millimoles per litre (needs a molar mass)
    MmolPerL,
    /// micromoles per litre (needs a molar mass)
    UmolPerL,
    /// nanomoles per litre (needs a molar mass; addition to contract v1, used for digoxin)
    NmolPerL,
}

impl LevelUnit {
    /// Every unit, in the order shown to users.
    pub const ALL: [LevelUnit; 7] = [
        LevelUnit::MgPerL,
        LevelUnit::UgPerMl,
        LevelUnit::NgPerMl,
        LevelUnit::UgPerL,
        LevelUnit::MmolPerL,
        LevelUnit::UmolPerL,
        LevelUnit::NmolPerL,
    ];

    /// Every spelling, comma-separated, for messages.
    pub fn names() -> String {
        LevelUnit::ALL
            .iter()
            .map(|u| u.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// Parse the spelling used in case files.
    ///
    /// # Errors
    /// An unknown spelling is an error naming the field and the accepted units.
    pub fn parse(text: &str, place: &str) -> Result<Self> {
        LevelUnit::ALL
            .into_iter()
            .find(|u| u.as_str() == text)
            .ok_or_else(|| {
                Error::invalid(
                    place,
                    format!(
                        "unknown unit {}; use one of {}",
                        crate::core::text::quoted(text),
                        LevelUnit::names()
                    ),
                )
            })
    }

    /// The spelling used in case files and reports.
    pub fn as_str(self) -> &'static str {
        match self {
            LevelUnit::MgPerL => "mg/L",
            LevelUnit::UgPerMl => "ug/mL",
            LevelUnit::NgPerMl => "ng/mL",
            LevelUnit::UgPerL => "ug/L",
            LevelUnit::MmolPerL => "mmol/L",
            LevelUnit::UmolPerL => "umol/L",
            LevelUnit::NmolPerL => "nmol/L",
        }
    }

    /// Whether the unit counts molecules and so needs a molar mass.
    pub fn is_molar(self) -> bool {
        matches!(
            self,
            LevelUnit::MmolPerL | LevelUnit::UmolPerL | LevelUnit::NmolPerL
        )
    }

    /// How many of this unit make 1 mg/L, given the molar mass (g/mol) for molar units.
    /// Returns `None` for a molar unit without a molar mass.
    pub fn per_mg_l(self, molar_mass_g_mol: Option<f64>) -> Option<f64> {
        match self {
            LevelUnit::MgPerL | LevelUnit::UgPerMl => Some(1.0),
            LevelUnit::NgPerMl | LevelUnit::UgPerL => Some(1000.0),
            LevelUnit::MmolPerL => molar_mass_g_mol.map(|m| 1.0 / m),
            LevelUnit::UmolPerL => molar_mass_g_mol.map(|m| 1000.0 / m),
            LevelUnit::NmolPerL => molar_mass_g_mol.map(|m| 1.0e6 / m),
        }
    }
}

/// The unit of an area under the curve for levels in `level_unit`, written one way
/// everywhere: `mg·h/L` for mg/L, `nmol·h/L` for nmol/L, `ug·h/mL` for ug/mL.
pub fn auc_unit(level_unit: &str) -> String {
    match level_unit.split_once('/') {
        Some((amount, volume)) => format!("{amount}·h/{volume}"),
        None => format!("{level_unit}·h"),
    }
}

/// Converts between mg/L (the model's unit) and the case's level unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scale {
    /// The level unit.
    pub unit: LevelUnit,
    /// Level units per mg/L.
    pub per_mg_l: f64,
}

impl Scale {
    /// mg/L to the level unit.
    pub fn to_level(&self, mg_l: f64) -> f64 {
        mg_l * self.per_mg_l
    }
    /// The level unit to mg/L.
    pub fn to_mg_l(&self, level: f64) -> f64 {
        level / self.per_mg_l
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn conversions_follow_the_contract() {
        // ng/mL = ug/L = mg/L x 1000; mmol/L = mg/L / molar mass (contract v1).
        assert_eq!(LevelUnit::NgPerMl.per_mg_l(None), Some(1000.0));
        assert_eq!(LevelUnit::UgPerMl.per_mg_l(None), Some(1.0));
        assert_eq!(LevelUnit::MmolPerL.per_mg_l(None), None);
        // Phenytoin 10 mg/L = 39.64 umol/L with MW 252.27 (drug-facts.md, [AccessPharm-Conv]).
        let f = LevelUnit::UmolPerL.per_mg_l(Some(252.27)).unwrap();
        assert!((10.0 * f - 39.64).abs() < 0.005);
    }

    #[test]
    fn nanomoles_per_litre_use_the_molar_mass() {
        // nmol/L = mg/L x 1e6 / molar mass (definition of the units). Digoxin 1 ng/mL is
        // about 1.28 nmol/L with a molar mass of 780.9 g/mol (hand-worked, 1000 / 780.9;
        // the conversion factor 1.28 is common practice on laboratory reports).
        let u = LevelUnit::parse("nmol/L", "drug.level_unit").unwrap();
        let f = u.per_mg_l(Some(780.9)).unwrap();
        assert!((0.001 * f - 1.2806).abs() < 1e-4, "{f}");
        assert_eq!(u.per_mg_l(None), None);
        assert!(u.is_molar());
    }

    #[test]
    fn areas_are_written_amount_hour_per_volume() {
        assert_eq!(auc_unit("mg/L"), "mg·h/L");
        assert_eq!(auc_unit("nmol/L"), "nmol·h/L");
        assert_eq!(auc_unit("ug/mL"), "ug·h/mL");
    }

    #[test]
    fn unknown_unit_names_the_field() {
        let e = LevelUnit::parse("mg/dl", "drug.level_unit").unwrap_err();
        assert!(e
            .to_string()
            .starts_with("drug.level_unit: unknown unit \"mg/dl\""));
    }
}
