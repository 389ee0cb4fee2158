//! The bedside UI's drug profiles, fit methods, regimen suggestions, switch and record note:
//! key sequences checked against the core's own figures on the same case file (the UI must
//! show what the core computes), and snapshots of the new views at 80x24 and 160x48.

use std::path::Path;

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ebb::core::casefile::{CaseFile, SwitchFile};
use ebb::core::report::{self, num};
use ebb::tui::app::{App, Mode, Screen, Target};
use ebb::tui::catalog::Profiles;
use ebb::tui::fields::Field;
use ebb::tui::screens::{self, CaseLine, PLAN_FIELDS};
use ebb::tui::view;
use ebb::tui::widgets::chart::CurveRole;
use ratatui::backend::TestBackend;
use ratatui::Terminal;

fn key(app: &mut App, code: KeyCode) {
    app.handle_key(KeyEvent::new(code, KeyModifiers::NONE));
}

fn ch(app: &mut App, c: char) {
    key(app, KeyCode::Char(c));
}

fn typed(app: &mut App, text: &str) {
    for c in text.chars() {
        ch(app, c);
    }
}

fn clear_field(app: &mut App) {
    key(app, KeyCode::End);
    for _ in 0..80 {
        key(app, KeyCode::Backspace);
    }
}

fn draw(app: &App, w: u16, h: u16) -> Terminal<TestBackend> {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| view::draw(app, f)).unwrap();
    t
}

fn text(app: &App, w: u16, h: u16) -> String {
    draw(app, w, h).backend().to_string()
}

/// Both supported sizes, as a snapshot each.
fn snap_both(name: &str, app: &App) {
    for (w, h) in [(80u16, 24u16), (160, 48)] {
        insta::assert_snapshot!(format!("{name}_{w}x{h}"), draw(app, w, h).backend());
    }
}

/// The demo, changed by `f`.
fn demo_with(f: impl FnOnce(&mut CaseFile)) -> App {
    let mut app = App::demo();
    app.change(|file| {
        f(file);
        Ok(())
    })
    .unwrap();
    app
}

/// Choose the profile `name` (None: no profile) from the list on the case screen.
fn choose_profile(app: &mut App, name: Option<&str>) {
    ch(app, '1');
    ch(app, 'p');
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

/// A profile directory with a gentamicin profile that also gives the residual error a
/// Bayesian prior needs. The 15 % is invented for this screen test (not a drug fact): it only
/// has to make the core's prior exist; the figures are compared with the core's own.
fn priors_dir() -> tempfile::TempDir {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("drug-profiles/gentamicin.toml"),
    )
    .unwrap();
    // A local copy with its own residual error (the built-in one's line is replaced).
    let text: String = text
        .lines()
        .filter(|l| !l.starts_with("residual_error_percent"))
        .map(|l| format!("{l}\n"))
        .collect();
    let text = text.replacen(
        "[population]\n",
        "[population]\nresidual_error_percent = { value = 15.0, source = \"from memory, unverified\", note = \"invented for a screen test\" }\n",
        1,
    );
    // The summary values as the local profile's default model (the built-in's is Staatz 2006).
    let text: String = text
        .lines()
        .map(|l| {
            if l.starts_with("default_model = ") {
                "default_model = \"summary-values\"\n".to_string()
            } else if l.starts_with("default_model_reason = ") {
                "default_model_reason = \"a screen test of the summary values\"\n".to_string()
            } else {
                format!("{l}\n")
            }
        })
        .collect();
    std::fs::write(dir.join("gentamicin.toml"), text).unwrap();
    tmp
}

fn mode_600(path: &Path) -> u32 {
    use std::os::unix::fs::PermissionsExt;
    std::fs::metadata(path).unwrap().permissions().mode() & 0o777
}

// ---- drug profiles -------------------------------------------------------------------------

