//! Nothing lost and nothing replaced by surprise: `ebb note -o` and `ebb plot -o` never
//! write over the case, a special file, a read-only file or a file ebb did not write (without
//! `--force`); the bedside screen never saves over a case that did not load, respects
//! read-only files and folders (save as), asks before replacing a note, keeps comments, and
//! offers the recovery file a stopped session left. `update` itself writes nothing.

use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ebb::core::casefile::CaseFile;
use ebb::tui::action::Action;
use ebb::tui::app::{App, Confirm, Mode, Target};
use ebb::tui::catalog::Profiles;
use ebb::tui::effect::Effect;

const EBB: &str = env!("CARGO_BIN_EXE_ebb");

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ebb-files-{}-{name}", std::process::id()));
    if dir.exists() {
        let _ = Command::new("chmod")
            .arg("-R")
            .arg("u+w")
            .arg(&dir)
            .status();
        let _ = fs::remove_dir_all(&dir);
    }
    fs::create_dir_all(&dir).unwrap();
    dir
}

/// The demo case (invented) as a file in `dir`.
fn case_in(dir: &Path) -> PathBuf {
    let p = dir.join("bed4.toml");
    fs::write(&p, ebb::demo::DEMO_CASE).unwrap();
    p
}

fn ebb(dir: &Path, args: &[&str]) -> (Option<i32>, String) {
    let out = Command::new(EBB)
        .args(args)
        .current_dir(dir)
        .env_remove("EBB_PROFILES")
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).trim_end().to_string(),
    )
}

#[cfg(unix)]
fn mode(p: &Path) -> u32 {
    use std::os::unix::fs::PermissionsExt;
    fs::metadata(p).unwrap().permissions().mode() & 0o777
}

#[cfg(unix)]
fn set_mode(p: &Path, m: u32) {
    use std::os::unix::fs::PermissionsExt;
    fs::set_permissions(p, fs::Permissions::from_mode(m)).unwrap();
}

/// Root may write in any folder; the read-only folder test says so and stops. (A read-only
/// file is refused by its permission bits, for root too.)
#[cfg(unix)]
fn root() -> bool {
    let out = Command::new("id").arg("-u").output().unwrap();
    String::from_utf8_lossy(&out.stdout).trim() == "0"
}

// ---- the command line ----------------------------------------------------------------------

#[test]
fn note_and_plot_never_write_over_the_case_by_any_name() {
    let dir = scratch("input");
    let case = case_in(&dir);
    let (code, err) = ebb(&dir, &["note", "bed4.toml", "-o", "bed4.toml"]);
    assert_eq!(code, Some(2));
    assert_eq!(
        err,
        "ebb note: bed4.toml: is the case file being read (bed4.toml); ebb never writes over its input"
    );
    #[cfg(unix)]
    {
        std::os::unix::fs::symlink(&case, dir.join("bed4.note.txt")).unwrap();
        std::os::unix::fs::symlink(&case, dir.join("bed4.svg")).unwrap();
        let (code, err) = ebb(
            &dir,
            &["note", "bed4.toml", "-o", "bed4.note.txt", "--force"],
        );
        assert_eq!(code, Some(2), "{err}");
        assert!(err.contains("is the case file being read"), "{err}");
        let (code, err) = ebb(&dir, &["plot", "bed4.toml", "-o", "bed4.svg", "--force"]);
        assert_eq!(code, Some(2), "{err}");
        assert!(err.contains("is the case file being read"), "{err}");
    }
    let (code, err) = ebb(&dir, &["plot", "bed4.toml", "-o", "bed4.toml"]);
    assert_eq!(code, Some(2), "{err}");
    assert_eq!(fs::read_to_string(&case).unwrap(), ebb::demo::DEMO_CASE);
}

