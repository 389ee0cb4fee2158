//! Entering rows and whole-case changes at the bedside: adding a dose or a level by walking
//! its fields in order, keeping rows in time order, undoing the last change, converting the
//! level unit, and the check that a new dose is not a level typed in the wrong table.

use crate::core::casefile::{to_stamp, CaseFile, DoseFile, LevelFile};
use crate::core::report::num;
use crate::core::units::LevelUnit;
use crate::tui::action::Action;
use crate::tui::app::{App, Editor, Mode, NewRow, Screen, Target};
use crate::tui::entry;
use crate::tui::fields::{self, Field};
use crate::tui::screens::{self, CaseLine};
use crate::tui::strings;

/// The gap a new level gets after the previous one, in hours.
const NEW_LEVEL_GAP_H: f64 = 1.0;

/// A dose is flagged as possibly a level typed into the dose table when its amount is below
/// this fraction of the median of the case's other doses (and the plan dose, when there is
/// a plan). Doses of one course rarely differ fourfold; a level value typed as a dose
/// (14.8 "mg" gentamicin among 80 mg doses) does. The check needs another dose to compare
/// with: the first dose of a case is not checked.
pub const DOSE_FAR_BELOW_FRACTION: f64 = 0.25;

// ---- adding rows ---------------------------------------------------------------------------

/// `a` on the case screen: add a row to the table the cursor is in.
pub fn add_row(app: &mut App) {
    if app.screen != Screen::Case {
        return;
    }
    match screens::selected_case_line(app) {
        CaseLine::Dose(_) | CaseLine::AddDose => add_dose(app),
        CaseLine::Level(_) | CaseLine::AddLevel => add_level(app),
        CaseLine::Field(_) => app.complain(strings::ADD_WHERE),
    }
}

fn add_dose(app: &mut App) {
    let last = latest(&app.file.doses, |d| &d.time).cloned();
    let gap = match &app.file.plan {
        Some(p) => p.interval_h,
        None => fields::plan_from_record(&app.file).interval_h,
    };
    let time = match &last {
        Some(d) => entry::add_hours(&d.time, gap),
        None => now_on_the_hour(),
    };
    let Some(time) = time else {
        return app.complain(strings::NO_TIME_FOR_ROW);
    };
    // The route (and its infusion time or F) follows the last dose; the amount is typed.
    let dose = match last {
        Some(d) => DoseFile {
            time,
            amount_mg: None,
            ..d
        },
        None => DoseFile {
            time,
            amount_mg: None,
            route: "infusion".into(),
            infusion_h: Some(fields::DEFAULT_INFUSION_H),
            bioavailability: None,
            formulation: None,
        },
    };
    let mark = app.undo.len();
    let i = app.file.doses.len();
    if let Err(e) = app.change(|f| {
        f.doses.push(dose);
        Ok(())
    }) {
        return app.complain(e);
    }
    let mut walk = vec![Field::DoseTime(i), Field::DoseAmount(i)];
    match app.file.doses[i].route.as_str() {
        "infusion" => walk.push(Field::DoseInfusion(i)),
        "oral" => walk.push(Field::DoseF(i)),
        _ => {}
    }
    start_walk(
        app,
        CaseLine::Dose(i),
        walk,
        NewRow::Dose(i),
        mark,
        strings::NEW_DOSE_HINT,
    );
}

fn add_level(app: &mut App) {
    let last_level = latest(&app.file.levels, |l| &l.time).map(|l| l.time);
    let last_dose = latest(&app.file.doses, |d| &d.time);
    let time = match (last_level, last_dose) {
        (Some(t), _) => entry::add_hours(&t, NEW_LEVEL_GAP_H),
        (None, Some(d)) => entry::add_hours(&d.time, d.infusion_h.unwrap_or(0.0) + NEW_LEVEL_GAP_H),
        (None, None) => now_on_the_hour(),
    };
    let Some(time) = time else {
        return app.complain(strings::NO_TIME_FOR_ROW);
    };
    // A stand-in value the row holds while its value is typed (the editor starts empty,
    // and Esc drops the row).
    let value = app.file.levels.last().map(|l| l.value).unwrap_or(1.0);
    let mark = app.undo.len();
    let i = app.file.levels.len();
    if let Err(e) = app.change(|f| {
        f.levels.push(LevelFile {
            time,
            value,
            below_limit: false,
            use_in_fit: None,
            note: None,
            free: None,
        });
        Ok(())
    }) {
        return app.complain(e);
    }
    start_walk(
        app,
        CaseLine::Level(i),
        vec![
            Field::LevelTime(i),
            Field::LevelValue(i),
            Field::LevelNote(i),
        ],
        NewRow::Level(i),
        mark,
        strings::NEW_LEVEL_HINT,
    );
}

