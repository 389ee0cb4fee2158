//! Snapshots of every screen of the bedside UI, drawn into ratatui's TestBackend at the
//! smallest supported size (80x24) and a large one (160x48), on the invented demo case.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ebb::tui::app::{App, Screen};
use ebb::tui::view;
use ratatui::backend::TestBackend;
use ratatui::Terminal;

fn draw(app: &App, w: u16, h: u16) -> Terminal<TestBackend> {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| view::draw(app, f)).unwrap();
    t
}

fn screen_text(app: &App, w: u16, h: u16) -> String {
    draw(app, w, h).backend().to_string()
}

fn key(app: &mut App, code: KeyCode) {
    app.handle_key(KeyEvent::new(code, KeyModifiers::NONE));
}

#[test]
fn every_screen_at_both_sizes() {
    for (w, h) in [(80u16, 24u16), (160, 48)] {
        for s in Screen::ALL {
            let mut app = App::demo();
            app.screen = s;
            let name = format!("demo_{}_{w}x{h}", format!("{s:?}").to_lowercase());
            insta::assert_snapshot!(name, draw(&app, w, h).backend());
        }
    }
}

#[test]
fn the_caution_is_on_every_screen_at_every_size() {
    for (w, h) in [
        (80u16, 24u16),
        (100, 30),
        (160, 48),
        (79, 24),
        (80, 23),
        (40, 10),
        (20, 5),
    ] {
        for s in Screen::ALL {
            let mut app = App::demo();
            app.screen = s;
            let text = screen_text(&app, w, h);
            assert!(text.contains("CAUTION:"), "{s:?} at {w}x{h}:\n{text}");
        }
    }
}

#[test]
fn help_overlay_lists_the_plan_keys() {
    let mut app = App::demo();
    key(&mut app, KeyCode::Char('3'));
    key(&mut app, KeyCode::Char('?'));
    let text = screen_text(&app, 80, 24);
    for k in ["+ -", "] [", "} {", "Ctrl-S", "q, Ctrl-C"] {
        assert!(text.contains(k), "{k} missing:\n{text}");
    }
    insta::assert_snapshot!("help_plan_80x24", draw(&app, 80, 24).backend());
}

#[test]
fn too_small_asks_for_a_larger_window() {
    let app = App::demo();
    let text = screen_text(&app, 79, 23);
    assert!(text.contains("Please enlarge"), "{text}");
    insta::assert_snapshot!("too_small_60x12", draw(&app, 60, 12).backend());
}

#[test]
fn a_broken_file_opens_showing_its_error() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = dir.join("broken.toml");
    std::fs::write(&path, "schema = 1\n[patient\nlabel = 3\n").unwrap();
    let app = App::open(&path);
    let text = screen_text(&app, 80, 24);
    assert!(text.contains("line 2"), "{text}");
    assert!(app.load_error.is_some());
}

#[test]
fn editing_a_level_time_shows_the_problem_beside_it() {
    let mut app = App::demo();
    // Down to the first level row (4 doses, the add-dose line).
    for _ in 0..5 {
        key(&mut app, KeyCode::Down);
    }
    key(&mut app, KeyCode::Enter);
    for _ in 0..5 {
        key(&mut app, KeyCode::Backspace);
    }
    for c in "25:00".chars() {
        key(&mut app, KeyCode::Char(c));
    }
    let text = screen_text(&app, 80, 24);
    assert!(text.contains("not a real date"), "{text}");
    insta::assert_snapshot!("editing_level_time_80x24", draw(&app, 80, 24).backend());
}

#[test]
fn every_valid_fixture_draws_on_every_screen() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases/valid");
    let mut seen = 0;
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().and_then(|e| e.to_str()) != Some("toml") {
            continue;
        }
        let mut app = App::open(&path);
        assert!(app.load_error.is_none(), "{}", path.display());
        for s in Screen::ALL {
            app.screen = s;
            for (w, h) in [(80, 24), (160, 48)] {
                let text = screen_text(&app, w, h);
                assert!(text.contains("CAUTION:"), "{} {s:?}", path.display());
            }
        }
        seen += 1;
    }
    assert!(seen > 0);
}

