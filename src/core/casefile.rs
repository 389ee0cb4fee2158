//! Case files: TOML to a validated `Case` (a serde mirror first, then validation) and back.

use std::path::Path;

use chrono::{FixedOffset, NaiveDate, NaiveDateTime, NaiveTime};
use serde::{Deserialize, Serialize};
use toml::value::{Datetime, Offset};

use crate::core::case::{
    Case, DialysisSession, Dose, Drug, FitChoice, Level, Patient, Plan, RegimenOptions, Sex,
    Switch, SwitchRule, Targets, Threshold,
};
use crate::core::clock::{Clock, ClockTime};
use crate::core::error::{Error, Result};
use crate::core::format::written;
use crate::core::model::{Absorption, Route};
use crate::core::prior::Model;
use crate::core::text;
use crate::core::units::{LevelUnit, Scale};

/// The case file as written: every field as the user typed it, before validation.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CaseFile {
    /// Contract version; missing means 1.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub schema: Option<i64>,
    /// IANA time zone the local times are in (addition): hours across a daylight-saving
    /// change are then counted as they really passed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_zone: Option<String>,
    /// The patient.
    #[serde(default)]
    pub patient: PatientFile,
    /// The drug.
    #[serde(default)]
    pub drug: DrugFile,
    /// Doses given.
    #[serde(default, rename = "dose", skip_serializing_if = "Vec::is_empty")]
    pub doses: Vec<DoseFile>,
    /// Levels measured.
    #[serde(default, rename = "level", skip_serializing_if = "Vec::is_empty")]
    pub levels: Vec<LevelFile>,
    /// Haemodialysis sessions (addition: `[[dialysis_session]]`), marked, not modelled.
    #[serde(
        default,
        rename = "dialysis_session",
        skip_serializing_if = "Vec::is_empty"
    )]
    pub dialysis_sessions: Vec<DialysisSessionFile>,
    /// The regimen to project.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub plan: Option<PlanFile>,
    /// Targets.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub targets: Option<TargetsFile>,
    /// Threshold.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub threshold: Option<ThresholdFile>,
    /// Switching agents (addition: `[switch]`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub switch: Option<SwitchFile>,
    /// How to fit (addition: `[fit] method`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<FitFile>,
}

/// `[fit]` as written.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitFile {
    /// "log-linear", "dose-history" or "bayesian"; unset lets the fit choose.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub method: Option<String>,
    /// The drug profile's population model by name (first author and year, e.g.
    /// "goti-2018"); unset: the profile's default.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub model: Option<String>,
}

/// `[patient]` as written.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct PatientFile {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub weight_kg: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub age_years: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sex: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub creatinine_mg_dl: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub creatinine_umol_l: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub height_cm: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub albumin_g_dl: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub albumin_g_l: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dialysis: Option<bool>,
    /// Addition: renal failure (creatinine clearance below 10-20 mL/min or end-stage renal
    /// disease): the albumin adjustment of a saturable drug's level takes its renal form.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub renal_failure: Option<bool>,
}

/// `[drug]` as written.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct DrugFile {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub profile: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub level_unit: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub molar_mass_g_mol: Option<f64>,
    /// Addition: the profile's dosing strategy (targets, usual intervals, sampling rules);
    /// default: the profile's `default_strategy`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub strategy: Option<String>,
    /// Addition: the salt or pro-drug the doses are written as (a saturable drug profile's
    /// `[[saturable.salt]]` names, e.g. "phenytoin-sodium"); default: the drug itself.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub salt: Option<String>,
}

/// One `[[dose]]` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct DoseFile {
    pub time: Datetime,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub amount_mg: Option<f64>,
    pub route: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub infusion_h: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bioavailability: Option<f64>,
    /// Addition: the oral formulation (a name from the drug profile's `[[absorption]]`);
    /// default: the profile's first.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub formulation: Option<String>,
}

/// One `[[level]]` as written. A value written `"<0.5"` (addition) is a level the
/// laboratory reported below its assay's limit: `value` holds the limit and `below_limit`
/// is set.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(from = "LevelRaw", into = "LevelRaw")]
#[allow(missing_docs)]
pub struct LevelFile {
    pub time: Datetime,
    pub value: f64,
    pub below_limit: bool,
    pub use_in_fit: Option<bool>,
    pub note: Option<String>,
    /// Addition: a free (unbound) level rather than a total one.
    pub free: Option<bool>,
}

/// `[[level]]` as the TOML spells it.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct LevelRaw {
    time: Datetime,
    value: LevelValue,
    #[serde(default, rename = "use", skip_serializing_if = "Option::is_none")]
    use_in_fit: Option<bool>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    note: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    free: Option<bool>,
}

impl From<LevelRaw> for LevelFile {
    fn from(r: LevelRaw) -> Self {
        LevelFile {
            time: r.time,
            value: r.value.value,
            below_limit: r.value.below_limit,
            use_in_fit: r.use_in_fit,
            note: r.note,
            free: r.free,
        }
    }
}

impl From<LevelFile> for LevelRaw {
    fn from(l: LevelFile) -> Self {
        LevelRaw {
            time: l.time,
            value: LevelValue {
                value: l.value,
                below_limit: l.below_limit,
            },
            use_in_fit: l.use_in_fit,
            note: l.note,
            free: l.free,
        }
    }
}

/// A level's value: a number, or `"<limit"` for a level below the assay's limit.
#[derive(Debug, Clone, Copy, PartialEq)]
struct LevelValue {
    value: f64,
    below_limit: bool,
}

impl Serialize for LevelValue {
    fn serialize<S: serde::Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        if self.below_limit {
            s.serialize_str(&format!("<{}", self.value))
        } else {
            s.serialize_f64(self.value)
        }
    }
}

impl<'de> Deserialize<'de> for LevelValue {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        struct V;
        impl serde::de::Visitor<'_> for V {
            type Value = LevelValue;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number, or \"<0.5\" for a level below the assay's limit")
            }
            fn visit_f64<E: serde::de::Error>(self, v: f64) -> std::result::Result<LevelValue, E> {
                Ok(LevelValue {
                    value: v,
                    below_limit: false,
                })
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> std::result::Result<LevelValue, E> {
                self.visit_f64(v as f64)
            }
            fn visit_u64<E: serde::de::Error>(self, v: u64) -> std::result::Result<LevelValue, E> {
                self.visit_f64(v as f64)
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> std::result::Result<LevelValue, E> {
                parse_below_limit(v)
                    .map(|x| LevelValue {
                        value: x,
                        below_limit: true,
                    })
                    .ok_or_else(|| {
                        E::custom(format!(
                            "write a number, or \"<0.5\" for a level below the assay's limit; got \"{v}\""
                        ))
                    })
            }
        }
        d.deserialize_any(V)
    }
}

/// The limit of a value written `<0.5` (spaces allowed after `<`), when it is one.
pub fn parse_below_limit(text: &str) -> Option<f64> {
    let rest = text.trim().strip_prefix('<')?;
    rest.trim().replace(',', ".").parse::<f64>().ok()
}

/// One `[[dialysis_session]]` as written (addition): when a haemodialysis session started
/// and how long it ran.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DialysisSessionFile {
    /// When the session started (a date-time, local or with an offset like the doses).
    pub start: Datetime,
    /// How long it ran, hours (above 0, at most `MAX_SESSION_H`).
    pub duration_h: f64,
}

