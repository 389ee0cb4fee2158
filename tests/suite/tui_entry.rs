//! Bedside entry that a tired user cannot get wrong: key sequences on the demo case (an
//! invented patient) checking that typed text never becomes a command, that new rows walk
//! their fields in order and start empty, that changes can be undone, that rows stay in
//! time order, that unit changes convert, and that no key acts on a screen not drawn.

use crate::common::{clear_field, ctrl, key, typed};
use crossterm::event::KeyCode;
use ebb::tui::app::{App, Confirm, Mode, NewRow, Screen};
use ebb::tui::screens::{self, CaseLine};
use ebb::tui::view;
use ratatui::backend::TestBackend;
use ratatui::Terminal;

fn text(app: &App, w: u16, h: u16) -> String {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| view::draw(app, f)).unwrap();
    t.backend().to_string()
}

fn message(app: &App) -> String {
    app.message
        .as_ref()
        .map(|m| m.text.clone())
        .unwrap_or_default()
}

/// Move the case screen's cursor to `line`.
fn go_to(app: &mut App, line: CaseLine) {
    key(app, KeyCode::Char('1'));
    for _ in 0..50 {
        key(app, KeyCode::Up);
    }
    for _ in 0..100 {
        if screens::selected_case_line(app) == line {
            return;
        }
        key(app, KeyCode::Down);
    }
    panic!("no line {line:?}");
}

/// Add a level at `time` with `value` (and no note) through the keys.
fn add_level(app: &mut App, time: &str, value: &str) {
    go_to(app, CaseLine::AddLevel);
    key(app, KeyCode::Char('a'));
    clear_field(app);
    typed(app, time);
    key(app, KeyCode::Enter);
    typed(app, value);
    key(app, KeyCode::Enter);
    // The note.
    key(app, KeyCode::Enter);
}

#[test]
fn a_new_level_value_starts_empty_so_typing_does_not_append() {
    let mut app = App::demo();
    add_level(&mut app, "2027-03-03 15:30", "13");
    // Before: the value started at the previous level's 1.4 and "13" became "1.413".
    assert_eq!(app.file.levels[4].value, 13.0);
}

#[test]
fn a_new_level_walks_time_value_note_and_stray_letters_are_not_commands() {
    let mut app = App::demo();
    let profile = app.file.drug.profile.clone();
    go_to(&mut app, CaseLine::AddLevel);
    key(&mut app, KeyCode::Char('a'));
    clear_field(&mut app);
    typed(&mut app, "2027-03-03 15:30");
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "0.95");
    key(&mut app, KeyCode::Enter);
    // The walk goes on to the note: the words land there.
    typed(&mut app, "random level");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::RowDone(NewRow::Level(4)));
    // Stray typing after the row is done: no profile chooser, no use toggle, nothing.
    let before = app.file.clone();
    typed(&mut app, "peak level u x p");
    key(&mut app, KeyCode::Char(' '));
    assert_eq!(app.file, before);
    assert_eq!(app.file.drug.profile, profile);
    assert!(message(&app).contains("did nothing"), "{}", message(&app));
    assert_eq!(app.file.levels[4].note.as_deref(), Some("random level"));
    assert_eq!(app.file.levels[4].use_in_fit, None);
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Normal);
}

#[test]
fn the_scenario_of_the_report_changes_nothing_unseen() {
    // "Right Right Enter" then "peak level" after adding a level.
    let mut app = App::demo();
    add_level(&mut app, "2027-03-03 15:30", "0.95");
    let before = app.file.clone();
    key(&mut app, KeyCode::Right);
    key(&mut app, KeyCode::Right);
    typed(&mut app, "peak level");
    // The arrows ended the row; the cursor waits on "+ add a level", where no letter of
    // "peak level" changes the case except `p`, which opens the chooser (visible), and
    // the chooser takes none of the other letters as a choice.
    assert_eq!(app.file.levels, before.levels);
    assert_eq!(app.file.drug.profile, before.drug.profile);
}

