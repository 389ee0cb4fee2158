//! One keystroke on the plan screen, end to end: the edit of the case, the recomputation of
//! every figure by the core, and a full draw into a TestBackend — at 160x48 and 80x24, on the
//! demo case and on an invented case of 1,000 doses.

use criterion::{criterion_group, criterion_main, Criterion};
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ebb::tui::app::App;
use ebb::tui::view;
use ratatui::backend::TestBackend;
use ratatui::Terminal;

fn plan_keystroke(c: &mut Criterion) {
    let mut app = App::demo();
    app.handle_key(KeyEvent::new(KeyCode::Char('3'), KeyModifiers::NONE));
    let mut term = Terminal::new(TestBackend::new(160, 48)).expect("test backend");
    let up = KeyEvent::new(KeyCode::Char('+'), KeyModifiers::NONE);
    let down = KeyEvent::new(KeyCode::Char('-'), KeyModifiers::NONE);
    let mut raise = true;
    c.bench_function(
        "plan screen: one dose keystroke, recompute, draw 160x48",
        |b| {
            b.iter(|| {
                // Alternate so the dose stays near the demo's and every press changes the case.
                app.handle_key(if raise { up } else { down });
                raise = !raise;
                term.draw(|f| view::draw(&app, f)).expect("draw");
            })
        },
    );
}

/// The same keystroke when the case asks for the dose-history fit (k and V fitted to every
/// level by nonlinear least squares, and the 95 % ranges carried into the plan).
fn plan_keystroke_dose_history(c: &mut Criterion) {
    let mut app = App::demo();
    app.handle_key(KeyEvent::new(KeyCode::Char('2'), KeyModifiers::NONE));
    // m: automatic -> log-linear -> dose-history.
    for _ in 0..2 {
        app.handle_key(KeyEvent::new(KeyCode::Char('m'), KeyModifiers::NONE));
    }
    app.handle_key(KeyEvent::new(KeyCode::Char('3'), KeyModifiers::NONE));
    let mut term = Terminal::new(TestBackend::new(160, 48)).expect("test backend");
    let up = KeyEvent::new(KeyCode::Char('+'), KeyModifiers::NONE);
    let down = KeyEvent::new(KeyCode::Char('-'), KeyModifiers::NONE);
    let mut raise = true;
    c.bench_function(
        "plan screen, dose-history fit: one dose keystroke, recompute, draw 160x48",
        |b| {
            b.iter(|| {
                app.handle_key(if raise { up } else { down });
                raise = !raise;
                term.draw(|f| view::draw(&app, f)).expect("draw");
            })
        },
    );
}

/// An invented case: 1,000 infusions of 120 mg over 0.5 h every 8 h and ten levels after the
/// last, with a plan, written to a scratch file and opened as the screen opens a case.
fn thousand_doses() -> App {
    use std::fmt::Write;
    let start = chrono::NaiveDate::from_ymd_opt(2026, 1, 1)
        .and_then(|d| d.and_hms_opt(6, 0, 0))
        .expect("a fixed valid date");
    let at = |min: i64| (start + chrono::Duration::minutes(min)).format("%Y-%m-%dT%H:%M:%S");
    let mut s = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
    for i in 0..1000i64 {
        let _ = write!(
            s,
            "[[dose]]\ntime = {}\namount_mg = 120.0\nroute = \"infusion\"\ninfusion_h = 0.5\n",
            at(480 * i)
        );
    }
    let last = 480 * 999;
    for j in 0..10i64 {
        let h = 1.0 + j as f64 * 0.6;
        let _ = write!(
            s,
            "[[level]]\ntime = {}\nvalue = {}\n",
            at(last + 60 + 36 * j),
            7.0 * (-0.12 * h).exp()
        );
    }
    s.push_str(
        "[plan]\ndose_mg = 120.0\ninterval_h = 8.0\nroute = \"infusion\"\ninfusion_h = 0.5\n",
    );
    s.push_str("[targets]\npeak = [5.0, 10.0]\ntrough_max = 2.0\n");
    let dir = std::env::temp_dir().join(format!("ebb-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("a scratch folder");
    let path = dir.join("thousand.toml");
    std::fs::write(&path, s).expect("the scratch case");
    let app = App::open(&path);
    let _ = std::fs::remove_dir_all(&dir);
    app
}

/// One plan keystroke, recompute and draw, for `app` at `w` x `h`.
fn keystroke_at(c: &mut Criterion, name: &str, mut app: App, w: u16, h: u16) {
    app.handle_key(KeyEvent::new(KeyCode::Char('3'), KeyModifiers::NONE));
    let mut term = Terminal::new(TestBackend::new(w, h)).expect("test backend");
    let up = KeyEvent::new(KeyCode::Char('+'), KeyModifiers::NONE);
    let down = KeyEvent::new(KeyCode::Char('-'), KeyModifiers::NONE);
    let mut raise = true;
    c.bench_function(name, |b| {
        b.iter(|| {
            app.handle_key(if raise { up } else { down });
            raise = !raise;
            term.draw(|f| view::draw(&app, f)).expect("draw");
        })
    });
}

fn plan_keystroke_sizes(c: &mut Criterion) {
    keystroke_at(
        c,
        "plan screen: one dose keystroke, recompute, draw 80x24",
        App::demo(),
        80,
        24,
    );
    keystroke_at(
        c,
        "plan screen, 1,000 doses: one dose keystroke, recompute, draw 160x48",
        thousand_doses(),
        160,
        48,
    );
    keystroke_at(
        c,
        "plan screen, 1,000 doses: one dose keystroke, recompute, draw 80x24",
        thousand_doses(),
        80,
        24,
    );
}

criterion_group!(
    benches,
    plan_keystroke,
    plan_keystroke_dose_history,
    plan_keystroke_sizes
);
criterion_main!(benches);
