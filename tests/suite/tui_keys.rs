//! Key sequences fed to the bedside UI without a terminal, checking the case file and the
//! figures that result. The figures are compared with the core's own report on the same
//! case file (self-consistency: the UI must show what the core computes).

use crate::common::{clear_field, ctrl, key, typed};
use crossterm::event::KeyCode;
use ebb::core::casefile::CaseFile;
use ebb::core::report::{self, Report};
use ebb::tui::app::{App, Confirm, Mode, Screen};
use ebb::tui::screens::{self, CaseLine};

/// The core's report on the app's case file, computed afresh.
fn core_report(file: &CaseFile) -> Report {
    report::build(&file.validate().unwrap()).unwrap()
}

fn shown(app: &App) -> &Report {
    app.figures.report.as_ref().expect("figures")
}

/// Go to the "add a level" line of the case screen.
fn to_add_level(app: &mut App) {
    key(app, KeyCode::Char('1'));
    for _ in 0..100 {
        if screens::selected_case_line(app) == CaseLine::AddLevel {
            return;
        }
        key(app, KeyCode::Down);
    }
    panic!("no add-a-level line");
}

#[test]
fn adding_a_level_changes_k_as_the_core_says() {
    let mut app = App::demo();
    let k_before = shown(&app).fit.k_per_h;
    to_add_level(&mut app);
    key(&mut app, KeyCode::Char('a'));
    assert!(matches!(app.mode, Mode::Editing(_)));
    clear_field(&mut app);
    typed(&mut app, "2027-03-03 15:30");
    key(&mut app, KeyCode::Enter);
    // The editor moves on to the value.
    clear_field(&mut app);
    typed(&mut app, "0.95");
    key(&mut app, KeyCode::Enter);
    // Then the note (left empty); the finished row waits for Enter.
    key(&mut app, KeyCode::Enter);
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Normal);
    assert_eq!(app.file.levels.len(), 5);
    let new = &app.file.levels[4];
    assert_eq!(new.time.to_string(), "2027-03-03T15:30:00");
    assert_eq!(new.value, 0.95);
    let r = shown(&app);
    assert_eq!(r.fit.level_rows, vec![2, 3, 4, 5]);
    assert_ne!(r.fit.k_per_h, k_before);
    assert_eq!(r.fit.k_per_h, core_report(&app.file).fit.k_per_h);
    assert!(app.dirty);
}

#[test]
fn escape_while_adding_drops_the_new_row() {
    let mut app = App::demo();
    to_add_level(&mut app);
    key(&mut app, KeyCode::Char('a'));
    assert_eq!(app.file.levels.len(), 5);
    key(&mut app, KeyCode::Esc);
    assert_eq!(app.file.levels.len(), 4);
    assert_eq!(app.mode, Mode::Normal);
}

#[test]
fn a_bad_time_is_refused_and_named_while_typing() {
    let mut app = App::demo();
    to_add_level(&mut app);
    key(&mut app, KeyCode::Up); // level 4
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "2027-02-30 08:00");
    let Mode::Editing(ed) = &app.mode else {
        panic!("not editing")
    };
    assert!(ed.error.as_deref().unwrap().contains("not a real date"));
    key(&mut app, KeyCode::Enter);
    // Still editing, the case unchanged.
    assert!(matches!(app.mode, Mode::Editing(_)));
    assert_eq!(app.file.levels[3].time.to_string(), "2027-03-03T13:30:00");
    // A time before the first dose parses but the core refuses it; the editor says so.
    clear_field(&mut app);
    typed(&mut app, "2027-03-01 08:00");
    let Mode::Editing(ed) = &app.mode else {
        panic!("not editing")
    };
    assert!(
        ed.error
            .as_deref()
            .unwrap()
            .contains("before the first dose"),
        "{ed:?}"
    );
    key(&mut app, KeyCode::Esc);
    assert_eq!(app.file.levels[3].time.to_string(), "2027-03-03T13:30:00");
}

#[test]
fn plan_keys_change_the_trough_every_keystroke() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('3'));
    assert_eq!(app.screen, Screen::Plan);
    let trough = |app: &App| shown(app).plan.as_ref().unwrap().trough_ss.unwrap();
    let t0 = trough(&app);
    key(&mut app, KeyCode::Char('+'));
    assert_eq!(app.file.plan.as_ref().unwrap().dose_mg, 170.0);
    let t1 = trough(&app);
    assert!(t1 > t0);
    assert_eq!(t1, core_report(&app.file).plan.unwrap().trough_ss.unwrap());
    // Linear kinetics: the trough scales with the dose (self-consistency).
    assert!((t1 / t0 - 170.0 / 160.0).abs() < 1e-12);
    key(&mut app, KeyCode::Char(']'));
    assert_eq!(app.file.plan.as_ref().unwrap().interval_h, 12.0);
    assert!(trough(&app) < t1);
    key(&mut app, KeyCode::Char('['));
    key(&mut app, KeyCode::Char('['));
    assert_eq!(app.file.plan.as_ref().unwrap().interval_h, 6.0);
    key(&mut app, KeyCode::Char('}'));
    assert_eq!(app.file.plan.as_ref().unwrap().infusion_h, Some(0.75));
    key(&mut app, KeyCode::Char('-'));
    key(&mut app, KeyCode::Char('-'));
    assert_eq!(app.file.plan.as_ref().unwrap().dose_mg, 150.0);
    assert_eq!(
        shown(&app).plan.as_ref().unwrap().peak_ss,
        core_report(&app.file).plan.unwrap().peak_ss
    );
}

