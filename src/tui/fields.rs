//! Every editable field of a case: how it reads from the `CaseFile`, how typed text or a
//! choice is written back, and which validation places belong to it.

use crate::core::casefile::{
    CaseFile, DoseFile, LevelFile, PlanFile, SwitchFile, TargetsFile, ThresholdFile,
};
use crate::core::units::LevelUnit;
use crate::tui::entry;
use crate::tui::strings;

/// One editable field (rows count from 0 in file order).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[allow(missing_docs)]
pub enum Field {
    Label,
    Weight,
    Age,
    Sex,
    CreatinineMgDl,
    CreatinineUmolL,
    Height,
    AlbuminGDl,
    AlbuminGL,
    Dialysis,
    DrugName,
    DrugProfile,
    Unit,
    MolarMass,
    DoseTime(usize),
    DoseAmount(usize),
    DoseRoute(usize),
    DoseInfusion(usize),
    DoseF(usize),
    LevelTime(usize),
    LevelValue(usize),
    LevelUse(usize),
    LevelNote(usize),
    PlanDose,
    PlanInterval,
    PlanRoute,
    PlanInfusion,
    PlanF,
    PlanStart,
    TargetPeak,
    TargetTrough,
    TargetAuc,
    ThresholdBelow,
    ThresholdProcedure,
    ResumeBelow,
    ResumeAfter,
    TimeZone,
    SwitchTo,
    SwitchBelow,
    SwitchHalfLives,
    Strategy,
    /// The population model (`[fit] model`), chosen from the drug profile's.
    Model,
}

/// How a field is changed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// Typed text (numbers, dates, names).
    Text,
    /// One of a few words, stepped through with Enter or Space.
    Choice,
}

/// The routes a dose may take, in the order Space steps through them.
pub const ROUTES: [&str; 3] = ["bolus", "infusion", "oral"];
/// Sex as case files spell it; the empty entry means not given.
pub const SEXES: [&str; 3] = ["", "female", "male"];
/// Haemodialysis as the screen shows it; the empty entry means not given.
pub const DIALYSIS: [&str; 3] = ["", "yes", "no"];

/// The dose-table columns, left to right.
pub fn dose_columns(row: usize) -> [Field; 5] {
    [
        Field::DoseTime(row),
        Field::DoseAmount(row),
        Field::DoseRoute(row),
        Field::DoseInfusion(row),
        Field::DoseF(row),
    ]
}

/// The level-table columns, left to right.
pub fn level_columns(row: usize) -> [Field; 4] {
    [
        Field::LevelTime(row),
        Field::LevelValue(row),
        Field::LevelUse(row),
        Field::LevelNote(row),
    ]
}

fn num(x: Option<f64>) -> String {
    x.map(|v| v.to_string()).unwrap_or_default()
}

fn range(r: &Option<Vec<f64>>) -> String {
    match r.as_deref() {
        Some([a, b]) => format!("{a}-{b}"),
        Some(v) => v
            .iter()
            .map(|x| x.to_string())
            .collect::<Vec<_>>()
            .join(" "),
        None => String::new(),
    }
}

impl Field {
    /// Whether the field is typed or chosen.
    pub fn kind(self) -> Kind {
        match self {
            Field::Sex
            | Field::Dialysis
            | Field::Unit
            | Field::DoseRoute(_)
            | Field::LevelUse(_)
            | Field::PlanRoute
            | Field::Strategy
            | Field::Model => Kind::Choice,
            _ => Kind::Text,
        }
    }

    /// The field's name for prompts and messages.
    pub fn name(self) -> String {
        strings::field_name(self)
    }

