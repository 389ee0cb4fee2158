//! `ebb note` and `ebb plot` on the command line: files written, exit codes, errors.

use crate::common;

fn ebb() -> assert_cmd::Command {
    let mut c = common::ebb();
    c.env_remove("EBB_PROFILES");
    c
}

fn demo_file(dir: &std::path::Path) -> std::path::PathBuf {
    let p = dir.join("bed7.toml");
    std::fs::write(&p, ebb::demo::DEMO_CASE).unwrap();
    p
}

#[test]
fn note_to_stdout_and_to_a_markdown_file() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let case = demo_file(d);
    let out = ebb().arg("note").arg(&case).output().unwrap();
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.starts_with("DRUG LEVEL NOTE: gentamicin"));
    assert!(text.contains(&format!("with ebb {}", env!("CARGO_PKG_VERSION"))));
    let md = d.join("note.md");
    let out = ebb()
        .arg("note")
        .arg(&case)
        .arg("-o")
        .arg(&md)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    assert!(out.stdout.is_empty());
    let written = std::fs::read_to_string(&md).unwrap();
    assert!(written.starts_with("# Drug level note: gentamicin"));
}

#[test]
fn plot_writes_an_svg_file() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let case = demo_file(d);
    let svg = d.join("course.svg");
    let out = ebb()
        .arg("plot")
        .arg(&case)
        .arg("-o")
        .arg(&svg)
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(roxmltree::Document::parse(&text).is_ok());
}

#[test]
fn a_bad_switch_exits_2_with_one_line_naming_the_field() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let p = d.join("bad.toml");
    let text = format!("{}\n[switch]\nto = \"x\"\n", ebb::demo::DEMO_CASE);
    std::fs::write(&p, text).unwrap();
    for args in [vec!["note"], vec!["plot"]] {
        let mut c = ebb();
        c.args(&args).arg(&p);
        if args[0] == "plot" {
            c.arg("-o").arg(d.join("x.svg"));
        }
        let out = c.output().unwrap();
        assert_eq!(out.status.code(), Some(2));
        assert!(out.stdout.is_empty());
        let err = String::from_utf8(out.stderr).unwrap();
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(
            err.contains("bad.toml: switch.start_below: missing"),
            "{err}"
        );
    }
    assert!(!d.join("x.svg").exists());
}

#[test]
fn the_note_carries_the_profile_warnings_and_is_private() {
    use std::os::unix::fs::PermissionsExt;
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    // The demo with its later levels on a 4-h half-life, clearly outside the gentamicin
    // profile's 2-3 h.
    let case = d.join("bed7.toml");
    std::fs::write(
        &case,
        ebb::demo::DEMO_CASE
            .replace("value = 2.0\n", "value = 2.67\n")
            .replace("value = 1.4\n", "value = 2.01\n"),
    )
    .unwrap();
    let out_path = d.join("bed7.note.txt");
    let out = ebb()
        .arg("note")
        .arg(&case)
        .arg("-o")
        .arg(&out_path)
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(&out_path).unwrap();
    // The case names the gentamicin profile, whose typical half-life range flags it;
    // `ebb report` shows the same warning, so the note must too.
    let report = ebb().arg("report").arg(&case).output().unwrap();
    let report = String::from_utf8(report.stdout).unwrap();
    let flag = "outside Gentamicin's typical adult range";
    assert!(report.contains(flag));
    assert!(text.contains(flag), "{text}");
    let mode = std::fs::metadata(&out_path).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o600);
}