#[test]
fn a_use_toggle_a_delete_and_a_profile_change_are_said_and_undone() {
    let mut app = App::demo();
    let start = app.file.clone();
    go_to(&mut app, CaseLine::Level(1));
    key(&mut app, KeyCode::Char('u'));
    assert_eq!(app.file.levels[1].use_in_fit, Some(false));
    assert!(message(&app).contains("LEFT OUT"), "{}", message(&app));
    ctrl(&mut app, 'z');
    assert_eq!(app.file, start);
    assert!(
        message(&app).starts_with("Undone, the case is as it was before: \"Level 2"),
        "{}",
        message(&app)
    );

    key(&mut app, KeyCode::Char('x'));
    key(&mut app, KeyCode::Char('y'));
    assert_eq!(app.file.levels.len(), 3);
    assert!(
        message(&app).contains("Level 2 deleted"),
        "{}",
        message(&app)
    );
    ctrl(&mut app, 'z');
    assert_eq!(app.file, start);

    key(&mut app, KeyCode::Char('p'));
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Enter);
    assert_ne!(app.file.drug.profile, start.drug.profile);
    key(&mut app, KeyCode::Esc);
    assert!(message(&app).contains("chosen"), "{}", message(&app));
    ctrl(&mut app, 'z');
    assert_eq!(app.file, start);
    assert!(!app.dirty);
    ctrl(&mut app, 'z');
    assert_eq!(message(&app), "Nothing to undo.");
}

#[test]
fn a_whole_new_row_is_one_undo_step_and_a_dropped_row_leaves_none() {
    let mut app = App::demo();
    let start = app.file.clone();
    add_level(&mut app, "2027-03-03 15:30", "0.95");
    assert_eq!(app.file.levels.len(), 5);
    ctrl(&mut app, 'z');
    assert_eq!(app.file, start);
    // Esc half-way drops the row, and there is nothing of it to undo.
    go_to(&mut app, CaseLine::AddLevel);
    key(&mut app, KeyCode::Char('a'));
    key(&mut app, KeyCode::Enter);
    key(&mut app, KeyCode::Esc);
    assert_eq!(app.file, start);
    assert!(app.undo.is_empty(), "{:?}", app.undo);
}

#[test]
fn after_adding_a_dose_one_down_reaches_the_levels() {
    let mut app = App::demo();
    go_to(&mut app, CaseLine::AddDose);
    key(&mut app, KeyCode::Char('a'));
    clear_field(&mut app);
    typed(&mut app, "2027-03-03 14:00");
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "140");
    key(&mut app, KeyCode::Enter);
    // The infusion time comes next, empty: Enter alone is refused.
    key(&mut app, KeyCode::Enter);
    assert!(matches!(app.mode, Mode::Editing(_)));
    typed(&mut app, "0.5");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.doses.len(), 5);
    assert_eq!(app.file.doses[4].amount_mg, Some(140.0));
    // One Down (which also ends the row) then `a` adds a level, not a dose.
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Char('a'));
    assert_eq!(
        app.file.levels.len(),
        5,
        "{:?}",
        screens::selected_case_line(&app)
    );
    assert_eq!(app.file.doses.len(), 5);
}

#[test]
fn a_dose_far_below_the_others_is_flagged() {
    let mut app = App::demo();
    go_to(&mut app, CaseLine::AddDose);
    key(&mut app, KeyCode::Char('a'));
    clear_field(&mut app);
    typed(&mut app, "2027-03-03 14:00");
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "14.8");
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "0.5");
    key(&mut app, KeyCode::Enter);
    let m = app.message.clone().unwrap();
    assert!(m.is_error);
    // 14.8 mg against a median of 140 mg (the demo's doses and its 160 mg plan).
    assert!(
        m.text.contains(
            "Check dose 5: 14.8 mg is under a quarter of the other doses (median 140 mg)"
        ),
        "{}",
        m.text
    );
    key(&mut app, KeyCode::Enter);
    assert!(text(&app, 80, 24).contains("⚠ far below"));
    // A usual dose is not flagged.
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Dose(3));
    key(&mut app, KeyCode::Right);
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "120");
    key(&mut app, KeyCode::Enter);
    assert!(!app.message.clone().unwrap().is_error, "{:?}", app.message);
}

#[test]
fn rows_are_kept_in_time_order() {
    let mut app = App::demo();
    // A dose added last but given first becomes dose 1.
    go_to(&mut app, CaseLine::AddDose);
    key(&mut app, KeyCode::Char('a'));
    clear_field(&mut app);
    typed(&mut app, "2027-03-01 22:00");
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "140");
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "0.5");
    key(&mut app, KeyCode::Enter);
    assert!(
        message(&app).starts_with("Dose 1 added"),
        "{}",
        message(&app)
    );
    key(&mut app, KeyCode::Enter);
    let times: Vec<String> = app.file.doses.iter().map(|d| d.time.to_string()).collect();
    let mut sorted = times.clone();
    sorted.sort();
    assert_eq!(times, sorted);
    assert_eq!(times[0], "2027-03-01T22:00:00");
    // A level whose time is edited to before another moves, and the cursor follows it.
    go_to(&mut app, CaseLine::Level(3));
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "2027-03-03 07:00");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.levels[1].time.to_string(), "2027-03-03T07:00:00");
    assert_eq!(app.file.levels[1].value, 1.4);
    assert_eq!(screens::selected_case_line(&app), CaseLine::Level(1));
    assert!(message(&app).contains("now level 2"), "{}", message(&app));
}