/// The longest haemodialysis session a case may record, hours: intermittent sessions run a
/// few hours (common practice); a longer one is a typing slip or a continuous therapy, which
/// `[[dialysis_session]]` does not describe.
pub const MAX_SESSION_H: f64 = 12.0;

/// `[plan]` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct PlanFile {
    pub dose_mg: f64,
    pub interval_h: f64,
    pub route: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub infusion_h: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bioavailability: Option<f64>,
    /// Addition: the oral formulation, as on a dose.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub formulation: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start: Option<Datetime>,
}

/// `[targets]` as written.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct TargetsFile {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub peak: Option<Vec<f64>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub trough_max: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub auc24: Option<Vec<f64>>,
}

/// `[threshold]` as written.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct ThresholdFile {
    pub below: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub procedure: Option<Datetime>,
    /// Addition: the regimen may resume after the procedure once the level is at or below
    /// this (level unit).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub resume_below: Option<f64>,
    /// Addition: the regimen may resume this many hours after the end of the procedure.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub resume_after_h: Option<f64>,
    /// Addition: how long the procedure lasts, hours (default 0): the level must stay at or
    /// below `below` from `procedure` to its end.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub procedure_h: Option<f64>,
}

/// `[switch]` as written (addition): the next agent and exactly one rule for its start.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SwitchFile {
    /// The next agent, free text (required).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to: Option<String>,
    /// Start once the level is at or below this, in the level unit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start_below: Option<f64>,
    /// Start after this many half-lives from the end of the last recorded dose.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub after_half_lives: Option<f64>,
}

/// Defaults a drug profile may supply where the case is silent.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Defaults {
    /// Molar mass in g/mol.
    pub molar_mass_g_mol: Option<f64>,
    /// Oral bioavailability.
    pub bioavailability: Option<f64>,
    /// Targets, used when the case has no `[targets]`.
    pub targets: Targets,
    /// The profile's default population model.
    pub prior: Option<Model>,
    /// Every population model the profile offers (a case's `[fit] model` names one of them;
    /// empty: only `prior`, if any).
    pub models: Vec<Model>,
    /// Why the default model is the default (shown when the profile offers several).
    pub model_reason: Option<String>,
    /// The practical choices regimen suggestions are searched over (usual intervals, dose
    /// rounding); `None` keeps `RegimenOptions::default()`.
    pub regimen: Option<RegimenOptions>,
    /// The profile's strategy names (a case's `drug.strategy` must be one of them).
    pub strategies: Vec<String>,
    /// The profile's oral formulations by name with their absorption, the default first.
    pub formulations: Vec<(String, Absorption)>,
}

impl CaseFile {
    /// Parse TOML text into the mirror (no validation yet).
    ///
    /// # Errors
    /// Syntax errors, unknown fields and wrong types, with the line they are on.
    pub fn parse(text: &str) -> Result<Self> {
        toml::from_str(text).map_err(|e| syntax_error(text, &e))
    }

    /// Write the mirror back as TOML.
    ///
    /// # Errors
    /// Only if a value cannot be written as TOML (a NaN or infinity, for example).
    pub fn to_toml(&self) -> Result<String> {
        toml::to_string(self)
            .map_err(|e| Error::invalid("case", format!("cannot be written as TOML: {e}")))
    }

    /// Validate into a `Case`, with no profile defaults.
    ///
    /// # Errors
    /// The first impossible value, naming its field or row.
    pub fn validate(&self) -> Result<Case> {
        self.validate_with(&Defaults::default())
    }

