//! The validated case: doses, levels, plan, targets and threshold on one time axis.
//!
//! Values here have passed validation (see `casefile`): levels are above zero, times are in
//! order where they must be, and every unit has what it needs to convert.

use crate::core::clock::{Clock, ClockTime};
use crate::core::model::{Administration, Route};
use crate::core::prior::Model;
use crate::core::units::Scale;

/// Who the patient is, as far as dosing needs (every field optional).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Patient {
    /// Free text shown on screen and in the note.
    pub label: Option<String>,
    /// Body weight in kg.
    pub weight_kg: Option<f64>,
    /// Age in years.
    pub age_years: Option<f64>,
    /// Sex, for creatinine clearance.
    pub sex: Option<Sex>,
    /// Serum creatinine in mg/dL (converted from umol/L when given that way).
    pub creatinine_mg_dl: Option<f64>,
    /// Serum creatinine as entered, when it was entered in umol/L (shown that way).
    pub creatinine_umol_l: Option<f64>,
    /// Height in cm, for ideal and adjusted body weight and BMI.
    pub height_cm: Option<f64>,
    /// Serum albumin in g/dL (converted from g/L when given that way).
    pub albumin_g_dl: Option<f64>,
    /// Serum albumin as entered, when it was entered in g/L (shown that way).
    pub albumin_g_l: Option<f64>,
    /// Whether the patient is on intermittent haemodialysis.
    pub dialysis: Option<bool>,
    /// Renal failure (`[patient] renal_failure`), for the albumin adjustment of a saturable
    /// drug's level (haemodialysis counts too).
    pub renal_failure: Option<bool>,
}

/// Sex as used by creatinine-clearance equations.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sex {
    /// female
    Female,
    /// male
    Male,
}

/// The drug and how its levels are reported.
#[derive(Debug, Clone, PartialEq)]
pub struct Drug {
    /// Free-text name.
    pub name: String,
    /// The drug profile's file stem, when one is named.
    pub profile: Option<String>,
    /// Converts mg/L to the level unit.
    pub scale: Scale,
    /// Molar mass in g/mol, when known.
    pub molar_mass_g_mol: Option<f64>,
    /// The salt the doses are written as (`drug.salt`), when the case names one.
    pub salt: Option<String>,
}

/// A dose actually given.
#[derive(Debug, Clone, PartialEq)]
pub struct Dose {
    /// Row in the file, counting from 1.
    pub row: usize,
    /// When it was given (start of the infusion).
    pub time: ClockTime,
    /// Hours on the case's axis.
    pub t: f64,
    /// Amount in mg, when known.
    pub amount_mg: Option<f64>,
    /// How it was given.
    pub route: Route,
}

impl Dose {
    /// When the dose has fully entered, in hours.
    pub fn end(&self) -> f64 {
        self.t + self.route.infusion_h()
    }
}

/// A measured plasma level.
#[derive(Debug, Clone, PartialEq)]
pub struct Level {
    /// Row in the file, counting from 1.
    pub row: usize,
    /// When it was drawn.
    pub time: ClockTime,
    /// Hours on the case's axis.
    pub t: f64,
    /// The measured value in the case's level unit.
    pub value: f64,
    /// The value in mg/L.
    pub mg_l: f64,
    /// Whether the user lets it into the fit (never for a level below the assay's limit).
    pub use_in_fit: bool,
    /// Reported below the assay's limit (`value = "<0.5"`): `value` is the limit.
    pub below_limit: bool,
    /// Free text.
    pub note: Option<String>,
    /// A free (unbound) level rather than a total one (saturable drug profiles only).
    pub free: bool,
}

impl Level {
    /// The value as written: `<0.5` for a level below the assay's limit of 0.5.
    pub fn value_words(&self) -> String {
        if self.below_limit {
            format!("<{}", crate::core::format::num(self.value))
        } else {
            crate::core::format::num(self.value)
        }
    }
}

/// The regimen to project.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// Dose in mg.
    pub dose_mg: f64,
    /// Dosing interval tau in hours.
    pub interval_h: f64,
    /// Route of each plan dose.
    pub route: Route,
    /// First plan dose, hours on the axis (given, or last dose + interval).
    pub start_t: f64,
    /// Whether `start_t` came from the file.
    pub start_given: bool,
}

/// Acceptable steady-state figures, in the level unit (AUC in level unit x h).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Targets {
    /// Acceptable peak range, inclusive.
    pub peak: Option<[f64; 2]>,
    /// The trough must be at or below this.
    pub trough_max: Option<f64>,
    /// Acceptable AUC over 24 h, inclusive.
    pub auc24: Option<[f64; 2]>,
}

