//! The drug profile as written in TOML: serde types (unknown fields refused) and the checks
//! that turn a parsed file into one the rest of ebb may trust.
//!
//! Every number sits in a small table with a mandatory `source` string, so a number without a
//! source cannot be written at all; `validate` then checks that each source names a key of the
//! profile's `[sources]` table or says "from memory, unverified".

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::core::text::quoted;
use crate::core::units::LevelUnit;

/// The words that mark a value nobody could trace to a source.
pub const FROM_MEMORY: &str = "from memory, unverified";

/// One drug profile, as written in `drug-profiles/NAME.toml`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Profile {
    /// Profile schema version; only 1 exists.
    pub schema: u32,
    /// The name shown to people, e.g. "Gentamicin".
    pub display_name: String,
    /// The unit the profile's ranges and targets are in (a case-file unit spelling).
    pub level_unit: String,
    /// The strategy whose targets a case gets when it has no `[targets]`.
    pub default_strategy: String,
    /// Molar mass used to convert molar units, g/mol.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub molar_mass_g_mol: Option<Sourced>,
    /// Typical half-life in adults with normal organ function, hours.
    pub half_life_h: SourcedRange,
    /// Volume of distribution and the weight it is scaled by.
    pub volume: Volume,
    /// Oral bioavailability F in (0, 1]; absent for a drug not given by mouth.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bioavailability: Option<Sourced>,
    /// Hours after the end of a dose before a level is valid for a one-compartment fit
    /// (distribution or absorption phase); absent when no source gives one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub level_valid_after_h: Option<Sourced>,
    /// Whether first-order (linear) elimination holds.
    pub kinetics: Kinetics,
    /// Doses are rounded to a multiple of this, mg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dose_rounding_mg: Option<Sourced>,
    /// Usual dosing intervals, hours (a strategy may give its own).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub usual_intervals_h: Option<SourcedList>,
    /// The fastest an infusion may run, mg/min.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_infusion_rate_mg_per_min: Option<Sourced>,
    /// The largest single dose, mg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_single_dose_mg: Option<Sourced>,
    /// The largest daily dose, mg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_daily_dose_mg: Option<Sourced>,
    /// Tablet or capsule strengths, mg: suggested doses are made of them.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dose_forms_mg: Option<SourcedList>,
    /// A level above this (profile unit) is beyond any clinical value for the drug: a
    /// plausibility flag (a unit or typing slip).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_plausible_level: Option<Sourced>,
    /// Whether and how a loading dose is used; absent: none is suggested.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub loading: Option<Loading>,
    /// Target sets, one per dosing strategy, in file order.
    #[serde(rename = "strategy")]
    pub strategies: Vec<Strategy>,
    /// Cautions in plain words, shown with the profile.
    pub cautions: Vec<String>,
    /// First-order absorption of oral doses, one entry per formulation (`[[absorption]]`);
    /// the first is the default. Empty: oral doses are modelled as instant (the fallback).
    #[serde(default, rename = "absorption", skip_serializing_if = "Vec::is_empty")]
    pub absorption: Vec<Formulation>,
    /// Optional population values for later Bayesian work.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub population: Option<Population>,
    /// Published population models (docs/profiles.md): one `[model]` table, or several
    /// `[[model]]` tables.
    #[serde(
        default,
        rename = "model",
        deserialize_with = "crate::profiles::prior::one_or_many",
        skip_serializing_if = "Vec::is_empty"
    )]
    pub models: Vec<crate::profiles::prior::ModelFile>,
    /// The `name` of the population model a case gets when its `[fit] model` is silent
    /// (default: the first `[model]`, else the summary values of `[population]`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub default_model: Option<String>,
    /// Why the default model is the default, in words shown with the estimate (needed when
    /// the profile offers more than one model).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub default_model_reason: Option<String>,
    /// Saturable (Michaelis-Menten) elimination: a drug with `kinetics.first_order = "no"`
    /// and this section gets the saturable analysis instead of a refusal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub saturable: Option<Saturable>,
    /// Source keys (as cited, without brackets) and the reference written out.
    pub sources: BTreeMap<String, String>,
}

