//! Every word the bedside UI shows, in one place.

use crate::core::fit::VolumeMethod;
use crate::core::format::signed2;
use crate::core::report::{method_word, num, Report};
use crate::core::units::auc_unit;
use crate::tui::app::{App, Screen};
use crate::tui::fields::Field;
use crate::tui::figures::ThresholdFrom;

// ---- frame -------------------------------------------------------------------------------

/// The word in front of the caution banner.
pub const CAUTION_WORD: &str = "CAUTION:";
/// Shown after the title when there are unsaved changes.
pub const UNSAVED_MARK: &str = " (unsaved)";
/// The title of a case not yet saved.
pub const NEW_CASE: &str = "new case";
/// The title of the demo case.
pub const DEMO_TITLE: &str = "demo case (invented)";
/// The first message of a new case.
pub const NEW_CASE_HINT: &str =
    "New case: a adds a dose (time, then amount), then the levels below. ? lists keys.";
/// Shown when a file could not be opened.
pub const LOAD_FAILED: &str =
    "The file did not load (the error is shown); it is never saved over. Ctrl-S saves this case under another name.";
/// The title of a case whose file did not load.
pub fn did_not_load_title(path: &str) -> String {
    format!("{path} (did not load; never saved over)")
}

/// The name of a screen on the tab line.
pub fn screen_name(s: Screen) -> &'static str {
    match s {
        Screen::Case => "Case",
        Screen::Fit => "Fit",
        Screen::Plan => "Plan",
        Screen::Threshold => "Threshold",
        Screen::Washout => "Washout",
    }
}

/// The request for a larger window.
pub fn enlarge(min_w: u16, min_h: u16, w: u16, h: u16) -> String {
    format!("Please enlarge the window to at least {min_w} x {min_h} (it is {w} x {h}).")
}

/// The key hint line of a screen.
pub fn hint(s: Screen) -> &'static str {
    match s {
        Screen::Case => {
            "↑↓←→ move  Enter edit  a add  x delete  u use  p profile  n note  ? keys  q quit"
        }
        Screen::Fit => "↑↓ level  Space/u use in fit  m method  PgDn warnings  ? keys  q quit",
        Screen::Plan => {
            "+/- dose  [ ] interval  { } infusion  r route  t take suggestion  ? keys  q quit"
        }
        Screen::Threshold => {
            "↑↓ field  Enter edit  Delete clear  n note  ? keys  Ctrl-S save  q quit"
        }
        Screen::Washout => "1-5/Tab screens  n note  ? keys  Ctrl-S save  q quit",
    }
}
/// The key hint line while editing.
pub const HINT_EDITING: &str = "Enter accept  Esc cancel  ←→ Home End move  Backspace Delete erase";
/// The key hint line while the help is shown.
pub const HINT_HELP: &str = "? or Esc closes the key list";
/// The key hint line while a new row waits.
pub const HINT_ROW_DONE: &str =
    "Row done: Enter or ↑↓ go on  Ctrl-Z removes it  (letters do nothing here)";
/// Under the request for a larger window.
pub const KEYS_WAIT: &str = "Keys do nothing until then, except q or Ctrl-C to quit.";
/// The key hint line while a question waits.
pub const HINT_CONFIRM: &str = "y yes  n or Esc no";
/// The key hint line while the profile list is open.
pub const HINT_CHOOSER: &str = "↑↓ move  Enter choose  Esc keep the case as it is";
/// The key hint line while the profile's details are shown.
pub const HINT_INFO: &str = "↑↓ scroll  Esc, Enter or i closes";

/// The title of the help overlay.
pub fn help_title(s: Screen) -> String {
    format!("Keys: {} screen", screen_name(s))
}

// ---- popups ------------------------------------------------------------------------------

/// Title of the quit question.
pub const CONFIRM_QUIT_TITLE: &str = "Unsaved changes";
/// The quit question.
pub const CONFIRM_QUIT: &str =
    "The case has changes that are not saved.\ny: quit without saving\ns: save, then quit\nn, Esc or Ctrl-C: stay";
/// The quit question while a field is being typed into.
pub fn confirm_quit_typing(field: &str, typed: &str) -> String {
    format!(
        "You are typing into {field} (\"{typed}\"), not yet accepted.\ny: quit; the typing and any unsaved change are lost\ns: save the case without the typing, then quit\nn, Esc or Ctrl-C: back to the typing"
    )
}
/// Title of the delete question.
pub const CONFIRM_DELETE_TITLE: &str = "Delete a row";
/// The delete question for a dose.
pub fn confirm_delete_dose(row: usize) -> String {
    format!("Delete dose {row} from the record?\ny: delete   n or Esc: keep it")
}
/// The delete question for a level.
pub fn confirm_delete_level(row: usize) -> String {
    format!(
        "Delete level {row}? (u leaves it out of the fit instead)\ny: delete   n or Esc: keep it"
    )
}
/// Title of the save-as prompt.
pub const SAVE_AS_TITLE: &str = "Save the case";
/// The save-as prompt.
pub const SAVE_AS_PROMPT: &str = "File name (TOML), then Enter; Esc cancels:";
/// Said when saving over a file that failed to load.
pub const SAVE_OVER_BROKEN: &str =
    "The file named here failed to load; saving to it replaces what it holds.";

// ---- messages ----------------------------------------------------------------------------

/// A number is needed.
pub const ENTER_A_NUMBER: &str = "enter a number";
/// Text that is not a number.
pub fn not_a_number(t: &str) -> String {
    format!("\"{t}\" is not a number")
}
/// A below-the-limit value written wrongly.
pub const BELOW_LIMIT_FORM: &str =
    "write a level below the assay's limit as <0.5 (the limit after <)";
/// Text that is not a range.
pub const NOT_A_RANGE: &str = "write a range as low-high, for example 5-10";
/// Text that is not a date-time.
pub fn not_a_datetime(t: &str) -> String {
    if t.is_empty() {
        "write the time as 2027-03-02 08:00".into()
    } else {
        format!("\"{t}\": write the time as 2027-03-02 08:00")
    }
}
/// A date-time that does not exist.
pub fn no_such_datetime(t: &str) -> String {
    format!("\"{t}\" is not a real date and time")
}
/// Procedure time without a threshold.
pub const THRESHOLD_FIRST: &str = "set the threshold level first";
/// Typing into a choice.
pub const CHOICE_NOT_TYPED: &str = "this field is chosen with Enter or Space, not typed";
/// Stepping a typed field.
pub const TYPED_NOT_CHOICE: &str = "this field is typed: press Enter";
/// A row that is gone.
pub const NO_SUCH_ROW: &str = "that row no longer exists";
/// Cancelled edit.
pub const EDIT_CANCELLED: &str = "Edit cancelled; nothing changed.";
/// Cancelled question.
pub const NOTHING_DONE: &str = "Nothing changed.";
/// A new row was abandoned.
pub const ROW_NOT_ADDED: &str = "Row not added.";
/// No file name typed.
pub const TYPE_A_FILE_NAME: &str = "type a file name";
/// `a` away from the tables.
pub const ADD_WHERE: &str = "Move down to the doses or the levels to add a row there.";
/// `x` away from the tables.
pub const DELETE_WHERE: &str = "Select a dose or level row to delete it.";
/// `u` away from a level.
pub const TOGGLE_WHERE: &str = "Select a level to include it in or leave it out of the fit.";
/// A new row could not get a time.
pub const NO_TIME_FOR_ROW: &str =
    "No time could be proposed for the new row; check the last row's time.";