    /// The field's value as text (what an editor starts from; empty when not given).
    pub fn text(self, f: &CaseFile) -> String {
        let dose = |i: usize| f.doses.get(i);
        let level = |i: usize| f.levels.get(i);
        let plan = f.plan.as_ref();
        let targets = f.targets.as_ref();
        match self {
            Field::Label => f.patient.label.clone().unwrap_or_default(),
            Field::Weight => num(f.patient.weight_kg),
            Field::Age => num(f.patient.age_years),
            Field::Sex => f.patient.sex.clone().unwrap_or_default(),
            Field::CreatinineMgDl => num(f.patient.creatinine_mg_dl),
            Field::CreatinineUmolL => num(f.patient.creatinine_umol_l),
            Field::Height => num(f.patient.height_cm),
            Field::AlbuminGDl => num(f.patient.albumin_g_dl),
            Field::AlbuminGL => num(f.patient.albumin_g_l),
            Field::Dialysis => match f.patient.dialysis {
                Some(true) => DIALYSIS[1].into(),
                Some(false) => DIALYSIS[2].into(),
                None => String::new(),
            },
            Field::DrugName => f.drug.name.clone().unwrap_or_default(),
            Field::DrugProfile => f.drug.profile.clone().unwrap_or_default(),
            Field::Unit => f.drug.level_unit.clone().unwrap_or_default(),
            Field::MolarMass => num(f.drug.molar_mass_g_mol),
            Field::DoseTime(i) => dose(i)
                .map(|d| entry::show_datetime(&d.time))
                .unwrap_or_default(),
            Field::DoseAmount(i) => num(dose(i).and_then(|d| d.amount_mg)),
            Field::DoseRoute(i) => dose(i).map(|d| d.route.clone()).unwrap_or_default(),
            Field::DoseInfusion(i) => num(dose(i).and_then(|d| d.infusion_h)),
            Field::DoseF(i) => num(dose(i).and_then(|d| d.bioavailability)),
            Field::LevelTime(i) => level(i)
                .map(|l| entry::show_datetime(&l.time))
                .unwrap_or_default(),
            Field::LevelValue(i) => level(i)
                .map(|l| {
                    if l.below_limit {
                        format!("<{}", l.value)
                    } else {
                        l.value.to_string()
                    }
                })
                .unwrap_or_default(),
            Field::LevelUse(i) => match level(i) {
                Some(l) if l.use_in_fit == Some(false) || l.below_limit => strings::NO.into(),
                Some(_) => strings::YES.into(),
                None => String::new(),
            },
            Field::LevelNote(i) => level(i).and_then(|l| l.note.clone()).unwrap_or_default(),
            Field::PlanDose => num(plan.map(|p| p.dose_mg)),
            Field::PlanInterval => num(plan.map(|p| p.interval_h)),
            Field::PlanRoute => plan.map(|p| p.route.clone()).unwrap_or_default(),
            Field::PlanInfusion => num(plan.and_then(|p| p.infusion_h)),
            Field::PlanF => num(plan.and_then(|p| p.bioavailability)),
            Field::PlanStart => plan
                .and_then(|p| p.start.as_ref())
                .map(entry::show_datetime)
                .unwrap_or_default(),
            Field::TargetPeak => targets.map(|t| range(&t.peak)).unwrap_or_default(),
            Field::TargetTrough => num(targets.and_then(|t| t.trough_max)),
            Field::TargetAuc => targets.map(|t| range(&t.auc24)).unwrap_or_default(),
            Field::ThresholdBelow => num(f.threshold.as_ref().map(|t| t.below)),
            Field::ThresholdProcedure => f
                .threshold
                .as_ref()
                .and_then(|t| t.procedure.as_ref())
                .map(entry::show_datetime)
                .unwrap_or_default(),
            Field::ResumeBelow => num(f.threshold.as_ref().and_then(|t| t.resume_below)),
            Field::ResumeAfter => num(f.threshold.as_ref().and_then(|t| t.resume_after_h)),
            Field::TimeZone => f.time_zone.clone().unwrap_or_default(),
            Field::SwitchTo => f
                .switch
                .as_ref()
                .and_then(|s| s.to.clone())
                .unwrap_or_default(),
            Field::SwitchBelow => num(f.switch.as_ref().and_then(|s| s.start_below)),
            Field::SwitchHalfLives => num(f.switch.as_ref().and_then(|s| s.after_half_lives)),
            Field::Strategy => f.drug.strategy.clone().unwrap_or_default(),
            Field::Model => f
                .fit
                .as_ref()
                .and_then(|x| x.model.clone())
                .unwrap_or_default(),
        }
    }