/// A single number with its source.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sourced {
    /// The number.
    pub value: f64,
    /// Where it comes from: `[Key]` citations, or "from memory, unverified".
    pub source: String,
    /// Optional plain words on how to read it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// An inclusive range with its source.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SourcedRange {
    /// Low end.
    pub low: f64,
    /// High end (at least `low`).
    pub high: f64,
    /// Where it comes from.
    pub source: String,
    /// Optional plain words on how to read it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

impl SourcedRange {
    /// Whether `x` lies inside the range, bounds included.
    pub fn contains(&self, x: f64) -> bool {
        x >= self.low && x <= self.high
    }
}

/// A list of numbers with one source.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SourcedList {
    /// The numbers.
    pub values: Vec<f64>,
    /// Where they come from.
    pub source: String,
    /// Optional plain words on how to read them.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// A population estimate: a typical value and, when known, its between-patient variability.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Estimate {
    /// Typical value.
    pub value: f64,
    /// Between-patient coefficient of variation, per cent.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cv_percent: Option<f64>,
    /// Where it comes from.
    pub source: String,
    /// Optional plain words (population studied, weight basis).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// Which body weight the volume of distribution is scaled by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum WeightBasis {
    /// Total (actual) body weight.
    Actual,
    /// Ideal body weight.
    Ideal,
    /// Adjusted body weight (ideal plus a fraction of the excess).
    Adjusted,
    /// Lean body weight.
    Lean,
}

impl WeightBasis {
    /// Plain words.
    pub fn words(self) -> &'static str {
        match self {
            WeightBasis::Actual => "actual body weight",
            WeightBasis::Ideal => "ideal body weight",
            WeightBasis::Adjusted => "adjusted body weight",
            WeightBasis::Lean => "lean body weight",
        }
    }
}

/// `[volume]`: volume of distribution per kg and the weight it applies to.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Volume {
    /// Litres per kg of `weight`.
    pub l_per_kg: SourcedRange,
    /// The weight the volume is scaled by.
    pub weight: WeightBasis,
    /// Where the choice of weight comes from (and any obesity rule), in words with citations.
    pub weight_source: String,
}

/// Whether first-order linear kinetics holds for the drug.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FirstOrder {
    /// Holds (after the distribution phase): projections are shown.
    Yes,
    /// Holds with a limit the user must know: projections are shown with a warning.
    Partly,
    /// Does not hold: first-order projections are refused.
    No,
}

/// `[kinetics]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Kinetics {
    /// Whether first-order elimination holds.
    pub first_order: FirstOrder,
    /// Plain words: why, and what it means for projections (shown as the warning or refusal).
    pub why: String,
    /// Where it comes from.
    pub source: String,
}

/// `[loading]`: a loading dose is used for this drug.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Loading {
    /// Where the use of a loading dose comes from.
    pub source: String,
    /// By weight (the profile's weight basis), mg/kg; absent: sized by the kinetics to the
    /// middle of the peak target.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mg_per_kg: Option<SourcedRange>,
    /// The largest loading dose, mg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_mg: Option<Sourced>,
}