    /// Validate into a `Case`, filling gaps from a profile's defaults.
    ///
    /// # Errors
    /// The first impossible value, naming its field or row.
    pub fn validate_with(&self, defaults: &Defaults) -> Result<Case> {
        self.check_text()?;
        self.check_rows()?;
        if let Some(s) = self.schema {
            if s != 1 {
                return Err(Error::invalid(
                    "schema",
                    format!("this ebb reads schema 1, the file says {s}"),
                ));
            }
        }
        let patient = validate_patient(&self.patient)?;
        if let Some(name) = &self.drug.strategy {
            if defaults.strategies.is_empty() {
                return Err(Error::invalid(
                    "drug.strategy",
                    "a dosing strategy belongs to a drug profile; give drug.profile too",
                ));
            }
            if !defaults.strategies.iter().any(|s| s == name) {
                return Err(Error::invalid(
                    "drug.strategy",
                    format!(
                        "the profile has no strategy \"{name}\"; it has {}",
                        defaults.strategies.join(", ")
                    ),
                ));
            }
        }
        let drug = validate_drug(&self.drug, defaults)?;
        let scale = drug.scale;

        // Times: all local or all with an offset.
        let mut stamps: Vec<(Row, ClockTime)> = Vec::new();
        for (i, d) in self.doses.iter().enumerate() {
            let place = Row::Dose(i + 1);
            let s = to_stamp(&d.time, format_args!("{place}: time"))?;
            stamps.push((place, s));
        }
        for (i, l) in self.levels.iter().enumerate() {
            let place = Row::Level(i + 1);
            let s = to_stamp(&l.time, format_args!("{place}: time"))?;
            stamps.push((place, s));
        }
        let plan_start = match &self.plan {
            Some(PlanFile { start: Some(s), .. }) => Some(to_stamp(s, "plan.start")?),
            _ => None,
        };
        let procedure = match &self.threshold {
            Some(ThresholdFile {
                procedure: Some(p), ..
            }) => Some(to_stamp(p, "threshold.procedure")?),
            _ => None,
        };
        let zone = match &self.time_zone {
            None => None,
            Some(name) => Some(name.parse::<crate::core::clock::Zone>().map_err(|_| {
                Error::invalid(
                    "time_zone",
                    format!(
                        "unknown time zone {}; use an IANA name such as Europe/Paris",
                        text::quoted(name)
                    ),
                )
            })?),
        };
        // With a zone, local times are placed through it (a time that does not exist or
        // happens twice there is an error naming its row).
        let in_zone = |place: Row, s: ClockTime| -> Result<ClockTime> {
            match (zone, s) {
                (Some(z), ClockTime::Local(wall)) => crate::core::clock::place_in_zone(wall, z)
                    .map_err(|m| Error::invalid(format!("{place}: time"), m)),
                _ => Ok(s),
            }
        };
        for (place, s) in stamps.iter_mut() {
            *s = in_zone(*place, *s)?;
        }
        let mut sessions_at = Vec::with_capacity(self.dialysis_sessions.len());
        for (i, d) in self.dialysis_sessions.iter().enumerate() {
            let place = Row::Session(i + 1);
            let s = to_stamp(&d.start, format_args!("{place}: start"))?;
            // As a dose's time: through the case's zone, an impossible wall time named.
            let s = match (zone, s) {
                (Some(z), ClockTime::Local(wall)) => crate::core::clock::place_in_zone(wall, z)
                    .map_err(|m| Error::invalid(format!("{place}: start"), m))?,
                _ => s,
            };
            sessions_at.push((place, s));
        }
        let plan_start = plan_start
            .map(|s| in_zone(Row::Field("plan.start"), s))
            .transpose()?;
        let procedure = procedure
            .map(|s| in_zone(Row::Field("threshold.procedure"), s))
            .transpose()?;
        let mut all: Vec<(Row, ClockTime)> = stamps.clone();
        if let Some(s) = plan_start {
            all.push((Row::Field("plan.start"), s));
        }
        if let Some(p) = procedure {
            all.push((Row::Field("threshold.procedure"), p));
        }
        all.extend(sessions_at.iter().copied());
        let clock = build_clock(&all)?;
        let clock = match zone {
            Some(z) => Clock::in_zone(
                all.iter()
                    .map(|(_, s)| s.axis_time())
                    .min()
                    .unwrap_or_default(),
                z,
            ),
            None => clock,
        };

        // Doses.
        let mut doses = Vec::with_capacity(self.doses.len());
        for (i, d) in self.doses.iter().enumerate() {
            let place = stamps[i].0;
            if let Some(a) = d.amount_mg {
                positive(a, format_args!("{place}: amount_mg"))?;
            }
            let route = validate_route(
                &d.route,
                d.infusion_h,
                d.bioavailability,
                d.formulation.as_deref(),
                defaults,
                &place,
            )?;
            let time = stamps[i].1;
            doses.push(Dose {
                row: i + 1,
                time,
                t: clock.hours(&time),
                amount_mg: d.amount_mg,
                route,
            });
        }
        doses.sort_by(|a, b| a.t.total_cmp(&b.t));
        for w in doses.windows(2) {
            if w[0].t == w[1].t {
                let (a, b) = (w[0].row.min(w[1].row), w[0].row.max(w[1].row));
                return Err(Error::invalid(
                    format!("dose {b}"),
                    format!(
                        "given at the same time as dose {a} ({}); record them as one dose",
                        w[0].time.iso_minute()
                    ),
                ));
            }
        }

        // Levels.
        let mut levels = Vec::with_capacity(self.levels.len());
        for (i, l) in self.levels.iter().enumerate() {
            let place = stamps[self.doses.len() + i].0;
            if !l.value.is_finite() || l.value <= 0.0 {
                return Err(Error::invalid(
                    format!("{place}: value"),
                    format!("must be above 0, got {}", written(l.value)),
                ));
            }
            let time = stamps[self.doses.len() + i].1;
            let t = clock.hours(&time);
            let mg_l = scale.to_mg_l(l.value);
            if !mg_l.is_finite() || mg_l <= 0.0 {
                return Err(Error::invalid(
                    format!("{place}: value"),
                    format!(
                        "{} {} cannot be converted to mg/L",
                        l.value,
                        scale.unit.as_str()
                    ),
                ));
            }
            match doses.first() {
                None => {
                    return Err(Error::invalid(
                        place.to_string(),
                        "there is no dose on record; enter the doses given before the levels",
                    ))
                }
                Some(first) if t < first.t => {
                    return Err(Error::invalid(
                        place.to_string(),
                        format!(
                            "drawn at {}, before the first dose (dose {} at {})",
                            time.iso_minute(),
                            first.row,
                            first.time.iso_minute()
                        ),
                    ))
                }
                _ => {}
            }
            levels.push(Level {
                row: i + 1,
                time,
                t,
                value: l.value,
                mg_l,
                // A level below the assay's limit is not a measurement a fit can use: it
                // bounds the level from above (see the report's warning).
                use_in_fit: l.use_in_fit.unwrap_or(true) && !l.below_limit,
                below_limit: l.below_limit,
                note: l.note.clone(),
                free: l.free.unwrap_or(false),
            });
        }
        levels.sort_by(|a, b| a.t.total_cmp(&b.t));
        for w in levels.windows(2) {
            // A free and a total level of one sample share its time.
            if w[0].t == w[1].t && w[0].free == w[1].free {
                let (a, b) = (w[0].row.min(w[1].row), w[0].row.max(w[1].row));
                return Err(Error::invalid(
                    format!("level {b}"),
                    format!(
                        "drawn at the same time as level {a} ({}); keep one, or correct the time",
                        w[0].time.iso_minute()
                    ),
                ));
            }
        }

        // Plan.
        let plan = match &self.plan {
            None => None,
            Some(p) => {
                positive(p.dose_mg, "plan.dose_mg")?;
                positive(p.interval_h, "plan.interval_h")?;
                let route = validate_route(
                    &p.route,
                    p.infusion_h,
                    p.bioavailability,
                    p.formulation.as_deref(),
                    defaults,
                    &"plan",
                )?;
                if route.infusion_h() > p.interval_h {
                    return Err(Error::invalid(
                        "plan.infusion_h",
                        format!(
                            "the infusion ({} h) is longer than the interval ({} h)",
                            route.infusion_h(),
                            p.interval_h
                        ),
                    ));
                }
                let (start_t, start_given) = match plan_start {
                    Some(s) => {
                        let t = clock.hours(&s);
                        // The plan follows the record: a first plan dose at or before the last
                        // recorded dose would count doses twice.
                        if let Some(last) = doses.last().filter(|d| t <= d.t) {
                            return Err(Error::invalid(
                                "plan.start",
                                format!(
                                    "{} is not after the last recorded dose (dose {} at {}); the plan's doses follow the record, so start it after that dose, or record the doses already given as [[dose]] rows",
                                    s.iso_minute(),
                                    last.row,
                                    last.time.iso_minute()
                                ),
                            ));
                        }
                        (t, true)
                    }
                    None => match doses.last() {
                        // The first plan dose one interval after the last: it must fall on
                        // the calendar (an interval of 1e300 h would not, and every chart and
                        // clock time of the plan would then be lost).
                        Some(last) if clock.at_minute(last.t + p.interval_h).is_none() => {
                            return Err(Error::invalid(
                                "plan.interval_h",
                                format!(
                                    "{} h after the last recorded dose (dose {}), the plan's first dose would fall too far from the case's dates to be placed on a calendar; check the interval, or give plan.start",
                                    written(p.interval_h),
                                    last.row
                                ),
                            ));
                        }
                        Some(last) => (last.t + p.interval_h, false),
                        None => {
                            return Err(Error::invalid(
                                "plan.start",
                                "needed when no dose is on record",
                            ))
                        }
                    },
                };
                Some(Plan {
                    dose_mg: p.dose_mg,
                    interval_h: p.interval_h,
                    route,
                    start_t,
                    start_given,
                })
            }
        };

        let targets = match &self.targets {
            Some(t) => validate_targets(t)?,
            None => profile_targets(&defaults.targets, scale.unit)?,
        };

        let threshold = match &self.threshold {
            None => None,
            Some(th) => {
                positive(th.below, "threshold.below")?;
                validate_resume(th)?;
                Some(Threshold {
                    below: th.below,
                    procedure_t: procedure.map(|p| clock.hours(&p)),
                    resume_below: th.resume_below,
                    resume_after_h: th.resume_after_h,
                    procedure_h: th.procedure_h.unwrap_or(0.0),
                })
            }
        };

        let fit_method = match self.fit.as_ref().and_then(|f| f.method.as_deref()) {
            None => None,
            Some(m) => Some(FitChoice::parse(m).ok_or_else(|| {
                Error::invalid(
                    "fit.method",
                    format!(
                        "unknown method {}; use \"log-linear\", \"dose-history\" or \"bayesian\"",
                        text::quoted(m)
                    ),
                )
            })?),
        };

        let switch = self.switch.as_ref().map(validate_switch).transpose()?;
        let dialysis_sessions = validate_sessions(&self.dialysis_sessions, &sessions_at, &clock)?;
        let (prior, prior_reason) =
            choose_model(self.fit.as_ref().and_then(|f| f.model.as_deref()), defaults)?;

        Ok(Case {
            dialysis_sessions,
            switch,
            regimen: defaults.regimen.clone().unwrap_or_default(),
            patient,
            drug,
            doses,
            levels,
            plan,
            targets,
            threshold,
            clock,
            fit_method,
            prior,
            prior_reason,
        })
    }
}

