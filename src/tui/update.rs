//! Intents applied to the state: the only place the app changes. Every change of the case
//! goes through `App::change`, which recomputes the figures through the core.

use std::path::{Path, PathBuf};

use crate::core::casefile::{CaseFile, FitFile, PlanFile};
use crate::core::fit::CHOICES;
use crate::files::guard::OutputError;
use crate::files::recover;
use crate::files::store::{self, SaveError};
use crate::tui::action::Action;
use crate::tui::app::{App, Confirm, Editor, Mode, NewRow, Screen, Target};
use crate::tui::effect::{Effect, Outcome};
use crate::tui::fields::{self, Field, Kind};
use crate::tui::rows;
use crate::tui::screens::{
    self, is_target, profile_targets, seed_targets, CaseLine, PLAN_FIELDS, THRESHOLD_FIELDS,
};
use crate::tui::strings;

/// The usual dosing intervals `[` and `]` step through, in hours.
pub const INTERVALS_H: [f64; 15] = [
    1.0, 2.0, 3.0, 4.0, 6.0, 8.0, 12.0, 18.0, 24.0, 36.0, 48.0, 72.0, 96.0, 120.0, 168.0,
];
/// How many lines PgDn and PgUp scroll the fit screen's figures and warnings.
const FIT_SCROLL_STEP: u16 = 5;
/// How much `{` and `}` change the infusion time, in hours.
pub const INFUSION_STEP_H: f64 = 0.25;

/// Apply one intent. Returns what the outside world must do (save, write the note); the
/// run loop carries it out and hands the outcome to `settle`.
pub fn update(app: &mut App, action: Action) -> Vec<Effect> {
    match app.mode.clone() {
        Mode::Quitting => {}
        Mode::Help => {
            if matches!(action, Action::Help | Action::Cancel) {
                app.mode = Mode::Normal;
            } else if action == Action::Quit {
                app.mode = Mode::Normal;
                quit(app);
            }
        }
        Mode::Confirm(c) => confirm(app, c, action),
        Mode::ChooseProfile(i) => choose_profile(app, i, action),
        Mode::ProfileInfo(top) => profile_info(app, top, action),
        Mode::Editing(ed) => edit(app, ed, action),
        Mode::RowDone(_) => match action {
            Action::Up
            | Action::Down
            | Action::Left
            | Action::Right
            | Action::NextScreen(_)
            | Action::Save => {
                app.mode = Mode::Normal;
                normal(app, action);
            }
            Action::Quit => {
                app.mode = Mode::Normal;
                quit(app);
            }
            other => rows::row_done(app, other),
        },
        Mode::Normal => normal(app, action),
    }
    // The suggestions change with the case: keep the plan cursor on a line that exists.
    let lines = PLAN_FIELDS.len() + screens::suggestions(app).len();
    app.cursors.plan = app.cursors.plan.min(lines - 1);
    std::mem::take(&mut app.effects)
}

/// Apply what came of an effect; may ask for more.
pub fn settle(app: &mut App, outcome: Outcome) -> Vec<Effect> {
    match outcome {
        Outcome::Saved {
            path,
            print,
            text,
            comments_lost,
        } => {
            saved(app, path, print, text);
            if comments_lost {
                app.complain(strings::saved_without_comments(&app.title));
            }
        }
        Outcome::NotSaved { path, error } => not_saved(app, path, error),
        Outcome::NoteWritten(path) => app.say(strings::note_written(&path.display().to_string())),
        Outcome::NoteNotWritten { path, error } => note_not_written(app, path, error),
        Outcome::Done => {}
    }
    std::mem::take(&mut app.effects)
}

fn quit(app: &mut App) {
    if app.dirty {
        app.mode = Mode::Confirm(Confirm::Quit);
    } else {
        app.mode = Mode::Quitting;
    }
}