/// One target set (`[[strategy]]`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Strategy {
    /// Identifier, used in `default_strategy` (lower case, hyphens).
    pub name: String,
    /// Plain-words label.
    pub label: String,
    /// When to draw levels for this strategy.
    pub sampling: String,
    /// Acceptable steady-state peak (becomes the case's `targets.peak`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub peak: Option<SourcedRange>,
    /// Steady-state trough ceiling (becomes `targets.trough_max`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub trough_max: Option<Sourced>,
    /// Acceptable steady-state AUC over 24 h, level unit x h (becomes `targets.auc24`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub auc24: Option<SourcedRange>,
    /// A therapeutic range for a level drawn as `sampling` says; shown, not checked (the
    /// contract's targets have no slot for it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub range: Option<SourcedRange>,
    /// Optional plain words.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// This strategy's usual dosing intervals, hours (over the profile's).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub usual_intervals_h: Option<SourcedList>,
    /// Hours after the end of the infusion at which the peak target is defined (its sampling
    /// time); absent: at the end of the infusion.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub peak_sampled_after_h: Option<Sourced>,
    /// Show the drug-free time per interval (hours at or below the trough ceiling).
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub drug_free_time: bool,
    /// Haemodialysis: the acceptable level drawn before a session starts (profile unit).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pre_dialysis: Option<SourcedRange>,
    /// Haemodialysis: the strategy gives each maintenance dose after a session (present:
    /// yes; its `source` says who says so).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dose_after_session: Option<SourcedRule>,
}

/// A rule that holds because the table is there, with its source (`{ source, note? }`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SourcedRule {
    /// Where it comes from: `[Key]` citations, or "from memory, unverified".
    pub source: String,
    /// Optional plain words.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// One oral formulation's first-order absorption (`[[absorption]]`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Formulation {
    /// Identifier a case names in `[[dose]] formulation` (lower case, hyphens).
    pub formulation: String,
    /// Absorption rate constant, 1/h (> 0).
    pub ka_per_h: Sourced,
    /// Lag time before absorption starts, h (>= 0); absent: none.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lag_h: Option<Sourced>,
    /// Optional plain words (the product, the population studied).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// `[population]`: optional typical values with variability, for later Bayesian work.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Population {
    /// Elimination rate constant, 1/h.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub k_per_h: Option<Estimate>,
    /// Half-life, h.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub half_life_h: Option<Estimate>,
    /// Clearance, L/h.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub clearance_l_per_h: Option<Estimate>,
    /// Volume, L/kg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub volume_l_per_kg: Option<Estimate>,
    /// Michaelis-Menten maximum elimination rate, mg/day.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub vmax_mg_per_day: Option<Estimate>,
    /// Michaelis-Menten constant, mg/L.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub km_mg_l: Option<Estimate>,
    /// Residual error of a measured level, per cent (proportional): with a typical elimination
    /// and a volume per kg, each with its CV, it makes the Bayesian priors.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residual_error_percent: Option<Estimate>,
}

/// `[saturable]`: the values the Michaelis-Menten analysis needs, each with its source.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Saturable {
    /// Population Km, mg/L (used when the levels cannot give Km).
    pub km_mg_l: Sourced,
    /// Population Vmax for a 70-kg adult, mg/day (the start of the record fit).
    pub vmax_mg_per_day: Sourced,
    /// Vmax scales with (weight/70)^this.
    pub vmax_weight_exponent: Sourced,
    /// The free (unbound) fraction with normal binding: a free level over it is the total
    /// level the patient would have with normal albumin.
    pub free_fraction: Sourced,
    /// The albumin adjustment C/(slope·albumin[g/dL] + intercept).
    pub albumin: AlbuminAdjustment,
    /// The salts and pro-drugs doses may be written as, with the fraction of the drug itself.
    #[serde(rename = "salt", default)]
    pub salts: Vec<Salt>,
    /// The largest daily dose increase by the level before it.
    pub increase_steps: IncreaseSteps,
    /// The spreads that make `km_mg_l` and `vmax_mg_per_day` the priors of a Bayesian
    /// estimate; without them there is none.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub prior: Option<SaturablePrior>,
}

/// `[saturable.prior]`: between-patient and residual spreads, per cent.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SaturablePrior {
    /// Between-patient coefficient of variation of Vmax, %.
    pub vmax_cv_percent: Sourced,
    /// Between-patient coefficient of variation of Km, %.
    pub km_cv_percent: Sourced,
    /// Proportional residual error of a measured level, %.
    pub residual_percent: Sourced,
}