/// The case's population model: the one `[fit] model` names among the profile's, else the
/// profile's default; and why, when the profile offers more than one.
fn choose_model(
    named: Option<&str>,
    defaults: &Defaults,
) -> Result<(Option<Model>, Option<String>)> {
    let offered: Vec<&Model> = if defaults.models.is_empty() {
        defaults.prior.iter().collect()
    } else {
        defaults.models.iter().collect()
    };
    let several = offered.len() > 1;
    let default_reason = || {
        defaults
            .model_reason
            .as_ref()
            .filter(|_| several)
            .map(|r| format!("the drug profile's default: {r}"))
    };
    let Some(name) = named else {
        return Ok((defaults.prior.clone(), default_reason()));
    };
    if offered.is_empty() {
        return Err(Error::invalid(
            "fit.model",
            format!(
                "the case names the population model {}, but no drug profile with a population model is named (drug.profile)",
                text::quoted(name)
            ),
        ));
    }
    let Some(m) = offered.iter().find(|m| m.name == name) else {
        let names: Vec<&str> = offered.iter().map(|m| m.name.as_str()).collect();
        return Err(Error::invalid(
            "fit.model",
            format!(
                "the drug profile has no population model {}; it has {}",
                text::quoted(name),
                names.join(", ")
            ),
        ));
    };
    let reason = match &defaults.prior {
        Some(d) if several && d.name != name => Some(format!(
            "chosen in the case ([fit] model) over the drug profile's default {}",
            d.name
        )),
        _ => default_reason(),
    };
    Ok((Some((*m).clone()), reason))
}

/// The most `[[dose]]` rows a case may hold: far above any real record (a dose every hour
/// for eleven years), low enough that a bad file cannot take the machine's memory.
pub const MAX_DOSES: usize = 100_000;
/// The most `[[level]]` rows a case may hold (as `MAX_DOSES`).
pub const MAX_LEVELS: usize = 100_000;
/// The most `[[dialysis_session]]` rows a case may hold (as `MAX_DOSES`).
pub const MAX_SESSIONS: usize = 100_000;

/// How far (hours) a session may seem to start before the one before ends and still count as
/// starting when it ends: a millisecond, for the rounding of times in hours.
const SESSION_SLACK_H: f64 = 1e-3 / 3600.0;
/// The largest case file read, in bytes (16 MiB; a real case is a few kilobytes).
pub const MAX_CASE_BYTES: u64 = 16 * 1024 * 1024;

impl CaseFile {
    /// Every free-text and named field, by the name messages give it.
    fn text_fields(&self) -> Vec<(String, &str)> {
        let mut out: Vec<(String, &str)> = Vec::new();
        fn push<'a>(out: &mut Vec<(String, &'a str)>, place: String, v: Option<&'a String>) {
            if let Some(v) = v {
                out.push((place, v.as_str()));
            }
        }
        push(&mut out, "time_zone".into(), self.time_zone.as_ref());
        push(
            &mut out,
            "patient.label".into(),
            self.patient.label.as_ref(),
        );
        push(&mut out, "patient.sex".into(), self.patient.sex.as_ref());
        push(&mut out, "drug.name".into(), self.drug.name.as_ref());
        push(&mut out, "drug.profile".into(), self.drug.profile.as_ref());
        push(
            &mut out,
            "drug.level_unit".into(),
            self.drug.level_unit.as_ref(),
        );
        for (i, d) in self.doses.iter().enumerate() {
            push(&mut out, format!("dose {}: route", i + 1), Some(&d.route));
        }
        for (i, l) in self.levels.iter().enumerate() {
            push(&mut out, format!("level {}: note", i + 1), l.note.as_ref());
        }
        if let Some(p) = &self.plan {
            push(&mut out, "plan.route".into(), Some(&p.route));
        }
        if let Some(sw) = &self.switch {
            push(&mut out, "switch.to".into(), sw.to.as_ref());
        }
        if let Some(f) = &self.fit {
            push(&mut out, "fit.method".into(), f.method.as_ref());
            push(&mut out, "fit.model".into(), f.model.as_ref());
        }
        out
    }

    /// Free text is data: a control character, a line break, a tab or a bidirectional
    /// control in any text field is refused, naming the field or row (see `core::text`).
    fn check_text(&self) -> Result<()> {
        for (place, value) in self.text_fields() {
            if let Some(why) = text::problem(value) {
                return Err(Error::invalid(place, why));
            }
        }
        Ok(())
    }

    /// At most `MAX_DOSES` doses and `MAX_LEVELS` levels.
    fn check_rows(&self) -> Result<()> {
        for (n, max, what) in [
            (self.doses.len(), MAX_DOSES, "dose"),
            (self.levels.len(), MAX_LEVELS, "level"),
            (self.dialysis_sessions.len(), MAX_LEVELS, "dialysis_session"),
        ] {
            if n > max {
                return Err(Error::invalid(
                    what,
                    format!("the case has {n} [[{what}]] rows; ebb reads at most {max}"),
                ));
            }
        }
        Ok(())
    }
}

/// `[[dialysis_session]]` rows with their stamps (placed in the case's zone): a duration
/// above 0 and at most `MAX_SESSION_H`, and no two sessions overlapping.
fn validate_sessions(
    rows: &[DialysisSessionFile],
    stamps: &[(Row, ClockTime)],
    clock: &Clock,
) -> Result<Vec<DialysisSession>> {
    let mut out = Vec::with_capacity(rows.len());
    for (i, (d, (place, start))) in rows.iter().zip(stamps).enumerate() {
        positive(d.duration_h, format_args!("{place}: duration_h"))?;
        if d.duration_h > MAX_SESSION_H {
            return Err(Error::invalid(
                format!("{place}: duration_h"),
                format!(
                    "must be at most {MAX_SESSION_H} hours (an intermittent session), got {}",
                    written(d.duration_h)
                ),
            ));
        }
        out.push(DialysisSession {
            row: i + 1,
            start: *start,
            t: clock.hours(start),
            duration_h: d.duration_h,
        });
    }
    out.sort_by(|a, b| a.t.total_cmp(&b.t));
    for w in out.windows(2) {
        // A session may start as the one before ends: a millisecond of slack for the
        // rounding of hours (3 h 42 min is not a whole number of hours in binary).
        if w[1].t < w[0].end() - SESSION_SLACK_H {
            return Err(Error::invalid(
                format!("dialysis_session {}", w[1].row),
                format!(
                    "starts at {}, before dialysis_session {} (from {}, {} h) has ended; sessions cannot overlap",
                    w[1].start.iso_minute(),
                    w[0].row,
                    w[0].start.iso_minute(),
                    crate::core::format::num(w[0].duration_h)
                ),
            ));
        }
    }
    Ok(out)
}