    /// Write typed text into the case file.
    ///
    /// # Errors
    /// Text that does not parse for this field, or a field that needs another set first;
    /// the case file is left unchanged then.
    pub fn set_text(self, f: &mut CaseFile, text: &str) -> Result<(), String> {
        let text_opt = || {
            let t = text.trim();
            (!t.is_empty()).then(|| t.to_string())
        };
        match self {
            Field::Label => f.patient.label = text_opt(),
            Field::Weight => f.patient.weight_kg = entry::optional_number(text)?,
            Field::Age => f.patient.age_years = entry::optional_number(text)?,
            Field::CreatinineMgDl => f.patient.creatinine_mg_dl = entry::optional_number(text)?,
            Field::CreatinineUmolL => f.patient.creatinine_umol_l = entry::optional_number(text)?,
            Field::Height => f.patient.height_cm = entry::optional_number(text)?,
            Field::AlbuminGDl => f.patient.albumin_g_dl = entry::optional_number(text)?,
            Field::AlbuminGL => f.patient.albumin_g_l = entry::optional_number(text)?,
            Field::DrugName => f.drug.name = text_opt(),
            Field::DrugProfile => f.drug.profile = text_opt(),
            Field::MolarMass => f.drug.molar_mass_g_mol = entry::optional_number(text)?,
            Field::DoseTime(i) => {
                let v = entry::datetime(text)?;
                dose_mut(f, i)?.time = v;
            }
            Field::DoseAmount(i) => {
                let v = entry::optional_number(text)?;
                dose_mut(f, i)?.amount_mg = v;
            }
            Field::DoseInfusion(i) => {
                let v = entry::optional_number(text)?;
                dose_mut(f, i)?.infusion_h = v;
            }
            Field::DoseF(i) => {
                let v = entry::optional_number(text)?;
                dose_mut(f, i)?.bioavailability = v;
            }
            Field::LevelTime(i) => {
                let v = entry::datetime(text)?;
                level_mut(f, i)?.time = v;
            }
            Field::LevelValue(i) => {
                // "<0.5": reported below the assay's limit of 0.5.
                let (v, below) = match crate::core::casefile::parse_below_limit(text) {
                    Some(x) => (x, true),
                    None if text.trim().starts_with('<') => {
                        return Err(strings::BELOW_LIMIT_FORM.into())
                    }
                    None => (entry::number(text)?, false),
                };
                let l = level_mut(f, i)?;
                l.value = v;
                l.below_limit = below;
            }
            Field::LevelNote(i) => {
                let v = text_opt();
                level_mut(f, i)?.note = v;
            }
            Field::PlanDose => {
                let v = entry::number(text)?;
                plan_mut(f).dose_mg = v;
            }
            Field::PlanInterval => {
                let v = entry::number(text)?;
                plan_mut(f).interval_h = v;
            }
            Field::PlanInfusion => {
                let v = entry::optional_number(text)?;
                plan_mut(f).infusion_h = v;
            }
            Field::PlanF => {
                let v = entry::optional_number(text)?;
                plan_mut(f).bioavailability = v;
            }
            Field::PlanStart => {
                let v = if text.trim().is_empty() {
                    None
                } else {
                    Some(entry::datetime(text)?)
                };
                plan_mut(f).start = v;
            }
            Field::TargetPeak => {
                let v = entry::optional_range(text)?;
                targets_mut(f).peak = v.map(Vec::from);
                tidy_targets(f);
            }
            Field::TargetTrough => {
                let v = entry::optional_number(text)?;
                targets_mut(f).trough_max = v;
                tidy_targets(f);
            }
            Field::TargetAuc => {
                let v = entry::optional_range(text)?;
                targets_mut(f).auc24 = v.map(Vec::from);
                tidy_targets(f);
            }
            Field::ThresholdBelow => match entry::optional_number(text)? {
                None => f.threshold = None,
                Some(v) => match f.threshold.as_mut() {
                    Some(t) => t.below = v,
                    None => {
                        f.threshold = Some(ThresholdFile {
                            below: v,
                            ..ThresholdFile::default()
                        })
                    }
                },
            },
            Field::ThresholdProcedure => {
                let v = if text.trim().is_empty() {
                    None
                } else {
                    Some(entry::datetime(text)?)
                };
                match f.threshold.as_mut() {
                    Some(t) => t.procedure = v,
                    None if v.is_none() => {}
                    None => return Err(strings::THRESHOLD_FIRST.into()),
                }
            }
            Field::ResumeBelow | Field::ResumeAfter => {
                let v = entry::optional_number(text)?;
                match f.threshold.as_mut() {
                    Some(t) if self == Field::ResumeBelow => t.resume_below = v,
                    Some(t) => t.resume_after_h = v,
                    None if v.is_none() => {}
                    None => return Err(strings::THRESHOLD_FIRST.into()),
                }
            }
            Field::TimeZone => f.time_zone = text_opt(),
            // Chosen from the profile's strategies (`update`); only cleared as text.
            Field::Strategy => f.drug.strategy = text_opt(),
            // Chosen from the profile's models (`update`); only cleared as text.
            Field::Model => set_model(f, text_opt()),
            Field::SwitchTo => switch_mut(f).to = text_opt(),
            Field::SwitchBelow => switch_mut(f).start_below = entry::optional_number(text)?,
            Field::SwitchHalfLives => {
                switch_mut(f).after_half_lives = entry::optional_number(text)?
            }
            Field::Sex
            | Field::Dialysis
            | Field::Unit
            | Field::DoseRoute(_)
            | Field::LevelUse(_)
            | Field::PlanRoute => return Err(strings::CHOICE_NOT_TYPED.into()),
        }
        if f.switch.as_ref() == Some(&SwitchFile::default()) {
            f.switch = None;
        }
        Ok(())
    }