impl SaturablePrior {
    /// The numbers, by field name.
    pub fn numbers(&self) -> [(&'static str, &Sourced); 3] {
        [
            ("vmax_cv_percent", &self.vmax_cv_percent),
            ("km_cv_percent", &self.km_cv_percent),
            ("residual_percent", &self.residual_percent),
        ]
    }
}

/// `[saturable.albumin]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AlbuminAdjustment {
    /// The albumin coefficient with normal renal function (0.2).
    pub slope: Sourced,
    /// The albumin coefficient in renal failure (0.1).
    pub slope_renal_failure: Sourced,
    /// The constant (0.1).
    pub intercept: Sourced,
}

/// `[[saturable.salt]]`: a salt or pro-drug and the mg of the drug itself per mg written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Salt {
    /// The case-file name (`drug.salt`), e.g. "phenytoin-sodium".
    pub name: String,
    /// mg of the drug itself per mg of dose as written.
    pub factor: Sourced,
}

/// `[saturable.increase_steps]`: at a level below `below_mg_l[i]` a daily dose rises by at
/// most `max_mg_per_day[i]`; at or above the last bound by the last step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IncreaseSteps {
    /// Level bounds, mg/L, rising.
    pub below_mg_l: Vec<f64>,
    /// Largest increase, mg/day: one more than the bounds.
    pub max_mg_per_day: Vec<f64>,
    /// Where the rule comes from.
    pub source: String,
    /// Optional plain words.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// A problem found after parsing: the dotted field and what is wrong.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldProblem {
    /// Field path, e.g. `strategy[2].peak` (array items count from 1).
    pub field: String,
    /// What is wrong, with the value found.
    pub message: String,
}

/// A problem at `field`.
pub fn problem(field: impl Into<String>, message: impl Into<String>) -> FieldProblem {
    FieldProblem {
        field: field.into(),
        message: message.into(),
    }
}

/// The `[Key]` citations in a text, in order (brackets removed).
pub fn citations(text: &str) -> Vec<&str> {
    let mut out = Vec::new();
    let mut rest = text;
    while let Some(open) = rest.find('[') {
        let after = &rest[open + 1..];
        match after.find(']') {
            Some(close) => {
                let key = &after[..close];
                if key.starts_with(|c: char| c.is_ascii_alphabetic())
                    && key
                        .chars()
                        .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.')
                {
                    out.push(key);
                }
                rest = &after[close + 1..];
            }
            None => break,
        }
    }
    out
}

impl Profile {
    /// The profile's level unit.
    ///
    /// # Errors
    /// An unknown unit spelling, naming `level_unit`.
    pub fn unit(&self) -> Result<LevelUnit, FieldProblem> {
        LevelUnit::parse(&self.level_unit, "level_unit").map_err(|_| {
            problem(
                "level_unit",
                format!(
                    "unknown unit {}; use one of {}",
                    quoted(&self.level_unit),
                    LevelUnit::names()
                ),
            )
        })
    }

    /// The strategy named by `default_strategy`.
    pub fn default_strategy(&self) -> Option<&Strategy> {
        self.strategy(&self.default_strategy)
    }

    /// A strategy by name.
    pub fn strategy(&self, name: &str) -> Option<&Strategy> {
        self.strategies.iter().find(|s| s.name == name)
    }