/// After `a` on the doses.
pub const NEW_DOSE_HINT: &str =
    "New dose: type its time (or ← to edit the proposed one), Enter, then its amount. Esc drops the row.";
/// After `a` on the levels.
pub const NEW_LEVEL_HINT: &str =
    "New level: type its time (or ← to edit the proposed one), Enter, then its value. Esc drops the row.";
/// Nothing to clear.
pub const NOTHING_TO_CLEAR: &str = "Nothing to clear.";
/// A plan was made from the record.
pub const PLAN_STARTED: &str =
    "A plan was started from the last recorded dose; adjust it with + - [ ] { } r.";
/// Dose cannot go lower.
pub const DOSE_AT_LEAST: &str = "the dose cannot go lower";
/// Interval ladder ended.
pub const NO_FURTHER_INTERVAL: &str =
    "no usual interval further that way; press Enter on Interval to type one";
/// Infusion keys on a non-infusion plan.
pub const NOT_AN_INFUSION: &str = "the plan is not an infusion; press r to change the route";
/// Infusion cannot go lower.
pub const INFUSION_AT_LEAST: &str = "the infusion time cannot go below 0.25 h";

/// A field's new value.
pub fn now_is(name: &str, value: &str) -> String {
    if value.is_empty() {
        format!("{name}: cleared.")
    } else {
        format!("{name}: {value}.")
    }
}
/// A field cleared.
pub fn cleared(name: &str) -> String {
    format!("{name}: cleared.")
}
/// A field that must keep a value.
pub fn cannot_clear(name: &str) -> String {
    format!("{name} cannot be empty; press Enter to change it.")
}
/// Typed text refused.
pub fn not_accepted(name: &str, why: &str) -> String {
    format!("{name} not changed: {why}")
}
/// After deleting a dose.
pub fn dose_deleted(row: usize) -> String {
    format!("Dose {row} deleted (Ctrl-Z undoes).")
}
/// After deleting a level.
pub fn level_deleted(row: usize) -> String {
    format!("Level {row} deleted (Ctrl-Z undoes).")
}
/// After toggling a level's use.
pub fn level_use_now(row: usize, used: bool) -> String {
    if used {
        format!("Level {row} is used in the fit (Ctrl-Z undoes).")
    } else {
        format!("Level {row} is LEFT OUT of the fit, kept on record (Ctrl-Z undoes).")
    }
}
/// After a field of a new row, the one typed next.
pub fn next_in_row(said: &str, next: &str, unit: &str) -> String {
    let unit = if unit.is_empty() {
        String::new()
    } else {
        format!(" ({unit})")
    };
    format!("{said} Now type {next}{unit}; Esc drops the row.")
}
/// After the last field of a new dose.
pub fn dose_added(row: usize, what: &str) -> String {
    format!("Dose {row} added: {what}.")
}
/// After the last field of a new level.
pub fn level_added(row: usize, what: &str) -> String {
    format!("Level {row} added: {what}.")
}
/// A new dose with no amount typed.
pub const NO_AMOUNT: &str = "amount not given";
/// What the keys do once a new row is done.
pub const ROW_DONE_KEYS: &str = "Enter goes on; Ctrl-Z removes the row.";
/// A letter typed once a new row is done.
pub fn stray_key(ch: char) -> String {
    let shown = if ch == ' ' {
        "Space".to_string()
    } else {
        format!("\"{ch}\"")
    };
    format!("{shown} did nothing: the new row is done. Enter goes on; Ctrl-Z removes the row.")
}
/// After Enter on a finished row.
pub const ROW_KEPT: &str = "Row kept. a adds another; ↓ moves on.";
/// A row whose time moved it.
pub fn row_renumbered(dose: bool, row: usize) -> String {
    let what = if dose { "dose" } else { "level" };
    format!("Rows are kept in time order: it is now {what} {row}.")
}
/// Ctrl-Z with nothing to undo.
pub const NOTHING_TO_UNDO: &str = "Nothing to undo.";
/// After Ctrl-Z.
pub fn undone(what: &str, left: usize) -> String {
    let what = what.trim_end_matches('.');
    let what = match what.split_once(" (Ctrl-Z undoes)") {
        Some((head, tail)) => format!("{head}{tail}"),
        None => what.to_string(),
    };
    match left {
        0 => format!("Undone, the case is as it was before: \"{what}\"."),
        _ => format!(
            "Undone, the case is as it was before: \"{what}\". Ctrl-Z again undoes the change before."
        ),
    }
}
/// The unit cannot be converted without a molar mass.
pub const UNIT_NEEDS_MASS_FIRST: &str =
    "Give the molar mass first: the values must be converted, and a molar unit needs it.";
/// After stepping the unit with values converted.
pub fn unit_converted(from: &str, to: &str, factor: &str) -> String {
    format!("Level unit now {to}: every level, target and threshold converted from {from} (x {factor}); Ctrl-Z undoes.")
}
/// After stepping the unit with nothing to convert.
pub fn unit_now(to: &str) -> String {
    format!("Level unit now {to} (nothing to convert).")
}
/// A dose far below the others (the rule is `rows::DOSE_FAR_BELOW_FRACTION`).
pub fn dose_far_below(row: usize, amount: &str, median: &str) -> String {
    format!("Check dose {row}: {amount} mg is under a quarter of the other doses (median {median} mg) - is it a level typed as a dose? Ctrl-Z undoes.")
}
/// After saving.
pub fn saved_to(path: &str) -> String {
    format!("Saved to {path}.")
}
/// A save that could not keep the file's comments (they would have changed the case).
pub fn saved_without_comments(path: &str) -> String {
    format!("Saved to {path}, but its # comments could not be kept: check the file.")
}
/// Said on opening a file that holds comments.
pub const COMMENTS_KEPT: &str =
    "This file has # comments: saving from here keeps them (fields are written in ebb's order).";
