//! Saving from the bedside screen over a file that changed on disk since it was opened:
//! the screen asks first; "n" keeps the other program's file, "y" overwrites it; a file that
//! did not change is saved without a question.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ebb::core::casefile::CaseFile;
use ebb::tui::app::{App, Confirm, Mode};
use ebb::tui::catalog::Profiles;

fn key(app: &mut App, code: KeyCode) {
    app.handle_key(KeyEvent::new(code, KeyModifiers::NONE));
}

fn save(app: &mut App) {
    app.handle_key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL));
}

#[test]
fn a_file_changed_on_disk_is_overwritten_only_after_a_yes() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = dir.join("case.toml");
    std::fs::write(&path, ebb::demo::DEMO_CASE).unwrap();
    let mut app = App::open_in(&path, Profiles::load(None));
    assert_eq!(app.path.as_deref(), Some(path.as_path()));
    app.file.drug.name = Some("edited here".into());

    // Nothing changed on disk: saved without a question.
    save(&mut app);
    assert_eq!(app.mode, Mode::Normal);
    let mine = std::fs::read_to_string(&path).unwrap();
    assert!(mine.contains("edited here"), "{mine}");

    // Another program rewrites the file; the next save asks and "n" keeps its version.
    let theirs = mine.replace("edited here", "edited elsewhere");
    std::fs::write(&path, &theirs).unwrap();
    app.file.drug.name = Some("edited here again".into());
    save(&mut app);
    assert_eq!(app.mode, Mode::Confirm(Confirm::Overwrite));
    assert_eq!(std::fs::read_to_string(&path).unwrap(), theirs);
    key(&mut app, KeyCode::Char('n'));
    assert_eq!(app.mode, Mode::Normal);
    assert_eq!(std::fs::read_to_string(&path).unwrap(), theirs);
    let said = app.message.as_ref().unwrap();
    assert!(
        said.is_error && said.text.starts_with("Not saved:"),
        "{said:?}"
    );

    // Asked again, "y" overwrites; after that, saves go through quietly again.
    save(&mut app);
    assert_eq!(app.mode, Mode::Confirm(Confirm::Overwrite));
    key(&mut app, KeyCode::Char('y'));
    assert_eq!(app.mode, Mode::Normal);
    let now = CaseFile::parse(&std::fs::read_to_string(&path).unwrap()).unwrap();
    assert_eq!(now.drug.name.as_deref(), Some("edited here again"));
    app.file.drug.name = Some("third".into());
    save(&mut app);
    assert_eq!(app.mode, Mode::Normal);
    assert!(std::fs::read_to_string(&path).unwrap().contains("third"));
}

#[test]
fn opening_and_saving_a_file_with_comments_keeps_them() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let path = dir.join("case.toml");
    // The demo case opens with # comments.
    assert!(ebb::demo::DEMO_CASE.starts_with('#'));
    let first = ebb::demo::DEMO_CASE.lines().next().unwrap();
    std::fs::write(&path, ebb::demo::DEMO_CASE).unwrap();
    let mut app = App::open_in(&path, Profiles::load(None));
    let said = app.message.as_ref().unwrap().text.clone();
    assert!(said.contains("keeps them"), "{said}");
    app.file.drug.name = Some("again".into());
    save(&mut app);
    let now = std::fs::read_to_string(&path).unwrap();
    assert!(now.starts_with(first), "{now}");
    assert!(now.contains("again") && now.ends_with('\n'), "{now}");
}