/// The resume fields of `[threshold]`: each optional, above 0 (a delay may be 0), and only
/// with a procedure time.
fn validate_resume(th: &ThresholdFile) -> Result<()> {
    if let Some(x) = th.resume_below {
        positive(x, "threshold.resume_below")?;
    }
    if let Some(h) = th.resume_after_h {
        if !(h.is_finite() && (0.0..=8760.0).contains(&h)) {
            return Err(Error::invalid(
                "threshold.resume_after_h",
                format!("must be from 0 to 8760 hours, got {}", written(h)),
            ));
        }
    }
    if let Some(h) = th.procedure_h {
        if !(h.is_finite() && (0.0..=720.0).contains(&h)) {
            return Err(Error::invalid(
                "threshold.procedure_h",
                format!("must be from 0 to 720 hours, got {}", written(h)),
            ));
        }
    }
    for (set, name) in [
        (th.procedure_h.is_some(), "threshold.procedure_h"),
        (th.resume_below.is_some(), "threshold.resume_below"),
        (th.resume_after_h.is_some(), "threshold.resume_after_h"),
    ] {
        if set && th.procedure.is_none() {
            return Err(Error::invalid(
                name,
                "resuming is counted from the procedure; give threshold.procedure too",
            ));
        }
    }
    Ok(())
}

/// `[switch]`: a name for the next agent and exactly one of `start_below`, `after_half_lives`.
fn validate_switch(s: &SwitchFile) -> Result<Switch> {
    let to = s.to.as_deref().map(str::trim).unwrap_or_default();
    if to.is_empty() {
        return Err(Error::invalid(
            "switch.to",
            "missing; name the agent to switch to (free text)",
        ));
    }
    let rule = match (s.start_below, s.after_half_lives) {
        (Some(_), Some(_)) => {
            return Err(Error::invalid(
                "switch.after_half_lives",
                "give start_below or after_half_lives, not both",
            ))
        }
        (None, None) => {
            return Err(Error::invalid(
                "switch.start_below",
                "missing; give start_below (a level in the level unit) or after_half_lives",
            ))
        }
        (Some(x), None) => {
            positive(x, "switch.start_below")?;
            SwitchRule::StartBelow(x)
        }
        (None, Some(n)) => {
            if !(n.is_finite() && n > 0.0 && n <= 20.0) {
                return Err(Error::invalid(
                    "switch.after_half_lives",
                    format!("must be above 0 and at most 20, got {}", written(n)),
                ));
            }
            SwitchRule::AfterHalfLives(n)
        }
    };
    Ok(Switch {
        to: to.to_string(),
        rule,
    })
}

/// Read and parse a case file (no validation yet).
///
/// # Errors
/// A missing or unreadable file, or a TOML error, with the file name in front.
pub fn read(path: &Path) -> Result<CaseFile> {
    let text = read_text(path, MAX_CASE_BYTES).map_err(|reason| Error::Read {
        path: path.to_path_buf(),
        reason,
    })?;
    CaseFile::parse(&text).map_err(|e| e.in_file(path.display().to_string()))
}

/// Read a regular file (a link is followed) of at most `max` bytes as UTF-8 text.
///
/// The type is checked before the file is opened, so a FIFO with no writer, a device such
/// as `/dev/zero` or a folder is refused at once instead of blocking or filling memory; at
/// most `max + 1` bytes are ever read, so a file that grows meanwhile is refused too.
///
/// # Errors
/// The reason in words: the operating system's error, not a regular file, too large, or
/// not UTF-8 text.
pub fn read_text(path: &Path, max: u64) -> std::result::Result<String, String> {
    let bytes = read_regular(path, max)?;
    String::from_utf8(bytes).map_err(|e| {
        format!(
            "not UTF-8 text (byte {} is not valid); save it as UTF-8",
            e.utf8_error().valid_up_to() + 1
        )
    })
}

/// Read the bytes of a regular file of at most `max` bytes (see [`read_text`]).
///
/// # Errors
/// As [`read_text`], but bytes need not be UTF-8.
pub fn read_regular(path: &Path, max: u64) -> std::result::Result<Vec<u8>, String> {
    use std::io::Read;
    let kind = |meta: &std::fs::Metadata| -> std::result::Result<(), String> {
        match special_kind(meta) {
            None => Ok(()),
            Some(what) => Err(format!("it is {what}, not a regular file")),
        }
    };
    let meta = std::fs::metadata(path).map_err(|e| e.to_string())?;
    kind(&meta)?;
    if meta.len() > max {
        return Err(too_large(meta.len(), max));
    }
    let file = std::fs::File::open(path).map_err(|e| e.to_string())?;
    kind(&file.metadata().map_err(|e| e.to_string())?)?;
    let mut bytes = Vec::with_capacity(usize::try_from(meta.len()).unwrap_or(0));
    file.take(max.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(|e| e.to_string())?;
    if bytes.len() as u64 > max {
        return Err(too_large(bytes.len() as u64, max));
    }
    Ok(bytes)
}

fn too_large(len: u64, max: u64) -> String {
    let mib = |b: u64| b as f64 / (1024.0 * 1024.0);
    format!(
        "it is {:.1} MiB, more than the {} MiB a file may be here; is it the right file?",
        mib(len),
        mib(max)
    )
}

/// What a file is, in words, when it is not a regular file (`None` for a regular file): the
/// one description that reading a case and saving one both give.
pub fn special_kind(meta: &std::fs::Metadata) -> Option<&'static str> {
    let t = meta.file_type();
    if t.is_file() {
        return None;
    }
    if t.is_dir() {
        return Some("a folder");
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if t.is_fifo() {
            return Some("a FIFO (named pipe)");
        }
        if t.is_char_device() || t.is_block_device() {
            return Some("a device");
        }
        if t.is_socket() {
            return Some("a socket");
        }
    }
    Some("a special file")
}

/// Read, parse and validate a case file without profile defaults.
///
/// # Errors
/// As `read`, then the first invalid field, with the file name in front.
pub fn load(path: &Path) -> Result<Case> {
    read(path)?
        .validate()
        .map_err(|e| e.in_file(path.display().to_string()))
}

fn syntax_error(text: &str, e: &toml::de::Error) -> Error {
    let line = e
        .span()
        .map(|s| text[..s.start.min(text.len())].matches('\n').count() + 1)
        .unwrap_or(1);
    let message = text::one_line(e.message());
    match place_on_line(text, line) {
        // A wrong type or an impossible date names its row and field like every other
        // error, with the line as well.
        Some(place) => Error::invalid(place, format!("{message} (line {line})")),
        None => Error::Syntax { line, message },
    }
}