/// The case's file did not load: not saved over it.
pub fn save_blocked(path: &str) -> String {
    format!("{path} did not load when opened, so ebb will not save over it: type another name (save as).")
}
/// The case's file is read-only.
pub fn save_read_only(path: &str) -> String {
    format!("{path} is read-only, so it was not replaced: type another name (save as), or make it writable first.")
}
/// The folder is read-only.
pub fn save_folder_read_only(dir: &str) -> String {
    format!("The folder {dir} is read-only; nothing was written: type a name in a folder you can write (save as).")
}
/// The path is not a regular file.
pub fn save_not_regular(path: &str, kind: &str) -> String {
    format!(
        "{path} is {kind}, not a regular file; nothing was written: type another name (save as)."
    )
}
/// A failed save.
pub fn save_failed(path: &str, why: &str) -> String {
    format!("Not saved to {path}: {why}")
}
/// Title of the overwrite question.
pub const CONFIRM_OVERWRITE_TITLE: &str = "Changed on disk";
/// Title of the question about a file already there.
pub const CONFIRM_EXISTS_TITLE: &str = "File exists";
/// The question about a file already there, not the one the case came from.
pub fn confirm_exists(path: &str) -> String {
    format!(
        "{path} already exists and is not the file\nthis case was opened from.\ny: replace it with this case   n or Esc: keep it"
    )
}
/// Title of the question about replacing a note.
pub const CONFIRM_NOTE_TITLE: &str = "Replace the note?";
/// The question about replacing a note ebb did not write (`foreign`) or that was edited.
pub fn confirm_replace_note(path: &str, foreign: bool) -> String {
    let what = if foreign {
        "was not written by ebb"
    } else {
        "was edited since ebb wrote it"
    };
    format!("{path}\n{what}.\ny: replace it with the new note   n or Esc: keep it")
}
/// The answer to keep the note on disk.
pub fn note_not_replaced(path: &str) -> String {
    format!("Note not written: {path} is kept as it is; give the note another name to keep both.")
}
/// The note's folder is read-only.
pub fn note_folder_read_only(dir: &str) -> String {
    format!(
        "The folder {dir} is read-only; no note written: type a name in a folder you can write."
    )
}
/// Title of the recovery question.
pub const CONFIRM_RECOVER_TITLE: &str = "Unsaved changes found";
/// The recovery question.
pub fn confirm_recover(path: &str) -> String {
    format!(
        "ebb was stopped with unsaved changes to this case;\nthey were kept in {path}.\ny: load them (then Ctrl-S saves them)\nn or Esc: keep the case as saved"
    )
}
/// After loading a recovery file.
pub fn recovered(path: &str) -> String {
    format!("Loaded the unsaved changes from {path}; Ctrl-S saves them (and removes that file).")
}
/// After declining a recovery file.
pub fn recovery_left(path: &str) -> String {
    format!("{path} is left as it is; the next save of this case removes it.")
}
/// The overwrite question: the file changed since the case was opened.
pub fn confirm_overwrite(path: &str) -> String {
    format!(
        "{path} changed on disk since the case was opened.\ny: overwrite it with this case   n or Esc: keep it"
    )
}
/// The answer to keep the file on disk.
pub fn not_overwritten(path: &str) -> String {
    format!("Not saved: {path} is kept as it is on disk; save under another name to keep both.")
}

fn plan_text(app: &App, f: impl Fn(&crate::core::casefile::PlanFile) -> String) -> String {
    app.file.plan.as_ref().map(f).unwrap_or_default()
}
/// After changing the plan dose.
pub fn plan_dose_now(app: &App) -> String {
    plan_text(app, |p| format!("Plan dose {} mg.", num(p.dose_mg)))
}
/// After changing the interval.
pub fn plan_interval_now(app: &App) -> String {
    plan_text(app, |p| format!("Plan interval {} h.", num(p.interval_h)))
}
/// After changing the infusion time.
pub fn plan_infusion_now(app: &App) -> String {
    plan_text(app, |p| {
        format!(
            "Plan infusion over {} h.",
            p.infusion_h.map(num).unwrap_or_default()
        )
    })
}
/// After changing the route.
pub fn plan_route_now(app: &App) -> String {
    plan_text(app, |p| format!("Plan route {}.", p.route))
}

// ---- fields ------------------------------------------------------------------------------

/// The derived body size and kidney function lines under the patient's fields.
pub fn derived_patient(
    ideal: Option<f64>,
    adjusted: Option<f64>,
    bmi: Option<f64>,
    crcl: Option<f64>,
) -> Vec<String> {
    let mut out = Vec::new();
    let mut size = Vec::new();
    if let Some(x) = ideal {
        size.push(format!("IBW {} kg (Devine)", num(x)));
    }
    if let Some(x) = adjusted {
        size.push(format!("AdjBW {} kg", num(x)));
    }
    if let Some(x) = bmi {
        size.push(format!("BMI {}", num(x)));
    }
    if !size.is_empty() {
        out.push(format!("  {}", size.join(", ")));
    }
    if let Some(x) = crcl {
        out.push(format!("  CrCl {} mL/min (Cockcroft-Gault on TBW)", num(x)));
    }
    out
}

/// "yes" (a level in use).
pub const YES: &str = "yes";
/// "no" (a level left out).
pub const NO: &str = "no";

/// A field's label and unit on screen.
pub fn field_label(f: Field) -> (&'static str, &'static str) {
    match f {
        Field::Label => ("Label", ""),
        Field::Weight => ("Weight", "kg"),
        Field::Age => ("Age", "years"),
        Field::Sex => ("Sex", ""),
        Field::CreatinineMgDl => ("Creatinine", "mg/dL"),
        Field::CreatinineUmolL => ("Creatinine", "umol/L (or mg/dL, not both)"),
        Field::Height => ("Height", "cm"),
        Field::AlbuminGDl => ("Albumin", "g/dL"),
        Field::AlbuminGL => ("Albumin", "g/L (or g/dL, not both)"),
        Field::Dialysis => ("Haemodialysis", "(Enter steps)"),
        Field::DrugName => ("Name", ""),
        Field::Unit => ("Level unit", "(Enter steps)"),
        Field::MolarMass => ("Molar mass", "g/mol (molar units)"),
        Field::DrugProfile => ("Profile", "(p chooses, i shows)"),
        Field::DoseTime(_) => ("Time", ""),
        Field::DoseAmount(_) => ("Amount", "mg"),
        Field::DoseRoute(_) => ("Route", ""),
        Field::DoseInfusion(_) => ("Infusion", "h"),
        Field::DoseF(_) => ("F", ""),
        Field::LevelTime(_) => ("Time", ""),
        Field::LevelValue(_) => ("Value", ""),
        Field::LevelUse(_) => ("Use", ""),
        Field::LevelNote(_) => ("Note", ""),
        Field::PlanDose => ("Dose", "mg"),
        Field::PlanInterval => ("Interval", "h"),
        Field::PlanRoute => ("Route", ""),
        Field::PlanInfusion => ("Infusion", "h"),
        Field::PlanF => ("Oral F", ""),
        Field::PlanStart => ("First dose", ""),
        Field::TargetPeak => ("Peak target", ""),
        Field::TargetTrough => ("Trough max", ""),
        Field::TargetAuc => ("AUC24 target", ""),
        Field::ThresholdBelow => ("Below", ""),
        Field::ThresholdProcedure => ("Procedure", ""),
        Field::ResumeBelow => ("Resume below", ""),
        Field::ResumeAfter => ("Resume after", "h after the procedure"),
        Field::TimeZone => ("Time zone", "(IANA name, e.g. Europe/Paris)"),
        Field::SwitchTo => ("Next agent", "(free text)"),
        Field::SwitchBelow => ("Start below", ""),
        Field::SwitchHalfLives => ("or after", "half-lives (one of the two)"),
        Field::Strategy => ("Strategy", ""),
        Field::Model => ("Model", ""),
    }
}