#[test]
fn no_key_acts_while_the_window_asks_to_be_enlarged() {
    let mut app = App::demo();
    app.window = Some((60, 12));
    go_to(&mut app, CaseLine::Dose(0));
    key(&mut app, KeyCode::Char('x'));
    key(&mut app, KeyCode::Char('y'));
    assert_eq!(app.file.doses.len(), 4);
    assert_eq!(app.mode, Mode::Normal);
    key(&mut app, KeyCode::Char('q'));
    assert!(app.should_quit());
}

#[test]
fn changing_the_level_unit_converts_the_values() {
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Field(ebb::tui::fields::Field::Unit));
    key(&mut app, KeyCode::Enter); // ug/mL: the same numbers
    assert_eq!(app.file.drug.level_unit.as_deref(), Some("ug/mL"));
    assert_eq!(app.file.levels[1].value, 6.1);
    key(&mut app, KeyCode::Enter); // ng/mL: x 1000
    assert_eq!(app.file.drug.level_unit.as_deref(), Some("ng/mL"));
    assert_eq!(app.file.levels[1].value, 6100.0);
    let t = app.file.targets.clone().unwrap();
    assert_eq!(t.peak, Some(vec![5000.0, 10000.0]));
    assert_eq!(t.trough_max, Some(2000.0));
    assert_eq!(app.file.threshold.as_ref().unwrap().below, 1000.0);
    // The fit is the same in mg/L.
    let k = app.figures.report.as_ref().unwrap().fit.k_per_h;
    let k0 = App::demo().figures.report.unwrap().fit.k_per_h;
    assert!((k - k0).abs() < 1e-12);
    assert!(
        message(&app).contains("converted from ug/mL"),
        "{}",
        message(&app)
    );
    ctrl(&mut app, 'z');
    assert_eq!(app.file.levels[1].value, 6.1);
}

#[test]
fn ctrl_c_while_typing_asks_and_keeps_the_typing() {
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Level(0));
    key(&mut app, KeyCode::Right);
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "1.3");
    ctrl(&mut app, 'c');
    assert_eq!(app.mode, Mode::Confirm(Confirm::Quit));
    let shown = text(&app, 80, 24);
    assert!(shown.contains("typing into Level 1 value"), "{shown}");
    assert!(shown.contains("(\"1.3\")"), "{shown}");
    assert!(shown.contains("n, Esc or Ctrl-C"), "{shown}");
    key(&mut app, KeyCode::Esc);
    match &app.mode {
        Mode::Editing(ed) => assert_eq!(ed.buffer, "1.3"),
        m => panic!("{m:?}"),
    }
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.levels[0].value, 1.3);
}

#[test]
fn the_quit_question_lists_every_key_it_takes() {
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Level(0));
    key(&mut app, KeyCode::Char('u'));
    key(&mut app, KeyCode::Char('q'));
    let shown = text(&app, 80, 24);
    for k in ["y:", "s:", "n, Esc or Ctrl-C"] {
        assert!(shown.contains(k), "{k}:\n{shown}");
    }
    ctrl(&mut app, 'c');
    assert_eq!(app.mode, Mode::Normal);
}

#[test]
fn the_save_question_shows_no_error_before_typing() {
    let mut app = App::new_case();
    ctrl(&mut app, 's');
    let shown = text(&app, 80, 24);
    assert!(!shown.contains("✗"), "{shown}");
    key(&mut app, KeyCode::Enter);
    assert!(text(&app, 80, 24).contains("✗ type a file name"));
}

#[test]
fn the_help_lists_every_key_the_screen_takes() {
    use ebb::tui::keymap::{self, NORMAL};
    for s in Screen::ALL {
        let help = keymap::help(s);
        for (i, b) in NORMAL.iter().enumerate() {
            if !b.on.covers(s) {
                continue;
            }
            // A binding without a label is listed with the labelled one before it.
            let listed = NORMAL[..=i]
                .iter()
                .rev()
                .find(|x| !x.label.is_empty())
                .map(|x| x.label)
                .unwrap();
            assert!(help.iter().any(|(l, _)| *l == listed), "{s:?}: {listed}");
        }
    }
}