    /// Every source string in the profile with the field it belongs to.
    pub fn source_fields(&self) -> Vec<(String, &str)> {
        let mut out: Vec<(String, &str)> = Vec::new();
        if let Some(m) = &self.molar_mass_g_mol {
            out.push(("molar_mass_g_mol".into(), &m.source));
        }
        out.push(("half_life_h".into(), &self.half_life_h.source));
        out.push(("volume.l_per_kg".into(), &self.volume.l_per_kg.source));
        out.push(("volume.weight_source".into(), &self.volume.weight_source));
        if let Some(f) = &self.bioavailability {
            out.push(("bioavailability".into(), &f.source));
        }
        if let Some(w) = &self.level_valid_after_h {
            out.push(("level_valid_after_h".into(), &w.source));
        }
        out.push(("kinetics.source".into(), &self.kinetics.source));
        if let Some(r) = &self.dose_rounding_mg {
            out.push(("dose_rounding_mg".into(), &r.source));
        }
        if let Some(l) = &self.usual_intervals_h {
            out.push(("usual_intervals_h".into(), &l.source));
        }
        for (name, x) in [
            (
                "max_infusion_rate_mg_per_min",
                &self.max_infusion_rate_mg_per_min,
            ),
            ("max_single_dose_mg", &self.max_single_dose_mg),
            ("max_daily_dose_mg", &self.max_daily_dose_mg),
            ("max_plausible_level", &self.max_plausible_level),
        ] {
            if let Some(x) = x {
                out.push((name.into(), &x.source));
            }
        }
        if let Some(l) = &self.dose_forms_mg {
            out.push(("dose_forms_mg".into(), &l.source));
        }
        if let Some(l) = &self.loading {
            out.push(("loading.source".into(), &l.source));
            if let Some(r) = &l.mg_per_kg {
                out.push(("loading.mg_per_kg".into(), &r.source));
            }
            if let Some(m) = &l.max_mg {
                out.push(("loading.max_mg".into(), &m.source));
            }
        }
        for (i, s) in self.strategies.iter().enumerate() {
            let at = |f: &str| format!("strategy[{}].{f}", i + 1);
            if let Some(p) = &s.peak {
                out.push((at("peak"), &p.source));
            }
            if let Some(t) = &s.trough_max {
                out.push((at("trough_max"), &t.source));
            }
            if let Some(a) = &s.auc24 {
                out.push((at("auc24"), &a.source));
            }
            if let Some(r) = &s.range {
                out.push((at("range"), &r.source));
            }
            if let Some(l) = &s.usual_intervals_h {
                out.push((at("usual_intervals_h"), &l.source));
            }
            if let Some(x) = &s.peak_sampled_after_h {
                out.push((at("peak_sampled_after_h"), &x.source));
            }
            if let Some(r) = &s.pre_dialysis {
                out.push((at("pre_dialysis"), &r.source));
            }
            if let Some(r) = &s.dose_after_session {
                out.push((at("dose_after_session"), &r.source));
            }
        }
        for (i, a) in self.absorption.iter().enumerate() {
            out.push((
                format!("absorption[{}].ka_per_h", i + 1),
                &a.ka_per_h.source,
            ));
            if let Some(l) = &a.lag_h {
                out.push((format!("absorption[{}].lag_h", i + 1), &l.source));
            }
        }
        if let Some(p) = &self.population {
            for (name, e) in p.estimates() {
                out.push((format!("population.{name}"), &e.source));
            }
        }
        for (i, m) in self.models.iter().enumerate() {
            out.push((
                format!("{}.source", crate::profiles::prior::model_place(self, i)),
                &m.source,
            ));
        }
        if let Some(m) = &self.saturable {
            for (name, x) in m.numbers() {
                out.push((format!("saturable.{name}"), &x.source));
            }
            for (i, salt) in m.salts.iter().enumerate() {
                out.push((
                    format!("saturable.salt[{}].factor", i + 1),
                    &salt.factor.source,
                ));
            }
            out.push(("saturable.increase_steps".into(), &m.increase_steps.source));
            for (name, x) in m.prior.iter().flat_map(SaturablePrior::numbers) {
                out.push((format!("saturable.prior.{name}"), &x.source));
            }
        }
        out
    }