/// A field's name in messages.
pub fn field_name(f: Field) -> String {
    let (label, _) = field_label(f);
    match f {
        Field::DoseTime(i)
        | Field::DoseAmount(i)
        | Field::DoseRoute(i)
        | Field::DoseInfusion(i)
        | Field::DoseF(i) => format!("Dose {} {}", i + 1, label.to_lowercase()),
        Field::LevelTime(i) | Field::LevelValue(i) | Field::LevelUse(i) | Field::LevelNote(i) => {
            format!("Level {} {}", i + 1, label.to_lowercase())
        }
        Field::PlanDose | Field::PlanInterval | Field::PlanRoute | Field::PlanInfusion => {
            format!("Plan {}", label.to_lowercase())
        }
        Field::ThresholdBelow => "Threshold".into(),
        Field::ThresholdProcedure => "Procedure time".into(),
        Field::ResumeBelow => "Resume below".into(),
        Field::ResumeAfter => "Resume after".into(),
        Field::SwitchTo => "Next agent".into(),
        Field::SwitchBelow => "Next agent: start below".into(),
        Field::SwitchHalfLives => "Next agent: start after".into(),
        _ => label.to_string(),
    }
}

// ---- case screen -------------------------------------------------------------------------

/// Heading.
pub const PATIENT: &str = "Patient";
/// Heading.
pub const DRUG: &str = "Drug";
/// Heading of the case's clock.
pub const CLOCK: &str = "Clock";
/// Heading of the switch to another agent.
pub const SWITCH: &str = "Switch to another agent (results on screen 5)";
/// Heading.
pub const DOSES: &str = "Doses given";
/// Heading of the levels table.
pub fn levels_heading(unit: &str) -> String {
    format!("Levels measured ({unit})")
}
/// Dose table columns.
pub const DOSE_COLUMNS: [&str; 6] = ["#", "time", "amount", "route", "infusion", "F"];
/// Level table columns.
pub const LEVEL_COLUMNS: [&str; 5] = ["#", "time", "value", "use", "note"];
/// Beside a dose far below the others (`rows::DOSE_FAR_BELOW_FRACTION`).
pub const DOSE_FAR_BELOW_MARK: &str = "⚠ far below the other doses";
/// The add-a-dose line.
pub const ADD_DOSE: &str = "+ add a dose (a)";
/// The add-a-level line.
pub const ADD_LEVEL: &str = "+ add a level (a)";
/// Before an invalid case's problem.
pub const CASE_PROBLEM: &str = "✗ Check the case:";
/// Before the error of a file that could not be opened.
pub const COULD_NOT_OPEN: &str = "✗ Could not open:";
/// Before a fit that cannot be made yet.
pub const NO_FIT_YET: &str = "No fit yet:";

/// The fit in one line under the case tables.
pub fn fit_summary(r: &Report) -> String {
    let f = &r.fit;
    let terminal = if f.peripheral.is_some() {
        " (terminal, two compartments)"
    } else {
        ""
    };
    if f.level_rows.is_empty() {
        return format!(
            "Fit: k {} /h, half-life {} h{terminal}, population model alone (no level) — screen 2 has the details",
            num(f.k_per_h),
            num(f.half_life_h)
        );
    }
    format!(
        "Fit: k {} /h, half-life {} h{terminal}, from levels {} ({}) — screen 2 has the details",
        num(f.k_per_h),
        num(f.half_life_h),
        f.level_rows
            .iter()
            .map(|x| x.to_string())
            .collect::<Vec<_>>()
            .join(", "),
        method_word(f.method)
    )
}

// ---- fit screen --------------------------------------------------------------------------

/// The fit heading.
pub fn fit_heading(method: &str, rows: &str, dose: usize) -> String {
    format!("{} fit, levels {rows} (dose {dose})", method_word(method))
}
/// Label.
pub const K: &str = "k";
/// Label.
pub const HALF_LIFE: &str = "half-life";
/// Label of the model's compartments on the fit screen.
pub const COMPARTMENTS: &str = "model";
/// Label of the peripheral volume and the intercompartmental clearance on the fit screen.
pub const PERIPHERAL: &str = "V2, Q";

/// A two-compartment fit in a line short enough for the fit screen's figures.
pub fn two_compartments(distribution_h: &str) -> String {
    format!("2-cmt, distribution t½ {distribution_h} h")
}

/// The peripheral compartment, and which figures below are the terminal or central ones.
pub fn peripheral(v2: &str, q: &str) -> String {
    format!("{v2} L, {q} L/h; k, t½ terminal")
}
/// Label.
pub const R_SQUARED: &str = "r²";
/// Label.
pub const VOLUME: &str = "volume";
/// Label.
pub const CLEARANCE: &str = "clearance";
/// r² of a two-point fit.
pub const NOT_FOR_TWO: &str = "— (two levels)";
/// A figure that cannot be known.
pub const NOT_KNOWN: &str = "not known";
/// No interval.
pub const NO_INTERVAL: &str = "no 95 % interval";
/// Beside a volume the population model holds at its typical value.
pub const VOLUME_FIXED: &str = "the model's value: it does not vary";
/// A 95 % interval.
pub fn ci95(lo: &str, hi: &str) -> String {
    format!("(95 % {lo}–{hi})")
}
/// The population's 90 % range (before any level).
pub fn pi90(lo: &str, hi: &str) -> String {
    format!("(90 % pop. {lo}–{hi})")
}
/// The fit heading before any level.
pub const FIT_HEADING_PRIOR: &str = "Population model alone: no level yet";
/// How the volume was found.
pub fn volume_how(m: Option<&str>, pre_dose_row: Option<usize>) -> String {
    match (m, pre_dose_row) {
        (Some(m), Some(r)) if m == VolumeMethod::PreDoseLevel.name() => {
            format!("by pre-dose level {r}")
        }
        (Some(m), _) => format!("by {m}"),
        (None, _) => "no dose amounts".into(),
    }
}
/// Heading.
pub const LEVELS_AND_RESIDUALS: &str = "Levels                   status     resid. ln";
/// Level status.
pub const IN_FIT: &str = "in fit";
/// Level status.
pub const NOT_IN_FIT: &str = "other dose";
/// Level status.
pub const LEFT_OUT: &str = "left out";
/// Level status: the pre-dose level the volume came from (Sawchuk-Zaske).
pub const PRE_DOSE: &str = "pre-dose V";
/// Heading.
pub const WARNINGS: &str = "Warnings";
/// The last line of a cut panel.
pub fn more_lines(n: usize) -> String {
    format!(" ↓ {n} more lines: PgDn ")
}
/// The first line of a panel scrolled down.
pub const MORE_ABOVE: &str = " ↑ more above: PgUp ";
/// No warnings.
pub const NO_WARNINGS: &str = "none";
/// The reason a screen has no figures.
pub fn no_figures(why: &str) -> String {
    format!("No figures yet. {why}")
}
/// The drug profile refuses first-order projections.
pub fn refused(why: &str) -> String {
    format!("drug.profile: the drug's profile refuses these projections: {why}")
}
/// No figures, no reason known.
pub const NO_FIGURES_PLAIN: &str = "No figures yet.";