// ---- inputs the trade uses (through the binary) ------------------------------------------

fn ebb_json(dir: &std::path::Path, name: &str, toml: &str) -> serde_json::Value {
    let path = dir.join(name);
    std::fs::write(&path, toml).unwrap();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ebb"))
        .args(["report", "--json"])
        .arg(&path)
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).unwrap()
}

const DIGOXIN: &str = r#"
[drug]
name = "digoxin"
profile = "digoxin"
level_unit = "UNIT"

[[dose]]
time = 2027-03-01T08:00:00
amount_mg = 0.25
route = "oral"

[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 0.25
route = "oral"

[[level]]
time = 2027-03-02T20:00:00
value = A

[[level]]
time = 2027-03-03T06:00:00
value = B
"#;

#[test]
fn digoxin_in_nmol_per_litre_fits_as_in_ng_per_ml() {
    let dir = std::env::temp_dir().join(format!("ebb-entry-nmol-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    // 1 ng/mL = 1000 / 780.9 nmol/L with the profile's molar mass (definition of the units).
    let f = 1000.0 / 780.9;
    let ng = DIGOXIN
        .replace("UNIT", "ng/mL")
        .replace("value = A", "value = 1.25")
        .replace("value = B", "value = 1.0");
    let nmol = DIGOXIN
        .replace("UNIT", "nmol/L")
        .replace("value = A", &format!("value = {}", 1.25 * f))
        .replace("value = B", &format!("value = {}", 1.0 * f));
    let a = ebb_json(&dir, "ng.toml", &ng);
    let b = ebb_json(&dir, "nmol.toml", &nmol);
    let k = |v: &serde_json::Value| v["fit"]["k_per_h"].as_f64().unwrap();
    assert!((k(&a) - k(&b)).abs() < 1e-9, "{} {}", k(&a), k(&b));
    let w = |v: &serde_json::Value| v["washout"][0]["level"].as_f64().unwrap();
    assert!((w(&b) / w(&a) - f).abs() < 1e-9, "{} {}", w(&a), w(&b));
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn drawing_code_does_not_call_update_code() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("src/tui");
    let mut files = vec![root.join("view.rs"), root.join("widgets/chart.rs")];
    for dir in ["screens", "widgets"] {
        for e in std::fs::read_dir(root.join(dir)).unwrap() {
            files.push(e.unwrap().path());
        }
    }
    for f in files {
        let text = std::fs::read_to_string(&f).unwrap();
        assert!(
            !text.contains("update::") && !text.contains("tui::update"),
            "{} calls update code",
            f.display()
        );
    }
}

// ---- what the case file can say, the screen can too ----------------------------------------

#[test]
fn time_zone_switch_and_resume_are_typed_on_the_screens() {
    use ebb::tui::fields::Field;
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Field(Field::TimeZone));
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "Europe/Paris");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.time_zone.as_deref(), Some("Europe/Paris"));
    assert!(app.figures.report.is_some());
    // An unknown zone is refused while typing, naming what is wrong.
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "Europe/Atlantis");
    match &app.mode {
        Mode::Editing(ed) => assert!(
            ed.error
                .as_deref()
                .unwrap_or("")
                .contains("unknown time zone"),
            "{:?}",
            ed.error
        ),
        m => panic!("{m:?}"),
    }
    key(&mut app, KeyCode::Esc);

    go_to(&mut app, CaseLine::Field(Field::SwitchTo));
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "tobramycin");
    key(&mut app, KeyCode::Enter);
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "0.5");
    key(&mut app, KeyCode::Enter);
    let sw = app.file.switch.clone().unwrap();
    assert_eq!(sw.to.as_deref(), Some("tobramycin"));
    assert_eq!(sw.start_below, Some(0.5));
    assert!(app.figures.report.as_ref().unwrap().advice.switch.is_some());
    key(&mut app, KeyCode::Char('5'));
    assert!(text(&app, 80, 24).contains("Switch to tobramycin"));

    // Resume after the procedure, on screen 4, with its result there.
    key(&mut app, KeyCode::Char('4'));
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "12");
    key(&mut app, KeyCode::Enter);
    assert_eq!(
        app.file.threshold.as_ref().unwrap().resume_after_h,
        Some(12.0)
    );
    let t = app
        .figures
        .report
        .as_ref()
        .unwrap()
        .threshold
        .clone()
        .unwrap();
    assert!(t.resume_at.is_some());
    let shown = text(&app, 80, 24);
    assert!(shown.contains("may resume from"), "{shown}");
    assert!(shown.contains("Resume after"), "{shown}");
}