#[cfg(unix)]
#[test]
fn outputs_and_tidy_refuse_a_fifo_and_leave_it_a_fifo() {
    use std::os::unix::fs::FileTypeExt;
    let dir = scratch("fifo");
    case_in(&dir);
    for name in ["pipe.txt", "pipe.svg", "pipe.toml"] {
        let ok = Command::new("mkfifo").arg(dir.join(name)).status().unwrap();
        assert!(ok.success());
    }
    let runs = [
        vec!["note", "bed4.toml", "-o", "pipe.txt", "--force"],
        vec!["plot", "bed4.toml", "-o", "pipe.svg", "--force"],
        vec!["tidy", "pipe.toml"],
    ];
    for args in runs {
        let (code, err) = ebb(&dir, &args);
        assert_eq!(code, Some(2), "{args:?}: {err}");
        assert!(
            err.ends_with(
                "is a FIFO (named pipe), not a regular file; ebb writes only regular files"
            ),
            "{err}"
        );
    }
    for name in ["pipe.txt", "pipe.svg", "pipe.toml"] {
        assert!(fs::symlink_metadata(dir.join(name))
            .unwrap()
            .file_type()
            .is_fifo());
    }
}

#[test]
fn a_file_ebb_did_not_write_needs_force_and_ebbs_own_unedited_note_does_not() {
    let dir = scratch("foreign");
    case_in(&dir);
    fs::write(dir.join("mine.txt"), "the ward's own notes\n").unwrap();
    let (code, err) = ebb(&dir, &["note", "bed4.toml", "-o", "mine.txt"]);
    assert_eq!(code, Some(2));
    assert_eq!(
        err,
        "ebb note: mine.txt: exists and was not written by ebb; not replaced (pass --force to replace it)"
    );
    assert_eq!(
        fs::read_to_string(dir.join("mine.txt")).unwrap(),
        "the ward's own notes\n"
    );
    let (code, err) = ebb(&dir, &["note", "bed4.toml", "-o", "mine.txt", "--force"]);
    assert_eq!(code, Some(0), "{err}");
    let note = fs::read_to_string(dir.join("mine.txt")).unwrap();
    assert!(
        note.starts_with("CAUTION:") || note.contains("CAUTION"),
        "{note}"
    );
    let last = note.lines().last().unwrap();
    assert!(
        last.starts_with("ebb-check: ") && last.len() == 27,
        "{last}"
    );
    // Ebb's own note, as written: replaced with no question.
    let (code, err) = ebb(&dir, &["note", "bed4.toml", "-o", "mine.txt"]);
    assert_eq!(code, Some(0), "{err}");
    // Edited since: not replaced without --force.
    let edited = fs::read_to_string(dir.join("mine.txt")).unwrap() + "Seen by the consultant.\n";
    fs::write(dir.join("mine.txt"), &edited).unwrap();
    let (code, err) = ebb(&dir, &["note", "bed4.toml", "-o", "mine.txt"]);
    assert_eq!(code, Some(2));
    assert!(
        err.ends_with(
            "was written by ebb and edited since; not replaced (pass --force to replace it)"
        ),
        "{err}"
    );
    assert_eq!(fs::read_to_string(dir.join("mine.txt")).unwrap(), edited);
    // A Markdown note hides its check line in a comment.
    let (code, err) = ebb(&dir, &["note", "bed4.toml", "-o", "bed4.md"]);
    assert_eq!(code, Some(0), "{err}");
    let md = fs::read_to_string(dir.join("bed4.md")).unwrap();
    assert!(
        md.trim_end()
            .lines()
            .last()
            .unwrap()
            .starts_with("<!-- ebb-check: "),
        "{md}"
    );
}

#[cfg(unix)]
#[test]
fn a_read_only_note_is_not_replaced_even_with_force() {
    let dir = scratch("ro-note");
    case_in(&dir);
    let (code, _) = ebb(&dir, &["note", "bed4.toml", "-o", "n.txt"]);
    assert_eq!(code, Some(0));
    let before = fs::read_to_string(dir.join("n.txt")).unwrap();
    set_mode(&dir.join("n.txt"), 0o444);
    let (code, err) = ebb(&dir, &["note", "bed4.toml", "-o", "n.txt", "--force"]);
    assert_eq!(code, Some(2));
    assert_eq!(
        err,
        "ebb note: n.txt: is read-only; not replaced (save under another name, or make it writable first)"
    );
    assert_eq!(fs::read_to_string(dir.join("n.txt")).unwrap(), before);
    assert_eq!(mode(&dir.join("n.txt")), 0o444);
}