fn confirm(app: &mut App, c: Confirm, action: Action) {
    match (c, action) {
        (Confirm::Quit, Action::Yes) => app.mode = Mode::Quitting,
        (Confirm::Quit, Action::SaveThenQuit) => {
            app.held_editor = None;
            app.mode = Mode::Normal;
            app.quit_after_save = true;
            save(app);
        }
        (Confirm::DeleteDose(i), Action::Yes) => remove_confirmed(
            app,
            |f| remove_at(&mut f.doses, i),
            strings::dose_deleted(i + 1),
        ),
        (Confirm::DeleteLevel(i), Action::Yes) => remove_confirmed(
            app,
            |f| remove_at(&mut f.levels, i),
            strings::level_deleted(i + 1),
        ),
        (Confirm::Overwrite, Action::Yes) => {
            app.mode = Mode::Normal;
            if let Some(path) = app.pending_overwrite.take() {
                app.effects.push(Effect::Save {
                    path,
                    expect: store::Expect::Overwrite,
                });
            }
        }
        (Confirm::ReplaceNote, Action::Yes) => {
            app.mode = Mode::Normal;
            if let Some(path) = app.pending_note.take() {
                let source = note_source(app);
                app.effects.push(Effect::WriteNote {
                    path,
                    source,
                    force: true,
                });
            }
        }
        (Confirm::ReplaceNote, Action::No | Action::Cancel | Action::Quit) => {
            app.mode = Mode::Normal;
            if let Some(path) = app.pending_note.take() {
                app.complain(strings::note_not_replaced(&path.display().to_string()));
            }
        }
        (Confirm::Recover, Action::Yes) => {
            app.mode = Mode::Normal;
            if let Some((at, file)) = app.recovery.take() {
                let r = app.change(|f| {
                    *f = file;
                    Ok(())
                });
                report(app, r, strings::recovered(&at.display().to_string()));
                app.recovered_from = Some(at);
                clamp_cursor(app);
            }
        }
        (Confirm::Recover, Action::No | Action::Cancel | Action::Quit) => {
            app.mode = Mode::Normal;
            if let Some((at, _)) = app.recovery.take() {
                app.say(strings::recovery_left(&at.display().to_string()));
            }
        }
        (Confirm::Overwrite, Action::No | Action::Cancel | Action::Quit) => {
            app.mode = Mode::Normal;
            app.quit_after_save = false;
            if let Some(path) = app.pending_overwrite.take() {
                app.complain(strings::not_overwritten(&path.display().to_string()));
            }
        }
        (Confirm::Quit, Action::No | Action::Cancel | Action::Quit)
            if app.held_editor.is_some() =>
        {
            if let Some(ed) = app.held_editor.take() {
                app.mode = Mode::Editing(ed);
            }
        }
        (_, Action::No | Action::Cancel) => {
            app.mode = Mode::Normal;
            app.say(strings::NOTHING_DONE);
        }
        (_, Action::Quit) => app.mode = Mode::Normal,
        _ => {}
    }
}

/// Delete a row the user has confirmed, say so, and keep the cursor on a line that exists.
fn remove_confirmed(app: &mut App, remove: impl FnOnce(&mut CaseFile), done: String) {
    app.mode = Mode::Normal;
    let r = app.change(|f| {
        remove(f);
        Ok(())
    });
    report(app, r, done);
    clamp_cursor(app);
}

fn remove_at<T>(rows: &mut Vec<T>, i: usize) {
    if i < rows.len() {
        rows.remove(i);
    }
}

fn report(app: &mut App, r: Result<(), String>, ok: String) {
    match r {
        Ok(()) => app.say(ok),
        Err(e) => app.complain(e),
    }
}

fn normal(app: &mut App, action: Action) {
    match action {
        Action::Quit => quit(app),
        Action::Save => save(app),
        Action::Help => app.mode = Mode::Help,
        Action::Show(s) => app.screen = s,
        Action::NextScreen(back) => app.screen = app.screen.step(back),
        Action::Cancel => app.message = None,
        Action::Up => move_selection(app, -1),
        Action::Down => move_selection(app, 1),
        Action::Left => app.cursors.case_col = app.cursors.case_col.saturating_sub(1),
        Action::Right => {
            let max = match screens::selected_case_line(app) {
                CaseLine::Dose(_) => 4,
                CaseLine::Level(_) => 3,
                _ => 0,
            };
            app.cursors.case_col = (app.cursors.case_col + 1).min(max);
        }
        Action::Activate => activate(app, false),
        Action::Step => activate(app, true),
        Action::AddRow => rows::add_row(app),
        Action::Undo => rows::undo(app),
        Action::Scroll(down) => {
            let s = app.cursors.fit_scroll;
            app.cursors.fit_scroll = if down {
                s.saturating_add(FIT_SCROLL_STEP)
            } else {
                s.saturating_sub(FIT_SCROLL_STEP)
            };
        }
        Action::DeleteRow => delete_row(app),
        Action::ToggleUse => toggle_use(app),
        Action::Clear => clear(app),
        Action::PlanDose(up) => plan_dose(app, up),
        Action::PlanInterval(up) => plan_interval(app, up),
        Action::PlanInfusion(up) => plan_infusion(app, up),
        Action::PlanRoute => {
            let had = app.file.plan.is_some();
            let r = app.change(|f| Field::PlanRoute.cycle(f, false));
            plan_said(app, r, had, strings::plan_route_now);
        }
        Action::TakeSuggestion => {
            let i = app.cursors.plan.saturating_sub(PLAN_FIELDS.len());
            take_suggestion(app, i);
        }
        Action::ChooseProfile => open_chooser(app),
        Action::ProfileInfo => show_profile_info(app),
        Action::FitMethod => fit_method(app),
        Action::WriteNote => write_note(app),
        _ => {}
    }
}

fn move_selection(app: &mut App, by: isize) {
    let step = |i: usize, n: usize| -> usize {
        if n == 0 {
            return 0;
        }
        (i as isize + by).clamp(0, n as isize - 1) as usize
    };
    match app.screen {
        Screen::Case => {
            let n = screens::case_lines(&app.file).len();
            app.cursors.case_line = step(app.cursors.case_line, n);
        }
        Screen::Fit => {
            let n = app.file.levels.len();
            app.cursors.fit_level = step(app.cursors.fit_level, n);
        }
        Screen::Plan => {
            let n = PLAN_FIELDS.len() + screens::suggestions(app).len();
            app.cursors.plan = step(app.cursors.plan, n);
        }
        Screen::Threshold => {
            app.cursors.threshold = step(app.cursors.threshold, THRESHOLD_FIELDS.len())
        }
        Screen::Washout => {}
    }
}