// ---- charts ------------------------------------------------------------------------------

/// The unit note at the start of a legend.
pub fn chart_unit(unit: &str) -> String {
    format!("{unit}, log scale")
}
/// Chart too small.
pub const CHART_NO_ROOM: &str = "(no room or nothing to chart)";
/// Legend.
pub const LEGEND_MODEL: &str = "model";
/// Legend.
pub const LEGEND_FITTED: &str = "fitted";
/// Legend.
pub const LEGEND_PLAN: &str = "plan";
/// Legend.
pub const LEGEND_IN_FIT: &str = "in fit";
/// Legend.
pub const LEGEND_NOT_IN_FIT: &str = "other dose";
/// Legend.
pub const LEGEND_LEFT_OUT: &str = "left out";
/// Legend.
pub const LEGEND_HALF_LIVES: &str = "half-lives";
/// Legend.
pub const LEGEND_REACHED: &str = "below";
/// Legend.
pub const LEGEND_THRESHOLD: &str = "threshold";
/// Legend.
pub const LEGEND_TROUGH_TARGET: &str = "trough max";
/// Legend.
pub const LEGEND_PROCEDURE: &str = "procedure";
/// Case screen: the heading of the haemodialysis sessions (read-only on screen).
pub const DIALYSIS_SESSIONS: &str =
    "Dialysis sessions (marked, not modelled; edit them in the file)";

/// Case screen: one haemodialysis session, its row, start, end and hours.
pub fn dialysis_session_row(row: usize, start: &str, end: &str, hours: &str) -> String {
    format!("  {row:<3} {start} to {end}  {hours} h")
}

/// Chart legend: a haemodialysis session, shaded (marked on the course, not modelled).
pub const LEGEND_DIALYSIS: &str = "dialysis (marked, not modelled)";
/// The shade of a haemodialysis session in the chart's free cells.
pub const BAND_SHADE: &str = "░";
/// The time axis under a haemodialysis session.
pub const BAND_AXIS: &str = "━";
/// Legend.
pub const LEGEND_BAND: &str = "95 % band";
/// Legend.
pub const LEGEND_SWITCH: &str = "next agent may start";
/// Marker of the start of the next agent.
pub const MARK_SWITCH: &str = "◆";
/// Marker of a level in the fit.
pub const MARK_IN_FIT: &str = "●";
/// Marker of a level used but outside the fitted interval.
pub const MARK_NOT_IN_FIT: &str = "○";
/// Marker of a level left out.
pub const MARK_LEFT_OUT: &str = "×";
/// Marker of the threshold crossing.
pub const MARK_REACHED: &str = "▼";

// ---- plan screen -------------------------------------------------------------------------

/// Heading.
pub const REGIMEN: &str = "Regimen and targets";
/// Heading.
pub const AT_STEADY_STATE: &str = "At steady state";
/// No plan.
pub const NO_PLAN: &str = "No plan yet: press + or ] to start one from the last dose.";
/// No plan chart.
pub const NO_PLAN_CHART: &str = "The course to steady state needs a plan and a volume.";
/// Label.
pub const PEAK: &str = "Peak";
/// The peak at the strategy's sampling time, `after` hours after the end of the infusion.
pub fn peak_sampled(after: &str) -> String {
    format!(" +{after} h")
}
/// Beside the end-of-infusion peak when the target is on a later one.
pub const PEAK_AT_END: &str = "end of infusion";
/// Beside the peak of a bolus or an instant oral dose when the target is on a later one.
pub const PEAK_JUST_AFTER: &str = "just after the dose";
/// Beside an absorbed oral peak: when it falls after the dose.
pub fn peak_absorbed(after: &str) -> String {
    format!("{after} after the dose (absorbed)")
}
/// The standard level 12 h after a dose (lithium), as a figure's short name.
pub const LEVEL_12H: &str = "12-h";
/// Hours per interval at or below the trough ceiling.
pub const DRUG_FREE: &str = "Drug-free";
/// Label.
pub const TROUGH: &str = "Trough";
/// Label.
pub const AUC24: &str = "AUC24";
/// Label.
pub const ACCUMULATION: &str = "Accumulation";
/// Target met.
pub const MET: &str = "✓ met";
/// Target not met.
pub const NOT_MET: &str = "✗ NOT met";
/// No target given.
pub const NO_TARGET: &str = "(no target)";
/// Time-to-steady-state label.
pub fn ss_after(pct: &str) -> String {
    format!("{pct} % of steady state after ")
}
/// The first plan dose when the case does not give it.
pub fn start_by_default(when: &str) -> String {
    format!("{when} (default)")
}

// ---- threshold screen --------------------------------------------------------------------

/// Heading.
pub const THRESHOLD_HEADING: &str = "Threshold";
/// Heading.
pub const WHEN_BELOW: &str = "When the level is below it";
/// No threshold set.
pub const NO_THRESHOLD: &str =
    "No threshold set: press Enter on Below and type the level it must fall under.";