#[test]
fn plot_writes_svg_only_with_the_caution_and_its_check_line() {
    let dir = scratch("plot");
    case_in(&dir);
    let (code, err) = ebb(&dir, &["plot", "bed4.toml", "-o", "bed4.png"]);
    assert_eq!(code, Some(2));
    assert_eq!(
        err,
        "ebb plot: bed4.png: ebb draws SVG only; give a file name ending in .svg"
    );
    assert!(!dir.join("bed4.png").exists());
    let (code, err) = ebb(&dir, &["plot", "bed4.toml", "-o", "bed4.svg"]);
    assert_eq!(code, Some(0), "{err}");
    let svg = fs::read_to_string(dir.join("bed4.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("the SVG with its check line is XML");
    let text: String = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .collect::<Vec<_>>()
        .join(" ");
    assert!(text.contains("CAUTION: Decision support only."), "{text}");
    assert!(text.contains("pharmacist or prescriber review"), "{text}");
    assert!(svg.trim_end().ends_with("-->"));
}

#[test]
fn the_json_report_carries_the_caution() {
    let dir = scratch("json");
    case_in(&dir);
    let out = Command::new(EBB)
        .args(["report", "--json", "bed4.toml"])
        .current_dir(&dir)
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["caution"], ebb::core::report::CAUTION);
}

// ---- the bedside screen --------------------------------------------------------------------

fn key(app: &mut App, code: KeyCode) {
    app.handle_key(KeyEvent::new(code, KeyModifiers::NONE));
}

fn ctrl_s(app: &mut App) {
    app.handle_key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL));
}

fn type_text(app: &mut App, text: &str) {
    for c in text.chars() {
        key(app, KeyCode::Char(c));
    }
}

fn edit_name(app: &mut App) {
    let r = app.change(|f| {
        f.drug.name = Some("edited at the bedside".into());
        Ok(())
    });
    r.unwrap();
    assert!(app.dirty);
}

#[test]
fn a_case_that_did_not_load_is_never_saved_over() {
    let dir = scratch("typo");
    let path = dir.join("bed4.toml");
    let typo = ebb::demo::DEMO_CASE.replace("[drug]", "[drgu]");
    fs::write(&path, &typo).unwrap();
    let mut app = App::open_in(&path, Profiles::load(None));
    assert!(app.load_error.is_some());
    assert!(app
        .message
        .as_ref()
        .unwrap()
        .text
        .contains("never saved over"));
    edit_name(&mut app);
    // Ctrl-S asks for a name and does not offer the file that did not load.
    ctrl_s(&mut app);
    let Mode::Editing(ed) = &app.mode else {
        panic!("{:?}", app.mode)
    };
    assert_eq!(ed.target, Target::SavePath);
    assert_eq!(ed.buffer, "");
    // Typing that name anyway is refused, and the file is as it was.
    type_text(&mut app, &path.display().to_string());
    key(&mut app, KeyCode::Enter);
    assert_eq!(fs::read_to_string(&path).unwrap(), typo);
    assert!(matches!(app.mode, Mode::Editing(_)), "{:?}", app.mode);
    let said = app.message.as_ref().unwrap();
    assert!(
        said.is_error && said.text.contains("did not load"),
        "{said:?}"
    );
    // Another name saves.
    let Mode::Editing(ed) = &mut app.mode else {
        unreachable!()
    };
    ed.buffer = dir.join("bed4-new.toml").display().to_string();
    ed.cursor = ed.buffer.chars().count();
    key(&mut app, KeyCode::Enter);
    assert!(fs::read_to_string(dir.join("bed4-new.toml"))
        .unwrap()
        .contains("edited at the bedside"));
}

#[cfg(unix)]
#[test]
fn a_read_only_case_is_not_replaced_and_save_as_is_offered() {
    let dir = scratch("ro-case");
    let path = case_in(&dir);
    set_mode(&path, 0o444);
    let mut app = App::open_in(&path, Profiles::load(None));
    edit_name(&mut app);
    ctrl_s(&mut app);
    assert_eq!(fs::read_to_string(&path).unwrap(), ebb::demo::DEMO_CASE);
    assert_eq!(mode(&path), 0o444);
    let said = app.message.as_ref().unwrap();
    assert!(
        said.is_error && said.text.contains("is read-only"),
        "{said:?}"
    );
    assert!(
        matches!(&app.mode, Mode::Editing(e) if e.target == Target::SavePath),
        "{:?}",
        app.mode
    );
}