fn clamp_cursor(app: &mut App) {
    let n = screens::case_lines(&app.file).len();
    app.cursors.case_line = app.cursors.case_line.min(n.saturating_sub(1));
    app.cursors.fit_level = app
        .cursors
        .fit_level
        .min(app.file.levels.len().saturating_sub(1));
}

/// Open an editor on `field`, checking the starting text at once.
pub fn open_editor(app: &mut App, field: Field) {
    let mut start = app.file.clone();
    seed_targets(app, field, &mut start);
    let mut ed = Editor::new(Target::Field(field), field.text(&start));
    check(app, &mut ed);
    app.mode = Mode::Editing(ed);
}

fn activate(app: &mut App, space: bool) {
    if app.screen == Screen::Case {
        match screens::selected_case_line(app) {
            CaseLine::AddDose | CaseLine::AddLevel if !space => return rows::add_row(app),
            CaseLine::AddDose | CaseLine::AddLevel => return,
            CaseLine::Level(_) if space && app.cursors.case_col != 2 => return toggle_use(app),
            CaseLine::Field(Field::DrugProfile) => return open_chooser(app),
            _ => {}
        }
    }
    if app.screen == Screen::Plan && app.cursors.plan >= PLAN_FIELDS.len() {
        if !space {
            take_suggestion(app, app.cursors.plan - PLAN_FIELDS.len());
        }
        return;
    }
    let Some(field) = screens::selected_field(app) else {
        return;
    };
    if field == Field::Unit {
        return rows::step_unit(app);
    }
    if field == Field::Strategy {
        return step_strategy(app);
    }
    if field == Field::Model {
        return step_model(app);
    }
    match field.kind() {
        Kind::Choice => {
            let had_plan = app.file.plan.is_some();
            let r = app.change(|f| field.cycle(f, false));
            match r {
                Ok(()) if field == Field::PlanRoute => {
                    plan_said(app, Ok(()), had_plan, strings::plan_route_now)
                }
                Ok(()) => app.say(strings::now_is(&field.name(), &field.text(&app.file))),
                Err(e) => app.complain(e),
            }
        }
        Kind::Text if space => {}
        Kind::Text => open_editor(app, field),
    }
}

/// Check the editor's text: does it parse, and does the case still validate with it?
fn check(app: &App, ed: &mut Editor) {
    ed.error = match ed.target {
        // An empty name is refused on Enter, not before anything is typed.
        Target::SavePath => None,
        Target::NotePath if ed.buffer.trim().is_empty() => None,
        Target::NotePath => note_path_problem(app, ed.buffer.trim()),
        Target::Field(field) => {
            let mut trial = app.file.clone();
            seed_targets(app, field, &mut trial);
            match field.set_text(&mut trial, &ed.buffer) {
                Err(e) => Some(e),
                Ok(()) => match trial.validate() {
                    Err(crate::core::error::Error::Invalid { place, message })
                        if field.owns_place(&place) =>
                    {
                        Some(message)
                    }
                    _ => None,
                },
            }
        }
    };
}

fn edit(app: &mut App, mut ed: Editor, action: Action) {
    let len = ed.buffer.chars().count();
    let byte = |s: &str, i: usize| s.char_indices().nth(i).map(|(b, _)| b).unwrap_or(s.len());
    // A proposal gives way to the first character typed; any other key keeps it to edit.
    let proposed = std::mem::take(&mut ed.proposed);
    match action {
        Action::Quit => return quit_while_typing(app, ed),
        Action::Type(c) => {
            if proposed {
                ed.buffer.clear();
                ed.cursor = 0;
            }
            let at = byte(&ed.buffer, ed.cursor);
            ed.buffer.insert(at, c);
            ed.cursor += 1;
        }
        Action::Backspace if ed.cursor > 0 => {
            let at = byte(&ed.buffer, ed.cursor - 1);
            ed.buffer.remove(at);
            ed.cursor -= 1;
        }
        Action::DeleteForward if ed.cursor < len => {
            let at = byte(&ed.buffer, ed.cursor);
            ed.buffer.remove(at);
        }
        Action::CursorLeft => ed.cursor = ed.cursor.saturating_sub(1),
        Action::CursorRight => ed.cursor = (ed.cursor + 1).min(len),
        Action::CursorHome => ed.cursor = 0,
        Action::CursorEnd => ed.cursor = len,
        Action::Cancel => {
            app.mode = Mode::Normal;
            app.quit_after_save = false;
            if let Some(row) = ed.new_row {
                let mark = ed.undo_mark;
                let r = app.change(|f| {
                    match row {
                        NewRow::Dose(i) if i < f.doses.len() => {
                            f.doses.remove(i);
                        }
                        NewRow::Level(i) if i < f.levels.len() => {
                            f.levels.remove(i);
                        }
                        _ => {}
                    }
                    Ok(())
                });
                clamp_cursor(app);
                report(app, r, strings::ROW_NOT_ADDED.into());
                if let Some(m) = mark {
                    app.drop_undo_since(m);
                }
            } else {
                app.say(strings::EDIT_CANCELLED);
            }
            return;
        }
        Action::Accept => return accept(app, ed),
        _ => {}
    }
    check(app, &mut ed);
    app.mode = Mode::Editing(ed);
}