#[test]
fn creatinine_is_shown_in_the_unit_it_was_entered_in() {
    let dir = std::env::temp_dir().join(format!("ebb-entry-crea-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let case = DIGOXIN
        .replace("UNIT", "ng/mL")
        .replace("value = A", "value = 1.25")
        .replace("value = B", "value = 1.0")
        .replace("[drug]", "[patient]\ncreatinine_umol_l = 97\n\n[drug]");
    let path = dir.join("c.toml");
    std::fs::write(&path, case).unwrap();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ebb"))
        .arg("note")
        .arg(&path)
        .output()
        .unwrap();
    let note = String::from_utf8(o.stdout).unwrap();
    assert!(note.contains("creatinine 97 umol/L"), "{note}");
    assert!(!note.contains("mg/dL"), "{note}");
    std::fs::remove_dir_all(&dir).unwrap();
}

// ---- words and numbers ---------------------------------------------------------------------

#[test]
fn numbers_are_written_out_as_a_pharmacist_writes_them() {
    use ebb::core::report::num;
    assert_eq!(num(5.265e-5), "0.00005265");
    assert_eq!(num(0.0001321), "0.0001321");
    assert_eq!(num(21304.0), "21304");
    assert_eq!(num(12_345_678_901.0), "12345678901");
}

#[test]
fn one_spelling_of_bayesian_and_of_the_auc_unit() {
    use ebb::core::report::method_word;
    assert_eq!(method_word("bayesian"), "Bayesian");
    assert_eq!(method_word("dose-history"), "dose-history");
    let app = App::demo();
    let mut app = app;
    key(&mut app, KeyCode::Char('3'));
    let shown = text(&app, 80, 24);
    assert!(shown.contains("mg·h/L"), "{shown}");
    assert!(!shown.contains("mg/L·h"), "{shown}");
}

#[test]
fn profiles_show_ignores_case() {
    for name in ["Vancomycin", "VANCOMYCIN", "vancomycin"] {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_ebb"))
            .args(["profiles", "show", name])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(0), "{name}");
        let out = String::from_utf8(o.stdout).unwrap();
        assert!(out.starts_with("Vancomycin (vancomycin"), "{out}");
    }
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ebb"))
        .args(["profiles", "show", "valproic acid"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0));
}

// ---- levels below the assay's limit --------------------------------------------------------

const BELOW_LIMIT: &str = r#"
[drug]
level_unit = "mg/L"

[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 400.0
route = "infusion"
infusion_h = 0.5

[[level]]
time = 2027-03-02T10:00:00
value = 20.0

[[level]]
time = 2027-03-02T16:00:00
value = 10.0

[[level]]
time = 2027-03-03T07:30:00
value = "<0.5"
"#;

#[test]
fn a_level_below_the_assay_limit_is_kept_out_of_the_fit_and_checked_as_a_bound() {
    let dir = std::env::temp_dir().join(format!("ebb-entry-blq-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let j = ebb_json(&dir, "blq.toml", BELOW_LIMIT);
    // The two measured levels halve in 6 h: k = ln 2 / 6 (self-consistency), whatever the
    // third says.
    assert_eq!(j["fit"]["levels_used"], 2);
    let k = j["fit"]["k_per_h"].as_f64().unwrap();
    assert!((k - std::f64::consts::LN_2 / 6.0).abs() < 1e-9, "{k}");
    let codes: Vec<String> = j["warning_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap().to_string())
        .collect();
    assert!(codes.contains(&"below-limit".to_string()), "{codes:?}");
    // 20 mg/L x 0.5^(21.5 h / 6 h) = 1.669 mg/L at the third level's time: above the limit,
    // so the warning says the fit and the laboratory disagree.
    let warning = j["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w.as_str().unwrap())
        .find(|w| w.contains("below the assay's limit"))
        .unwrap()
        .to_string();
    assert!(warning.contains("1.669 mg/L then, ABOVE"), "{warning}");
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn a_level_below_the_limit_is_typed_shown_and_saved_as_written() {
    let file = ebb::core::casefile::CaseFile::parse(BELOW_LIMIT).unwrap();
    let l = &file.levels[2];
    assert!(l.below_limit);
    assert_eq!(l.value, 0.5);
    assert!(file.to_toml().unwrap().contains("value = \"<0.5\""));
    // Typed on the screen.
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Level(3));
    key(&mut app, KeyCode::Right);
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "<0.3");
    key(&mut app, KeyCode::Enter);
    assert!(app.file.levels[3].below_limit);
    assert_eq!(app.file.levels[3].value, 0.3);
    let r = app.figures.report.as_ref().unwrap();
    assert!(!r.fit.level_rows.contains(&4), "{:?}", r.fit.level_rows);
    let shown = text(&app, 80, 24);
    assert!(shown.contains("<0.3"), "{shown}");
    // Back to a number.
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "1.4");
    key(&mut app, KeyCode::Enter);
    assert!(!app.file.levels[3].below_limit);
}

// ---- nothing cut at 80x24 without a way to see it ------------------------------------------

#[test]
fn fit_warnings_that_do_not_fit_scroll_into_view() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('2'));
    // Some method of the demo gives more figures and warnings than 80x24 holds.
    let mut cut = false;
    for _ in 0..4 {
        if text(&app, 80, 24).contains("more lines: PgDn") {
            cut = true;
            break;
        }
        key(&mut app, KeyCode::Char('m'));
    }
    assert!(cut, "{}", text(&app, 80, 24));
    let r = app.figures.report.as_ref().unwrap();
    let last = r.warnings.last().unwrap().text().to_string();
    let tail: String = last.split_whitespace().last().unwrap().to_string();
    for _ in 0..40 {
        if !text(&app, 80, 24).contains("more lines: PgDn") {
            break;
        }
        key(&mut app, KeyCode::PageDown);
    }
    let shown = text(&app, 80, 24);
    assert!(shown.contains(&tail), "{tail}:\n{shown}");
    assert!(!shown.contains("more lines: PgDn"), "{shown}");
}

#[test]
fn a_long_message_wraps_instead_of_being_cut() {
    let mut app = App::demo();
    app.complain(
        "A message long enough to need two lines at eighty columns, which must end with these words: the end.",
    );
    let shown = text(&app, 80, 24);
    assert!(shown.contains("the end."), "{shown}");
}

#[test]
fn the_auc24_column_shows_when_auc24_is_a_target() {
    let mut app = App::demo();
    let _ = app.change(|f| {
        f.targets = Some(ebb::core::casefile::TargetsFile {
            peak: None,
            trough_max: Some(2.0),
            auc24: Some(vec![60.0, 120.0]),
        });
        Ok(())
    });
    key(&mut app, KeyCode::Char('3'));
    assert!(!ebb::tui::screens::suggestions(&app).is_empty());
    let shown = text(&app, 80, 24);
    let head = shown
        .lines()
        .find(|l| l.contains("dose") && l.contains("every"))
        .unwrap_or_else(|| panic!("{shown}"));
    assert!(head.contains("AUC24"), "{shown}");
}

#[test]
fn the_washout_table_keeps_every_column_in_nmol_per_litre() {
    let mut app = App::demo();
    let _ = app.change(|f| {
        f.drug.molar_mass_g_mol = Some(477.6);
        Ok(())
    });
    go_to(&mut app, CaseLine::Field(ebb::tui::fields::Field::Unit));
    while app.file.drug.level_unit.as_deref() != Some("nmol/L") {
        key(&mut app, KeyCode::Enter);
    }
    key(&mut app, KeyCode::Char('5'));
    let shown = text(&app, 80, 24);
    for pct in ["50 %", "25 %", "12.5 %", "6.25 %", "3.125 %"] {
        assert!(shown.contains(pct), "{pct}:\n{shown}");
    }
}

#[test]
fn the_plan_screen_says_how_to_start_a_plan_in_full() {
    let mut app = App::demo();
    let _ = app.change(|f| {
        f.plan = None;
        Ok(())
    });
    key(&mut app, KeyCode::Char('3'));
    let shown = text(&app, 80, 24);
    assert!(shown.contains("from the last dose."), "{shown}");
}

#[test]
fn every_help_list_fits_whole_at_80x24() {
    for s in ['1', '2', '3', '4', '5'] {
        let mut app = App::demo();
        key(&mut app, KeyCode::Char(s));
        key(&mut app, KeyCode::Char('?'));
        let shown = text(&app, 80, 24);
        let quit = shown
            .lines()
            .position(|l| l.contains("│ q, Ctrl-C"))
            .unwrap_or_else(|| panic!("{s}:\n{shown}"));
        let bottom = shown.lines().position(|l| l.contains('└')).unwrap();
        assert_eq!(bottom, quit + 1, "{s}:\n{shown}");
    }
}

#[test]
fn the_dosing_strategy_is_chosen_from_the_profiles_strategies_and_undone() {
    // The gentamicin profile's strategies (drug-profiles/gentamicin.toml): the default
    // "conventional", then the others in file order.
    use ebb::tui::fields::Field;
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Field(Field::Strategy));
    let line = |app: &App| {
        text(app, 80, 24)
            .lines()
            .find(|l| l.contains("Strategy"))
            .unwrap_or_default()
            .to_string()
    };
    assert!(
        line(&app).contains("default: Conventional (multiple daily dosing)"),
        "{}",
        line(&app)
    );
    // Enter steps the choice: typed letters never become a strategy name.
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Normal);
    assert_eq!(
        app.file.drug.strategy.as_deref(),
        Some("conventional-serious")
    );
    key(&mut app, KeyCode::Char(' '));
    assert_eq!(app.file.drug.strategy.as_deref(), Some("extended-interval"));
    assert!(
        message(&app).contains("extended-interval (Extended interval (once daily, 7 mg/kg))"),
        "{}",
        message(&app)
    );
    // The demo has its own [targets]: they stay, and the message says so.
    assert!(message(&app).contains("the case's own targets stay"));
    assert!(line(&app).contains("Extended interval"), "{}", line(&app));
    assert!(app
        .file
        .to_toml()
        .unwrap()
        .contains("strategy = \"extended-interval\""));
    // The suggestions follow the strategy's intervals (24, 36, 48 h); the regimen the
    // patient is on is listed too, marked as current.
    let intervals: Vec<f64> = screens::suggestions(&app)
        .iter()
        .filter(|s| !s.current)
        .map(|s| s.interval_h)
        .collect();
    assert!(!intervals.is_empty());
    assert!(
        intervals.iter().all(|h| [24.0, 36.0, 48.0].contains(h)),
        "{intervals:?}"
    );
    // The plan screen says the targets are not the strategy's.
    key(&mut app, KeyCode::Char('3'));
    assert!(text(&app, 80, 24).contains("✗ targets not the strategy's: screen 2"));
    key(&mut app, KeyCode::Char('1'));
    key(&mut app, KeyCode::Enter);
    assert_eq!(
        app.file.drug.strategy.as_deref(),
        Some("endocarditis-synergy")
    );
    // Round to the default again.
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.drug.strategy, None);
    // Each step is one undo.
    ctrl(&mut app, 'z');
    assert_eq!(
        app.file.drug.strategy.as_deref(),
        Some("endocarditis-synergy")
    );
    ctrl(&mut app, 'z');
    assert_eq!(app.file.drug.strategy.as_deref(), Some("extended-interval"));
    // Delete goes back to the profile's default.
    key(&mut app, KeyCode::Delete);
    assert_eq!(app.file.drug.strategy, None);
}