/// The row and field a line of a case file sets, as validation names them (`level 2:
/// time`, `plan.dose_mg`, `time_zone`); `None` for a header, a blank or a continued line.
fn place_on_line(text: &str, line: usize) -> Option<String> {
    let mut table: Option<(String, bool)> = None;
    let mut counts: std::collections::HashMap<String, usize> = std::collections::HashMap::new();
    for (i, raw) in text.lines().enumerate() {
        let l = raw.trim();
        if i + 1 == line {
            if l.starts_with('[') || l.starts_with('#') {
                return None;
            }
            let (key, _) = l.split_once('=')?;
            let key = key.trim().trim_matches('"');
            if key.is_empty() {
                return None;
            }
            return Some(match &table {
                None => key.to_string(),
                Some((name, true)) => {
                    let n = counts.get(name).copied().unwrap_or(0);
                    format!("{name} {n}: {key}")
                }
                Some((name, false)) => format!("{name}.{key}"),
            });
        }
        if let Some(rest) = l.strip_prefix("[[") {
            let name = rest.split("]]").next().unwrap_or("").trim().to_string();
            *counts.entry(name.clone()).or_insert(0) += 1;
            table = Some((name, true));
        } else if let Some(rest) = l.strip_prefix('[') {
            let name = rest.split(']').next().unwrap_or("").trim().to_string();
            table = Some((name, false));
        }
    }
    None
}

fn positive(x: f64, place: impl std::fmt::Display) -> Result<()> {
    if x.is_finite() && x > 0.0 {
        Ok(())
    } else {
        Err(Error::invalid(
            place.to_string(),
            format!("must be above 0, got {}", written(x)),
        ))
    }
}

fn validate_patient(p: &PatientFile) -> Result<Patient> {
    if let Some(w) = p.weight_kg {
        if !(w.is_finite() && w > 0.0 && w <= 700.0) {
            return Err(Error::invalid(
                "patient.weight_kg",
                format!("must be above 0 and at most 700 kg, got {}", written(w)),
            ));
        }
    }
    if let Some(a) = p.age_years {
        if !(a.is_finite() && (0.0..=130.0).contains(&a)) {
            return Err(Error::invalid(
                "patient.age_years",
                format!("must be from 0 to 130, got {}", written(a)),
            ));
        }
    }
    let sex = match p.sex.as_deref() {
        None => None,
        Some("female") => Some(Sex::Female),
        Some("male") => Some(Sex::Male),
        Some(other) => {
            return Err(Error::invalid(
                "patient.sex",
                format!(
                    "must be \"female\" or \"male\", got {}",
                    text::quoted(other)
                ),
            ))
        }
    };
    let creatinine = match (p.creatinine_mg_dl, p.creatinine_umol_l) {
        (Some(_), Some(_)) => {
            return Err(Error::invalid(
                "patient.creatinine_umol_l",
                "give creatinine_mg_dl or creatinine_umol_l, not both",
            ))
        }
        (Some(c), None) => {
            positive(c, "patient.creatinine_mg_dl")?;
            Some(c)
        }
        (None, Some(c)) => {
            positive(c, "patient.creatinine_umol_l")?;
            // 1 mg/dL creatinine = 88.4 umol/L (drug-facts.md, Cockcroft-Gault SI row).
            Some(c / 88.4)
        }
        (None, None) => None,
    };
    if let Some(h) = p.height_cm {
        if !(h.is_finite() && (30.0..=272.0).contains(&h)) {
            return Err(Error::invalid(
                "patient.height_cm",
                format!("must be from 30 to 272 cm, got {}", written(h)),
            ));
        }
    }
    let albumin = match (p.albumin_g_dl, p.albumin_g_l) {
        (Some(_), Some(_)) => {
            return Err(Error::invalid(
                "patient.albumin_g_l",
                "give albumin_g_dl or albumin_g_l, not both",
            ))
        }
        (Some(a), None) => {
            albumin_range(a, 0.5, 7.0, "patient.albumin_g_dl", "g/dL")?;
            Some(a)
        }
        // 1 g/dL = 10 g/L.
        (None, Some(a)) => {
            albumin_range(a, 5.0, 70.0, "patient.albumin_g_l", "g/L")?;
            Some(a / 10.0)
        }
        (None, None) => None,
    };
    Ok(Patient {
        label: p.label.clone(),
        weight_kg: p.weight_kg,
        age_years: p.age_years,
        sex,
        creatinine_mg_dl: creatinine,
        creatinine_umol_l: p.creatinine_umol_l,
        height_cm: p.height_cm,
        albumin_g_dl: albumin,
        albumin_g_l: p.albumin_g_l,
        dialysis: p.dialysis,
        renal_failure: p.renal_failure,
    })
}

/// Serum albumin within what a laboratory can report (0.5-7 g/dL): a value outside is a unit
/// slip (g/L written as g/dL) or a typing error, named with the unit expected.
fn albumin_range(a: f64, low: f64, high: f64, place: &str, unit: &str) -> Result<()> {
    if a.is_finite() && (low..=high).contains(&a) {
        Ok(())
    } else {
        Err(Error::invalid(
            place,
            format!("must be from {low} to {high} {unit}, got {}", written(a)),
        ))
    }
}

fn validate_drug(d: &DrugFile, defaults: &Defaults) -> Result<Drug> {
    let unit_text = d.level_unit.as_deref().ok_or_else(|| {
        Error::invalid(
            "drug.level_unit",
            format!(
                "missing; say which unit the levels are in ({})",
                LevelUnit::names()
            ),
        )
    })?;
    let unit = LevelUnit::parse(unit_text, "drug.level_unit")?;
    if let Some(m) = d.molar_mass_g_mol {
        positive(m, "drug.molar_mass_g_mol")?;
    }
    let molar_mass = d.molar_mass_g_mol.or(defaults.molar_mass_g_mol);
    let per_mg_l = unit.per_mg_l(molar_mass).ok_or_else(|| {
        Error::invalid(
            "drug.molar_mass_g_mol",
            format!(
                "needed to convert {} levels; give the molar mass in g/mol",
                unit.as_str()
            ),
        )
    })?;
    Ok(Drug {
        name: d.name.clone().unwrap_or_default(),
        profile: d.profile.clone(),
        scale: Scale { unit, per_mg_l },
        molar_mass_g_mol: molar_mass,
        salt: match d.salt.as_deref() {
            Some(s) if s.trim().is_empty() => {
                return Err(Error::invalid(
                    "drug.salt",
                    "is empty; name the salt the doses are written as, or leave it out",
                ))
            }
            other => other.map(str::to_string),
        },
    })
}