    /// Check everything serde cannot: units, ranges, names and sources.
    ///
    /// # Errors
    /// The first problem, naming its field.
    pub fn validate(&self) -> Result<(), FieldProblem> {
        if self.schema != 1 {
            return Err(problem(
                "schema",
                format!(
                    "this ebb reads profile schema 1, the file says {}",
                    self.schema
                ),
            ));
        }
        if self.display_name.trim().is_empty() {
            return Err(problem("display_name", "must not be empty"));
        }
        let unit = self.unit()?;
        if let Some(m) = &self.molar_mass_g_mol {
            positive(m.value, "molar_mass_g_mol")?;
        }
        if unit.is_molar() && self.molar_mass_g_mol.is_none() {
            return Err(problem(
                "molar_mass_g_mol",
                format!("needed because level_unit is {}", unit.as_str()),
            ));
        }
        range(&self.half_life_h, "half_life_h")?;
        range(&self.volume.l_per_kg, "volume.l_per_kg")?;
        if let Some(f) = &self.bioavailability {
            if !(f.value.is_finite() && f.value > 0.0 && f.value <= 1.0) {
                return Err(problem(
                    "bioavailability",
                    format!("must be above 0 and at most 1, got {}", f.value),
                ));
            }
        }
        if let Some(w) = &self.level_valid_after_h {
            if !(w.value.is_finite() && w.value >= 0.0) {
                return Err(problem(
                    "level_valid_after_h",
                    format!("must be 0 or more hours, got {}", w.value),
                ));
            }
        }
        if let Some(r) = &self.dose_rounding_mg {
            positive(r.value, "dose_rounding_mg")?;
        }
        if let Some(l) = &self.usual_intervals_h {
            if l.values.is_empty() {
                return Err(problem("usual_intervals_h", "give at least one interval"));
            }
            for v in &l.values {
                positive(*v, "usual_intervals_h")?;
            }
        }
        for (name, x) in [
            (
                "max_infusion_rate_mg_per_min",
                &self.max_infusion_rate_mg_per_min,
            ),
            ("max_single_dose_mg", &self.max_single_dose_mg),
            ("max_daily_dose_mg", &self.max_daily_dose_mg),
            ("max_plausible_level", &self.max_plausible_level),
        ] {
            if let Some(x) = x {
                positive(x.value, name)?;
            }
        }
        if let Some(l) = &self.dose_forms_mg {
            if l.values.is_empty() {
                return Err(problem("dose_forms_mg", "give at least one strength"));
            }
            for v in &l.values {
                positive(*v, "dose_forms_mg")?;
            }
        }
        if let Some(l) = &self.loading {
            if let Some(r) = &l.mg_per_kg {
                range(r, "loading.mg_per_kg")?;
                positive(r.low, "loading.mg_per_kg")?;
            }
            if let Some(m) = &l.max_mg {
                positive(m.value, "loading.max_mg")?;
            }
        }
        if self.strategies.is_empty() {
            return Err(problem("strategy", "give at least one [[strategy]]"));
        }
        for (i, s) in self.strategies.iter().enumerate() {
            let at = |f: &str| format!("strategy[{}].{f}", i + 1);
            if s.name.is_empty()
                || !s
                    .name
                    .chars()
                    .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-')
            {
                return Err(problem(
                    at("name"),
                    format!(
                        "use lower-case letters, digits and hyphens, got {}",
                        quoted(&s.name)
                    ),
                ));
            }
            if self.strategies[..i].iter().any(|o| o.name == s.name) {
                return Err(problem(
                    at("name"),
                    format!("{} is used by an earlier strategy", quoted(&s.name)),
                ));
            }
            if let Some(p) = &s.peak {
                range(p, &at("peak"))?;
                positive(p.low, &at("peak"))?;
            }
            if let Some(t) = &s.trough_max {
                positive(t.value, &at("trough_max"))?;
            }
            if let Some(a) = &s.auc24 {
                range(a, &at("auc24"))?;
                positive(a.low, &at("auc24"))?;
            }
            if let Some(r) = &s.range {
                range(r, &at("range"))?;
            }
            if let Some(r) = &s.pre_dialysis {
                range(r, &at("pre_dialysis"))?;
                positive(r.low, &at("pre_dialysis"))?;
            }
            if let Some(l) = &s.usual_intervals_h {
                if l.values.is_empty() {
                    return Err(problem(
                        at("usual_intervals_h"),
                        "give at least one interval",
                    ));
                }
                for v in &l.values {
                    positive(*v, &at("usual_intervals_h"))?;
                }
            }
            if let Some(x) = &s.peak_sampled_after_h {
                if !(x.value.is_finite() && x.value >= 0.0) {
                    return Err(problem(
                        at("peak_sampled_after_h"),
                        format!("must be 0 or more hours, got {}", x.value),
                    ));
                }
            }
        }
        if self.default_strategy().is_none() {
            let names: Vec<&str> = self.strategies.iter().map(|s| s.name.as_str()).collect();
            return Err(problem(
                "default_strategy",
                format!(
                    "no strategy named {}; the file has {}",
                    quoted(&self.default_strategy),
                    names.join(", ")
                ),
            ));
        }
        for (i, a) in self.absorption.iter().enumerate() {
            let at = |f: &str| format!("absorption[{}].{f}", i + 1);
            if a.formulation.is_empty()
                || !a
                    .formulation
                    .chars()
                    .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-')
            {
                return Err(problem(
                    at("formulation"),
                    format!(
                        "use lower-case letters, digits and hyphens, got {}",
                        quoted(&a.formulation)
                    ),
                ));
            }
            if self.absorption[..i]
                .iter()
                .any(|o| o.formulation == a.formulation)
            {
                return Err(problem(
                    at("formulation"),
                    format!("{} is used by an earlier entry", quoted(&a.formulation)),
                ));
            }
            positive(a.ka_per_h.value, &at("ka_per_h"))?;
            if let Some(l) = &a.lag_h {
                if !(l.value.is_finite() && l.value >= 0.0) {
                    return Err(problem(
                        at("lag_h"),
                        format!("must be 0 or more hours, got {}", l.value),
                    ));
                }
            }
        }
        if !self.absorption.is_empty() && self.bioavailability.is_none() {
            return Err(problem(
                "absorption",
                "absorption is for oral doses; give the oral bioavailability too",
            ));
        }
        if let Some(p) = &self.population {
            for (name, e) in p.estimates() {
                positive(e.value, &format!("population.{name}"))?;
                if let Some(cv) = e.cv_percent {
                    positive(cv, &format!("population.{name}.cv_percent"))?;
                }
            }
        }
        crate::profiles::prior::check_models(self)?;
        if let Some(m) = &self.saturable {
            m.validate()?;
        }
        for (key, text) in &self.sources {
            if text.trim().is_empty() {
                return Err(problem(format!("sources.{key}"), "write the reference out"));
            }
        }
        for (field, text) in self.source_fields() {
            self.check_source(&field, text)?;
        }
        Ok(())
    }