/// The row with the latest time (the file's last row when times cannot be read).
fn latest<T>(rows: &[T], time: impl Fn(&T) -> &toml::value::Datetime) -> Option<&T> {
    rows.iter()
        .enumerate()
        .max_by_key(|(i, r)| (to_stamp(time(r), "time").ok().map(|s| s.axis_time()), *i))
        .map(|(_, r)| r)
}

fn now_on_the_hour() -> Option<toml::value::Datetime> {
    let now = chrono::Local::now().naive_local();
    entry::datetime(&now.format("%Y-%m-%d %H:00").to_string()).ok()
}

/// Put the cursor on a row just added and open the editor on the first of `walk` (its
/// time, which starts at a proposal); the others follow in order, starting empty.
fn start_walk(
    app: &mut App,
    line: CaseLine,
    mut walk: Vec<Field>,
    row: NewRow,
    mark: usize,
    hint: &'static str,
) {
    app.cursors.case_line = line_of(app, line);
    app.cursors.case_col = 0;
    let first = walk.remove(0);
    let mut ed = Editor::new(Target::Field(first), first.text(&app.file));
    ed.then = walk;
    ed.new_row = Some(row);
    ed.undo_mark = Some(mark);
    ed.proposed = !ed.buffer.is_empty();
    app.mode = Mode::Editing(ed);
    app.say(hint);
}

/// The editor for the next field of a new row: empty (typing never appends to an old
/// value), the cursor on its column.
pub fn next_in_walk(app: &mut App, done: &Editor) -> Option<Editor> {
    let mut rest = done.then.clone();
    if rest.is_empty() {
        return None;
    }
    let next = rest.remove(0);
    app.cursors.case_col = column_of(next);
    let mut ed = Editor::new(Target::Field(next), String::new());
    ed.then = rest;
    ed.new_row = done.new_row;
    ed.undo_mark = done.undo_mark;
    Some(ed)
}

/// Whether an empty entry is refused for `field` while a new row is walked (an infusion
/// needs its hours; a level its value).
pub fn needed_in_walk(field: Field) -> bool {
    matches!(field, Field::DoseInfusion(_) | Field::LevelValue(_))
}

fn column_of(field: Field) -> usize {
    match field {
        Field::DoseTime(_) | Field::LevelTime(_) => 0,
        Field::DoseAmount(_) | Field::LevelValue(_) => 1,
        Field::DoseRoute(_) | Field::LevelUse(_) => 2,
        Field::DoseInfusion(_) | Field::LevelNote(_) => 3,
        Field::DoseF(_) => 4,
        _ => 0,
    }
}

fn line_of(app: &App, line: CaseLine) -> usize {
    screens::case_lines(&app.file)
        .iter()
        .position(|l| *l == line)
        .unwrap_or(0)
}

/// The last field of a new row was accepted: put the rows in time order, make the whole
/// row one undo step, and wait on it with letters switched off until Enter, Esc or an
/// arrow key.
pub fn finish_row(app: &mut App, row: NewRow, mark: Option<usize>) {
    let now = sort_rows(app, row);
    let said = match now {
        NewRow::Dose(i) => strings::dose_added(i + 1, &row_words(app, now)),
        NewRow::Level(i) => strings::level_added(i + 1, &row_words(app, now)),
    };
    if let Some(m) = mark {
        app.merge_undo_since(m, &said);
    }
    match now {
        NewRow::Dose(i) => {
            // Wait on "+ add a dose": one ↓ from there is the level table, so a level is
            // not added as a dose by a slip.
            app.cursors.case_line = line_of(app, CaseLine::AddDose);
            app.cursors.case_col = 0;
            match dose_far_below(&app.file, i) {
                Some(w) => app.complain(format!("{said} {w}")),
                None => app.say(format!("{said} {}", strings::ROW_DONE_KEYS)),
            }
        }
        NewRow::Level(_) => {
            app.cursors.case_line = line_of(app, CaseLine::AddLevel);
            app.cursors.case_col = 0;
            app.say(format!("{said} {}", strings::ROW_DONE_KEYS));
        }
    }
    app.mode = Mode::RowDone(now);
}