#[test]
fn the_population_model_is_chosen_from_the_profiles_models_and_undone() {
    // The gentamicin profile's models (drug-profiles/gentamicin.toml): the default
    // "staatz-2006", then its summary values.
    use ebb::tui::fields::Field;
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Field(Field::Model));
    let line = |app: &App| {
        text(app, 160, 48)
            .lines()
            .find(|l| l.contains("Model "))
            .unwrap_or_default()
            .to_string()
    };
    assert!(
        line(&app).contains("default: Staatz 2006"),
        "{}",
        line(&app)
    );
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Normal);
    let chosen = |app: &App| app.file.fit.as_ref().and_then(|f| f.model.clone());
    assert_eq!(chosen(&app).as_deref(), Some("summary-values"));
    assert!(
        message(&app).starts_with("Model: summary-values ("),
        "{}",
        message(&app)
    );
    assert!(app
        .file
        .to_toml()
        .unwrap()
        .contains("model = \"summary-values\""));
    // Saved as written, beside the file's comments.
    let original = "# the demo\n".to_string() + &app.file.to_toml().unwrap();
    let (saved, _) = ebb::files::toml_keep::render_checked(&app.file, Some(&original)).unwrap();
    assert!(
        saved.contains("[fit]\nmodel = \"summary-values\""),
        "{saved}"
    );
    assert_eq!(
        ebb::core::casefile::CaseFile::parse(&saved)
            .unwrap()
            .fit
            .and_then(|f| f.model)
            .as_deref(),
        Some("summary-values")
    );
    // The fit method stays its own choice beside it.
    key(&mut app, KeyCode::Char('2'));
    key(&mut app, KeyCode::Char('m'));
    let method = app.file.fit.as_ref().and_then(|f| f.method.clone());
    assert!(method.is_some());
    assert_eq!(chosen(&app).as_deref(), Some("summary-values"));
    key(&mut app, KeyCode::Char('1'));
    // Round to the default again, with the reason said.
    key(&mut app, KeyCode::Enter);
    assert_eq!(chosen(&app), None);
    assert!(
        message(&app).contains("the profile's default, staatz-2006")
            && message(&app).contains("because it follows creatinine clearance"),
        "{}",
        message(&app)
    );
    // Each step is one undo.
    ctrl(&mut app, 'z');
    assert_eq!(chosen(&app).as_deref(), Some("summary-values"));
    // Delete goes back to the profile's default; without a method [fit] goes too.
    key(&mut app, KeyCode::Delete);
    assert_eq!(chosen(&app), None);
    assert_eq!(app.file.fit.as_ref().and_then(|f| f.method.clone()), method);
    let mut fresh = App::new_case();
    go_to(&mut fresh, CaseLine::Field(Field::Model));
    key(&mut fresh, KeyCode::Enter);
    assert_eq!(fresh.file.fit, None);
    assert!(
        message(&fresh).contains("choose a profile with p first"),
        "{}",
        message(&fresh)
    );
}