#[test]
fn choosing_a_profile_shows_its_cautions_and_brings_its_targets() {
    // The demo without its own targets and without a profile.
    let mut app = demo_with(|f| {
        f.targets = None;
        f.drug.profile = None;
    });
    assert!(app.figures.case.as_ref().unwrap().targets.is_empty());
    choose_profile(&mut app, Some("gentamicin"));
    assert_eq!(app.file.drug.profile.as_deref(), Some("gentamicin"));
    // The levels are already in mg/L; the unit is left alone.
    assert_eq!(app.file.drug.level_unit.as_deref(), Some("mg/L"));
    // The details open at once, with the cautions and the sampling advice.
    assert_eq!(app.mode, Mode::ProfileInfo(0));
    let shown = text(&app, 160, 48);
    let entry = app.profiles.get("gentamicin").unwrap().clone();
    assert!(shown.contains("Cautions"), "{shown}");
    assert!(shown.contains("Sampling: peak 30 min after"), "{shown}");
    let first_caution: String = entry.cautions()[0].chars().take(30).collect();
    assert!(shown.contains(&first_caution), "{shown}");
    key(&mut app, KeyCode::Esc);
    assert_eq!(app.mode, Mode::Normal);
    // `i` brings them back.
    ch(&mut app, 'i');
    assert_eq!(app.mode, Mode::ProfileInfo(0));
    key(&mut app, KeyCode::Esc);

    // The profile's default targets are the case's now, as `ebb report` would use them.
    let want = ebb::profiles::defaults_for(&entry.profile, Some("mg/L"), None).targets;
    let case = app.figures.case.as_ref().unwrap();
    assert_eq!(case.targets, want);
    assert_eq!(want.peak, Some([5.0, 10.0]));
    let core = ebb::cli::validate_with_profile(&app.file, None).unwrap();
    assert_eq!(core.targets, want);
    let checks = &app
        .figures
        .report
        .as_ref()
        .unwrap()
        .plan
        .as_ref()
        .unwrap()
        .checks;
    assert!(checks.iter().any(|c| c.name == "peak"), "{checks:?}");
    // The plan screen says where they come from.
    ch(&mut app, '3');
    let plan = text(&app, 80, 24);
    assert!(plan.contains("5-10 mg/L (profile)"), "{plan}");
    assert!(plan.contains("2 mg/L (profile)"), "{plan}");
    insta::assert_snapshot!("plan_profile_targets_80x24", draw(&app, 80, 24).backend());

    // Typing one target makes the case's own targets, keeping the others as they were.
    while app.cursors.plan
        != PLAN_FIELDS
            .iter()
            .position(|f| *f == Field::TargetTrough)
            .unwrap()
    {
        key(&mut app, KeyCode::Down);
    }
    key(&mut app, KeyCode::Enter);
    clear_field(&mut app);
    typed(&mut app, "1.5");
    key(&mut app, KeyCode::Enter);
    let t = app.file.targets.as_ref().unwrap();
    assert_eq!(t.peak, Some(vec![5.0, 10.0]));
    assert_eq!(t.trough_max, Some(1.5));
    let plan = text(&app, 80, 24);
    assert!(!plan.contains("(profile)"), "{plan}");
    assert_eq!(
        app.figures.case.as_ref().unwrap().targets.trough_max,
        Some(1.5)
    );
}

#[test]
fn a_profile_sets_the_unit_only_while_nothing_is_written_in_it() {
    // A new case: mg/L offered, no levels yet: lithium's unit is taken.
    let mut app = App::new_case();
    choose_profile(&mut app, Some("lithium"));
    let li_unit = app
        .profiles
        .get("lithium")
        .unwrap()
        .profile
        .level_unit
        .clone();
    assert_eq!(app.file.drug.level_unit.as_deref(), Some(li_unit.as_str()));
    assert_ne!(li_unit, "mg/L");
    // The demo has levels in mg/L: they keep their unit.
    let mut demo = App::demo();
    choose_profile(&mut demo, Some("lithium"));
    assert_eq!(demo.file.drug.profile.as_deref(), Some("lithium"));
    assert_eq!(demo.file.drug.level_unit.as_deref(), Some("mg/L"));
    // Esc on the list changes nothing.
    key(&mut demo, KeyCode::Esc);
    let before = demo.file.clone();
    ch(&mut demo, 'p');
    key(&mut demo, KeyCode::Down);
    key(&mut demo, KeyCode::Esc);
    assert_eq!(demo.file, before);
    assert_eq!(demo.mode, Mode::Normal);
}