impl Targets {
    /// Whether no target is set.
    pub fn is_empty(&self) -> bool {
        self.peak.is_none() && self.trough_max.is_none() && self.auc24.is_none()
    }
}

/// A level the drug must fall below, and perhaps the time it must be below by.
#[derive(Debug, Clone, PartialEq)]
pub struct Threshold {
    /// The level in the case's unit.
    pub below: f64,
    /// The procedure time in hours on the axis, if given.
    pub procedure_t: Option<f64>,
    /// Addition: the regimen may resume after the procedure once at or below this (level
    /// unit).
    pub resume_below: Option<f64>,
    /// Addition: the regimen may resume this many hours after the end of the procedure.
    pub resume_after_h: Option<f64>,
    /// Addition: how long the procedure lasts, hours (0 when not given): the level must stay
    /// at or below `below` throughout.
    pub procedure_h: f64,
}

/// A fit method a case can ask for in `[fit] method`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FitChoice {
    /// Two-point or log-linear within one dosing interval (contract v1).
    LogLinear,
    /// k and V from every used level against the whole dose record.
    DoseHistory,
    /// Maximum a posteriori k and V from a population model and the levels.
    Bayesian,
    /// The population model's typical values for this patient, leaving every level out.
    Population,
}

impl FitChoice {
    /// The case-file spelling.
    pub fn name(self) -> &'static str {
        match self {
            FitChoice::LogLinear => "log-linear",
            FitChoice::DoseHistory => "dose-history",
            FitChoice::Bayesian => "bayesian",
            FitChoice::Population => "population",
        }
    }

    /// Parse the case-file spelling.
    pub fn parse(text: &str) -> Option<Self> {
        [
            FitChoice::LogLinear,
            FitChoice::DoseHistory,
            FitChoice::Bayesian,
            FitChoice::Population,
        ]
        .into_iter()
        .find(|c| c.name() == text)
    }
}

/// A whole validated case.
#[derive(Debug, Clone, PartialEq)]
pub struct Case {
    /// The patient.
    pub patient: Patient,
    /// The drug.
    pub drug: Drug,
    /// Doses sorted by time (rows keep their file numbers).
    pub doses: Vec<Dose>,
    /// Levels sorted by time (rows keep their file numbers).
    pub levels: Vec<Level>,
    /// The regimen to project.
    pub plan: Option<Plan>,
    /// Targets from the case (or the profile).
    pub targets: Targets,
    /// The threshold, if any.
    pub threshold: Option<Threshold>,
    /// The time axis.
    pub clock: Clock,
    /// Switching to another agent (`[switch]`), if planned.
    pub switch: Option<Switch>,
    /// The practical choices regimens are searched over (a drug profile's, else defaults).
    pub regimen: RegimenOptions,
    /// The fit method the case asks for (`[fit] method`); None lets the fit choose.
    pub fit_method: Option<FitChoice>,
    /// The population model: the one the case names (`[fit] model`), else the drug profile's
    /// default, when it has one.
    pub prior: Option<Model>,
    /// Haemodialysis sessions (`[[dialysis_session]]`), sorted by start (rows keep their file
    /// numbers); marked on the course, not modelled.
    pub dialysis_sessions: Vec<DialysisSession>,
    /// Why `prior` is the case's model, when the profile offers more than one (the profile's
    /// reason for its default, or that the case chose it).
    pub prior_reason: Option<String>,
}

/// One haemodialysis session (`[[dialysis_session]]`): marked on the course, not modelled.
#[derive(Debug, Clone, PartialEq)]
pub struct DialysisSession {
    /// Row in the file, counting from 1.
    pub row: usize,
    /// When it started.
    pub start: ClockTime,
    /// Start, hours on the case's axis.
    pub t: f64,
    /// How long it ran, hours (above 0, at most 12).
    pub duration_h: f64,
}

impl DialysisSession {
    /// When it ended, hours on the axis.
    pub fn end(&self) -> f64 {
        self.t + self.duration_h
    }
}

impl Case {
    /// The doses as the model sees them, or the rows that have no amount.
    pub fn given(&self) -> std::result::Result<Vec<Administration>, Vec<usize>> {
        let missing: Vec<usize> = self
            .doses
            .iter()
            .filter(|d| d.amount_mg.is_none())
            .map(|d| d.row)
            .collect();
        if !missing.is_empty() {
            return Err(missing);
        }
        Ok(self
            .doses
            .iter()
            .filter_map(|d| {
                d.amount_mg.map(|a| Administration {
                    t: d.t,
                    amount_mg: a,
                    route: d.route,
                })
            })
            .collect())
    }