fn accept(app: &mut App, mut ed: Editor) {
    match ed.target {
        Target::SavePath => {
            let name = ed.buffer.trim();
            if name.is_empty() {
                ed.error = Some(strings::TYPE_A_FILE_NAME.into());
                app.mode = Mode::Editing(ed);
                return;
            }
            let path = PathBuf::from(name);
            app.mode = Mode::Normal;
            save_to(app, path);
        }
        Target::NotePath => {
            let name = ed.buffer.trim().to_string();
            if let Some(e) = note_path_problem(app, &name) {
                ed.error = Some(e);
                app.mode = Mode::Editing(ed);
                return;
            }
            app.mode = Mode::Normal;
            note_to(app, PathBuf::from(name));
        }
        Target::Field(field) => {
            let text = ed.buffer.clone();
            if ed.new_row.is_some() && rows::needed_in_walk(field) && text.trim().is_empty() {
                ed.error = Some(strings::ENTER_A_NUMBER.into());
                app.mode = Mode::Editing(ed);
                return;
            }
            let mut seeded = app.file.clone();
            seed_targets(app, field, &mut seeded);
            match app.change(|f| {
                *f = seeded;
                field.set_text(f, &text)
            }) {
                Err(e) => {
                    ed.error = Some(e.clone());
                    app.complain(strings::not_accepted(&field.name(), &e));
                    app.mode = Mode::Editing(ed);
                }
                Ok(()) => {
                    app.mode = Mode::Normal;
                    match figures_problem_for(app, field) {
                        Some(p) => app.complain(p),
                        None => app.say(strings::now_is(&field.name(), &field.text(&app.file))),
                    }
                    after_accept(app, field, &ed);
                }
            }
        }
    }
}

/// After a field was accepted: the next field of a new row, or the finished row; a dose
/// far below the others is said; a changed time puts the rows back in time order.
fn after_accept(app: &mut App, field: Field, ed: &Editor) {
    if let Some(next) = rows::next_in_walk(app, ed) {
        if let Target::Field(f) = next.target {
            let said = app
                .message
                .as_ref()
                .map(|m| m.text.clone())
                .unwrap_or_default();
            let (_, unit) = strings::field_label(f);
            app.say(strings::next_in_row(&said, &f.name(), unit));
        }
        app.mode = Mode::Editing(next);
        return;
    }
    if let Some(row) = ed.new_row {
        return rows::finish_row(app, row, ed.undo_mark);
    }
    if let Field::DoseAmount(i) = field {
        if let Some(w) = rows::dose_far_below(&app.file, i) {
            let said = app
                .message
                .as_ref()
                .map(|m| m.text.clone())
                .unwrap_or_default();
            app.complain(format!("{said} {w}"));
        }
    }
    rows::time_changed(app, field);
}

/// Ctrl-C while typing: ask, keeping the half-typed text to go back to.
fn quit_while_typing(app: &mut App, ed: Editor) {
    let untouched = match ed.target {
        Target::Field(f) => ed.new_row.is_none() && ed.buffer == f.text(&app.file),
        _ => ed.buffer.is_empty(),
    };
    if untouched && !app.dirty {
        app.mode = Mode::Quitting;
        return;
    }
    app.held_editor = Some(ed);
    app.mode = Mode::Confirm(Confirm::Quit);
}

fn figures_problem_for(app: &App, field: Field) -> Option<String> {
    let p = app.figures.problem.as_ref()?;
    match &p.place {
        Some(place) if field.owns_place(place) => Some(p.text.clone()),
        _ => None,
    }
}

fn delete_row(app: &mut App) {
    match screens::selected_case_line(app) {
        CaseLine::Dose(i) => app.mode = Mode::Confirm(Confirm::DeleteDose(i)),
        CaseLine::Level(i) => app.mode = Mode::Confirm(Confirm::DeleteLevel(i)),
        _ => app.complain(strings::DELETE_WHERE),
    }
}

fn toggle_use(app: &mut App) {
    let row = match app.screen {
        Screen::Case => match screens::selected_case_line(app) {
            CaseLine::Level(i) => Some(i),
            _ => None,
        },
        Screen::Fit => {
            (app.cursors.fit_level < app.file.levels.len()).then_some(app.cursors.fit_level)
        }
        _ => None,
    };
    let Some(i) = row else {
        return app.complain(strings::TOGGLE_WHERE);
    };
    let r = app.change(|f| Field::LevelUse(i).cycle(f, false));
    let used = app.file.levels.get(i).map(|l| l.use_in_fit != Some(false));
    match (r, used) {
        (Ok(()), Some(u)) => app.say(strings::level_use_now(i + 1, u)),
        (Err(e), _) => app.complain(e),
        _ => {}
    }
}