#[test]
fn enter_on_the_profile_field_opens_the_list() {
    let mut app = App::demo();
    ch(&mut app, '1');
    for _ in 0..100 {
        if screens::selected_case_line(&app) == CaseLine::Field(Field::DrugProfile) {
            break;
        }
        key(&mut app, KeyCode::Down);
    }
    key(&mut app, KeyCode::Enter);
    // The list opens on the case's own profile.
    let Mode::ChooseProfile(at) = app.mode else {
        panic!("{:?}", app.mode);
    };
    assert_eq!(app.profiles.entries().unwrap()[at - 1].name, "gentamicin");
}

#[test]
fn a_profiles_directory_replaces_a_built_in() {
    let dir = priors_dir();
    let app = App::demo_in(Profiles::load(Some(dir.path())));
    let e = app.profiles.get("gentamicin").unwrap();
    assert!(
        e.origin.words().contains("replaces the built-in"),
        "{:?}",
        e.origin
    );
    assert!(e
        .profile
        .population
        .as_ref()
        .unwrap()
        .residual_error_percent
        .is_some());
    assert_eq!(app.profiles.dir(), Some(dir.path()));
    // A broken directory: the list says why, and choosing is still possible ("none").
    let broken = tempfile::tempdir().unwrap();
    std::fs::write(
        broken.path().join("gentamicin.toml"),
        "schema = 1\ndisplay_name = 3\n",
    )
    .unwrap();
    let mut app = App::demo_in(Profiles::load(Some(broken.path())));
    assert!(app
        .figures
        .problem
        .as_ref()
        .unwrap()
        .text
        .contains("gentamicin.toml"));
    ch(&mut app, 'p');
    let shown = text(&app, 160, 48);
    assert!(shown.contains("gentamicin.toml"), "{shown}");
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.file.drug.profile, None);
    assert!(app.figures.report.is_some());
}

#[test]
fn profile_views_at_both_sizes() {
    let mut app = App::demo();
    ch(&mut app, '1');
    ch(&mut app, 'p');
    snap_both("profile_list", &app);
    key(&mut app, KeyCode::Esc);
    ch(&mut app, 'i');
    snap_both("profile_details", &app);
    // Scrolling shows the last caution at 80x24.
    for _ in 0..40 {
        key(&mut app, KeyCode::Down);
    }
    let shown = text(&app, 80, 24);
    let last = app
        .profiles
        .get("gentamicin")
        .unwrap()
        .cautions()
        .last()
        .unwrap()
        .clone();
    let tail: String = last
        .chars()
        .rev()
        .take(12)
        .collect::<Vec<_>>()
        .into_iter()
        .rev()
        .collect();
    assert!(shown.contains(&tail), "{tail}\n{shown}");
}

// ---- fit method ----------------------------------------------------------------------------

#[test]
fn the_fit_method_key_steps_through_the_choices() {
    // Without a body weight the population volume (per kg) cannot be had, so the Bayesian
    // choice is refused below.
    let mut app = demo_with(|f| f.patient.weight_kg = None);
    ch(&mut app, '2');
    assert_eq!(
        app.figures.report.as_ref().unwrap().fit.method,
        "log-linear"
    );
    assert!(text(&app, 80, 24).contains("auto: log-linear"));
    ch(&mut app, 'm');
    assert_eq!(
        app.file.fit.as_ref().unwrap().method.as_deref(),
        Some("log-linear")
    );
    assert!(text(&app, 80, 24).contains("log-linear (chosen)"));
    ch(&mut app, 'm');
    assert_eq!(
        app.file.fit.as_ref().unwrap().method.as_deref(),
        Some("dose-history")
    );
    let r = app.figures.report.as_ref().unwrap();
    assert_eq!(r.fit.method, "dose-history");
    // The same figures as the core gives for the same case file.
    let core = report::build(&ebb::cli::validate_with_profile(&app.file, None).unwrap()).unwrap();
    assert_eq!(r.fit.k_per_h, core.fit.k_per_h);
    assert_eq!(r.fit.volume_ci95_l, core.fit.volume_ci95_l);
    assert!(r.fit.volume_ci95_l.is_some());
    // The model through every level, with its 95 % band.
    let chart = app.figures.fit_chart().unwrap();
    assert_eq!(
        chart
            .curves
            .iter()
            .filter(|c| c.role == CurveRole::Band)
            .count(),
        2
    );
    assert!(!chart.curves.iter().any(|c| c.role == CurveRole::Fitted));
    let shown = text(&app, 80, 24);
    assert!(shown.contains("dose-history (chosen)"), "{shown}");
    assert!(shown.contains(&num(r.fit.k_per_h)), "{shown}");
    // Bayesian: no body weight, so no population volume: the core's error, and the method
    // line stays to switch on.
    ch(&mut app, 'm');
    assert_eq!(
        app.file.fit.as_ref().unwrap().method.as_deref(),
        Some("bayesian")
    );
    assert!(app.figures.report.is_none());
    let problem = app.figures.problem.as_ref().unwrap().text.clone();
    assert!(problem.contains("patient.weight_kg"), "{problem}");
    assert!(app.message.as_ref().unwrap().is_error);
    let shown = text(&app, 80, 24);
    assert!(shown.contains("Bayesian (chosen)"), "{shown}");
    insta::assert_snapshot!("fit_method_refused_80x24", draw(&app, 80, 24).backend());
    // The population model alone (a choice before any level), then back to the automatic one.
    ch(&mut app, 'm');
    assert_eq!(
        app.file.fit.as_ref().unwrap().method.as_deref(),
        Some("population")
    );
    ch(&mut app, 'm');
    assert_eq!(app.file.fit, None);
    assert_eq!(
        app.figures.report.as_ref().unwrap().fit.method,
        "log-linear"
    );
}