    /// Step a choice field to its next value (`back` steps the other way).
    ///
    /// # Errors
    /// A row that does not exist, or a typed field.
    pub fn cycle(self, f: &mut CaseFile, back: bool) -> Result<(), String> {
        fn next<'a>(list: &[&'a str], now: &str, back: bool) -> &'a str {
            let n = list.len();
            let i = list.iter().position(|x| *x == now);
            let j = match (i, back) {
                (None, _) => 0,
                (Some(i), false) => (i + 1) % n,
                (Some(i), true) => (i + n - 1) % n,
            };
            list[j]
        }
        match self {
            Field::Sex => {
                let s = next(&SEXES, f.patient.sex.as_deref().unwrap_or(""), back);
                f.patient.sex = (!s.is_empty()).then(|| s.to_string());
            }
            Field::Dialysis => {
                let now = Field::Dialysis.text(f);
                f.patient.dialysis = match next(&DIALYSIS, &now, back) {
                    "yes" => Some(true),
                    "no" => Some(false),
                    _ => None,
                };
            }
            Field::Unit => {
                let units: Vec<&str> = LevelUnit::ALL.iter().map(|u| u.as_str()).collect();
                let u = next(&units, f.drug.level_unit.as_deref().unwrap_or(""), back);
                f.drug.level_unit = Some(u.to_string());
            }
            Field::DoseRoute(i) => {
                let d = dose_mut(f, i)?;
                let r = next(&ROUTES, &d.route, back).to_string();
                set_route(&r, &mut d.route, &mut d.infusion_h, &mut d.bioavailability);
                if r != "oral" {
                    d.formulation = None;
                }
            }
            Field::PlanRoute => {
                let p = plan_mut(f);
                let r = next(&ROUTES, &p.route, back).to_string();
                set_route(&r, &mut p.route, &mut p.infusion_h, &mut p.bioavailability);
                if r != "oral" {
                    p.formulation = None;
                }
            }
            Field::LevelUse(i) => {
                let l = level_mut(f, i)?;
                l.use_in_fit = match l.use_in_fit {
                    Some(false) => None,
                    _ => Some(false),
                };
            }
            _ => return Err(strings::TYPED_NOT_CHOICE.into()),
        }
        Ok(())
    }

    /// Whether a validation error at `place` (as the core names it) concerns this field.
    pub fn owns_place(self, place: &str) -> bool {
        let col = |prefix: &str, i: usize, key: &str| place == format!("{prefix} {}: {key}", i + 1);
        match self {
            Field::Label => place == "patient.label",
            Field::Weight => place == "patient.weight_kg",
            Field::Age => place == "patient.age_years",
            Field::Sex => place == "patient.sex",
            Field::CreatinineMgDl => place == "patient.creatinine_mg_dl",
            Field::CreatinineUmolL => place == "patient.creatinine_umol_l",
            Field::Height => place == "patient.height_cm",
            Field::AlbuminGDl => place == "patient.albumin_g_dl",
            Field::AlbuminGL => place == "patient.albumin_g_l",
            Field::Dialysis => place == "patient.dialysis",
            Field::DrugName => place == "drug.name",
            Field::DrugProfile => place == "drug.profile",
            Field::Unit => place == "drug.level_unit",
            Field::MolarMass => place == "drug.molar_mass_g_mol",
            Field::DoseTime(i) => col("dose", i, "time") || place == format!("dose {}", i + 1),
            Field::DoseAmount(i) => col("dose", i, "amount_mg"),
            Field::DoseRoute(i) => col("dose", i, "route"),
            Field::DoseInfusion(i) => col("dose", i, "infusion_h"),
            Field::DoseF(i) => col("dose", i, "bioavailability"),
            Field::LevelTime(i) => col("level", i, "time") || place == format!("level {}", i + 1),
            Field::LevelValue(i) => col("level", i, "value"),
            Field::LevelUse(_) | Field::LevelNote(_) => false,
            Field::PlanDose => place == "plan.dose_mg",
            Field::PlanInterval => place == "plan.interval_h",
            Field::PlanRoute => place == "plan: route",
            Field::PlanInfusion => place == "plan.infusion_h" || place == "plan: infusion_h",
            Field::PlanF => place == "plan: bioavailability",
            Field::PlanStart => place == "plan.start",
            Field::TargetPeak => place == "targets.peak",
            Field::TargetTrough => place == "targets.trough_max",
            Field::TargetAuc => place == "targets.auc24",
            Field::ThresholdBelow => place == "threshold.below",
            Field::ThresholdProcedure => place == "threshold.procedure",
            Field::ResumeBelow => place == "threshold.resume_below",
            Field::ResumeAfter => place == "threshold.resume_after_h",
            Field::TimeZone => place == "time_zone",
            Field::SwitchTo => place == "switch.to",
            Field::SwitchBelow => place == "switch.start_below",
            Field::SwitchHalfLives => place == "switch.after_half_lives",
            Field::Strategy => place == "drug.strategy",
            Field::Model => place == "fit.model",
        }
    }
}