fn clear(app: &mut App) {
    let Some(field) = screens::selected_field(app) else {
        return;
    };
    let required = matches!(
        field,
        Field::DoseTime(_)
            | Field::LevelTime(_)
            | Field::LevelValue(_)
            | Field::PlanDose
            | Field::PlanInterval
            | Field::Unit
    ) || (field.kind() == Kind::Choice
        && !matches!(field, Field::Strategy | Field::Model));
    if required {
        return app.complain(strings::cannot_clear(&field.name()));
    }
    let plan_field = matches!(field, Field::PlanInfusion | Field::PlanF | Field::PlanStart);
    if plan_field && app.file.plan.is_none() {
        return app.say(strings::NOTHING_TO_CLEAR);
    }
    if is_target(field) && app.file.targets.is_none() {
        return match profile_targets(app) {
            Some(_) => app.say(strings::TARGET_FROM_PROFILE),
            None => app.say(strings::NOTHING_TO_CLEAR),
        };
    }
    let r = app.change(|f| field.set_text(f, ""));
    report(app, r, strings::cleared(&field.name()));
}

fn plan_said(app: &mut App, r: Result<(), String>, had_plan: bool, ok: fn(&App) -> String) {
    match r {
        Err(e) => app.complain(e),
        Ok(()) if !had_plan => app.say(strings::PLAN_STARTED),
        Ok(()) => {
            let text = ok(app);
            match app.figures.problem.as_ref() {
                Some(p) if p.invalid_case => app.complain(p.text.clone()),
                _ => app.say(text),
            }
        }
    }
}

/// A step of about 5 % of `x`, rounded to 1, 2 or 5 times a power of ten.
pub fn dose_step(x: f64) -> f64 {
    let raw = (x.abs() * 0.05).max(0.01);
    let base = 10f64.powf(raw.log10().floor());
    let m = raw / base;
    let f = if m < 1.5 {
        1.0
    } else if m < 3.5 {
        2.0
    } else if m < 7.5 {
        5.0
    } else {
        10.0
    };
    f * base
}

fn tidy(x: f64) -> f64 {
    (x * 1.0e6).round() / 1.0e6
}

/// Adjust the plan with `adjust`, then say what it is now (`said`). With no plan yet, the
/// first adjusting key only starts one from the last dose.
fn adjust_plan(
    app: &mut App,
    adjust: impl FnOnce(&mut PlanFile) -> Result<(), String>,
    said: fn(&App) -> String,
) {
    let had = app.file.plan.is_some();
    let r = app.change(|f| {
        let p = fields::plan_mut(f);
        if had {
            adjust(p)
        } else {
            Ok(())
        }
    });
    plan_said(app, r, had, said);
}

fn plan_dose(app: &mut App, up: bool) {
    adjust_plan(
        app,
        |p| {
            let step = dose_step(if up { p.dose_mg } else { p.dose_mg * 0.95 });
            let next = if up {
                p.dose_mg + step
            } else {
                p.dose_mg - step
            };
            if next <= 0.0 {
                return Err(strings::DOSE_AT_LEAST.into());
            }
            p.dose_mg = tidy((next / step).round() * step);
            Ok(())
        },
        strings::plan_dose_now,
    );
}

fn plan_interval(app: &mut App, up: bool) {
    adjust_plan(
        app,
        |p| {
            let now = p.interval_h;
            let next = if up {
                INTERVALS_H.iter().copied().find(|v| *v > now + 1e-9)
            } else {
                INTERVALS_H.iter().rev().copied().find(|v| *v < now - 1e-9)
            };
            match next {
                Some(v) => {
                    p.interval_h = v;
                    Ok(())
                }
                None => Err(strings::NO_FURTHER_INTERVAL.into()),
            }
        },
        strings::plan_interval_now,
    );
}

fn plan_infusion(app: &mut App, up: bool) {
    adjust_plan(
        app,
        |p| {
            if p.route != "infusion" {
                return Err(strings::NOT_AN_INFUSION.into());
            }
            let now = p.infusion_h.unwrap_or(fields::DEFAULT_INFUSION_H);
            let next = if up {
                now + INFUSION_STEP_H
            } else {
                now - INFUSION_STEP_H
            };
            if next < INFUSION_STEP_H - 1e-9 {
                return Err(strings::INFUSION_AT_LEAST.into());
            }
            p.infusion_h = Some(tidy(next));
            Ok(())
        },
        strings::plan_infusion_now,
    );
}

fn save(app: &mut App) {
    match app.path.clone() {
        Some(p) => save_to(app, p),
        None => {
            let start = app
                .suggested_path
                .as_ref()
                .map(|p| p.display().to_string())
                .unwrap_or_default();
            let mut ed = Editor::new(Target::SavePath, start);
            check(app, &mut ed);
            app.mode = Mode::Editing(ed);
        }
    }
}

fn save_to(app: &mut App, path: PathBuf) {
    if app.never_save_over.as_ref() == Some(&path) {
        return save_as(app, strings::save_blocked(&path.display().to_string()));
    }
    // The file the case came from must be as it was then; any other must not exist yet.
    let expect = if app.path.as_ref() == Some(&path) {
        app.on_disk.clone()
    } else {
        store::Expect::Unchanged(None)
    };
    app.effects.push(Effect::Save { path, expect });
}