#[test]
fn a_bayesian_fit_shows_the_population_and_the_move() {
    let dir = priors_dir();
    let mut app = App::demo_in(Profiles::load(Some(dir.path())));
    ch(&mut app, '2');
    for _ in 0..3 {
        ch(&mut app, 'm');
    }
    assert_eq!(
        app.file.fit.as_ref().unwrap().method.as_deref(),
        Some("bayesian")
    );
    let r = app.figures.report.as_ref().unwrap();
    assert_eq!(r.fit.method, "bayesian", "{:?}", app.figures.problem);
    let core =
        report::build(&ebb::cli::validate_with_profile(&app.file, Some(dir.path())).unwrap())
            .unwrap();
    assert_eq!(r.fit.k_per_h, core.fit.k_per_h);
    let pop = r.fit.population.as_ref().unwrap();
    let shown = text(&app, 80, 24);
    assert!(shown.contains("(summary-values, 68 kg"), "{shown}");
    assert!(shown.contains(&num(pop.population.volume_l)), "{shown}");
    assert!(
        shown.contains(&format!("{:+.2} SD", pop.elimination_shift_sd)),
        "{shown}"
    );
    snap_both("fit_bayesian", &app);
}

#[test]
fn dose_history_fit_at_both_sizes() {
    let mut app = demo_with(|f| {
        f.fit = Some(ebb::core::casefile::FitFile {
            method: Some("dose-history".into()),
            model: None,
        })
    });
    app.screen = Screen::Fit;
    snap_both("fit_dose_history", &app);
}

// ---- regimen suggestions -------------------------------------------------------------------

#[test]
fn taking_a_suggestion_changes_the_plan_and_its_figures() {
    let mut app = App::demo();
    ch(&mut app, '3');
    let list = screens::suggestions(&app).to_vec();
    assert!(list.len() >= 2, "{list:?}");
    let trough_before = app
        .figures
        .report
        .as_ref()
        .unwrap()
        .plan
        .as_ref()
        .unwrap()
        .trough_ss;
    // Down past the fields to the second suggestion, then Enter.
    for _ in 0..PLAN_FIELDS.len() + 1 {
        key(&mut app, KeyCode::Down);
    }
    assert_eq!(app.cursors.plan, PLAN_FIELDS.len() + 1);
    snap_both("plan_suggestion_selected", &app);
    key(&mut app, KeyCode::Enter);
    let s = &list[1];
    let plan = app.file.plan.as_ref().unwrap();
    assert_eq!(plan.dose_mg, s.dose_mg);
    assert_eq!(plan.interval_h, s.interval_h);
    assert_eq!(plan.route, s.route);
    let part = app.figures.report.as_ref().unwrap().plan.as_ref().unwrap();
    assert_eq!(part.peak_ss, Some(s.peak_ss));
    assert_eq!(part.trough_ss, Some(s.trough_ss));
    // In the demo the second suggestion is the plan already (160 mg every 8 h).
    assert_eq!(part.trough_ss, trough_before);
    assert_eq!(part.meets_targets, Some(true));
    // The list does not re-sort under the cursor after taking one (docs/methods-regimen.md).
    assert_eq!(screens::suggestions(&app), &list[..]);
    assert_eq!(app.cursors.plan, PLAN_FIELDS.len() + 1);
    // Taking the third changes the plan's figures, and still not the list.
    key(&mut app, KeyCode::Down);
    key(&mut app, KeyCode::Enter);
    let part = app.figures.report.as_ref().unwrap().plan.as_ref().unwrap();
    assert_eq!(part.trough_ss, Some(list[2].trough_ss));
    assert_ne!(part.trough_ss, trough_before);
    assert!(app.dirty);
    assert_eq!(screens::suggestions(&app), &list[..]);
    // `t` with the cursor on a field takes the first.
    for _ in 0..20 {
        key(&mut app, KeyCode::Up);
    }
    ch(&mut app, 't');
    let first = &screens::suggestions(&app)[0];
    assert_eq!(app.file.plan.as_ref().unwrap().dose_mg, first.dose_mg);
    assert_eq!(app.file.plan.as_ref().unwrap().interval_h, first.interval_h);
    // Without targets there is nothing to take, and the screen says why.
    let mut bare = demo_with(|f| {
        f.targets = None;
        f.drug.profile = None;
    });
    ch(&mut bare, '3');
    let plan_before = bare.file.plan.clone();
    ch(&mut bare, 't');
    assert_eq!(bare.file.plan, plan_before);
    assert!(bare.message.as_ref().unwrap().is_error);
    assert!(text(&bare, 80, 24).contains("Set targets"));
}