#[cfg(unix)]
#[test]
fn a_read_only_folder_offers_save_as() {
    if root() {
        println!("note: running as root, which writes in read-only folders; skipped");
        return;
    }
    let dir = scratch("ro-folder");
    let path = case_in(&dir);
    let mut app = App::open_in(&path, Profiles::load(None));
    edit_name(&mut app);
    set_mode(&dir, 0o555);
    ctrl_s(&mut app);
    set_mode(&dir, 0o755);
    assert_eq!(fs::read_to_string(&path).unwrap(), ebb::demo::DEMO_CASE);
    let said = app.message.as_ref().unwrap();
    assert!(
        said.text.contains("is read-only") && said.text.contains("save as"),
        "{said:?}"
    );
    assert!(matches!(&app.mode, Mode::Editing(e) if e.target == Target::SavePath));
    // Saving elsewhere then works.
    let elsewhere = scratch("ro-folder-elsewhere").join("bed4.toml");
    let Mode::Editing(ed) = &mut app.mode else {
        unreachable!()
    };
    ed.buffer = elsewhere.display().to_string();
    ed.cursor = ed.buffer.chars().count();
    key(&mut app, KeyCode::Enter);
    assert!(fs::read_to_string(&elsewhere)
        .unwrap()
        .contains("edited at the bedside"));
    assert_eq!(app.path.as_deref(), Some(elsewhere.as_path()));
}

#[test]
fn n_asks_before_replacing_a_note_ebb_did_not_write_or_that_was_edited() {
    let dir = scratch("note-ask");
    let path = case_in(&dir);
    let note = dir.join("bed4.note.txt");
    fs::write(&note, "hand-written ward note\n").unwrap();
    let mut app = App::open_in(&path, Profiles::load(None));
    key(&mut app, KeyCode::Char('n'));
    assert_eq!(app.mode, Mode::Confirm(Confirm::ReplaceNote));
    key(&mut app, KeyCode::Char('n'));
    assert_eq!(
        fs::read_to_string(&note).unwrap(),
        "hand-written ward note\n"
    );
    key(&mut app, KeyCode::Char('n'));
    key(&mut app, KeyCode::Char('y'));
    let written = fs::read_to_string(&note).unwrap();
    assert!(written.contains("CAUTION"), "{written}");
    // Its own note, unedited: replaced quietly.
    key(&mut app, KeyCode::Char('n'));
    assert_eq!(app.mode, Mode::Normal);
    // Edited since: asked again.
    fs::write(&note, format!("{written}Seen.\n")).unwrap();
    key(&mut app, KeyCode::Char('n'));
    assert_eq!(app.mode, Mode::Confirm(Confirm::ReplaceNote));
}

#[cfg(unix)]
#[test]
fn n_refuses_a_read_only_note_with_a_clear_message() {
    let dir = scratch("note-ro");
    let path = case_in(&dir);
    let note = dir.join("bed4.note.txt");
    let mut app = App::open_in(&path, Profiles::load(None));
    key(&mut app, KeyCode::Char('n'));
    let written = fs::read_to_string(&note).unwrap();
    set_mode(&note, 0o444);
    key(&mut app, KeyCode::Char('n'));
    assert_eq!(app.mode, Mode::Normal);
    let said = app.message.as_ref().unwrap();
    assert!(
        said.is_error && said.text.contains("is read-only"),
        "{said:?}"
    );
    assert_eq!(fs::read_to_string(&note).unwrap(), written);
    assert_eq!(mode(&note), 0o444);
}

#[test]
fn saving_a_new_case_over_an_existing_file_asks_and_says_it_exists() {
    let dir = scratch("exists");
    let other = dir.join("someone-elses.toml");
    fs::write(&other, "[drug]\nlevel_unit = \"mg/L\"\n").unwrap();
    let mut app = App::demo_in(Profiles::load(None));
    ctrl_s(&mut app);
    type_text(&mut app, &other.display().to_string());
    key(&mut app, KeyCode::Enter);
    assert_eq!(app.mode, Mode::Confirm(Confirm::Overwrite));
    assert!(app.pending_exists);
    assert_eq!(
        fs::read_to_string(&other).unwrap(),
        "[drug]\nlevel_unit = \"mg/L\"\n"
    );
    key(&mut app, KeyCode::Char('y'));
    assert!(fs::read_to_string(&other).unwrap().contains("[[level]]"));
}

