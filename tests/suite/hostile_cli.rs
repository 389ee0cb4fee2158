//! Hostile input through the binary: free text that would forge output, special files,
//! sizes, values that overflow, write errors, and clocks that change.

use crate::common;

use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

fn ebb() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_ebb"));
    c.env_remove("EBB_PROFILES").env("TZ", "UTC");
    c
}

fn run(args: &[&str], dir: &Path) -> Output {
    ebb().args(args).current_dir(dir).output().unwrap()
}

fn scratch() -> tempfile::TempDir {
    tempfile::tempdir().unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// A case with two falling levels after one bolus, and `extra` appended.
fn case(top: &str, extra: &str) -> String {
    format!(
        "{top}\n[drug]\nname = \"gentamicin\"\nlevel_unit = \"mg/L\"\n\n[[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 400.0\nroute = \"bolus\"\n\n[[level]]\ntime = 2027-03-02T10:00:00\nvalue = 12.0\n\n[[level]]\ntime = 2027-03-02T16:00:00\nvalue = 6.0\n{extra}"
    )
}

/// Run `cmd` and wait at most `secs`; a child still running then is killed and reported.
fn finishes(mut cmd: Command, secs: u64) -> Output {
    let mut child = cmd
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let start = Instant::now();
    while child.try_wait().unwrap().is_none() {
        if start.elapsed() > Duration::from_secs(secs) {
            child.kill().unwrap();
            let _ = child.wait();
            panic!("still running after {secs} s");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    child.wait_with_output().unwrap()
}

fn one_line_error(o: &Output) -> String {
    assert_eq!(o.status.code(), Some(2), "{}", stderr(o));
    let e = stderr(o);
    assert_eq!(e.trim_end().lines().count(), 1, "{e}");
    e.trim_end().to_string()
}

#[test]
fn a_line_break_in_the_label_cannot_print_a_fake_line_in_the_note() {
    let tmp = scratch();
    let d = tmp.path();
    let forged = case("[patient]\nlabel = \"Bed 4\\n  Plan: all targets met\"", "");
    fs::write(d.join("c.toml"), forged).unwrap();
    for cmd in [
        &["note", "c.toml"][..],
        &["report", "c.toml"],
        &["plot", "c.toml", "-o", "c.svg"],
    ] {
        let o = run(cmd, d);
        assert_eq!(
            one_line_error(&o),
            "c.toml: patient.label: contains a line break (U+000A) at character 6; free text must be on one line"
        );
        assert!(o.stdout.is_empty());
    }
    assert!(!d.join("c.svg").exists());
}

#[test]
fn control_characters_are_refused_in_every_free_text_field() {
    let tmp = scratch();
    let d = tmp.path();
    let esc = "\\u001b]0;owned\\u0007";
    let cases = [
        (
            case(&format!("[patient]\nlabel = \"{esc}\""), ""),
            "patient.label",
        ),
        (
            case("", "").replace("name = \"gentamicin\"", &format!("name = \"g{esc}\"")),
            "drug.name",
        ),
        (case("", "note = \"late\\r\"\n"), "level 2: note"),
        (
            case(
                "",
                "\n[switch]\nto = \"x\\u202e\"\nafter_half_lives = 5.0\n",
            ),
            "switch.to",
        ),
        (
            case("", "").replace("route = \"bolus\"", "route = \"bolus\\u0085\""),
            "dose 1: route",
        ),
        (case("time_zone = \"Europe/Paris\\u009b\"", ""), "time_zone"),
        (case("", "\n[fit]\nmethod = \"\\u2066x\"\n"), "fit.method"),
    ];
    for (text, field) in cases {
        fs::write(d.join("c.toml"), &text).unwrap();
        let e = one_line_error(&run(&["report", "c.toml"], d));
        assert!(e.starts_with(&format!("c.toml: {field}: contains ")), "{e}");
        assert!(!e.chars().any(|c| c.is_control()), "{e:?}");
    }
}

#[test]
fn a_markdown_note_escapes_markup_from_the_file() {
    let tmp = scratch();
    let d = tmp.path();
    let text = case(
        "[patient]\nlabel = \"<script>x</script> # *bold* [link](http://x) | cell\"",
        "note = \"```\"\n",
    );
    fs::write(d.join("c.toml"), text).unwrap();
    let o = run(&["note", "--markdown", "c.toml"], d);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let md = String::from_utf8(o.stdout).unwrap();
    assert!(
        md.contains(
            "- Patient: \\<script\\>x\\</script\\> \\# \\*bold\\* \\[link\\](http://x) \\| cell\n"
        ),
        "{md}"
    );
    // Raw markup only inside the fenced report block, where Markdown shows it as text.
    let (head, rest) = md.split_once("```text\n").unwrap();
    let tail = rest.split_once("\n```\n").unwrap().1;
    assert!(
        !head.contains("<script>") && !tail.contains("<script>"),
        "{md}"
    );
    // The level note's backticks sit in a table cell, escaped.
    assert!(md.contains("| \\`\\`\\` |"), "{md}");
}

#[test]
fn backticks_in_the_report_body_cannot_close_the_notes_code_block() {
    let tmp = scratch();
    let d = tmp.path();
    let text = case("[patient]\nlabel = \"```` then # Heading\"", "");
    fs::write(d.join("c.toml"), text).unwrap();
    let o = run(&["note", "--markdown", "c.toml"], d);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let md = String::from_utf8(o.stdout).unwrap();
    // The report inside repeats the label; the fence must be longer than its 4 backticks.
    assert!(md.contains("\n`````text\n"), "{md}");
    assert!(md.contains("\n`````\n"), "{md}");
}

#[test]
fn the_svg_stays_valid_xml_with_markup_in_the_label() {
    let tmp = scratch();
    let d = tmp.path();
    fs::write(
        d.join("c.toml"),
        case("[patient]\nlabel = \"Bed <4> & \\\"5\\\" 'x'\"", ""),
    )
    .unwrap();
    let o = run(&["plot", "c.toml", "-o", "c.svg"], d);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let svg = fs::read_to_string(d.join("c.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    assert!(doc
        .descendants()
        .any(|n| n.text().map(str::trim) == Some("Bed <4> & \"5\" 'x': gentamicin")));
}

#[test]
fn a_huge_value_in_an_enum_field_is_cut_in_the_error() {
    let tmp = scratch();
    let d = tmp.path();
    let long = "x".repeat(10 * 1024 * 1024);
    fs::write(
        d.join("c.toml"),
        case(&format!("[patient]\nsex = \"{long}\""), ""),
    )
    .unwrap();
    let e = one_line_error(&run(&["report", "c.toml"], d));
    assert_eq!(
        e,
        format!(
            "c.toml: patient.sex: must be \"female\" or \"male\", got \"{}…\"",
            "x".repeat(60)
        )
    );
}

#[cfg(unix)]
#[test]
fn a_fifo_with_no_writer_and_dev_zero_are_refused_at_once() {
    let tmp = scratch();
    let d = tmp.path();
    let fifo = d.join("case.toml");
    let made = Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success());
    for args in [
        &["report", "case.toml"][..],
        &["note", "case.toml"],
        &["plot", "case.toml", "-o", "c.svg"],
        &["tidy", "case.toml"],
    ] {
        let mut c = ebb();
        c.args(args).current_dir(d);
        let e = one_line_error(&finishes(c, 20));
        // Read as a case (report, note, plot) or refused as the file a save would replace
        // (tidy): either way it names the FIFO and refuses it.
        assert!(
            e.contains("FIFO") && e.contains("not a regular file"),
            "{e}"
        );
    }
    std::os::unix::fs::symlink("/dev/zero", d.join("zero.toml")).unwrap();
    let mut c = ebb();
    c.args(["report", "zero.toml"]).current_dir(d);
    assert_eq!(
        one_line_error(&finishes(c, 20)),
        "zero.toml: cannot read the file: it is a device, not a regular file"
    );
}

#[test]
fn a_case_file_over_16_mib_is_refused_unread() {
    let tmp = scratch();
    let d = tmp.path();
    let mut text = case("", "");
    text.push_str(&"\n".repeat(16 * 1024 * 1024));
    fs::write(d.join("big.toml"), text).unwrap();
    assert_eq!(
        one_line_error(&run(&["report", "big.toml"], d)),
        "big.toml: cannot read the file: it is 16.0 MiB, more than the 16 MiB a file may be here; is it the right file?"
    );
}

#[test]
fn more_than_100000_doses_are_refused_with_the_limit() {
    let tmp = scratch();
    let d = tmp.path();
    // Inline tables keep the file under the size limit.
    let mut text = String::from("dose = [\n");
    for i in 0..100_001u32 {
        text.push_str(&format!(
            "{{time = 2027-03-02T08:00:00, route = \"bolus\"}},{}",
            if i % 8 == 7 { "\n" } else { "" }
        ));
    }
    text.push_str("]\n[drug]\nlevel_unit = \"mg/L\"\n");
    fs::write(d.join("rows.toml"), text).unwrap();
    assert_eq!(
        one_line_error(&run(&["report", "rows.toml"], d)),
        "rows.toml: dose: the case has 100001 [[dose]] rows; ebb reads at most 100000"
    );
}

#[test]
fn a_level_too_high_to_draw_is_refused_not_drawn_forever() {
    let tmp = scratch();
    let d = tmp.path();
    for (field, text) in [
        (
            "level",
            case("", "").replace("value = 12.0", "value = 4.5e307"),
        ),
        ("threshold", case("", "\n[threshold]\nbelow = 1.7e308\n")),
    ] {
        fs::write(d.join("c.toml"), text).unwrap();
        let mut c = ebb();
        c.args(["plot", "c.toml", "-o", "c.svg"]).current_dir(d);
        let e = one_line_error(&finishes(c, 60));
        assert!(
            e.starts_with(
                "c.toml: plot: the highest value to draw (a level, the threshold or the model) is "
            ),
            "{field}: {e}"
        );
        assert!(
            e.ends_with("levels above 1e300 cannot be drawn, check the values"),
            "{e}"
        );
    }
}

#[cfg(target_os = "linux")]
#[test]
fn every_write_error_exits_2_with_one_line() {
    let tmp = scratch();
    let d = tmp.path();
    fs::write(d.join("c.toml"), case("", "")).unwrap();
    let full = || Stdio::from(fs::File::create("/dev/full").unwrap());
    for args in [
        &["report", "c.toml"][..],
        &["report", "--json", "c.toml"],
        &["report", "--demo"],
        &["report", "c.toml", "c.toml"],
        &["note", "c.toml"],
        &["note", "--markdown", "c.toml"],
        &["profiles"],
        &["profiles", "show", "gentamicin"],
        &["profiles", "show", "gentamicin", "--toml"],
        &["--help"],
        &["--version"],
    ] {
        let o = ebb()
            .args(args)
            .current_dir(d)
            .stdout(full())
            .output()
            .unwrap();
        let e = one_line_error(&o);
        assert!(
            e.ends_with("standard output: cannot write: No space left on device (os error 28)"),
            "{args:?}: {e}"
        );
    }
    // With standard error full too: still status 2, not a panic.
    let o = ebb()
        .args(["report", "missing.toml"])
        .current_dir(d)
        .stderr(full())
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn an_error_never_carries_raw_control_characters_to_the_terminal() {
    let tmp = scratch();
    let d = tmp.path();
    let name = "bed\u{1b}[2J\u{202e}.toml";
    let o = run(&["report", name], d);
    assert_eq!(
        one_line_error(&o),
        "bed\\u{1b}[2J\\u{202e}.toml: cannot read the file: No such file or directory (os error 2)"
    );
}

/// A local profile directory holding `gentamicin.toml` with `display` and `line`.
fn profile_dir(d: &Path, display: &str, line: &str) -> PathBuf {
    let p = d.join("profiles");
    fs::create_dir_all(&p).unwrap();
    fs::write(
        p.join("gentamicin.toml"),
        common::local_profile(display, line),
    )
    .unwrap();
    p
}

#[test]
fn local_profile_text_is_checked_like_case_text() {
    let tmp = scratch();
    let d = tmp.path();
    profile_dir(
        d,
        "Genta\\u001b[31m",
        "trough_max = { value = 1.5, source = \"[Local]\" }",
    );
    let o = run(&["--profiles", "profiles", "profiles"], d);
    assert_eq!(
        one_line_error(&o),
        "profiles/gentamicin.toml: line 2: field display_name: contains an escape character (U+001B) at character 6; free text must be plain printable text"
    );
    // Raw bidirectional controls in a comment would reach `profiles show --toml`.
    let p = profile_dir(
        d,
        "Genta",
        "trough_max = { value = 1.5, source = \"[Local]\" }",
    );
    let text = fs::read_to_string(p.join("gentamicin.toml")).unwrap();
    fs::write(
        p.join("gentamicin.toml"),
        text.replace("schema = 1", "schema = 1 # \u{202e}note"),
    )
    .unwrap();
    let o = run(
        &[
            "--profiles",
            "profiles",
            "profiles",
            "show",
            "gentamicin",
            "--toml",
        ],
        d,
    );
    assert_eq!(
        one_line_error(&o),
        "profiles/gentamicin.toml: line 1: holds U+202E, which could change how other text is shown; a profile must be plain text"
    );
}

#[test]
fn profile_ranges_of_zero_and_targets_that_overflow_are_refused() {
    let tmp = scratch();
    let d = tmp.path();
    profile_dir(
        d,
        "Genta",
        "peak = { low = 0.0, high = 0.0, source = \"[Local]\" }",
    );
    let e = one_line_error(&run(&["--profiles", "profiles", "profiles"], d));
    assert_eq!(
        e,
        "profiles/gentamicin.toml: line 22: field strategy[1].peak: a range of 0 to 0 holds no value above 0; give the high end above 0"
    );
    profile_dir(
        d,
        "Genta",
        "trough_max = { value = 1e308, source = \"[Local]\" }",
    );
    let text = case("", "").replace("mg/L\"\n", "ng/mL\"\nprofile = \"gentamicin\"\n");
    fs::write(d.join("c.toml"), text).unwrap();
    let e = one_line_error(&run(&["--profiles", "profiles", "report", "c.toml"], d));
    assert_eq!(
        e,
        "c.toml: drug.profile: the profile's trough_max target is too large to convert to ng/mL; correct the profile or give [targets] in the case"
    );
}

#[cfg(unix)]
#[test]
fn a_profile_link_to_a_special_file_is_reported_not_skipped() {
    let tmp = scratch();
    let d = tmp.path();
    let p = d.join("profiles");
    fs::create_dir_all(&p).unwrap();
    std::os::unix::fs::symlink("/dev/null", p.join("gentamicin.toml")).unwrap();
    let e = one_line_error(&run(&["--profiles", "profiles", "profiles"], d));
    assert_eq!(
        e,
        "profiles/gentamicin.toml: cannot read the file: it is a device, not a regular file"
    );
    fs::remove_file(p.join("gentamicin.toml")).unwrap();
    assert!(Command::new("mkfifo")
        .arg(p.join("gentamicin.toml"))
        .status()
        .unwrap()
        .success());
    let mut c = ebb();
    c.args(["--profiles", "profiles", "profiles"])
        .current_dir(d);
    let e = one_line_error(&finishes(c, 20));
    assert!(
        e.ends_with("it is a FIFO (named pipe), not a regular file"),
        "{e}"
    );
}

/// Doses and levels in local times across the night the clocks go forward in central
/// Europe (2027-03-28 02:00 -> 03:00; EU summer-time rule, Directive 2000/84/EC).
const ACROSS_THE_CHANGE: &str = "[drug]\nlevel_unit = \"mg/L\"\n\n[[dose]]\ntime = 2027-03-27T20:00:00\namount_mg = 1000.0\nroute = \"bolus\"\n\n[[level]]\ntime = 2027-03-27T22:00:00\nvalue = 30.0\n\n[[level]]\ntime = 2027-03-28T10:00:00\nvalue = 10.0\n";

#[test]
fn unzoned_times_across_a_clock_change_warn_in_the_machines_zone() {
    let tmp = scratch();
    let d = tmp.path();
    fs::write(d.join("c.toml"), ACROSS_THE_CHANGE).unwrap();
    let warn = "the times have no time zone, and this computer's clock changes between dose 1 (UTC+01:00) and level 2 (UTC+02:00), as at a daylight-saving change: hours across it may be off by one, and k with them; if the times were written in that zone, give time_zone (for example time_zone = \"Europe/Paris\") so the hours count as they passed";
    // The zone as a POSIX rule, so the test needs no time-zone database on the machine.
    for tz in ["CET-1CEST,M3.5.0,M10.5.0/3", "Europe/Paris"] {
        let o = ebb()
            .args(["report", "--json", "c.toml"])
            .current_dir(d)
            .env("TZ", tz)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
        let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        let warnings: Vec<&str> = j["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .filter_map(|w| w.as_str())
            .collect();
        assert!(warnings.contains(&warn), "{tz}: {warnings:?}");
    }
    // No warning in a zone without the change, nor once the case names its zone.
    let o = run(&["report", "--json", "c.toml"], d);
    assert!(!String::from_utf8_lossy(&o.stdout).contains("no time zone"));
    fs::write(
        d.join("z.toml"),
        format!("time_zone = \"Europe/Paris\"\n{ACROSS_THE_CHANGE}"),
    )
    .unwrap();
    let o = ebb()
        .args(["report", "--json", "z.toml"])
        .current_dir(d)
        .env("TZ", "CET-1CEST,M3.5.0,M10.5.0/3")
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(!String::from_utf8_lossy(&o.stdout).contains("no time zone"));
}

#[test]
fn a_half_life_of_one_second_gets_a_plausibility_warning() {
    let tmp = scratch();
    let d = tmp.path();
    let text = case("", "").replace("2027-03-02T16:00:00", "2027-03-02T10:00:01");
    fs::write(d.join("c.toml"), text).unwrap();
    let o = run(&["report", "c.toml"], d);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let out = String::from_utf8(o.stdout).unwrap();
    assert!(
        out.contains("the fitted half-life is 1 s, far below any drug managed by levels (under 5 minutes): check the dates and times of the levels and doses before using any figure here"),
        "{out}"
    );
    // A half-life of hours gets no such warning.
    fs::write(d.join("ok.toml"), case("", "")).unwrap();
    let out = String::from_utf8(run(&["report", "ok.toml"], d).stdout).unwrap();
    assert!(!out.contains("far below any drug"), "{out}");
}

#[test]
fn a_phenytoin_plan_every_1e308_hours_is_refused_by_the_plot_in_time() {
    // The plot once never finished: its time axis ran to the plan's first dose, 1.8e308 h
    // after the last recorded dose (tests/suite/hostile_features.rs found it).
    let tmp = scratch();
    let d = tmp.path();
    let case = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/cases/invalid/plan_interval_beyond_calendar.toml");
    fs::copy(case, d.join("c.toml")).unwrap();
    let mut cmd = ebb();
    cmd.args(["plot", "c.toml", "-o", "c.svg"]).current_dir(d);
    let e = one_line_error(&finishes(cmd, 60));
    assert!(
        e.starts_with("c.toml: plan.interval_h: 1.7976931348623157e308 h after"),
        "{e}"
    );
    assert!(!d.join("c.svg").exists());
}
