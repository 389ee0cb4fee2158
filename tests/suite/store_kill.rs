//! Safe saving, end to end through `ebb tidy`: a save killed between writing the temporary
//! file and the rename leaves the old file byte for byte, and the next save removes the
//! temporary file it left; a change made during the save is not lost; a finished save keeps
//! the file's mode; comments are kept; a file that does not parse is left alone.

use std::fs;
use std::io::{BufRead, BufReader};
use std::path::Path;
use std::process::{Command, Stdio};

use ebb::core::casefile::CaseFile;
use ebb::files::store::PAUSE_ENV;

const EBB: &str = env!("CARGO_BIN_EXE_ebb");

/// An invented case written by hand, not in canonical form (fields out of order, spacing).
const CASE: &str = r#"[[level]]
value   = 6.1
time = 2027-03-02T09:00:00

[drug]
level_unit = "mg/L"
name = "invented"

[[dose]]
route = "bolus"
amount_mg = 100.0
time = 2027-03-02T08:00:00

[[level]]
time = 2027-03-02T15:00:00
value = 2.0
"#;

fn temporaries(dir: &Path) -> Vec<String> {
    fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".tmp"))
        .collect()
}

#[test]
fn a_save_killed_before_the_rename_leaves_the_old_file_whole() {
    let scratch = tempfile::tempdir().unwrap();
    let dir = scratch.path();
    let path = dir.join("case.toml");
    fs::write(&path, CASE).unwrap();
    let mut child = Command::new(EBB)
        .arg("tidy")
        .arg(&path)
        .env(PAUSE_ENV, "60000")
        .stderr(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    // Wait for the save to say it has written and flushed the temporary file.
    let mut line = String::new();
    BufReader::new(child.stderr.take().unwrap())
        .read_line(&mut line)
        .unwrap();
    assert!(line.contains("pausing"), "{line}");
    // The new content is on disk under the temporary name, not yet renamed.
    let tmp = temporaries(dir);
    assert_eq!(tmp.len(), 1, "{tmp:?}");
    let pending = fs::read_to_string(dir.join(&tmp[0])).unwrap();
    assert_ne!(pending, CASE);
    child.kill().unwrap();
    let status = child.wait().unwrap();
    assert!(!status.success());
    // The old file is exactly as it was, and still a valid case.
    assert_eq!(fs::read_to_string(&path).unwrap(), CASE);
    CaseFile::parse(CASE).unwrap().validate().unwrap();
    // The leftover temporary file holds the whole new case (it was flushed before the pause).
    assert_eq!(
        CaseFile::parse(&pending).unwrap(),
        CaseFile::parse(CASE).unwrap()
    );
}

#[test]
fn a_finished_tidy_writes_the_canonical_form_keeping_the_mode() {
    let scratch = tempfile::tempdir().unwrap();
    let dir = scratch.path();
    let path = dir.join("case.toml");
    fs::write(&path, CASE).unwrap();
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        fs::set_permissions(&path, fs::Permissions::from_mode(0o640)).unwrap();
    }
    let out = Command::new(EBB).arg("tidy").arg(&path).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = fs::read_to_string(&path).unwrap();
    let canonical = CaseFile::parse(CASE).unwrap().to_toml().unwrap();
    assert_eq!(text, canonical);
    // Tables in the fixed order, fields in the fixed order within them.
    let at = |s: &str| text.find(s).unwrap();
    assert!(
        at("[drug]") < at("[[dose]]") && at("[[dose]]") < at("[[level]]"),
        "{text}"
    );
    assert!(
        at("time = 2027-03-02T09:00:00") < at("value = 6.1"),
        "{text}"
    );
    assert!(temporaries(dir).is_empty());
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = fs::metadata(&path).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o640);
    }
}

#[test]
fn tidy_keeps_comments_and_leaves_a_broken_file_alone() {
    let scratch = tempfile::tempdir().unwrap();
    let dir = scratch.path();
    let commented = dir.join("commented.toml");
    let text = format!("{CASE}# checked by the ward round\n");
    fs::write(&commented, &text).unwrap();
    let out = Command::new(EBB)
        .arg("tidy")
        .arg(&commented)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let now = fs::read_to_string(&commented).unwrap();
    assert!(now.contains("# checked by the ward round\n"), "{now}");
    assert!(now.ends_with('\n'));
    assert_eq!(
        CaseFile::parse(&now).unwrap(),
        CaseFile::parse(CASE).unwrap()
    );
    // The flag of old is still accepted (comments are kept either way).
    let out = Command::new(EBB)
        .args(["tidy", "--drop-comments"])
        .arg(&commented)
        .output()
        .unwrap();
    assert!(out.status.success());
    assert!(fs::read_to_string(&commented)
        .unwrap()
        .contains("# checked by the ward round"));

    let broken = dir.join("broken.toml");
    fs::write(&broken, "[drug\n").unwrap();
    let out = Command::new(EBB).arg("tidy").arg(&broken).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(
        String::from_utf8_lossy(&out.stderr).starts_with(&format!("{}: line 1:", broken.display()))
    );
    assert_eq!(fs::read_to_string(&broken).unwrap(), "[drug\n");
}

#[test]
fn a_change_made_while_the_save_writes_is_kept_and_the_save_refused() {
    let scratch = tempfile::tempdir().unwrap();
    let dir = scratch.path();
    let path = dir.join("case.toml");
    fs::write(&path, CASE).unwrap();
    let mut child = Command::new(EBB)
        .arg("tidy")
        .arg(&path)
        .env(PAUSE_ENV, "1500")
        .stderr(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    let mut err = BufReader::new(child.stderr.take().unwrap());
    let mut line = String::new();
    err.read_line(&mut line).unwrap();
    assert!(line.contains("pausing"), "{line}");
    // Another program saves the case while ebb holds the new text in its temporary file.
    let theirs = CASE.replace("value = 2.0", "value = 2.5");
    fs::write(&path, &theirs).unwrap();
    let status = child.wait().unwrap();
    let mut rest = String::new();
    std::io::Read::read_to_string(&mut err, &mut rest).unwrap();
    assert_eq!(status.code(), Some(2), "{rest}");
    assert!(
        rest.contains("changed on disk since it was opened"),
        "{rest}"
    );
    assert_eq!(fs::read_to_string(&path).unwrap(), theirs);
    assert!(temporaries(dir).is_empty());
}

#[test]
fn the_next_save_removes_the_temporary_file_a_killed_save_left() {
    let scratch = tempfile::tempdir().unwrap();
    let dir = scratch.path();
    let path = dir.join("case.toml");
    fs::write(&path, CASE).unwrap();
    let mut child = Command::new(EBB)
        .arg("tidy")
        .arg(&path)
        .env(PAUSE_ENV, "60000")
        .stderr(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    let mut line = String::new();
    BufReader::new(child.stderr.take().unwrap())
        .read_line(&mut line)
        .unwrap();
    child.kill().unwrap();
    child.wait().unwrap();
    assert_eq!(temporaries(dir).len(), 1);
    let out = Command::new(EBB).arg("tidy").arg(&path).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(temporaries(dir).is_empty(), "{:?}", temporaries(dir));
}