/// Name the case's population model (None: the profile's default), keeping `[fit]` only
/// while it says something.
pub fn set_model(f: &mut CaseFile, name: Option<String>) {
    let mut fit = f.fit.clone().unwrap_or_default();
    fit.model = name;
    f.fit = (fit != crate::core::casefile::FitFile::default()).then_some(fit);
}

fn set_route(r: &str, route: &mut String, infusion_h: &mut Option<f64>, f: &mut Option<f64>) {
    *route = r.to_string();
    if r == "infusion" {
        if infusion_h.is_none() {
            *infusion_h = Some(DEFAULT_INFUSION_H);
        }
    } else {
        *infusion_h = None;
    }
    if r != "oral" {
        *f = None;
    }
}

/// The infusion time a dose gets when its route becomes "infusion" (it is shown at once and
/// can be changed).
pub const DEFAULT_INFUSION_H: f64 = 0.5;

fn dose_mut(f: &mut CaseFile, i: usize) -> Result<&mut DoseFile, String> {
    f.doses
        .get_mut(i)
        .ok_or_else(|| strings::NO_SUCH_ROW.into())
}

fn level_mut(f: &mut CaseFile, i: usize) -> Result<&mut LevelFile, String> {
    f.levels
        .get_mut(i)
        .ok_or_else(|| strings::NO_SUCH_ROW.into())
}

fn switch_mut(f: &mut CaseFile) -> &mut SwitchFile {
    f.switch.get_or_insert_with(SwitchFile::default)
}

fn targets_mut(f: &mut CaseFile) -> &mut TargetsFile {
    f.targets.get_or_insert_with(TargetsFile::default)
}

fn tidy_targets(f: &mut CaseFile) {
    if f.targets.as_ref() == Some(&TargetsFile::default()) {
        f.targets = None;
    }
}

/// The plan, started from the dose record when the case has none: the last dose's amount
/// and route, and the gap between the last two doses as the interval.
pub fn plan_mut(f: &mut CaseFile) -> &mut PlanFile {
    let fresh = plan_from_record(f);
    f.plan.get_or_insert(fresh)
}

/// A plan copied from the dose record (used when the user first adjusts a missing plan).
pub fn plan_from_record(f: &CaseFile) -> PlanFile {
    let last = f.doses.last();
    let interval = match f.doses.len() {
        n if n >= 2 => match entry::hours_between(&f.doses[n - 2].time, &f.doses[n - 1].time) {
            Some(h) if h > 0.0 => h,
            _ => DEFAULT_INTERVAL_H,
        },
        _ => DEFAULT_INTERVAL_H,
    };
    PlanFile {
        dose_mg: last
            .and_then(|d| d.amount_mg)
            .unwrap_or(DEFAULT_PLAN_DOSE_MG),
        interval_h: interval,
        route: last
            .map(|d| d.route.clone())
            .unwrap_or_else(|| "infusion".into()),
        infusion_h: match last {
            Some(d) if d.route == "infusion" => d.infusion_h.or(Some(DEFAULT_INFUSION_H)),
            Some(_) => None,
            None => Some(DEFAULT_INFUSION_H),
        },
        bioavailability: last.and_then(|d| d.bioavailability),
        formulation: last.and_then(|d| d.formulation.clone()),
        start: None,
    }
}

/// The interval a new plan gets when the dose record cannot suggest one.
pub const DEFAULT_INTERVAL_H: f64 = 24.0;
/// The dose a new plan gets when no dose amount is on record.
pub const DEFAULT_PLAN_DOSE_MG: f64 = 100.0;