#[test]
fn targets_typed_on_the_plan_screen_are_checked() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('3'));
    for _ in 0..7 {
        key(&mut app, KeyCode::Down); // trough max
    }
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "1");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.targets.as_ref().unwrap().trough_max, Some(1.0));
    let p = shown(&app).plan.as_ref().unwrap();
    let trough = p.checks.iter().find(|c| c.name == "trough").unwrap();
    assert!(!trough.met);
    assert_eq!(p.meets_targets, Some(false));
}

#[test]
fn toggling_a_level_on_the_fit_screen_refits() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('2'));
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Down); // level 3
    key(&mut app, KeyCode::Char(' '));
    assert_eq!(app.file.levels[2].use_in_fit, Some(false));
    let r = shown(&app);
    assert_eq!(r.fit.level_rows, vec![2, 4]);
    assert_eq!(r.fit.method, "two-point");
    key(&mut app, KeyCode::Char('u'));
    assert_eq!(app.file.levels[2].use_in_fit, None);
    assert_eq!(shown(&app).fit.level_rows, vec![2, 3, 4]);
}

#[test]
fn threshold_typed_gives_its_clock_time() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('4'));
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "0.5");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.threshold.as_ref().unwrap().below, 0.5);
    let t = shown(&app).threshold.as_ref().unwrap().clone();
    assert_eq!(t, core_report(&app.file).threshold.unwrap());
    // Clearing the threshold removes it, procedure and all.
    key(&mut app, KeyCode::Delete);
    assert!(app.file.threshold.is_none());
    assert!(shown(&app).threshold.is_none());
}

#[test]
fn deleting_a_row_asks_first() {
    let mut app = App::demo();
    to_add_level(&mut app);
    key(&mut app, KeyCode::Up);
    key(&mut app, KeyCode::Char('x'));
    assert_eq!(app.mode, Mode::Confirm(Confirm::DeleteLevel(3)));
    key(&mut app, KeyCode::Char('n'));
    assert_eq!(app.file.levels.len(), 4);
    key(&mut app, KeyCode::Char('x'));
    key(&mut app, KeyCode::Char('y'));
    assert_eq!(app.file.levels.len(), 3);
    assert_eq!(shown(&app).fit.level_rows, vec![2, 3]);
}

#[test]
fn quitting_with_changes_asks_first() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('q'));
    assert!(app.should_quit());
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('3'));
    key(&mut app, KeyCode::Char('+'));
    key(&mut app, KeyCode::Char('q'));
    assert_eq!(app.mode, Mode::Confirm(Confirm::Quit));
    key(&mut app, KeyCode::Esc);
    assert_eq!(app.mode, Mode::Normal);
    ctrl(&mut app, 'c');
    key(&mut app, KeyCode::Char('y'));
    assert!(app.should_quit());
}

#[test]
fn save_then_reopen_gives_the_same_case() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = dir.join("bed7.toml");
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('3'));
    key(&mut app, KeyCode::Char('+'));
    key(&mut app, KeyCode::Char('4'));
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "0.7");
    key(&mut app, KeyCode::Enter);
    ctrl(&mut app, 's');
    // The demo has no file yet: a name is asked for.
    assert!(matches!(app.mode, Mode::Editing(_)));
    typed(&mut app, path.to_str().unwrap());
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Normal);
    assert!(!app.dirty, "{:?}", app.message);
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(&path).unwrap().permissions().mode();
        assert_eq!(mode & 0o777, 0o600);
    }
    // No temporary file is left behind.
    assert_eq!(std::fs::read_dir(dir).unwrap().count(), 1);
    let again = App::open(&path);
    assert_eq!(again.file, app.file);
    assert_eq!(again.file.plan.as_ref().unwrap().dose_mg, 170.0);
    assert_eq!(again.file.threshold.as_ref().unwrap().below, 0.7);
    assert_eq!(
        again.figures.report.as_ref().unwrap().threshold,
        shown(&app).threshold
    );
    // A second save goes straight to the same file, and quitting then needs no question.
    let mut again = again;
    key(&mut again, KeyCode::Char('3'));
    key(&mut again, KeyCode::Char('-'));
    ctrl(&mut again, 's');
    assert!(!again.dirty);
    key(&mut again, KeyCode::Char('q'));
    assert!(again.should_quit());
    assert_eq!(App::open(&path).file.plan.unwrap().dose_mg, 160.0);
}

