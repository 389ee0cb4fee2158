//! One keystroke on the plan screen, end to end: the edit of the case, the recomputation of
//! every figure by the core, and a full draw into a 160x48 TestBackend.

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

criterion_group!(benches, plan_keystroke, plan_keystroke_dose_history);
criterion_main!(benches);