    fn check_source(&self, field: &str, text: &str) -> Result<(), FieldProblem> {
        let keys = citations(text);
        for k in &keys {
            if !self.sources.contains_key(*k) {
                return Err(problem(
                    field,
                    format!("cites [{k}], which is not in the [sources] table"),
                ));
            }
        }
        if keys.is_empty() && !text.contains(FROM_MEMORY) {
            return Err(problem(
                field,
                format!(
                    "the source must cite a [Key] from [sources] or say \"{FROM_MEMORY}\", got {}",
                    quoted(text)
                ),
            ));
        }
        Ok(())
    }
}

impl Population {
    /// The estimates that are present, with their field names.
    pub fn estimates(&self) -> Vec<(&'static str, &Estimate)> {
        let all = [
            ("k_per_h", &self.k_per_h),
            ("half_life_h", &self.half_life_h),
            ("clearance_l_per_h", &self.clearance_l_per_h),
            ("volume_l_per_kg", &self.volume_l_per_kg),
            ("vmax_mg_per_day", &self.vmax_mg_per_day),
            ("km_mg_l", &self.km_mg_l),
            ("residual_error_percent", &self.residual_error_percent),
        ];
        all.into_iter()
            .filter_map(|(n, e)| e.as_ref().map(|e| (n, e)))
            .collect()
    }
}