/// Say why the case cannot be saved where it was going, and ask for another name.
fn save_as(app: &mut App, why: String) {
    app.quit_after_save = false;
    let mut ed = Editor::new(Target::SavePath, String::new());
    check(app, &mut ed);
    app.mode = Mode::Editing(ed);
    app.complain(why);
}

fn saved(app: &mut App, path: PathBuf, print: store::Fingerprint, text: String) {
    app.on_disk = store::Expect::Unchanged(Some(print));
    app.source_text = Some(text);
    app.dirty = false;
    app.saved = app.file.clone();
    app.load_error = None;
    app.title = path.display().to_string();
    app.say(strings::saved_to(&app.title));
    // The recovery files of this case's old and new file, and the one loaded, are older
    // than this save; another unsaved case's is left alone.
    let mut stale: Vec<PathBuf> = app
        .path
        .iter()
        .chain(std::iter::once(&path))
        .map(|p| recover::path_for(Some(p)))
        .chain(app.recovered_from.take())
        .collect();
    stale.dedup();
    app.effects
        .extend(stale.into_iter().map(Effect::DropRecovery));
    app.path = Some(path);
    if app.quit_after_save {
        app.mode = Mode::Quitting;
    }
}

fn not_saved(app: &mut App, path: PathBuf, error: SaveError) {
    let shown = path.display().to_string();
    match error {
        SaveError::ChangedOnDisk { .. } | SaveError::Exists { .. } => {
            app.pending_exists = matches!(error, SaveError::Exists { .. });
            app.pending_overwrite = Some(path);
            app.mode = Mode::Confirm(Confirm::Overwrite);
        }
        SaveError::ReadOnlyFile { .. } => save_as(app, strings::save_read_only(&shown)),
        SaveError::ReadOnlyFolder { dir, .. } => save_as(
            app,
            strings::save_folder_read_only(&dir.display().to_string()),
        ),
        SaveError::NotRegular { kind, .. } => save_as(app, strings::save_not_regular(&shown, kind)),
        SaveError::DidNotLoad { .. } => save_as(app, strings::save_blocked(&shown)),
        e => {
            app.quit_after_save = false;
            let why = match &e {
                SaveError::Io { step, reason, .. } => format!("{step}: {reason}"),
                other => other.to_string(),
            };
            app.complain(strings::save_failed(&shown, &why));
        }
    }
}

// ---- drug profiles -------------------------------------------------------------------------

/// The list line of the case's profile (0 is "no profile").
fn profile_line(app: &App) -> usize {
    let Some(name) = app.file.drug.profile.as_deref() else {
        return 0;
    };
    app.profiles
        .entries()
        .ok()
        .and_then(|es| es.iter().position(|e| e.name == name))
        .map(|i| i + 1)
        .unwrap_or(0)
}

fn open_chooser(app: &mut App) {
    if app.screen != Screen::Case {
        return;
    }
    app.mode = Mode::ChooseProfile(profile_line(app));
}

fn choose_profile(app: &mut App, at: usize, action: Action) {
    let n = app.profiles.entries().map(|e| e.len()).unwrap_or(0) + 1;
    match action {
        Action::Up => app.mode = Mode::ChooseProfile(at.saturating_sub(1)),
        Action::Down => app.mode = Mode::ChooseProfile((at + 1).min(n - 1)),
        Action::Cancel => {
            app.mode = Mode::Normal;
            app.say(strings::NOTHING_DONE);
        }
        Action::Quit => {
            app.mode = Mode::Normal;
            quit(app);
        }
        Action::Accept => {
            app.mode = Mode::Normal;
            pick_profile(app, at);
        }
        _ => {}
    }
}

/// Whether nothing in the case is yet written in its level unit, so the unit may follow a
/// newly chosen profile.
fn unit_is_free(f: &CaseFile) -> bool {
    f.drug.level_unit.is_none()
        || (f.levels.is_empty()
            && f.targets.is_none()
            && f.threshold.is_none()
            && f.switch.as_ref().is_none_or(|s| s.start_below.is_none()))
}

fn pick_profile(app: &mut App, at: usize) {
    let entry = match at {
        0 => None,
        i => app
            .profiles
            .entries()
            .ok()
            .and_then(|es| es.get(i - 1))
            .map(|e| {
                (
                    e.name.clone(),
                    e.display_name().to_string(),
                    e.profile.level_unit.clone(),
                )
            }),
    };
    let name = entry.as_ref().map(|e| e.0.clone());
    let unit = entry.as_ref().map(|e| e.2.clone());
    let unit_before = app.file.drug.level_unit.clone();
    // The new profile's population models: a model the case named that it lacks is dropped.
    let offered: Vec<String> = name
        .as_deref()
        .and_then(|n| app.profiles.get(n))
        .map(|e| {
            crate::profiles::models_of(&e.profile)
                .into_iter()
                .map(|m| m.name)
                .collect()
        })
        .unwrap_or_default();
    let r = app.change(|f| {
        f.drug.profile = name.clone();
        let named = f.fit.as_ref().and_then(|x| x.model.clone());
        if named.is_some_and(|m| !offered.contains(&m)) {
            crate::tui::fields::set_model(f, None);
        }
        if let Some(u) = &unit {
            if unit_is_free(f) {
                f.drug.level_unit = Some(u.clone());
            }
        }
        Ok(())
    });
    if let Err(e) = r {
        return app.complain(e);
    }
    match entry {
        None => app.say(strings::NO_PROFILE_CHOSEN),
        Some((_, display, _)) => {
            let unit_now = app.file.drug.level_unit.clone().unwrap_or_default();
            let changed = app.file.drug.level_unit != unit_before;
            app.say(strings::profile_chosen(
                &display,
                changed.then_some(unit_now.as_str()),
            ));
            // The cautions are shown at once: they matter before any figure does.
            app.mode = Mode::ProfileInfo(0);
        }
    }
}