fn row_words(app: &App, row: NewRow) -> String {
    let f = &app.file;
    match row {
        NewRow::Dose(i) => {
            let amount = f.doses[i]
                .amount_mg
                .map(|a| format!("{} mg", num(a)))
                .unwrap_or_else(|| strings::NO_AMOUNT.into());
            format!("{}, {amount}", Field::DoseTime(i).text(f))
        }
        NewRow::Level(i) => format!(
            "{}, {} {}",
            Field::LevelTime(i).text(f),
            num(f.levels[i].value),
            f.drug.level_unit.as_deref().unwrap_or("")
        ),
    }
}

/// Keys while a finished row waits: Enter or Esc goes on, arrows go on and move, Ctrl-Z
/// removes the row; letters are said, not done.
pub fn row_done(app: &mut App, action: Action) {
    match action {
        Action::Stray(ch) => app.complain(strings::stray_key(ch)),
        Action::Undo => {
            app.mode = Mode::Normal;
            undo(app);
        }
        Action::Accept | Action::Cancel => {
            app.mode = Mode::Normal;
            app.say(strings::ROW_KEPT);
        }
        Action::Quit => app.mode = Mode::Normal,
        _ => app.mode = Mode::Normal,
    }
}

// ---- time order ----------------------------------------------------------------------------

/// Put doses and levels in time order (rows whose time cannot be read keep their place
/// relative to each other); returns where `follow` is now.
pub fn sort_rows(app: &mut App, follow: NewRow) -> NewRow {
    let mut now = follow;
    let _ = app.change(|f| {
        let d = order(&f.doses, |d| &d.time);
        let l = order(&f.levels, |l| &l.time);
        now = match follow {
            NewRow::Dose(i) => NewRow::Dose(d.iter().position(|&j| j == i).unwrap_or(i)),
            NewRow::Level(i) => NewRow::Level(l.iter().position(|&j| j == i).unwrap_or(i)),
        };
        f.doses = d.iter().map(|&j| f.doses[j].clone()).collect();
        f.levels = l.iter().map(|&j| f.levels[j].clone()).collect();
        Ok(())
    });
    now
}

/// Old indices in time order (a stable sort).
fn order<T>(rows: &[T], time: impl Fn(&T) -> &toml::value::Datetime) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..rows.len()).collect();
    let times: Option<Vec<_>> = rows
        .iter()
        .map(|r| to_stamp(time(r), "time").ok().map(|s| s.axis_time()))
        .collect();
    // With a time that cannot be read, every row stays where it is.
    if let Some(times) = times {
        idx.sort_by_key(|&i| times[i]);
    }
    idx
}

/// After a row's time was changed by hand: put the rows back in time order, keep the
/// cursor on the row, and say so when its number changed.
pub fn time_changed(app: &mut App, field: Field) {
    let row = match field {
        Field::DoseTime(i) => NewRow::Dose(i),
        Field::LevelTime(i) => NewRow::Level(i),
        _ => return,
    };
    let said = app
        .message
        .as_ref()
        .map(|m| m.text.clone())
        .unwrap_or_default();
    // The reordering is its own undo step, described by the message below.
    let now = sort_rows(app, row);
    if now != row {
        let (line, n, dose) = match now {
            NewRow::Dose(i) => (CaseLine::Dose(i), i + 1, true),
            NewRow::Level(i) => (CaseLine::Level(i), i + 1, false),
        };
        app.cursors.case_line = line_of(app, line);
        app.say(format!("{said} {}", strings::row_renumbered(dose, n)));
    }
}

// ---- undo ----------------------------------------------------------------------------------

/// Ctrl-Z: put the case back as it was before the last change.
pub fn undo(app: &mut App) {
    match app.undo_last() {
        None => app.say(strings::NOTHING_TO_UNDO),
        Some(what) => {
            clamp(app);
            app.say(strings::undone(&what, app.undo.len()));
        }
    }
}

fn clamp(app: &mut App) {
    let n = screens::case_lines(&app.file).len();
    app.cursors.case_line = app.cursors.case_line.min(n.saturating_sub(1));
    app.cursors.fit_level = app
        .cursors
        .fit_level
        .min(app.file.levels.len().saturating_sub(1));
}

// ---- level unit ----------------------------------------------------------------------------

