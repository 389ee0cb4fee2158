//! The five screens, one file each (and the saturable lines two of them share), and what can be selected on each (shared with `update`).

pub mod case;
pub mod fit;
pub mod plan;
pub mod profile;
pub mod saturable;
pub mod threshold;
pub mod washout;

use crate::core::advice::SuggestionEntry;
use crate::core::casefile::{CaseFile, TargetsFile};
use crate::core::report::num;
use crate::profiles::{Entry, FirstOrder};
use crate::tui::app::{App, Screen};
use crate::tui::catalog;
use crate::tui::fields::{self, Field};
use crate::tui::strings;

/// A selectable line of the case screen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CaseLine {
    /// A single field (patient or drug).
    Field(Field),
    /// A dose row (0-based, file order).
    Dose(usize),
    /// The line that adds a dose.
    AddDose,
    /// A level row (0-based, file order).
    Level(usize),
    /// The line that adds a level.
    AddLevel,
}

/// The patient's fields, in screen order.
pub const PATIENT_FIELDS: [Field; 10] = [
    Field::Label,
    Field::Weight,
    Field::Height,
    Field::Age,
    Field::Sex,
    Field::CreatinineMgDl,
    Field::CreatinineUmolL,
    Field::AlbuminGDl,
    Field::AlbuminGL,
    Field::Dialysis,
];

/// The drug's fields, in screen order.
pub const DRUG_FIELDS: [Field; 6] = [
    Field::DrugName,
    Field::DrugProfile,
    Field::Strategy,
    Field::Model,
    Field::Unit,
    Field::MolarMass,
];

/// The case's clock fields.
pub const CLOCK_FIELDS: [Field; 1] = [Field::TimeZone];

/// The switch to another agent, in screen order.
pub const SWITCH_FIELDS: [Field; 3] = [Field::SwitchTo, Field::SwitchBelow, Field::SwitchHalfLives];

/// The plan screen's fields, in screen order.
pub const PLAN_FIELDS: [Field; 9] = [
    Field::PlanDose,
    Field::PlanInterval,
    Field::PlanRoute,
    Field::PlanInfusion,
    Field::PlanF,
    Field::PlanStart,
    Field::TargetPeak,
    Field::TargetTrough,
    Field::TargetAuc,
];

/// The threshold screen's fields, in screen order.
pub const THRESHOLD_FIELDS: [Field; 4] = [
    Field::ThresholdBelow,
    Field::ThresholdProcedure,
    Field::ResumeBelow,
    Field::ResumeAfter,
];

/// Every selectable line of the case screen, in cursor order: the dose and level tables
/// first (the bedside work), then the patient and drug fields.
pub fn case_lines(file: &CaseFile) -> Vec<CaseLine> {
    let mut out: Vec<CaseLine> = (0..file.doses.len()).map(CaseLine::Dose).collect();
    out.push(CaseLine::AddDose);
    out.extend((0..file.levels.len()).map(CaseLine::Level));
    out.push(CaseLine::AddLevel);
    out.extend(
        PATIENT_FIELDS
            .iter()
            .chain(DRUG_FIELDS.iter())
            .chain(CLOCK_FIELDS.iter())
            .chain(SWITCH_FIELDS.iter())
            .map(|f| CaseLine::Field(*f)),
    );
    out
}

/// The selected line of the case screen.
pub fn selected_case_line(app: &App) -> CaseLine {
    let lines = case_lines(&app.file);
    let i = app.cursors.case_line.min(lines.len().saturating_sub(1));
    lines.get(i).copied().unwrap_or(CaseLine::AddDose)
}

/// The field under the selection of the screen shown, if it is a field.
pub fn selected_field(app: &App) -> Option<Field> {
    match app.screen {
        Screen::Case => match selected_case_line(app) {
            CaseLine::Field(f) => Some(f),
            CaseLine::Dose(i) => {
                let cols = fields::dose_columns(i);
                Some(cols[app.cursors.case_col.min(cols.len() - 1)])
            }
            CaseLine::Level(i) => {
                let cols = fields::level_columns(i);
                Some(cols[app.cursors.case_col.min(cols.len() - 1)])
            }
            CaseLine::AddDose | CaseLine::AddLevel => None,
        },
        Screen::Plan => PLAN_FIELDS.get(app.cursors.plan).copied(),
        Screen::Threshold => THRESHOLD_FIELDS.get(app.cursors.threshold).copied(),
        Screen::Fit | Screen::Washout => None,
    }
}

/// The suggested regimens of the current figures, best first (empty without figures).
pub fn suggestions(app: &App) -> &[SuggestionEntry] {
    app.figures
        .report
        .as_ref()
        .map(|r| r.advice.suggestions.as_slice())
        .unwrap_or(&[])
}

/// What a line of the profile overlay is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InfoKind {
    /// A heading.
    Heading,
    /// Plain text.
    Text,
    /// A caution or a kinetics limit.
    Caution,
}

/// The case's profile as lines for the overlay and the case screen's panel (unwrapped), or
/// nothing when the case names none (or one that does not exist).
pub fn profile_info_lines(app: &App) -> Vec<(InfoKind, String)> {
    app.file
        .drug
        .profile
        .as_deref()
        .and_then(|n| app.profiles.get(n))
        .map(|e| entry_lines(e, app.file.drug.strategy.as_deref()))
        .unwrap_or_default()
}