// ---- washout: switch -----------------------------------------------------------------------

#[test]
fn the_switch_time_is_on_the_washout_screen() {
    let mut app = demo_with(|f| {
        f.switch = Some(SwitchFile {
            to: Some("another agent".into()),
            start_below: Some(0.5),
            after_half_lives: None,
        })
    });
    ch(&mut app, '5');
    let sw = app
        .figures
        .report
        .as_ref()
        .unwrap()
        .advice
        .switch
        .clone()
        .unwrap();
    let shown = text(&app, 80, 24);
    assert!(shown.contains("Switch to another agent"), "{shown}");
    assert!(shown.contains(&sw.start_at.readable(false)), "{shown}");
    snap_both("washout_switch", &app);
}

// ---- record note ---------------------------------------------------------------------------

#[test]
fn the_note_is_written_beside_the_case_file_for_its_owner_only() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let case_path = dir.join("bed7.toml");
    let mut app = App::demo();
    app.path = Some(case_path.clone());
    app.handle_key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL));
    assert!(case_path.exists());
    ch(&mut app, 'n');
    let note = dir.join("bed7.note.txt");
    assert!(note.exists(), "{:?}", app.message);
    assert_eq!(mode_600(&note), 0o600);
    let text = std::fs::read_to_string(&note).unwrap();
    let r = app.figures.report.as_ref().unwrap();
    assert!(text.contains(&num(r.fit.k_per_h)), "{text}");
    assert!(text.contains(&case_path.display().to_string()), "{text}");
    assert!(text.contains(ebb::core::report::CAUTION), "{text}");
    assert!(!app.message.as_ref().unwrap().is_error);
    // The case file itself is untouched by the note.
    assert_eq!(
        CaseFile::parse(&std::fs::read_to_string(&case_path).unwrap()).unwrap(),
        app.file
    );
    // A later note replaces it, and says when the case had unsaved changes.
    ch(&mut app, '3');
    ch(&mut app, '+');
    ch(&mut app, 'n');
    let again = std::fs::read_to_string(&note).unwrap();
    assert!(again.contains("with changes not yet saved"), "{again}");
    assert_eq!(mode_600(&note), 0o600);
    // No stray temporary files.
    let names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 2, "{names:?}");
}

#[test]
fn a_case_without_a_file_asks_for_the_note_name() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let mut app = App::demo();
    ch(&mut app, 'n');
    assert!(matches!(&app.mode, Mode::Editing(e) if e.target == Target::NotePath));
    insta::assert_snapshot!("note_prompt_80x24", draw(&app, 80, 24).backend());
    // A case-file name is refused.
    clear_field(&mut app);
    typed(&mut app, &dir.join("x.toml").display().to_string());
    key(&mut app, KeyCode::Enter);
    assert!(matches!(&app.mode, Mode::Editing(e) if e.error.is_some()));
    assert!(!dir.join("x.toml").exists());
    // A Markdown name gives the Markdown note.
    clear_field(&mut app);
    let md = dir.join("bed7.md");
    typed(&mut app, &md.display().to_string());
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Normal);
    assert_eq!(mode_600(&md), 0o600);
    let text = std::fs::read_to_string(&md).unwrap();
    assert!(text.contains("## "), "{text}");
    assert!(text.contains("a case not saved to a file"), "{text}");
}