fn positive(x: f64, field: &str) -> Result<(), FieldProblem> {
    if x.is_finite() && x > 0.0 {
        Ok(())
    } else {
        Err(problem(field, format!("must be above 0, got {x}")))
    }
}

fn range(r: &SourcedRange, field: &str) -> Result<(), FieldProblem> {
    if !(r.low.is_finite() && r.high.is_finite() && r.low >= 0.0) {
        return Err(problem(
            field,
            format!(
                "low and high must be 0 or more, got {} and {}",
                r.low, r.high
            ),
        ));
    }
    if r.low > r.high {
        return Err(problem(
            field,
            format!("the low end {} is above the high end {}", r.low, r.high),
        ));
    }
    if r.high <= 0.0 {
        return Err(problem(
            field,
            format!(
                "a range of {} to {} holds no value above 0; give the high end above 0",
                r.low, r.high
            ),
        ));
    }
    Ok(())
}

impl Saturable {
    /// The single numbers, by field name.
    pub fn numbers(&self) -> [(&'static str, &Sourced); 7] {
        [
            ("km_mg_l", &self.km_mg_l),
            ("vmax_mg_per_day", &self.vmax_mg_per_day),
            ("vmax_weight_exponent", &self.vmax_weight_exponent),
            ("free_fraction", &self.free_fraction),
            ("albumin.slope", &self.albumin.slope),
            (
                "albumin.slope_renal_failure",
                &self.albumin.slope_renal_failure,
            ),
            ("albumin.intercept", &self.albumin.intercept),
        ]
    }

    fn validate(&self) -> Result<(), FieldProblem> {
        for (name, x) in self.numbers() {
            positive(x.value, &format!("saturable.{name}"))?;
        }
        if self.free_fraction.value >= 1.0 {
            return Err(problem(
                "saturable.free_fraction",
                format!("must be below 1, got {}", self.free_fraction.value),
            ));
        }
        for (i, salt) in self.salts.iter().enumerate() {
            let at = format!("saturable.salt[{}]", i + 1);
            if salt.name.trim().is_empty() {
                return Err(problem(format!("{at}.name"), "must not be empty"));
            }
            let f = salt.factor.value;
            if !(f.is_finite() && f > 0.0 && f <= 1.0) {
                return Err(problem(
                    format!("{at}.factor"),
                    format!("must be above 0 and at most 1, got {f}"),
                ));
            }
        }
        let st = &self.increase_steps;
        let rising = st.below_mg_l.windows(2).all(|w| w[0] < w[1]);
        if st.max_mg_per_day.len() != st.below_mg_l.len() + 1 || !rising {
            return Err(problem(
                "saturable.increase_steps",
                "give rising level bounds and one more step than bounds",
            ));
        }
        for x in st.below_mg_l.iter().chain(&st.max_mg_per_day) {
            positive(*x, "saturable.increase_steps")?;
        }
        for (name, x) in self.prior.iter().flat_map(SaturablePrior::numbers) {
            let at = format!("saturable.prior.{name}");
            positive(x.value, &at)?;
            if x.value > 1000.0 {
                return Err(problem(
                    at,
                    format!("must be at most 1000 %, got {}", x.value),
                ));
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn citations_are_read_from_text() {
        assert_eq!(
            citations("[Rybak20][Rybak06] and [Bauer3e-AG]; not [a b] nor [24.0]"),
            vec!["Rybak20", "Rybak06", "Bauer3e-AG"]
        );
        assert!(citations("from memory, unverified").is_empty());
    }
}