fn validate_route(
    route: &str,
    infusion_h: Option<f64>,
    bioavailability: Option<f64>,
    formulation: Option<&str>,
    defaults: &Defaults,
    place: &dyn std::fmt::Display,
) -> Result<Route> {
    let default_f = defaults.bioavailability;
    if formulation.is_some() && route != "oral" {
        return Err(Error::invalid(
            format!("{place}: formulation"),
            format!(
                "only an oral dose has a formulation; this one is {}",
                text::quoted(route)
            ),
        ));
    }
    if bioavailability.is_some() && route != "oral" {
        return Err(Error::invalid(
            format!("{place}: bioavailability"),
            format!(
                "only an oral dose has a bioavailability; this one is {}",
                text::quoted(route)
            ),
        ));
    }
    if infusion_h.is_some() && route != "infusion" {
        return Err(Error::invalid(
            format!("{place}: infusion_h"),
            format!(
                "only an infusion has infusion_h; this one is {}",
                text::quoted(route)
            ),
        ));
    }
    match route {
        "bolus" => Ok(Route::Bolus),
        "infusion" => {
            let h = infusion_h.ok_or_else(|| {
                Error::invalid(
                    format!("{place}: infusion_h"),
                    "an infusion needs infusion_h, its duration in hours",
                )
            })?;
            positive(h, format_args!("{place}: infusion_h"))?;
            Ok(Route::Infusion { hours: h })
        }
        "oral" => {
            let f = bioavailability.or(default_f).unwrap_or(1.0);
            if !(f.is_finite() && f > 0.0 && f <= 1.0) {
                return Err(Error::invalid(
                    format!("{place}: bioavailability"),
                    format!("must be above 0 and at most 1, got {}", written(f)),
                ));
            }
            let absorption = match formulation {
                None => defaults.formulations.first().map(|(_, a)| *a),
                Some(name) => {
                    let found = defaults.formulations.iter().find(|(n, _)| n == name);
                    match found {
                        Some((_, a)) => Some(*a),
                        None if defaults.formulations.is_empty() => {
                            return Err(Error::invalid(
                                format!("{place}: formulation"),
                                format!(
                                    "no formulation {} is known: this case has no drug profile that lists formulations",
                                    text::quoted(name)
                                ),
                            ))
                        }
                        None => {
                            let names: Vec<&str> =
                                defaults.formulations.iter().map(|(n, _)| n.as_str()).collect();
                            return Err(Error::invalid(
                                format!("{place}: formulation"),
                                format!(
                                    "the profile has no formulation {}; it has {}",
                                    text::quoted(name),
                                    names.join(", ")
                                ),
                            ));
                        }
                    }
                }
            };
            Ok(Route::Oral { f, absorption })
        }
        other => Err(Error::invalid(
            format!("{place}: route"),
            format!(
                "unknown route {}; use \"bolus\", \"infusion\" or \"oral\"",
                text::quoted(other)
            ),
        )),
    }
}

fn validate_targets(t: &TargetsFile) -> Result<Targets> {
    fn range(v: &Option<Vec<f64>>, place: &str) -> Result<Option<[f64; 2]>> {
        match v {
            None => Ok(None),
            Some(v) if v.len() == 2 => {
                positive(v[0], place)?;
                positive(v[1], place)?;
                if v[0] > v[1] {
                    return Err(Error::invalid(
                        place,
                        format!("the low end {} is above the high end {}", v[0], v[1]),
                    ));
                }
                Ok(Some([v[0], v[1]]))
            }
            Some(v) => Err(Error::invalid(
                place,
                match v.len() {
                    1 => "must be [low, high], got one number".to_string(),
                    n => format!("must be [low, high], got {n} numbers"),
                },
            )),
        }
    }
    let peak = range(&t.peak, "targets.peak")?;
    let auc24 = range(&t.auc24, "targets.auc24")?;
    if let Some(x) = t.trough_max {
        positive(x, "targets.trough_max")?;
    }
    Ok(Targets {
        peak,
        trough_max: t.trough_max,
        auc24,
    })
}

/// A profile's targets as converted to the case's unit: a value that is no longer a finite
/// number above 0 (a huge profile value times the unit factor) is refused, naming the
/// profile, rather than met and missed at once.
fn profile_targets(t: &Targets, unit: LevelUnit) -> Result<Targets> {
    let mut values: Vec<(&str, f64)> = Vec::new();
    if let Some([a, b]) = t.peak {
        values.extend([("peak", a), ("peak", b)]);
    }
    if let Some(m) = t.trough_max {
        values.push(("trough_max", m));
    }
    if let Some([a, b]) = t.auc24 {
        values.extend([("auc24", a), ("auc24", b)]);
    }
    match values.iter().find(|(_, x)| !(x.is_finite() && *x > 0.0)) {
        None => Ok(t.clone()),
        Some((name, x)) => {
            let what = if x.is_infinite() {
                format!("is too large to convert to {}", unit.as_str())
            } else {
                format!("becomes {x} {}, not a level above 0", unit.as_str())
            };
            Err(Error::invalid(
                "drug.profile",
                format!(
                    "the profile's {name} target {what}; correct the profile or give [targets] in the case"
                ),
            ))
        }
    }
}

/// The warning for a case written in local clock times with no `time_zone` whose doses and
/// levels span a change of `offset_at` (the UTC offset a zone has at a wall-clock time, e.g.
/// a daylight-saving change): such times are counted as wall-clock hours, so an interval
/// across the change may be off by an hour, and k with it. `None` when the case names a
/// zone, uses offset times, or the offset is the same at every dose and level.
pub fn clock_change_warning(
    case: &Case,
    offset_at: impl Fn(NaiveDateTime) -> Option<FixedOffset>,
) -> Option<String> {
    use crate::core::clock::ClockTime;
    if case.clock.zone().is_some() {
        return None;
    }
    // Rows as (kind, number, time); their names are written only into a warning.
    let mut rows: Vec<(&str, usize, NaiveDateTime)> = Vec::new();
    for d in &case.doses {
        if let ClockTime::Local(t) = d.time {
            rows.push(("dose", d.row, t));
        }
    }
    for l in &case.levels {
        if let ClockTime::Local(t) = l.time {
            rows.push(("level", l.row, t));
        }
    }
    rows.sort_by_key(|(_, _, t)| *t);
    let (first_rows, rest) = rows.split_first()?;
    let (first_kind, first_row, first_t) = *first_rows;
    let first = offset_at(first_t)?;
    let (kind, row, off) = rest
        .iter()
        .filter_map(|(k, r, t)| offset_at(*t).map(|o| (k, r, o)))
        .find(|(_, _, o)| *o != first)?;
    Some(format!(
        "the times have no time zone, and this computer's clock changes between {first_kind} {first_row} (UTC{first}) and {kind} {row} (UTC{off}), as at a daylight-saving change: hours across it may be off by one, and k with them; if the times were written in that zone, give time_zone (for example time_zone = \"Europe/Paris\") so the hours count as they passed"
    ))
}

/// [`clock_change_warning`] in this computer's own time zone (the `TZ` variable, else the
/// system's setting).
pub fn machine_clock_warning(case: &Case) -> Option<String> {
    use chrono::{Local, Offset, TimeZone};
    clock_change_warning(case, |t| {
        Local
            .offset_from_local_datetime(&t)
            .earliest()
            .map(|o| o.fix())
    })
}

/// The first year a case's date may be in.
pub const FIRST_YEAR: u16 = 1900;
/// The last year a case's date may be in.
pub const LAST_YEAR: u16 = 2200;

/// A dated row of a case file as messages name it: `dose 2`, `level 1`, `dialysis_session 3`,
/// or a field such as `plan.start` (written out only when a message needs it).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Row {
    Dose(usize),
    Level(usize),
    Session(usize),
    Field(&'static str),
}

impl std::fmt::Display for Row {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Row::Dose(n) => write!(f, "dose {n}"),
            Row::Level(n) => write!(f, "level {n}"),
            Row::Session(n) => write!(f, "dialysis_session {n}"),
            Row::Field(name) => f.write_str(name),
        }
    }
}