#[test]
fn no_note_without_figures() {
    let mut app = App::new_case();
    let dir = tempfile::tempdir().unwrap();
    app.path = Some(dir.path().join("empty.toml"));
    ch(&mut app, 'n');
    assert!(app.message.as_ref().unwrap().is_error);
    assert!(!dir.path().join("empty.note.txt").exists());
}

// ---- help ----------------------------------------------------------------------------------

#[test]
fn the_help_lists_the_new_keys_and_fits_80x24() {
    for (s, keys) in [
        ('1', &["p ", "i ", "n "][..]),
        ('2', &["m "][..]),
        ('3', &["t ", "Enter", "i ", "+ -, =", "Space"][..]),
        ('5', &["n "][..]),
    ] {
        let mut app = App::demo();
        ch(&mut app, s);
        ch(&mut app, '?');
        let shown = text(&app, 80, 24);
        for k in keys {
            assert!(shown.contains(&format!("│ {k}")), "{k:?} on {s}:\n{shown}");
        }
        // The whole list fits: its last line (quit) is on screen.
        assert!(shown.contains("q, Ctrl-C"), "{s}:\n{shown}");
    }
    let mut app = App::demo();
    ch(&mut app, '1');
    ch(&mut app, '?');
    insta::assert_snapshot!("help_case_80x24", draw(&app, 80, 24).backend());
}

#[test]
fn the_plan_screen_shows_the_absorbed_peak_and_the_12_hour_level() {
    // A lithium case (built-in profile, ka 0.293 /h): the screen shows what the report
    // computes. Invented data.
    let mut text = String::from(
        "[patient]\nweight_kg = 70.0\n[drug]\nprofile = \"lithium\"\nlevel_unit = \"mmol/L\"\n",
    );
    for day in 2..=8 {
        text += &format!(
            "[[dose]]\ntime = 2027-03-0{day}T20:00:00\namount_mg = 800.0\nroute = \"oral\"\n"
        );
    }
    text += "[[level]]\ntime = 2027-03-09T08:00:00\nvalue = 0.62\n[[level]]\ntime = 2027-03-09T18:00:00\nvalue = 0.47\n";
    text += "[plan]\ndose_mg = 800.0\ninterval_h = 24.0\nroute = \"oral\"\n";
    let parsed = CaseFile::parse(&text).unwrap();
    let mut app = demo_with(|f| *f = parsed);
    app.screen = Screen::Plan;
    let shown = text_of(&app);
    let r = app.figures.report.as_ref().expect("a report");
    let p = r.plan.as_ref().unwrap();
    assert!(
        shown.contains(&format!("{} mmol/L", num(p.level_12h_ss.unwrap()))),
        "{shown}"
    );
    assert!(shown.contains("12-h"), "{shown}");
    assert!(shown.contains("after the dose (absorbed)"), "{shown}");
}

fn text_of(app: &App) -> String {
    text(app, 160, 48)
}