#[test]
fn a_strategy_needs_a_profile() {
    use ebb::tui::fields::Field;
    let mut app = App::new_case();
    go_to(&mut app, CaseLine::Field(Field::Strategy));
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Normal);
    assert_eq!(app.file.drug.strategy, None);
    assert!(
        message(&app).contains("choose one with p first"),
        "{}",
        message(&app)
    );
}

#[test]
fn height_albumin_and_dialysis_are_entered_on_the_case_screen() {
    use ebb::tui::fields::Field;
    let mut app = App::demo();
    go_to(&mut app, CaseLine::Field(Field::Height));
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "162");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.patient.height_cm, Some(162.0));
    go_to(&mut app, CaseLine::Field(Field::AlbuminGL));
    key(&mut app, KeyCode::Enter);
    typed(&mut app, "28");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.patient.albumin_g_l, Some(28.0));
    // Haemodialysis steps through not given, yes, no.
    go_to(&mut app, CaseLine::Field(Field::Dialysis));
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.patient.dialysis, Some(true));
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.patient.dialysis, Some(false));
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.patient.dialysis, None);
    // The derived figures follow: a woman of 162 cm has an ideal body weight of
    // 45.5 + 2.3 x (162 / 2.54 - 60) = 54.19 kg (Devine 1974, from memory).
    let shown = text(&app, 160, 48);
    assert!(shown.contains("IBW 54.19 kg (Devine)"), "{shown}");
}