/// No procedure time.
pub const NO_PROCEDURE: &str = "Set a procedure time to see the last plan dose that may be given.";
/// No interval for the range, by the fit's method: a two-point fit has none; a fit to the dose
/// record may have one too wide to bound the time; a log-linear fit's may reach zero.
pub fn no_range(method: &str) -> &'static str {
    match method {
        "two-point" => "95 % range not known (k has no interval: three or more levels give one).",
        "dose-history" | "bayesian" | "population" => {
            "95 % range not known (the spread of k and V is too wide to bound it)."
        }
        _ => "95 % range not known (the interval of k reaches zero).",
    }
}
/// The clock time it is below.
pub fn below_at(when: &str, span: &str) -> String {
    format!("{when}, in {span}")
}
/// Already below.
pub fn already_below(when: &str, c0: &str, unit: &str) -> String {
    format!("Already at or below it at {when} ({c0} {unit}).")
}
/// Words for where the count starts.
pub fn threshold_from(from: Option<ThresholdFrom>) -> &'static str {
    match from {
        Some(ThresholdFrom::LastDoseEnd) => "the end of the last dose",
        Some(ThresholdFrom::LastLevel) => "the last level",
        Some(ThresholdFrom::LastFittedLevel) | None => "the last fitted level",
    }
}
/// Where the count starts.
pub fn counted_from(from: &str, when: &str, c0: &str, unit: &str) -> String {
    format!("counted from {from}, {when} ({c0} {unit} then), with no further dose")
}
/// The 95 % range.
pub fn range95(a: &str, b: &str) -> String {
    format!("95 % range: {a} to {b}")
}
/// Procedure heading.
pub fn procedure_heading(when: &str) -> String {
    format!("Procedure {when}")
}
/// The last plan dose that may be given.
pub fn last_plan_dose(when: &str, level: &str, unit: &str) -> String {
    format!("Last plan dose that may still be given: {when} (level at the procedure {level} {unit}, below ✓).")
}
/// No plan dose may be given.
pub fn hold_every_dose(level: &str, unit: &str) -> String {
    format!("Hold every plan dose: even the first leaves it above the threshold (with none: {level} {unit}).")
}
/// No plan dose falls before the procedure.
pub fn no_plan_dose_before(level: &str, unit: &str) -> String {
    format!("No plan dose falls before the procedure (level then {level} {unit}, below ✓).")
}
/// The first plan dose would still be infusing at the procedure.
pub fn first_dose_still_running(level: &str, unit: &str) -> String {
    format!("Hold every plan dose before it: the first would still be infusing at the procedure (with none: {level} {unit}).")
}
/// Not below even holding.
pub fn not_below_even_holding(level: &str, unit: &str) -> String {
    format!("✗ NOT below at the procedure even with every plan dose held ({level} {unit} then).")
}
/// When the regimen may resume after the procedure.
pub fn resume_from(when: &str, level: Option<&str>, unit: &str) -> String {
    match level {
        Some(l) => format!("The regimen may resume from {when} (level then {l} {unit})."),
        None => format!("The regimen may resume from {when}."),
    }
}
/// Level at the procedure, no plan.
pub fn level_at_procedure(level: &str, unit: &str, below: bool) -> String {
    if below {
        format!("Level at the procedure {level} {unit}: below ✓.")
    } else {
        format!("Level at the procedure {level} {unit}: ✗ NOT below.")
    }
}

// ---- washout screen ----------------------------------------------------------------------

/// Heading.
pub fn washout_heading(from: &str, half_life: &str) -> String {
    format!("From {from}, each half-life ({half_life})")
}
/// The washout heading of a two-compartment fit: by its terminal half-life (the level in
/// each row is the model's, which falls faster at first).
pub fn washout_heading_terminal(from: &str, half_life: &str) -> String {
    format!("From {from}, each terminal half-life ({half_life}; the levels are the two-compartment model's)")
}
/// Table heading.
pub const WASHOUT_COLUMNS: [&str; 4] = ["n", "when", "level", "left"];
/// No threshold.
pub const WASHOUT_NO_THRESHOLD: &str =
    "Set a threshold on screen 4 to see when a following agent may start.";
/// The threshold crossing.
pub fn washout_threshold(below: &str, unit: &str, when: &str) -> String {
    format!("Below the threshold of {below} {unit} at {when}: a following agent may start from then (per local protocol).")
}
/// Already below.
pub fn washout_already_below(below: &str, unit: &str, when: &str) -> String {
    format!("Already below the threshold of {below} {unit} at {when}.")
}

// ---- drug profiles -----------------------------------------------------------------------

/// Title of the profile list.
pub const CHOOSER_TITLE: &str = "Drug profile: choose one (Enter), Esc keeps the case as it is";
/// The list line for no profile.
pub const NO_PROFILE: &str = "none";
/// What no profile means.
pub const NO_PROFILE_MEANS: &str = "No drug profile: the case gives its own targets, and no drug-specific warnings, sampling advice or population values are used.";
/// Title of the profile overlay.
pub const INFO_TITLE: &str = "Drug profile (↑↓ scroll, Esc closes)";
/// The last line of a cut overlay.
pub const MORE_BELOW: &str = " ↓ more below ";
/// Heading of the cautions.
pub const PROFILE_CAUTIONS: &str = "Cautions";
/// The profile's name and origin.
pub fn profile_title(display: &str, name: &str, origin: &str) -> String {
    format!("{display} (profile \"{name}\", {origin})")
}
/// The profile's unit and typical half-life.
pub fn profile_levels(unit: &str, lo: &str, hi: &str) -> String {
    format!("Levels in {unit}; typical adult half-life {lo}–{hi} h with normal organ function.")
}
/// The distribution or absorption window.
pub fn profile_valid_after(h: &str) -> String {
    format!("A level is valid from {h} h after the end of a dose (distribution or absorption).")
}
/// A kinetics limit.
pub fn profile_kinetics(why: &str) -> String {
    format!("- Kinetics: {why}")
}
/// The default strategy.
pub fn profile_strategy(label: &str) -> String {
    format!("Default targets: {label}")
}
/// The heading of the strategy the case chose.
pub fn profile_chosen_strategy(label: &str) -> String {
    format!("Chosen strategy: {label}")
}
/// The targets of the strategy.
pub fn profile_targets(list: &str) -> String {
    format!("{list} (used unless the case sets its own)")
}
/// A peak target.
pub fn target_peak(lo: &str, hi: &str, unit: &str) -> String {
    format!("peak {lo}–{hi} {unit}")
}
/// A trough target.
pub fn target_trough(v: &str, unit: &str) -> String {
    format!("trough <= {v} {unit}")
}
/// An AUC24 target.
pub fn target_auc(lo: &str, hi: &str, unit: &str) -> String {
    format!("AUC24 {lo}–{hi} {}", auc_unit(unit))
}
/// A therapeutic range (shown, not checked).
pub fn target_range(lo: &str, hi: &str, unit: &str) -> String {
    format!("range {lo}–{hi} {unit} (shown, not checked)")
}
/// The sampling advice.
pub fn profile_sampling(text: &str) -> String {
    format!("Sampling: {text}")
}
/// After choosing no profile.
pub const NO_PROFILE_CHOSEN: &str = "No drug profile: the case's own targets only.";
/// After choosing a profile.
pub fn profile_chosen(display: &str, unit_now: Option<&str>) -> String {
    match unit_now {
        Some(u) => format!(
            "Profile {display} chosen; levels now in {u} (i shows its details; Ctrl-Z undoes)."
        ),
        None => format!("Profile {display} chosen (i shows its details; Ctrl-Z undoes)."),
    }
}
/// Under the plan's targets when they contradict the dosing strategy (at most 41 columns).
pub const TARGETS_NOT_STRATEGY: &str = "✗ targets not the strategy's: screen 2";
/// Under the targets when the interval is another strategy's (warning `interval-not-strategy`).
pub const INTERVAL_NOT_STRATEGY: &str = "✗ interval not the strategy's: screen 2";
/// Stepping the strategy of a case with no profile.
pub const STRATEGY_NEEDS_PROFILE: &str =
    "A dosing strategy belongs to a drug profile; choose one with p first.";