fn show_profile_info(app: &mut App) {
    match app.file.drug.profile.as_deref() {
        None => app.complain(strings::NO_PROFILE_YET),
        Some(name) => match app.profiles.lookup(name) {
            Ok(_) => app.mode = Mode::ProfileInfo(0),
            Err(e) => app.complain(e),
        },
    }
}

fn profile_info(app: &mut App, top: u16, action: Action) {
    let most = screens::profile_info_lines(app).len().saturating_sub(1) as u16;
    match action {
        Action::Up => app.mode = Mode::ProfileInfo(top.saturating_sub(1)),
        Action::Down => app.mode = Mode::ProfileInfo((top + 1).min(most)),
        Action::Quit => {
            app.mode = Mode::Normal;
            quit(app);
        }
        Action::Cancel | Action::Help => app.mode = Mode::Normal,
        _ => {}
    }
}

// ---- dosing strategy ------------------------------------------------------------------------

/// The strategies the Strategy line steps through: the profile's default (no `strategy` in
/// the case), then each other strategy in the profile's order.
fn strategy_order(p: &crate::profiles::Profile) -> Vec<Option<String>> {
    std::iter::once(None)
        .chain(
            p.strategies
                .iter()
                .filter(|s| s.name != p.default_strategy)
                .map(|s| Some(s.name.clone())),
        )
        .collect()
}

/// Step the case's dosing strategy to the next of its profile's, and say which it is now,
/// with its label.
fn step_strategy(app: &mut App) {
    let Some(name) = app.file.drug.profile.clone() else {
        return app.complain(strings::STRATEGY_NEEDS_PROFILE);
    };
    let p = match app.profiles.lookup(&name) {
        Ok(e) => e.profile.clone(),
        Err(e) => return app.complain(e),
    };
    let order = strategy_order(&p);
    let now = app
        .file
        .drug
        .strategy
        .clone()
        .filter(|n| *n != p.default_strategy);
    let next = match order.iter().position(|o| *o == now) {
        Some(i) => order[(i + 1) % order.len()].clone(),
        // A name the profile does not have: back to the default.
        None => None,
    };
    let r = app.change(|f| {
        f.drug.strategy = next.clone();
        Ok(())
    });
    if let Err(e) = r {
        return app.complain(e);
    }
    let shown = next.as_deref().unwrap_or(&p.default_strategy);
    let label = p.strategy(shown).map_or("", |s| s.label.as_str());
    let own_targets = app.file.targets.is_some();
    app.say(strings::strategy_now(
        shown,
        label,
        next.is_none(),
        own_targets,
    ));
}

// ---- population model -----------------------------------------------------------------------

/// Step the case's population model to the next of its profile's — the default (no
/// `[fit] model`), then each other model in the profile's order — and say which it is now.
fn step_model(app: &mut App) {
    let Some(name) = app.file.drug.profile.clone() else {
        return app.complain(strings::MODEL_NEEDS_PROFILE);
    };
    let p = match app.profiles.lookup(&name) {
        Ok(e) => e.profile.clone(),
        Err(e) => return app.complain(e),
    };
    let models = crate::profiles::models_of(&p);
    let Some(default) = crate::profiles::default_model_name(&p) else {
        return app.complain(strings::no_model_in(&p.display_name));
    };
    let order: Vec<Option<String>> = std::iter::once(None)
        .chain(
            models
                .iter()
                .filter(|m| m.name != default)
                .map(|m| Some(m.name.clone())),
        )
        .collect();
    let now = app
        .file
        .fit
        .as_ref()
        .and_then(|f| f.model.clone())
        .filter(|n| *n != default);
    let next = match order.iter().position(|o| *o == now) {
        Some(i) => order[(i + 1) % order.len()].clone(),
        // A name the profile does not have: back to the default.
        None => None,
    };
    let r = app.change(|f| {
        crate::tui::fields::set_model(f, next.clone());
        Ok(())
    });
    if let Err(e) = r {
        return app.complain(e);
    }
    let shown = next.as_deref().unwrap_or(&default);
    let label = models
        .iter()
        .find(|m| m.name == shown)
        .map_or("", |m| m.label.as_str());
    let reason = p.default_model_reason.as_deref();
    app.say(strings::model_now(shown, label, next.is_none(), reason));
}