/// Step the level unit, converting every value written in it (levels, targets, threshold,
/// resume level, switch level) with the case's or the profile's molar mass. Molar units
/// are skipped when there is no molar mass and something would need converting.
pub fn step_unit(app: &mut App) {
    let mass = app
        .file
        .drug
        .molar_mass_g_mol
        .or_else(|| profile_molar_mass(app));
    let old = app
        .file
        .drug
        .level_unit
        .as_deref()
        .and_then(|u| LevelUnit::parse(u, "drug.level_unit").ok());
    let has_values = holds_level_values(&app.file);
    let start = old
        .and_then(|u| LevelUnit::ALL.iter().position(|x| *x == u))
        .map(|i| i + 1)
        .unwrap_or(0);
    let n = LevelUnit::ALL.len();
    let old_per = old.and_then(|u| u.per_mg_l(mass));
    if has_values && old.is_some() && old_per.is_none() {
        return app.complain(strings::UNIT_NEEDS_MASS_FIRST);
    }
    let next = (0..n)
        .map(|k| LevelUnit::ALL[(start + k) % n])
        .find(|u| !has_values || u.per_mg_l(mass).is_some());
    let Some(next) = next else {
        return app.complain(strings::UNIT_NEEDS_MASS_FIRST);
    };
    let factor = match (old_per, next.per_mg_l(mass)) {
        (Some(a), Some(b)) if has_values => Some(b / a),
        _ => None,
    };
    let r = app.change(|f| {
        f.drug.level_unit = Some(next.as_str().to_string());
        if let Some(x) = factor {
            convert_values(f, x);
        }
        Ok(())
    });
    match (r, factor) {
        (Err(e), _) => app.complain(e),
        (Ok(()), Some(x)) => app.say(strings::unit_converted(
            old.map(|u| u.as_str()).unwrap_or(""),
            next.as_str(),
            &num(x),
        )),
        (Ok(()), None) => app.say(strings::unit_now(next.as_str())),
    }
}

fn profile_molar_mass(app: &App) -> Option<f64> {
    let name = app.file.drug.profile.as_deref()?;
    app.profiles
        .get(name)?
        .profile
        .molar_mass_g_mol
        .as_ref()
        .map(|m| m.value)
}

/// Whether anything in the case is written in the level unit.
pub fn holds_level_values(f: &CaseFile) -> bool {
    !f.levels.is_empty()
        || f.targets
            .as_ref()
            .is_some_and(|t| t.peak.is_some() || t.trough_max.is_some() || t.auc24.is_some())
        || f.threshold.is_some()
        || f.switch.as_ref().is_some_and(|s| s.start_below.is_some())
}

/// Multiply every value written in the level unit by `x` (kept to 10 significant digits,
/// so a unit changed and changed back gives the value typed).
fn convert_values(f: &mut CaseFile, x: f64) {
    let c = |v: f64| significant(v * x, 10);
    for l in &mut f.levels {
        l.value = c(l.value);
    }
    if let Some(t) = f.targets.as_mut() {
        for v in t.peak.iter_mut().chain(t.auc24.iter_mut()).flatten() {
            *v = c(*v);
        }
        t.trough_max = t.trough_max.map(c);
    }
    if let Some(t) = f.threshold.as_mut() {
        t.below = c(t.below);
        t.resume_below = t.resume_below.map(c);
    }
    if let Some(s) = f.switch.as_mut() {
        s.start_below = s.start_below.map(c);
    }
}

fn significant(v: f64, digits: i32) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let mag = v.abs().log10().floor() as i32;
    let scale = 10f64.powi(digits - 1 - mag);
    let r = (v * scale).round() / scale;
    if r.is_finite() {
        r
    } else {
        v
    }
}

// ---- a dose far below the others -----------------------------------------------------------

/// The warning for dose `i` (0-based) when its amount is below `DOSE_FAR_BELOW_FRACTION`
/// of the median of the other doses on record and the plan dose.
pub fn dose_far_below(f: &CaseFile, i: usize) -> Option<String> {
    let a = f.doses.get(i)?.amount_mg?;
    let mut others: Vec<f64> = f
        .doses
        .iter()
        .enumerate()
        .filter(|(j, _)| *j != i)
        .filter_map(|(_, d)| d.amount_mg)
        .chain(f.plan.as_ref().map(|p| p.dose_mg))
        .filter(|x| x.is_finite() && *x > 0.0)
        .collect();
    if others.is_empty() {
        return None;
    }
    others.sort_by(f64::total_cmp);
    let n = others.len();
    let median = if n % 2 == 1 {
        others[n / 2]
    } else {
        (others[n / 2 - 1] + others[n / 2]) / 2.0
    };
    (a < DOSE_FAR_BELOW_FRACTION * median)
        .then(|| strings::dose_far_below(i + 1, &num(a), &num(median)))
}
