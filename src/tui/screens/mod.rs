//! The five screens, one file each, and what can be selected on each (shared with `update`).

pub mod case;
pub mod fit;
pub mod plan;
pub mod threshold;
pub mod washout;

use crate::core::casefile::CaseFile;
use crate::tui::app::{App, Screen};
use crate::tui::fields::{self, Field};

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
pub const PATIENT_FIELDS: [Field; 6] = [
    Field::Label,
    Field::Weight,
    Field::Age,
    Field::Sex,
    Field::CreatinineMgDl,
    Field::CreatinineUmolL,
];

/// The drug's fields, in screen order.
pub const DRUG_FIELDS: [Field; 4] = [
    Field::DrugName,
    Field::DrugProfile,
    Field::Unit,
    Field::MolarMass,
];

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
pub const THRESHOLD_FIELDS: [Field; 2] = [Field::ThresholdBelow, Field::ThresholdProcedure];

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