/// A TOML date-time as a stamp; a date alone, a time alone, or a year outside
/// `FIRST_YEAR..=LAST_YEAR` is an error.
pub fn to_stamp(dt: &Datetime, place: impl std::fmt::Display) -> Result<ClockTime> {
    let (Some(date), Some(time)) = (dt.date, dt.time) else {
        return Err(Error::invalid(
            place.to_string(),
            format!("needs a date and a time, like 2027-03-02T08:00:00; got {dt}"),
        ));
    };
    // A bedside case lives in these years; anything outside is a typing slip, and far dates
    // would put projected times where the report's day-and-month readings mislead.
    if !(FIRST_YEAR..=LAST_YEAR).contains(&date.year) {
        return Err(Error::invalid(
            place.to_string(),
            format!(
                "year {} is outside {FIRST_YEAR} to {LAST_YEAR}; check the date",
                date.year
            ),
        ));
    }
    let d = NaiveDate::from_ymd_opt(date.year.into(), date.month.into(), date.day.into())
        .ok_or_else(|| Error::invalid(place.to_string(), format!("no such date: {dt}")))?;
    let t = NaiveTime::from_hms_nano_opt(
        time.hour.into(),
        time.minute.into(),
        time.second.into(),
        time.nanosecond,
    )
    .ok_or_else(|| Error::invalid(place.to_string(), format!("no such time: {dt}")))?;
    let naive = NaiveDateTime::new(d, t);
    match dt.offset {
        None => Ok(ClockTime::Local(naive)),
        Some(off) => {
            let minutes: i32 = match off {
                Offset::Z => 0,
                Offset::Custom { minutes } => minutes.into(),
            };
            let fixed = FixedOffset::east_opt(minutes * 60).ok_or_else(|| {
                Error::invalid(place.to_string(), format!("offset out of range: {dt}"))
            })?;
            naive
                .and_local_timezone(fixed)
                .single()
                .map(ClockTime::Offset)
                .ok_or_else(|| Error::invalid(place.to_string(), format!("cannot place {dt}")))
        }
    }
}

/// A stamp as a TOML date-time (for saving).
pub fn from_stamp(s: &ClockTime) -> Datetime {
    use chrono::{Datelike, Timelike};
    let w = s.wall();
    // chrono's fields are in range by construction; the casts cannot truncate (years are
    // kept to four digits by TOML; a year outside u16 is clamped rather than wrapped).
    let date = toml::value::Date {
        year: u16::try_from(w.year()).unwrap_or(0),
        month: w.month() as u8,
        day: w.day() as u8,
    };
    let time = toml::value::Time {
        hour: w.hour() as u8,
        minute: w.minute() as u8,
        second: w.second() as u8,
        nanosecond: 0,
    };
    let offset = match s {
        ClockTime::Local(_) => None,
        ClockTime::Offset(t) => Some(Offset::Custom {
            minutes: (t.offset().local_minus_utc() / 60) as i16,
        }),
    };
    Datetime {
        date: Some(date),
        time: Some(time),
        offset,
    }
}

fn build_clock(stamps: &[(Row, ClockTime)]) -> Result<Clock> {
    let first_kind = stamps
        .first()
        .map(|(_, s)| matches!(s, ClockTime::Offset(_)));
    if let Some(offset_kind) = first_kind {
        if let Some((place, _)) = stamps
            .iter()
            .find(|(_, s)| matches!(s, ClockTime::Offset(_)) != offset_kind)
        {
            let (this, other) = if offset_kind {
                ("a local time", "offset times")
            } else {
                ("an offset time", "local times")
            };
            // A session's time is its `start`; every other row's is `time`.
            let field = if matches!(place, Row::Session(_)) {
                "start"
            } else {
                "time"
            };
            return Err(Error::invalid(
                format!("{place}: {field}"),
                format!(
                    "is {this} but {} uses {other}; use local times throughout or offsets throughout",
                    stamps[0].0
                ),
            ));
        }
    }
    let origin = stamps
        .iter()
        .map(|(_, s)| s.axis_time())
        .min()
        .unwrap_or_default();
    // Computed times carry the offset of the latest dose or level.
    let offset = stamps
        .iter()
        .filter(|(p, _)| matches!(p, Row::Dose(_) | Row::Level(_)))
        .max_by_key(|(_, s)| s.axis_time())
        .and_then(|(_, s)| match s {
            ClockTime::Offset(t) => Some(*t.offset()),
            ClockTime::Local(_) => None,
        });
    Ok(Clock::new(origin, offset))
}

#[cfg(test)]
mod stamp_tests {
    use super::*;

    #[test]
    fn stamps_write_back_as_the_toml_they_came_from() {
        for text in [
            "2027-03-02T08:05:00",
            "2027-03-02T08:05:00+01:00",
            "2027-12-31T23:59:00-05:30",
        ] {
            let dt: Datetime = text.parse().unwrap();
            let stamp = to_stamp(&dt, "x").unwrap();
            assert_eq!(from_stamp(&stamp).to_string(), text);
        }
    }
}

#[cfg(test)]
mod session_tests {
    use super::*;

    const CASE: &str = r#"time_zone = "Europe/Paris"
[drug]
level_unit = "mg/L"
[[dose]]
time = 2027-03-27T12:30:00
amount_mg = 1000.0
route = "infusion"
infusion_h = 2.0
[[level]]
time = 2027-03-27T16:00:00
value = 30.0
[[level]]
time = 2027-03-29T07:30:00
value = 20.0
[[dialysis_session]]
start = 2027-03-29T08:00:00
duration_h = 4.0
[[dialysis_session]]
start = 2027-03-27T08:00:00
duration_h = 3.5
"#;

    #[test]
    fn sessions_are_sorted_and_placed_through_the_case_zone() {
        let c = CaseFile::parse(CASE).unwrap().validate().unwrap();
        let s = &c.dialysis_sessions;
        assert_eq!((s[0].row, s[1].row), (2, 1));
        // Origin: session 2's start, 27 March 08:00. Europe/Paris moves to summer time in
        // the night of 28 March 2027, so 29 March 08:00 is 47 hours later, not 48 (tz
        // database, Europe/Paris rules).
        assert_eq!(s[0].t, 0.0);
        assert_eq!(s[1].t, 47.0);
        assert_eq!(s[1].end(), 51.0);
        assert_eq!(s[0].duration_h, 3.5);
        assert_eq!(c.levels[1].t, 46.5);
    }

    #[test]
    fn sessions_write_back_as_they_were_read() {
        let file = CaseFile::parse(CASE).unwrap();
        let text = file.to_toml().unwrap();
        assert!(text.contains("[[dialysis_session]]"), "{text}");
        let again = CaseFile::parse(&text).unwrap();
        assert_eq!(again, file);
        assert_eq!(
            again.dialysis_sessions[1].start.to_string(),
            "2027-03-27T08:00:00"
        );
        assert_eq!(again.dialysis_sessions[1].duration_h, 3.5);
    }

    #[test]
    fn sessions_that_only_touch_do_not_overlap() {
        let text = CASE
            .replace("duration_h = 3.5", "duration_h = 12.0")
            .replace("start = 2027-03-29T08:00:00", "start = 2027-03-27T20:00:00");
        let c = CaseFile::parse(&text).unwrap().validate().unwrap();
        assert_eq!(c.dialysis_sessions[0].end(), c.dialysis_sessions[1].t);
        let text = text.replace("start = 2027-03-27T20:00:00", "start = 2027-03-27T19:59:00");
        let e = CaseFile::parse(&text)
            .unwrap()
            .validate()
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with(
                "dialysis_session 1: starts at 2027-03-27T19:59+01:00, before dialysis_session 2"
            ),
            "{e}"
        );
    }
}