#[test]
fn typing_replaces_a_proposed_time_and_a_cursor_key_keeps_it_to_edit() {
    // The new row's time starts at a proposal: the first character typed replaces it...
    let mut app = App::demo();
    go_to(&mut app, CaseLine::AddLevel);
    key(&mut app, KeyCode::Char('a'));
    let Mode::Editing(ed) = &app.mode else {
        panic!("no editor")
    };
    assert!(ed.proposed && !ed.buffer.is_empty());
    typed(&mut app, "2027-03-03 15:30");
    let Mode::Editing(ed) = &app.mode else {
        panic!("no editor")
    };
    assert_eq!(ed.buffer, "2027-03-03 15:30");
    assert!(!ed.proposed);
    // ...while Backspace keeps the rest of it to edit (here the last minute digit).
    key(&mut app, KeyCode::Esc);
    key(&mut app, KeyCode::Char('a'));
    let Mode::Editing(ed) = &app.mode else {
        panic!("no editor")
    };
    let proposal = ed.buffer.clone();
    key(&mut app, KeyCode::Backspace);
    typed(&mut app, "5");
    let Mode::Editing(ed) = &app.mode else {
        panic!("no editor")
    };
    let mut want = proposal.clone();
    want.pop();
    want.push('5');
    assert_eq!(ed.buffer, want);
    // The next field of the row starts empty and is not a proposal.
    key(&mut app, KeyCode::Enter);
    let Mode::Editing(ed) = &app.mode else {
        panic!("no editor")
    };
    assert!(ed.buffer.is_empty() && !ed.proposed);
}