// ---- fit method ----------------------------------------------------------------------------

fn fit_method(app: &mut App) {
    let now = app.file.fit.as_ref().and_then(|f| f.method.clone());
    let order: Vec<Option<&'static str>> = std::iter::once(None)
        .chain(CHOICES.iter().map(|c| Some(c.name())))
        .collect();
    let next = match order.iter().position(|m| m.map(str::to_string) == now) {
        Some(i) => order[(i + 1) % order.len()],
        // A spelling the UI does not know: back to the automatic choice.
        None => None,
    };
    let r = app.change(|f| {
        let mut fit = f.fit.clone().unwrap_or_default();
        fit.method = next.map(str::to_string);
        f.fit = (fit != FitFile::default()).then_some(fit);
        Ok(())
    });
    if let Err(e) = r {
        return app.complain(e);
    }
    let used = app.figures.report.as_ref().map(|r| r.fit.method);
    match (&app.figures.problem, used) {
        (_, Some(m)) => app.say(strings::fit_method_now(next, m)),
        (Some(p), None) => app.complain(strings::fit_method_failed(next, &p.text)),
        (None, None) => app.say(strings::fit_method_now(next, "")),
    }
}

// ---- regimen suggestions -------------------------------------------------------------------

fn take_suggestion(app: &mut App, i: usize) {
    let Some(s) = screens::suggestions(app).get(i).cloned() else {
        return app.complain(strings::NO_SUGGESTION);
    };
    let r = app.change(|f| {
        let p = fields::plan_mut(f);
        p.dose_mg = s.dose_mg;
        p.interval_h = s.interval_h;
        p.route = s.route.to_string();
        p.infusion_h = (s.route == "infusion").then_some(s.infusion_h);
        if s.route != "oral" {
            p.bioavailability = None;
            p.formulation = None;
        }
        Ok(())
    });
    match r {
        Ok(()) => app.say(strings::suggestion_taken(i + 1, &s)),
        Err(e) => app.complain(e),
    }
}

// ---- record note ---------------------------------------------------------------------------

/// `CASE.note.txt` beside `CASE.toml`.
pub fn note_path_for(case: &Path) -> PathBuf {
    let stem = case
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| strings::NOTE_DEFAULT_STEM.into());
    case.with_file_name(format!("{stem}{}", strings::NOTE_SUFFIX))
}

/// Why a note may not be written to `name`, if it may not.
fn note_path_problem(app: &App, name: &str) -> Option<String> {
    if name.is_empty() {
        return Some(strings::TYPE_A_FILE_NAME.into());
    }
    let path = Path::new(name);
    let is_toml = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("toml"));
    if is_toml || app.path.as_deref() == Some(path) {
        return Some(strings::NOTE_NOT_A_CASE.into());
    }
    None
}

fn write_note(app: &mut App) {
    if app.figures.report.is_none() {
        let why = app.figures.problem.as_ref().map(|p| p.text.clone());
        return app.complain(strings::no_note(why.as_deref()));
    }
    match app.path.clone() {
        Some(p) => note_to(app, note_path_for(&p)),
        None => {
            let start = match &app.suggested_path {
                Some(p) => note_path_for(p),
                None => PathBuf::from(format!(
                    "{}{}",
                    strings::NOTE_DEFAULT_STEM,
                    strings::NOTE_SUFFIX
                )),
            };
            let mut ed = Editor::new(Target::NotePath, start.display().to_string());
            check(app, &mut ed);
            app.mode = Mode::Editing(ed);
        }
    }
}

/// The case file a note names: the file, marked when the case has unsaved changes.
fn note_source(app: &App) -> String {
    let source = match &app.path {
        Some(p) => p.display().to_string(),
        None => strings::NOTE_SOURCE_UNSAVED.to_string(),
    };
    if app.dirty && app.path.is_some() {
        strings::note_source_with_changes(&source)
    } else {
        source
    }
}

fn note_to(app: &mut App, path: PathBuf) {
    if app.figures.case.is_none() || app.figures.report.is_none() {
        let why = app.figures.problem.as_ref().map(|p| p.text.clone());
        return app.complain(strings::no_note(why.as_deref()));
    }
    if let Some(e) = note_path_problem(app, &path.display().to_string()) {
        return app.complain(e);
    }
    let source = note_source(app);
    app.effects.push(Effect::WriteNote {
        path,
        source,
        force: false,
    });
}

fn note_not_written(app: &mut App, path: PathBuf, error: OutputError) {
    match error {
        OutputError::NotOurs { .. } | OutputError::Edited { .. } => {
            app.pending_exists = matches!(error, OutputError::NotOurs { .. });
            app.pending_note = Some(path);
            app.mode = Mode::Confirm(Confirm::ReplaceNote);
        }
        OutputError::Save(SaveError::ReadOnlyFolder { dir, .. }) => {
            let mut ed = Editor::new(Target::NotePath, String::new());
            check(app, &mut ed);
            app.mode = Mode::Editing(ed);
            app.complain(strings::note_folder_read_only(&dir.display().to_string()));
        }
        e => app.complain(strings::note_failed(&e.to_string())),
    }
}