#[test]
fn only_the_chart_on_screen_is_sampled_and_a_plan_edit_keeps_the_fit() {
    use ebb::tui::figures::Figures;
    let mut app = App::demo();
    // Opening the case samples no chart; drawing the plan screen samples its own only.
    assert_eq!(app.figures.charts_built(), [false; 4]);
    ch(&mut app, '3');
    draw(&app, 80, 24);
    assert_eq!(app.figures.charts_built(), [false, true, false, false]);
    // A plan keystroke: new figures, with the fit of the state before (the fit never reads
    // the plan), equal to a fresh analysis of the edited case.
    let fit_before = app.figures.fit.clone();
    ch(&mut app, '+');
    assert_eq!(app.file.plan.as_ref().unwrap().dose_mg, 170.0);
    assert_eq!(app.figures.charts_built(), [false; 4]);
    draw(&app, 160, 48);
    assert_eq!(app.figures.charts_built(), [false, true, false, false]);
    assert_eq!(app.figures.fit, fit_before);
    let fresh = Figures::compute(&app.file, &app.profiles);
    assert_eq!(app.figures.fit, fresh.fit);
    assert_eq!(app.figures.report, fresh.report);
    assert_eq!(app.figures.plan_chart(), fresh.plan_chart());
    // Undo of a plan edit is a plan edit too; a level edit fits again.
    ctrl_z(&mut app);
    assert_eq!(app.file.plan.as_ref().unwrap().dose_mg, 160.0);
    assert_eq!(
        app.figures.report,
        Figures::compute(&app.file, &app.profiles).report
    );
    let before = app.figures.fit.clone();
    ch(&mut app, '2');
    key(&mut app, KeyCode::Down);
    ch(&mut app, 'u');
    assert_eq!(app.file.levels[1].use_in_fit, Some(false));
    assert_ne!(app.figures.fit, before);
    assert_eq!(
        app.figures.fit,
        Figures::compute(&app.file, &app.profiles).fit
    );
}

fn ctrl_z(app: &mut App) {
    app.handle_key(KeyEvent::new(KeyCode::Char('z'), KeyModifiers::CONTROL));
}

#[test]
fn a_plan_edit_fits_a_bayesian_estimate_again_when_its_model_reads_the_daily_dose() {
    // The valproate population model's clearance follows the daily dose (profile
    // valproic-acid; see bayes_prior.rs): its warning names the plan's daily dose, so after a
    // plan keystroke the Bayesian fit must be that of the new plan, not the one kept.
    let text = "[patient]\nweight_kg = 70.0\nheight_cm = 175.0\nage_years = 60.0\nsex = \"male\"\ncreatinine_mg_dl = 1.0\n\
[drug]\nprofile = \"valproic-acid\"\nlevel_unit = \"mg/L\"\n\
[[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 500.0\nroute = \"oral\"\n\
[[dose]]\ntime = 2027-03-02T20:00:00\namount_mg = 500.0\nroute = \"oral\"\n\
[[level]]\ntime = 2027-03-03T07:30:00\nvalue = 70.0\n\
[plan]\ndose_mg = 750.0\ninterval_h = 12.0\nroute = \"oral\"\n";
    let mut app = demo_with(|f| *f = CaseFile::parse(text).unwrap());
    assert_eq!(app.figures.fit.as_ref().unwrap().method.name(), "bayesian");
    ch(&mut app, '3');
    ch(&mut app, '+');
    let dose = app.file.plan.as_ref().unwrap().dose_mg;
    assert_ne!(dose, 750.0);
    let fresh = ebb::tui::figures::Figures::compute(&app.file, &app.profiles);
    assert_eq!(app.figures.fit, fresh.fit);
    assert_eq!(app.figures.report, fresh.report);
}

#[test]
fn a_model_the_new_profile_lacks_is_dropped_with_the_profile_change() {
    // The demo (gentamicin) set to its summary values, then vancomycin chosen: vancomycin has
    // no "summary-values", so the case goes back to vancomycin's default model in the same
    // step (one undo brings both back).
    let mut app = demo_with(|f| ebb::tui::fields::set_model(f, Some("summary-values".into())));
    choose_profile(&mut app, Some("vancomycin"));
    assert_eq!(app.file.drug.profile.as_deref(), Some("vancomycin"));
    assert_eq!(app.file.fit.as_ref().and_then(|f| f.model.clone()), None);
    app.mode = Mode::Normal;
    app.handle_key(KeyEvent::new(KeyCode::Char('z'), KeyModifiers::CONTROL));
    assert_eq!(app.file.drug.profile.as_deref(), Some("gentamicin"));
    assert_eq!(
        app.file.fit.as_ref().and_then(|f| f.model.as_deref()),
        Some("summary-values")
    );
    // A profile without a population model says so on the Model line.
    choose_profile(&mut app, Some("lithium"));
    app.mode = Mode::Normal;
    for _ in 0..100 {
        if screens::selected_case_line(&app) == CaseLine::Field(Field::Model) {
            break;
        }
        key(&mut app, KeyCode::Down);
    }
    key(&mut app, KeyCode::Enter);
    let said = app.message.as_ref().unwrap().text.clone();
    assert!(said.contains("profile has no population model"), "{said}");
}