/// The strategy after a step: its name and label; whether it is the profile's default; and
/// whether the case's own targets stay in force.
pub fn strategy_now(name: &str, label: &str, is_default: bool, own_targets: bool) -> String {
    let which = if is_default {
        format!("Strategy: the profile's default, {name} ({label})")
    } else {
        format!("Strategy: {name} ({label})")
    };
    if own_targets {
        format!("{which}; its intervals and sampling apply, the case's own targets stay.")
    } else {
        format!("{which}; its targets, intervals and sampling apply.")
    }
}
/// How the case screen shows the strategy beside its name: the label, or the default's.
pub fn strategy_shown(label: &str, is_default: bool) -> String {
    if is_default {
        format!("default: {label}")
    } else {
        label.to_string()
    }
}
/// Stepping the population model of a case with no profile, or a profile without one.
pub const MODEL_NEEDS_PROFILE: &str =
    "A population model belongs to a drug profile that has one; choose a profile with p first.";
/// Stepping the population model of a case whose profile has none.
pub fn no_model_in(display: &str) -> String {
    format!("The {display} profile has no population model: Bayesian and population estimates are not available for it.")
}
/// The model after a step: its name and label; whether it is the profile's default (and why);
/// how it is used.
pub fn model_now(name: &str, label: &str, is_default: bool, reason: Option<&str>) -> String {
    let which = if is_default {
        format!("Model: the profile's default, {name} ({label})")
    } else {
        format!("Model: {name} ({label})")
    };
    match reason.filter(|_| is_default) {
        Some(why) => format!("{which}, because {why}; for Bayesian and population estimates."),
        None => format!("{which}; for Bayesian and population estimates."),
    }
}
/// How the case screen shows the model beside its name: its label, or the default's.
pub fn model_shown(label: &str, is_default: bool) -> String {
    strategy_shown(label, is_default)
}
/// `i` without a profile.
pub const NO_PROFILE_YET: &str =
    "The case has no drug profile; choose one with p on the case screen.";
/// Clearing a target that comes from the profile.
pub const TARGET_FROM_PROFILE: &str =
    "This target comes from the drug profile; type a value (Enter) to set the case's own.";
/// The unit of a target that comes from the profile.
pub fn from_profile(unit: &str) -> String {
    format!("{unit} (profile)")
}

// ---- fit method --------------------------------------------------------------------------

/// The automatic choice of method.
pub const AUTO: &str = "auto";
/// The method line of the fit screen.
pub fn method_line(chosen: Option<&str>, used: Option<&str>) -> String {
    match (chosen, used) {
        (None, Some(u)) => format!("auto: {}", method_word(u)),
        (None, None) => "auto".into(),
        (Some(c), _) => format!("{} (chosen)", method_word(c)),
    }
}
/// The key for the method, after the method line.
pub const METHOD_KEY: &str = "[m]";
/// Label.
pub const METHOD: &str = "method";
/// After switching the method.
pub fn fit_method_now(chosen: Option<&str>, used: &str) -> String {
    match chosen {
        None if used.is_empty() => "Fit method: automatic choice.".into(),
        None => format!("Fit method: automatic choice ({}).", method_word(used)),
        Some(c) => format!("Fit method: {} (m steps on).", method_word(c)),
    }
}
/// A method that cannot be used on this case.
pub fn fit_method_failed(chosen: Option<&str>, why: &str) -> String {
    format!(
        "Fit method {}: {why} (m switches)",
        method_word(chosen.unwrap_or(AUTO))
    )
}
/// The fit spans the dose record.
pub fn fit_heading_record(method: &str, rows: &str) -> String {
    format!("{}: levels {rows}, all doses", method_word(method))
}
/// r² of a fit that is not a straight line.
pub const NOT_FOR_METHOD: &str = "— (straight-line fits only)";
/// Label of the population values.
pub const POPULATION: &str = "typical";
/// Label.
pub const MOVED: &str = "moved";
/// The population values for this patient.
pub fn population_values(what: &str, typical: &str, unit: &str, v: &str) -> String {
    format!("{what} {typical} {unit}, V {v} L")
}
/// The covariates behind them.
pub fn population_basis(model: &str, weight: Option<&str>, crcl: Option<&str>) -> String {
    let mut parts = vec![model.to_string()];
    if let Some(w) = weight {
        parts.push(format!("{w} kg"));
    }
    if let Some(c) = crcl {
        parts.push(format!("CrCl {c}"));
    }
    format!("({})", parts.join(", "))
}
/// How far the estimate moved, in between-patient SDs.
/// `vol` is None when the model fixes the volume.
pub fn population_moved(what: &str, elim: f64, vol: Option<f64>) -> String {
    match vol {
        Some(vol) => format!("{what} {} SD, V {} SD from it", signed2(elim), signed2(vol)),
        None => format!("{what} {} SD from it; V fixed by the model", signed2(elim)),
    }
}
/// Label.
pub const WEIGHS: &str = "decided";
/// How much of what is known of the elimination the levels decided, and how much the model.
pub fn population_weighs(levels_share: f64) -> String {
    // Never a negative share (a posterior variance above the prior's means the levels add
    // nothing).
    let levels_share = levels_share.clamp(0.0, 1.0);
    format!(
        "levels {:.0} %, model {:.0} %",
        levels_share * 100.0,
        (1.0 - levels_share) * 100.0
    )
}

// ---- regimen suggestions -----------------------------------------------------------------