    /// The stamp of an hour on the axis, to the minute, or `None` if out of the calendar.
    pub fn stamp(&self, t: f64) -> Option<ClockTime> {
        self.clock.at_minute(t)
    }

    /// The level's row number in the file, as `level N`.
    pub fn level_name(&self, i: usize) -> String {
        format!("level {}", self.levels[i].row)
    }
}

/// The practical choices a regimen is searched over, and the dosing strategy's rules. A drug
/// profile supplies them; until one does, `RegimenOptions::default()` holds the common ones.
#[derive(Debug, Clone, PartialEq)]
pub struct RegimenOptions {
    /// Dosing intervals to try, in hours (the chosen strategy's usual intervals).
    pub intervals_h: Vec<f64>,
    /// Doses are multiples of this many mg (a finer step is taken when the dose is small).
    pub dose_step_mg: f64,
    /// Infusion durations to try, in hours, for an infusion route. Empty: keep the duration
    /// of the plan (or of the last recorded dose).
    pub infusion_h: Vec<f64>,
    /// The dosing strategy's name (the profile's), when a profile gave the options.
    pub strategy: Option<String>,
    /// Whether the strategy cares for the drug-free time per interval (extended interval).
    pub drug_free_time: bool,
    /// Hours after the end of the infusion at which the peak target is defined (0: at the end).
    pub peak_sampled_after_h: f64,
    /// The fastest infusion allowed, mg/min.
    pub max_rate_mg_per_min: Option<f64>,
    /// The largest single dose, mg.
    pub max_single_dose_mg: Option<f64>,
    /// The largest daily dose, mg.
    pub max_daily_dose_mg: Option<f64>,
    /// Whether and how a loading dose is given.
    pub loading: LoadingRule,
    /// Tablet or capsule strengths, mg: doses are made of them.
    pub dose_forms_mg: Vec<f64>,
    /// The strategy's haemodialysis rules (a pre-dialysis range, dosing after each session).
    pub dialysis: DialysisRule,
}

/// A dosing strategy's haemodialysis rules, from the drug profile.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct DialysisRule {
    /// The acceptable level drawn before a session, in the case's level unit, inclusive.
    pub pre_dialysis: Option<[f64; 2]>,
    /// The source of `pre_dialysis`, as the profile cites it.
    pub pre_dialysis_source: String,
    /// Whether the strategy gives each maintenance dose after a session.
    pub dose_after_session: bool,
    /// The source of `dose_after_session`, as the profile cites it.
    pub dose_after_session_source: String,
}

impl Default for RegimenOptions {
    /// Intervals 6, 8, 12, 24, 36 and 48 h; doses in steps of 10 mg; the infusion time of
    /// the plan or of the last dose (common practice); a loading dose by the kinetics; no
    /// limits.
    fn default() -> Self {
        RegimenOptions {
            intervals_h: vec![6.0, 8.0, 12.0, 24.0, 36.0, 48.0],
            dose_step_mg: 10.0,
            infusion_h: Vec::new(),
            strategy: None,
            drug_free_time: false,
            peak_sampled_after_h: 0.0,
            max_rate_mg_per_min: None,
            max_single_dose_mg: None,
            max_daily_dose_mg: None,
            loading: LoadingRule::Kinetic,
            dose_forms_mg: Vec::new(),
            dialysis: DialysisRule::default(),
        }
    }
}

/// Whether a loading dose is given, and how it is sized.
#[derive(Debug, Clone, PartialEq)]
pub enum LoadingRule {
    /// Never (the profile gives none: lithium, or a drug where none is used).
    Never,
    /// The dose that reaches the aimed peak at once (no profile, or the profile says so).
    Kinetic,
    /// By body weight, as the guideline gives it: mg/kg range (the middle is used) and an
    /// optional cap, mg.
    PerKg {
        /// Low and high mg/kg.
        mg_per_kg: [f64; 2],
        /// The largest loading dose, mg.
        max_mg: Option<f64>,
    },
}

/// The `[switch]` section of a case: which agent comes next and when it may start.
#[derive(Debug, Clone, PartialEq)]
pub struct Switch {
    /// The next agent, free text.
    pub to: String,
    /// When it may start.
    pub rule: SwitchRule,
}

/// The local protocol's rule for starting the next agent.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SwitchRule {
    /// Once the level is at or below this value, in the case's level unit.
    StartBelow(f64),
    /// After this many half-lives from the end of the last recorded dose.
    AfterHalfLives(f64),
}

impl SwitchRule {
    /// The name of the rule as the case file spells it (the JSON `basis`).
    pub fn basis(&self) -> &'static str {
        match self {
            SwitchRule::StartBelow(_) => "start_below",
            SwitchRule::AfterHalfLives(_) => "after_half_lives",
        }
    }
}