#[cfg(unix)]
#[test]
fn n_never_writes_the_note_over_the_case_through_a_link() {
    let dir = scratch("note-link");
    let path = case_in(&dir);
    std::os::unix::fs::symlink(&path, dir.join("bed4.note.txt")).unwrap();
    let mut app = App::open_in(&path, Profiles::load(None));
    key(&mut app, KeyCode::Char('n'));
    key(&mut app, KeyCode::Char('y'));
    assert_eq!(fs::read_to_string(&path).unwrap(), ebb::demo::DEMO_CASE);
    let said = app.message.as_ref().unwrap();
    assert!(
        said.is_error && said.text.contains("is the case file being read"),
        "{said:?}"
    );
}

#[test]
fn ctrl_s_keeps_comments_even_after_a_closing_triple_quote() {
    let dir = scratch("comments");
    let path = dir.join("bed4.toml");
    // A level with a multi-line note and a comment after its closing quotes.
    let annotated = format!(
        "{}\n# reviewed on the ward round\n",
        ebb::demo::DEMO_CASE.replacen(
            "note = \"pre-dose\"",
            "note = \"\"\"\nfirst sample # from the line\n\"\"\" # redrawn at 10:05",
            1
        )
    );
    let parsed = CaseFile::parse(&annotated).unwrap();
    fs::write(&path, &annotated).unwrap();
    let mut app = App::open_in(&path, Profiles::load(None));
    edit_name(&mut app);
    ctrl_s(&mut app);
    let saved = fs::read_to_string(&path).unwrap();
    assert!(saved.contains("\"\"\" # redrawn at 10:05"), "{saved}");
    assert!(saved.contains("first sample # from the line"), "{saved}");
    assert!(saved.contains("# reviewed on the ward round"), "{saved}");
    assert!(saved.ends_with('\n'));
    let back = CaseFile::parse(&saved).unwrap();
    assert_eq!(back.levels, parsed.levels);
    assert_eq!(back.drug.name.as_deref(), Some("edited at the bedside"));
}

#[test]
fn update_writes_nothing_it_returns_the_save_for_the_run_loop() {
    let dir = scratch("pure");
    let path = case_in(&dir);
    let mut app = App::open_in(&path, Profiles::load(None));
    edit_name(&mut app);
    let effects = ebb::tui::update::update(&mut app, Action::Save);
    assert_eq!(effects.len(), 1, "{effects:?}");
    assert!(matches!(&effects[0], Effect::Save { path: p, .. } if p == &path));
    assert_eq!(fs::read_to_string(&path).unwrap(), ebb::demo::DEMO_CASE);
    let effects = ebb::tui::update::update(&mut app, Action::WriteNote);
    assert!(matches!(
        &effects[0],
        Effect::WriteNote { force: false, .. }
    ));
    assert!(!dir.join("bed4.note.txt").exists());
    // The run loop carries them out.
    ebb::tui::effect::carry_out_all(&mut app, effects);
    assert!(dir.join("bed4.note.txt").exists());
}

#[test]
fn the_next_open_offers_the_recovery_file_and_a_save_removes_it() {
    let dir = scratch("recover");
    let path = case_in(&dir);
    let mut changed = CaseFile::parse(ebb::demo::DEMO_CASE).unwrap();
    changed.drug.name = Some("typed before the signal".into());
    let rec = ebb::files::recover::write(Some(&path), &changed.to_toml().unwrap()).unwrap();
    assert_eq!(rec, dir.join("bed4.toml.recover"));
    #[cfg(unix)]
    assert_eq!(mode(&rec), 0o600);

    // "n" keeps the saved case and leaves the file.
    let mut app = App::open_in(&path, Profiles::load(None));
    assert_eq!(app.mode, Mode::Confirm(Confirm::Recover));
    key(&mut app, KeyCode::Char('n'));
    assert_ne!(app.file.drug.name, changed.drug.name);
    assert!(rec.exists());

    // "y" loads it; the save removes it.
    let mut app = App::open_in(&path, Profiles::load(None));
    key(&mut app, KeyCode::Char('y'));
    assert_eq!(app.file.drug.name, changed.drug.name);
    assert!(app.dirty);
    ctrl_s(&mut app);
    assert!(!rec.exists());
    assert!(fs::read_to_string(&path)
        .unwrap()
        .contains("typed before the signal"));
}