/// Heading.
pub fn suggestions(unit: &str) -> String {
    format!("Regimens that meet every target ({unit}; ↓ Enter or t takes)")
}
/// Heading, narrow.
pub fn suggestions_short(unit: &str) -> String {
    format!("Meeting every target ({unit}; t takes)")
}
/// Column names of the suggestions: dose, interval, route, peak, trough, AUC24.
pub const SUGGESTION_COLUMNS: [&str; 6] = ["dose", "every", "route", "peak", "trough", "AUC24"];
/// Before the suggested regimen the patient is on (when it is not the selected one).
pub const CURRENT_MARK: &str = "•";
/// Under the suggestions: what the mark means, and where their peak is drawn when the
/// strategy draws it `after` the end of the infusion; one line when it fits in `width`
/// columns, else one line each.
pub fn suggestions_key(current: bool, after: Option<&str>, width: usize) -> Vec<String> {
    let mut parts = Vec::new();
    if current {
        parts.push(format!("{CURRENT_MARK} the regimen now"));
    }
    if let Some(h) = after {
        parts.push(format!("peak: {h} after the infusion"));
    }
    let one = parts.join("; ");
    if one.chars().count() <= width {
        vec![one]
    } else {
        parts
    }
}
/// No targets, no suggestions.
pub const NO_TARGETS_NO_SUGGESTIONS: &str =
    "Set targets (or choose a drug profile) for suggestions.";
/// Targets but nothing meets them.
pub const NO_SUGGESTION_MEETS: &str = "No usual regimen meets every target.";
/// `t` with nothing to take.
pub const NO_SUGGESTION: &str = "There is no suggested regimen to take.";
/// The loading dose.
pub fn loading_dose(dose: &str, route: &str, peak: &str, unit: &str) -> String {
    format!("Loading dose {dose} mg {route}: peak {peak} {unit} at once")
}
/// The loading dose, narrow.
pub fn loading_dose_short(dose: &str, peak: &str, unit: &str) -> String {
    format!("Loading {dose} mg: peak {peak} {unit}")
}
/// The proportional adjustment.
pub fn proportional(new_dose: &str, factor: &str) -> String {
    format!("Proportional: {new_dose} mg (x {factor}, same interval)")
}
/// A route for a suggestion line.
pub fn route_words(route: &str, infusion_h: f64) -> String {
    if route == "infusion" {
        format!("over {} h", num(infusion_h))
    } else {
        route.to_string()
    }
}
/// After taking a suggestion.
pub fn suggestion_taken(n: usize, s: &crate::core::advice::SuggestionEntry) -> String {
    format!(
        "Plan set to suggestion {n}: {} mg every {} h, {}.",
        num(s.dose_mg),
        num(s.interval_h),
        route_words(s.route, s.infusion_h)
    )
}

// ---- record note -------------------------------------------------------------------------

/// The stem of a note's name when the case has none.
pub const NOTE_DEFAULT_STEM: &str = "case";
/// What follows the case's stem in its note's name.
pub const NOTE_SUFFIX: &str = ".note.txt";
/// A note name that would overwrite a case file.
pub const NOTE_NOT_A_CASE: &str = "a note is text: give it a .txt or .md name, not the case's";
/// The source named in a note of a case with no file.
pub const NOTE_SOURCE_UNSAVED: &str = "a case not saved to a file";
/// The source named in a note of a case with unsaved changes.
pub fn note_source_with_changes(path: &str) -> String {
    format!("{path}, with changes not yet saved")
}
/// No note without figures.
pub fn no_note(why: Option<&str>) -> String {
    match why {
        Some(w) => format!("No note: the case gives no figures yet ({w})"),
        None => "No note: the case gives no figures yet.".into(),
    }
}
/// After writing the note.
pub fn note_written(path: &str) -> String {
    format!("Record note written to {path} (readable by you only).")
}
/// A failed note (the reason names the file).
pub fn note_failed(why: &str) -> String {
    format!("Note not written: {why}")
}
/// Title of the note prompt.
pub const NOTE_AS_TITLE: &str = "Write the record note";
/// The note prompt.
pub const NOTE_AS_PROMPT: &str = "Note file (.txt, or .md for Markdown), then Enter; Esc cancels:";

// ---- washout: switch ---------------------------------------------------------------------

/// The switch heading.
pub fn switch_heading(to: &str) -> String {
    format!("Switch to {to}")
}
/// The switch rule.
pub fn switch_rule(basis: &str, value: &str, unit: &str, from: &str) -> String {
    if basis == "start_below" {
        format!("once the level is below {value} {unit}, counted from {from}")
    } else {
        format!("{value} half-lives after {from}")
    }
}
/// The earliest start.
pub fn switch_start(when: &str, level: &str, unit: &str) -> String {
    format!("Earliest start {when} (level then {level} {unit})")
}

// ---- saturable (Michaelis-Menten) elimination ---------------------------------------------

/// Heading of the saturable figures.
pub const SATURABLE_HEADING: &str = "Saturable (Michaelis-Menten) elimination";
/// Why there is no k or half-life.
pub const SATURABLE_NO_K: &str =
    "No first-order k, half-life, AUC or washout: they do not hold for this drug.";
/// The deciding level.
pub const SATURABLE_DECIDING: &str = "Deciding";
/// The measured total.
pub const SATURABLE_TOTAL: &str = "Total";
/// The albumin-adjusted total.
pub const SATURABLE_ADJUSTED: &str = "Adjusted";
/// The free level.
pub const SATURABLE_FREE: &str = "Free";
/// How Vmax and Km were found.
pub const SATURABLE_HOW: &str = "From";
/// The algebraic estimate.
pub const SATURABLE_ALGEBRA: &str = "Algebra";
/// The volume.
pub const SATURABLE_VOLUME: &str = "Volume";
/// No volume.
pub const SATURABLE_NO_VOLUME: &str = "not known (no weight)";
/// The current daily dose.
pub const SATURABLE_CURRENT: &str = "Current";
/// The first step.
pub const SATURABLE_FIRST_STEP: &str = "First step";
/// The plan's daily dose.
pub const SATURABLE_PLAN: &str = "Plan";
/// The warnings heading.
pub const WARNINGS_HEADING: &str = "Warnings";
/// Basis words.
pub const SATURABLE_BASIS_TOTAL: &str = "measured total";
/// Basis words.
pub const SATURABLE_BASIS_ADJUSTED: &str = "adjusted for albumin";
/// Basis words.
pub const SATURABLE_BASIS_FREE: &str = "free level / free fraction";
/// Where the saturable figures are, on the screens without them.
pub const SATURABLE_ELSEWHERE: &str = "Saturable (Michaelis-Menten) elimination: Vmax, Km and \
the doses are on the fit and plan screens; the fall after stopping is in `ebb report`. A \
first-order threshold or washout does not hold for this drug.";
/// The Bayesian estimate, shown beside the one used.
pub const SATURABLE_BAYESIAN: &str = "Bayesian";
/// The record fit, shown beside the one used.
pub const SATURABLE_RECORD: &str = "Record fit";
/// A 95 % range after a saturable value.
pub fn saturable_range95(lo: &str, hi: &str) -> String {
    format!("(95 % {lo}–{hi})")
}
/// The label of the dose for the target.
pub fn saturable_for_target(level: &str, unit: &str) -> String {
    format!("For {level} {unit}")
}