/// The label of the dosing strategy in force for the case, and whether it is the profile's
/// default (the case names none, or names the default); `None` without a profile or with a
/// name the profile does not have.
pub fn strategy_in_force(app: &App) -> Option<(String, bool)> {
    let p = &app.profiles.get(app.file.drug.profile.as_deref()?)?.profile;
    let name = app
        .file
        .drug
        .strategy
        .as_deref()
        .unwrap_or(&p.default_strategy);
    let s = p.strategy(name)?;
    Some((s.label.clone(), name == p.default_strategy))
}

/// The population model in force (the case's `[fit] model`, else the profile's default): its
/// label, and whether it is the default. None without a profile that offers a model.
pub fn model_in_force(app: &App) -> Option<(String, bool)> {
    let p = &app.profiles.get(app.file.drug.profile.as_deref()?)?.profile;
    let default = crate::profiles::default_model_name(p)?;
    let chosen = app.file.fit.as_ref().and_then(|f| f.model.clone());
    let name = chosen.unwrap_or_else(|| default.clone());
    let m = crate::profiles::models_of(p)
        .into_iter()
        .find(|m| m.name == name)?;
    Some((m.label, name == default))
}

/// One profile as lines: what it is, its levels and half-life, the targets of `strategy`
/// (`None`, or a name it does not have: the default) with their sampling advice, the
/// kinetics limit, and the cautions.
pub fn entry_lines(e: &Entry, strategy: Option<&str>) -> Vec<(InfoKind, String)> {
    let p = &e.profile;
    let mut out = vec![
        (
            InfoKind::Heading,
            strings::profile_title(e.display_name(), &e.name, &e.origin.words()),
        ),
        (
            InfoKind::Text,
            strings::profile_levels(
                &p.level_unit,
                &num(p.half_life_h.low),
                &num(p.half_life_h.high),
            ),
        ),
    ];
    if let Some(v) = &p.level_valid_after_h {
        out.push((InfoKind::Text, strings::profile_valid_after(&num(v.value))));
    }
    if p.kinetics.first_order != FirstOrder::Yes {
        out.push((
            InfoKind::Caution,
            strings::profile_kinetics(&p.kinetics.why),
        ));
    }
    let chosen = strategy
        .filter(|n| *n != p.default_strategy)
        .and_then(|n| p.strategy(n));
    if let Some(st) = chosen.or_else(|| p.default_strategy()) {
        let u = p.level_unit.as_str();
        let mut parts = Vec::new();
        if let Some(r) = &st.peak {
            parts.push(strings::target_peak(&num(r.low), &num(r.high), u));
        }
        if let Some(t) = &st.trough_max {
            parts.push(strings::target_trough(&num(t.value), u));
        }
        if let Some(r) = &st.auc24 {
            parts.push(strings::target_auc(&num(r.low), &num(r.high), u));
        }
        if let Some(r) = &st.range {
            parts.push(strings::target_range(&num(r.low), &num(r.high), u));
        }
        let heading = match chosen {
            Some(_) => strings::profile_chosen_strategy(&st.label),
            None => strings::profile_strategy(&st.label),
        };
        out.push((InfoKind::Heading, heading));
        if !parts.is_empty() {
            out.push((InfoKind::Text, strings::profile_targets(&parts.join(", "))));
        }
        out.push((InfoKind::Text, strings::profile_sampling(&st.sampling)));
    }
    out.push((InfoKind::Heading, strings::PROFILE_CAUTIONS.into()));
    for c in e.cautions() {
        out.push((InfoKind::Caution, format!("- {c}")));
    }
    out
}

// ---- targets from the profile (read by the plan screen, written by `update`) --------------

/// Whether `field` is one of the targets.
pub fn is_target(field: Field) -> bool {
    matches!(
        field,
        Field::TargetPeak | Field::TargetTrough | Field::TargetAuc
    )
}

/// The targets the case's drug profile gives, in the case's unit, when it gives any.
pub fn profile_targets(app: &App) -> Option<crate::core::case::Targets> {
    let name = app.file.drug.profile.as_deref()?;
    let entry = app.profiles.get(name)?;
    let t = catalog::profile_targets(
        entry,
        app.file.drug.strategy.as_deref(),
        app.file.drug.level_unit.as_deref(),
        app.file.drug.molar_mass_g_mol,
    );
    (!t.is_empty()).then_some(t)
}

/// Before the first edit of a target in a case that takes its targets from the profile,
/// copy the profile's targets into the case, so the ones not edited stay as they were.
pub fn seed_targets(app: &App, field: Field, f: &mut CaseFile) {
    if !is_target(field) || f.targets.is_some() {
        return;
    }
    if let Some(t) = profile_targets(app) {
        f.targets = Some(TargetsFile {
            peak: t.peak.map(Vec::from),
            trough_max: t.trough_max,
            auc24: t.auc24.map(Vec::from),
        });
    }
}

/// The case file with the profile's targets written in, when the case has no `[targets]`
/// and its profile gives some (what the plan screen shows, marked as the profile's).
pub fn file_with_profile_targets(app: &App) -> Option<CaseFile> {
    if app.file.targets.is_some() {
        return None;
    }
    let mut f = app.file.clone();
    seed_targets(app, Field::TargetPeak, &mut f);
    f.targets.is_some().then_some(f)
}