// ---- a signal in a real terminal -----------------------------------------------------------

/// A tmux server of its own (its own socket), killed when the test ends.
struct Tmux {
    socket: String,
}

impl Tmux {
    fn run(&self, args: &[&str]) -> String {
        let out = Command::new("tmux")
            .arg("-L")
            .arg(&self.socket)
            .args(args)
            .output()
            .unwrap();
        String::from_utf8_lossy(&out.stdout).into_owned()
    }

    fn screen(&self) -> String {
        self.run(&["capture-pane", "-p", "-t", "files"])
    }

    fn wait_for(&self, what: &str) -> String {
        let start = std::time::Instant::now();
        loop {
            let s = self.screen();
            if s.contains(what) {
                return s;
            }
            assert!(
                start.elapsed() < std::time::Duration::from_secs(20),
                "never showed {what:?}:\n{s}"
            );
            std::thread::sleep(std::time::Duration::from_millis(100));
        }
    }
}

impl Drop for Tmux {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .args(["-L", &self.socket, "kill-server"])
            .status();
    }
}

#[cfg(unix)]
#[test]
fn sigterm_restores_the_terminal_and_keeps_unsaved_changes_for_the_next_open() {
    if Command::new("tmux").arg("-V").output().is_err() {
        println!("note: tmux is not installed; the signal test is skipped");
        return;
    }
    let dir = scratch("signal");
    let path = case_in(&dir);
    let tmux = Tmux {
        socket: format!("ebb-files-signal-{}", std::process::id()),
    };
    let script = format!("{EBB} bed4.toml; echo EXIT=$?; stty -a; echo SETTINGS-SHOWN; sleep 30");
    let started = Command::new("tmux")
        .args([
            "-L",
            &tmux.socket,
            "new-session",
            "-d",
            "-x",
            "120",
            "-y",
            "40",
        ])
        .args(["-s", "files", "-c"])
        .arg(&dir)
        .args(["sh", "-c", &script])
        .status()
        .unwrap();
    assert!(started.success());
    tmux.wait_for("CAUTION");
    // An unsaved change: one step up in the plan's dose.
    tmux.run(&["send-keys", "-t", "files", "3"]);
    tmux.wait_for("Plan");
    tmux.run(&["send-keys", "-t", "files", "+"]);
    tmux.wait_for("Plan dose ");
    // The pane runs sh; ebb is its one child.
    let sh = tmux.run(&["display", "-p", "-t", "files", "#{pane_pid}"]);
    let sh = sh.trim();
    let children = fs::read_to_string(format!("/proc/{sh}/task/{sh}/children")).unwrap();
    let pid = children
        .split_whitespace()
        .next()
        .expect("ebb is running")
        .to_string();
    let killed = Command::new("kill").args(["-TERM", &pid]).status().unwrap();
    assert!(killed.success());
    let after = tmux.wait_for("SETTINGS-SHOWN");
    assert!(after.contains("EXIT=143"), "{after}");
    // The terminal is back to normal: out of the alternate screen, line editing and echo on.
    assert!(
        after.contains(" icanon") && !after.contains("-icanon"),
        "{after}"
    );
    assert!(
        after.contains(" echo") && !after.contains("-echo "),
        "{after}"
    );
    let alternate = tmux.run(&["display", "-p", "-t", "files", "#{alternate_on}"]);
    assert_eq!(alternate.trim(), "0");
    // The change is in the recovery file, owner-only, and the next open offers it.
    let rec = dir.join("bed4.toml.recover");
    assert_eq!(mode(&rec), 0o600);
    let kept = CaseFile::parse(&fs::read_to_string(&rec).unwrap()).unwrap();
    let was = CaseFile::parse(ebb::demo::DEMO_CASE).unwrap();
    let dose = |f: &CaseFile| f.plan.as_ref().map(|p| p.dose_mg);
    assert!(
        dose(&kept) > dose(&was),
        "{:?} vs {:?}",
        dose(&kept),
        dose(&was)
    );
    assert_eq!(fs::read_to_string(&path).unwrap(), ebb::demo::DEMO_CASE);
    let app = App::open_in(&path, Profiles::load(None));
    assert_eq!(app.mode, Mode::Confirm(Confirm::Recover));
}

