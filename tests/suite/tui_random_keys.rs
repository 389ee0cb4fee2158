//! A seeded random walk of a few thousand keys and resizes (down to 1x1) through the
//! bedside UI: it must never panic, and every frame must show the caution.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ebb::tui::app::{App, Mode};
use ebb::tui::view;
use ratatui::backend::TestBackend;
use ratatui::Terminal;

/// A small xorshift generator, seeded, so a failure can be replayed.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        self.0 = x;
        x
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
}

const KEYS: &[KeyCode] = &[
    KeyCode::Up,
    KeyCode::Down,
    KeyCode::Left,
    KeyCode::Right,
    KeyCode::Enter,
    KeyCode::Esc,
    KeyCode::Tab,
    KeyCode::BackTab,
    KeyCode::Backspace,
    KeyCode::Delete,
    KeyCode::Home,
    KeyCode::End,
];

// Every command key is here, so the walk reaches every mode: profile list (p), profile
// details (i), fit method (m), taking a suggestion (t), the record note (n).
const CHARS: &str = "12345?qyna xu+-=[]{}r0123456789.:-T 2027-03-0408:00e,/abcpmitpmit";

fn random_key(rng: &mut Rng) -> KeyEvent {
    match rng.below(10) {
        0..=3 => KeyEvent::new(KEYS[rng.below(KEYS.len())], KeyModifiers::NONE),
        4 if rng.below(20) == 0 => KeyEvent::new(KeyCode::Char('c'), KeyModifiers::CONTROL),
        4 => KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL),
        _ => {
            let chars: Vec<char> = CHARS.chars().collect();
            KeyEvent::new(
                KeyCode::Char(chars[rng.below(chars.len())]),
                KeyModifiers::NONE,
            )
        }
    }
}

fn walk(seed: u64, start: App, steps: usize) {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let mut app = start;
    // Saves go to the temporary folder, never the working directory.
    app.path = Some(dir.join("walk.toml"));
    let mut rng = Rng(seed);
    let mut term = Terminal::new(TestBackend::new(80, 24)).unwrap();
    for step in 0..steps {
        if rng.below(25) == 0 {
            let (w, h) = match rng.below(4) {
                0 => (1 + rng.below(10) as u16, 1 + rng.below(10) as u16),
                1 => (80, 24),
                2 => (160, 48),
                _ => (1 + rng.below(200) as u16, 1 + rng.below(60) as u16),
            };
            term.backend_mut().resize(w, h);
        }
        let key = random_key(&mut rng);
        app.handle_key(key);
        if app.should_quit() {
            app.mode = Mode::Normal;
        }
        term.draw(|f| view::draw(&app, f))
            .unwrap_or_else(|e| panic!("seed {seed}, step {step}: {e}"));
        let size = term.size().unwrap();
        if size.width >= 20 && size.height >= 3 {
            let text = term.backend().to_string();
            assert!(
                text.contains("CAUTION"),
                "seed {seed}, step {step}:\n{text}"
            );
        }
    }
}

#[test]
fn random_keys_on_the_demo_never_panic() {
    walk(0x5eed_0001, App::demo(), 3000);
}

#[test]
fn random_keys_on_a_new_case_never_panic() {
    walk(0x5eed_0002, App::new_case(), 3000);
}

#[test]
fn random_keys_on_the_later_features_never_panic() {
    // Two compartments, haemodialysis sessions, saturable kinetics with a free level and
    // albumin, and oral doses: each case copied to a scratch folder and opened from there.
    let tmp = tempfile::tempdir().unwrap();
    for (i, name) in [
        "vancomycin_two_compartment.toml",
        "vancomycin_haemodialysis.toml",
        "phenytoin_free_level.toml",
        "phenytoin_one_level_albumin.toml",
        "oral_pre_dose.toml",
    ]
    .iter()
    .enumerate()
    {
        let from = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/cases/valid")
            .join(name);
        let to = tmp.path().join(name);
        std::fs::copy(from, &to).unwrap();
        walk(0x5eed_0010 + i as u64, App::open(&to), 1500);
    }
}