#[test]
fn a_new_case_can_be_built_from_keys() {
    let mut app = App::new_case();
    assert!(app.figures.report.is_none());
    // The cursor starts on "add a dose".
    assert_eq!(screens::selected_case_line(&app), CaseLine::AddDose);
    key(&mut app, KeyCode::Char('a'));
    clear_field(&mut app);
    typed(&mut app, "2027-03-02T08:00");
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "400");
    key(&mut app, KeyCode::Enter);
    // The infusion time, then Enter on the finished row.
    typed(&mut app, "0.5");
    key(&mut app, KeyCode::Enter);
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.doses.len(), 1);
    assert_eq!(app.file.doses[0].amount_mg, Some(400.0));
    for (t, v) in [("2027-03-02 10:00", "20"), ("2027-03-02 16:00", "10")] {
        to_add_level(&mut app);
        key(&mut app, KeyCode::Char('a'));
        clear_field(&mut app);
        typed(&mut app, t);
        key(&mut app, KeyCode::Enter);
        clear_field(&mut app);
        typed(&mut app, v);
        key(&mut app, KeyCode::Enter);
        key(&mut app, KeyCode::Enter);
        key(&mut app, KeyCode::Enter);
    }
    assert_eq!(app.file.levels.len(), 2);
    let r = shown(&app);
    // Halving in 6 h: k = ln 2 / 6 (self-consistency of the two-point fit).
    assert!(
        (r.fit.half_life_h - 6.0).abs() < 1e-9,
        "{}",
        r.fit.half_life_h
    );
    assert_eq!(r.fit.k_per_h, core_report(&app.file).fit.k_per_h);
}

/// Choose the profile `name` (None: no profile) from the list on the case screen.
fn choose_profile(app: &mut App, name: Option<&str>) {
    key(app, KeyCode::Char('1'));
    key(app, KeyCode::Char('p'));
    for _ in 0..100 {
        key(app, KeyCode::Up);
    }
    for _ in 0..100 {
        let Mode::ChooseProfile(at) = app.mode else {
            panic!("the profile list is not open: {:?}", app.mode);
        };
        let here = match at {
            0 => None,
            i => Some(app.profiles.entries().unwrap()[i - 1].name.clone()),
        };
        if here.as_deref() == name {
            key(app, KeyCode::Enter);
            return;
        }
        key(app, KeyCode::Down);
    }
    panic!("no profile {name:?} in the list");
}

#[test]
fn a_drug_profile_is_used_as_the_report_uses_it() {
    let mut app = App::demo();
    // A case file may name a profile this computer does not have.
    app.change(|f| {
        f.drug.profile = Some("no-such-drug".into());
        Ok(())
    })
    .unwrap();
    let p = app.figures.problem.as_ref().unwrap();
    assert_eq!(p.place.as_deref(), Some("drug.profile"));
    assert!(p.text.contains("no drug profile named"), "{}", p.text);
    // A profile whose kinetics are not first-order (saturable): no first-order report, the
    // saturable figures instead.
    choose_profile(&mut app, Some("phenytoin"));
    assert_eq!(app.file.drug.profile.as_deref(), Some("phenytoin"));
    assert!(app.figures.report.is_none());
    assert!(app.figures.saturable.is_some(), "{:?}", app.figures.problem);
    key(&mut app, KeyCode::Esc);
    // The matching profile: the report carries the profile's warnings like `ebb report`.
    choose_profile(&mut app, Some("gentamicin"));
    assert_eq!(app.file.drug.profile.as_deref(), Some("gentamicin"));
    assert!(app.figures.report.is_some(), "{:?}", app.figures.problem);
    key(&mut app, KeyCode::Esc);
    // And none again.
    choose_profile(&mut app, None);
    assert_eq!(app.file.drug.profile, None);
    assert_eq!(app.mode, Mode::Normal);
}

#[test]
fn undoing_a_change_by_hand_leaves_nothing_unsaved() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('3'));
    key(&mut app, KeyCode::Char('+'));
    assert!(app.dirty);
    key(&mut app, KeyCode::Char('-'));
    assert!(!app.dirty);
    to_add_level(&mut app);
    key(&mut app, KeyCode::Char('a'));
    key(&mut app, KeyCode::Esc);
    assert!(!app.dirty);
    key(&mut app, KeyCode::Char('q'));
    assert!(app.should_quit());
}