#[test]
fn phenytoin_fit_and_plan_screens_show_vmax_km_the_adjusted_level_and_the_dose() {
    // A relative path (tests run in the crate's folder), so the title is the same anywhere.
    let path = std::path::Path::new("tests/cases/valid/phenytoin_one_level_albumin.toml");
    let mut app = App::open(path);
    assert!(app.load_error.is_none());
    assert!(app.figures.saturable.is_some(), "{:?}", app.figures.problem);
    for (screen, name) in [(Screen::Fit, "fit"), (Screen::Plan, "plan")] {
        app.screen = screen;
        for (w, h) in [(80, 24), (160, 48)] {
            let text = screen_text(&app, w, h);
            assert!(text.contains("Saturable"), "{name} {w}x{h}\n{text}");
            assert!(!text.contains("linear one-compartment"), "{text}");
            if screen == Screen::Fit {
                assert!(text.contains("Vmax") && text.contains("Km"), "{text}");
                assert!(text.contains("8.571 mg/L"), "the adjusted level\n{text}");
            }
            // The fit screen keeps the doses for a wide screen, beside its chart of the course.
            if screen == Screen::Plan || w >= 120 {
                assert!(
                    text.contains("For 15 mg/L"),
                    "the dose for the target\n{text}"
                );
            }
            // The plan screen charts the projected course when it is tall enough, with every
            // warning still in view.
            if screen == Screen::Plan && h >= 48 {
                assert!(
                    text.contains("━ plan") && text.contains("┈ 95 % band"),
                    "{text}"
                );
                assert!(text.contains("confirm it with levels"), "{text}");
            }
            if screen == Screen::Fit {
                assert!(
                    text.contains("━ model") && text.contains("━ plan"),
                    "{text}"
                );
                assert!(text.contains("282.7–475.7)"), "Vmax's range\n{text}");
            }
            insta::assert_snapshot!(
                format!("phenytoin_{name}_{w}x{h}"),
                draw(&app, w, h).backend()
            );
        }
    }
    // The other screens never show a first-order threshold or washout.
    for screen in [Screen::Threshold, Screen::Washout] {
        app.screen = screen;
        let text = screen_text(&app, 80, 24);
        assert!(
            !text.contains("half-lives") && !text.contains("reached"),
            "{text}"
        );
        if screen == Screen::Washout {
            assert!(text.contains("Saturable"), "{text}");
        }
    }
}

#[test]
fn dialysis_sessions_are_shaded_on_the_charts() {
    // A relative path (tests run in the crate's folder), so the title is the same anywhere.
    let path = std::path::Path::new("tests/cases/valid/vancomycin_haemodialysis.toml");
    let mut app = App::open(path);
    assert!(app.load_error.is_none());
    app.screen = Screen::Fit;
    for (w, h) in [(80, 24), (160, 48)] {
        let text = screen_text(&app, w, h);
        assert!(text.contains("░ dialysis (marked, not modelled)"), "{text}");
        // Shade in the plot and the heavy rule on the time axis under each session.
        assert!(text.matches('░').count() > 2, "{text}");
        assert!(text.contains('━'), "{text}");
        insta::assert_snapshot!(format!("dialysis_fit_{w}x{h}"), draw(&app, w, h).backend());
    }
    // The case screen lists them, read-only, with their clock times.
    app.screen = Screen::Case;
    let text = screen_text(&app, 160, 48);
    assert!(
        text.contains("  2   Wed 3 Mar 08:00 to Wed 12:00  4 h"),
        "{text}"
    );
    insta::assert_snapshot!("dialysis_case_160x48", draw(&app, 160, 48).backend());
}

#[test]
fn phenytoin_on_two_daily_doses_charts_the_record_fit_with_its_band() {
    // Levels on two daily doses identify Vmax and Km: the record fit is used, the Bayesian
    // estimate shown beside it, and the chart carries the 95 % band from the fit's curvature.
    let path = std::path::Path::new("tests/cases/valid/phenytoin_two_levels.toml");
    let mut app = App::open(path);
    assert!(app.load_error.is_none());
    app.screen = Screen::Fit;
    let text = screen_text(&app, 160, 48);
    assert!(
        text.contains("fit to the dose record (Vmax and Km)"),
        "{text}"
    );
    assert!(text.contains("Bayesian     Vmax"), "{text}");
    assert!(
        !text.contains("Record fit"),
        "the fit used is not repeated\n{text}"
    );
    assert!(
        text.contains("┈ 95 % band") && text.contains("● in fit"),
        "{text}"
    );
    insta::assert_snapshot!(
        "phenytoin_two_levels_fit_160x48",
        draw(&app, 160, 48).backend()
    );
}

#[test]
fn a_two_compartment_fit_shows_its_phases_on_the_fit_screen() {
    let path = std::path::Path::new("tests/cases/valid/vancomycin_two_compartment.toml");
    let mut app = App::open(path);
    assert!(app.load_error.is_none());
    app.screen = Screen::Fit;
    for (w, h) in [(80, 24), (160, 48)] {
        let text = screen_text(&app, w, h);
        assert!(text.contains("2-cmt, distribution t½ 2.67 h"), "{text}");
        assert!(text.contains("k, t½ terminal"), "{text}");
        assert!(text.contains("two-compartment"), "{text}");
        insta::assert_snapshot!(
            format!("two_compartment_fit_{w}x{h}"),
            draw(&app, w, h).backend()
        );
    }
    app.screen = Screen::Case;
    let text = screen_text(&app, 160, 48);
    assert!(text.contains("(terminal, two compartments)"), "{text}");
    // Its k has an interval: the threshold's range is missing because the band is too wide.
    app.screen = Screen::Threshold;
    let text = screen_text(&app, 160, 48);
    assert!(
        text.contains("95 % range not known (the spread of k and V is too wide"),
        "{text}"
    );
    // The washout counts terminal half-lives, and says so.
    app.screen = Screen::Washout;
    let text = screen_text(&app, 160, 48);
    assert!(text.contains("each terminal half-life"), "{text}");
}