#[test]
fn the_file_questions_fit_the_smallest_screen() {
    let draw = |app: &App| {
        let mut t = ratatui::Terminal::new(ratatui::backend::TestBackend::new(80, 24)).unwrap();
        t.draw(|f| ebb::tui::view::draw(app, f)).unwrap();
        t.backend().to_string()
    };
    let mut app = App::demo_in(Profiles::load(None));
    app.recovery = Some((PathBuf::from("bed4.toml.recover"), app.file.clone()));
    app.mode = Mode::Confirm(Confirm::Recover);
    let text = draw(&app);
    for line in [
        "Unsaved changes found",
        "ebb was stopped with unsaved changes to this case;",
        "they were kept in bed4.toml.recover.",
        "y: load them (then Ctrl-S saves them)",
        "n or Esc: keep the case as saved",
    ] {
        assert!(text.contains(line), "{line:?} in\n{text}");
    }
    app.pending_note = Some(PathBuf::from("bed4.note.txt"));
    app.pending_exists = true;
    app.mode = Mode::Confirm(Confirm::ReplaceNote);
    let text = draw(&app);
    for line in [
        "Replace the note?",
        "was not written by ebb.",
        "y: replace it with the new note",
        "n or Esc: keep it",
    ] {
        assert!(text.contains(line), "{line:?} in\n{text}");
    }
    app.pending_overwrite = Some(PathBuf::from("bed4.toml"));
    app.mode = Mode::Confirm(Confirm::Overwrite);
    let text = draw(&app);
    for line in [
        "File exists",
        "bed4.toml already exists and is not the file",
        "this case was opened from.",
        "y: replace it with this case",
        "n or Esc: keep it",
    ] {
        assert!(text.contains(line), "{line:?} in\n{text}");
    }
}

#[test]
fn settle_turns_each_refusal_into_the_right_question_without_a_disk() {
    use ebb::files::guard::OutputError;
    use ebb::files::store::SaveError;
    use ebb::tui::effect::Outcome;
    use ebb::tui::update::settle;
    let mut app = App::demo_in(Profiles::load(None));
    let path = PathBuf::from("/ward/bed4.toml");
    let more = settle(
        &mut app,
        Outcome::NotSaved {
            path: path.clone(),
            error: SaveError::ReadOnlyFolder {
                path: path.clone(),
                dir: PathBuf::from("/ward"),
            },
        },
    );
    assert!(more.is_empty());
    assert!(matches!(&app.mode, Mode::Editing(e) if e.target == Target::SavePath));
    assert!(app
        .message
        .as_ref()
        .unwrap()
        .text
        .contains("/ward is read-only"));
    let mut app = App::demo_in(Profiles::load(None));
    settle(
        &mut app,
        Outcome::NotSaved {
            path: path.clone(),
            error: SaveError::Exists { path: path.clone() },
        },
    );
    assert_eq!(app.mode, Mode::Confirm(Confirm::Overwrite));
    assert!(app.pending_exists);
    let note = PathBuf::from("/ward/bed4.note.txt");
    settle(
        &mut app,
        Outcome::NoteNotWritten {
            path: note.clone(),
            error: OutputError::Edited { out: note.clone() },
        },
    );
    assert_eq!(app.mode, Mode::Confirm(Confirm::ReplaceNote));
    assert!(!app.pending_exists);
    // A yes asks the run loop to write it, replacing the edited note.
    let effects = ebb::tui::update::update(&mut app, Action::Yes);
    assert!(
        matches!(&effects[..], [Effect::WriteNote { path: p, force: true, .. }] if p == &note),
        "{effects:?}"
    );
}
