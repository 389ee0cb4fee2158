//! The record note holds every figure of the report, byte for byte, plus the inputs, the
//! method, the time it was made and the tool version.

use ebb::core::casefile::CaseFile;
use ebb::core::note::{self, NoteFormat, NoteMeta};
use ebb::core::report::{self, num, when};

const EXTRA: &str = r#"
[switch]
to = "next agent (invented)"
start_below = 0.5
"#;

fn demo_with_switch() -> ebb::core::case::Case {
    let text = ebb::demo::DEMO_CASE.replace(
        "procedure = 2027-03-04T09:00:00",
        "procedure = 2027-03-04T09:00:00\nresume_below = 0.3",
    ) + EXTRA;
    CaseFile::parse(&text).unwrap().validate().unwrap()
}

fn meta() -> NoteMeta {
    NoteMeta {
        made_at: "2027-03-04 07:15".into(),
        version: "9.9.9".into(),
        source: "bed7.toml".into(),
    }
}

/// Every run of digits (with a decimal point, sign or exponent) in `s`.
fn numbers(s: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    for c in s.chars() {
        if c.is_ascii_digit() || (c == '.' && !cur.is_empty()) {
            cur.push(c);
        } else if !cur.is_empty() {
            out.push(cur.trim_end_matches('.').to_string());
            cur.clear();
        }
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

#[test]
fn every_figure_of_the_report_is_in_the_note() {
    let case = demo_with_switch();
    let r = report::build(&case).unwrap();
    let mut text = Vec::new();
    report::write_text(&mut text, &case, &r).unwrap();
    let text = String::from_utf8(text).unwrap();
    for format in [NoteFormat::Text, NoteFormat::Markdown] {
        let n = note::note_text(&case, &r, &meta(), format);
        // Every line of the readable report, except the caution's line break, is in the note.
        for line in text.lines().skip(2).filter(|l| !l.trim().is_empty()) {
            assert!(n.contains(line.trim()), "{format:?} lacks {line:?}");
        }
        for x in numbers(&text) {
            assert!(n.contains(&x), "{format:?} lacks {x}");
        }
        // The key figures, formatted once by the shared formatter.
        let mut figures = vec![r.fit.k_per_h, r.fit.half_life_h, r.fit.volume_l.unwrap()];
        let p = r.plan.as_ref().unwrap();
        figures.extend([
            p.peak_ss.unwrap(),
            p.trough_ss.unwrap(),
            p.auc24_ss.unwrap(),
        ]);
        for s in &r.advice.suggestions {
            figures.extend([s.dose_mg, s.peak_ss, s.trough_ss, s.auc24_ss]);
        }
        // The demo's gentamicin profile gives no loading dose.
        figures.extend(r.advice.loading.as_ref().map(|l| l.dose_mg));
        let a = r.advice.auc24.as_ref().unwrap();
        figures.extend([a.by_levels, a.by_k_and_v.unwrap()]);
        let t = r.threshold.as_ref().unwrap();
        figures.extend([
            t.c0,
            t.level_at_procedure.unwrap(),
            t.level_at_resume.unwrap(),
        ]);
        let sw = r.advice.switch.as_ref().unwrap();
        figures.push(sw.level_at_start);
        figures.extend(r.washout.iter().map(|w| w.level));
        for f in figures {
            assert!(n.contains(&num(f)), "{format:?} lacks {}", num(f));
        }
        let mut stamps = vec![
            t.reached_at,
            t.latest_plan_dose.unwrap(),
            t.resume_at.unwrap(),
        ];
        stamps.extend(t.reached_at_ci95.unwrap());
        stamps.push(sw.start_at);
        stamps.extend(r.washout.iter().map(|w| w.at));
        for s in stamps {
            assert!(n.contains(&when(&s)), "{format:?} lacks {}", when(&s));
        }
        for w in &r.warnings {
            assert!(n.contains(w.text()), "{format:?} lacks warning {w}");
        }
        assert!(n.contains(report::CAUTION));
        assert!(n.contains("2027-03-04 07:15") && n.contains("ebb 9.9.9"));
        assert!(n.contains("bed7.toml"));
    }
}

#[test]
fn the_note_lists_inputs_and_why_each_level_was_used() {
    let case = demo_with_switch();
    let r = report::build(&case).unwrap();
    let n = note::note_text(&case, &r, &meta(), NoteFormat::Text);
    assert!(
        n.contains("dose 4  Wed 3 Mar 2027 06:00  140 mg  infusion over 0.5 h"),
        "{n}"
    );
    assert!(
        n.contains("level 1  Wed 3 Mar 2027 05:40  0.9 mg/L  pre-dose level, used for the volume")
    );
    assert!(n.contains("level 2  Wed 3 Mar 2027 07:05  6.1 mg/L  in the fit"));
    // The method by its published names.
    assert!(n.contains("log-linear regression"));
    assert!(n.contains("Sawchuk-Zaske"));
    assert!(n.contains("linear-up/log-down trapezoid (Chiou 1978)"));
    assert!(n.contains("Targets: peak 5–10 mg/L, trough <= 2 mg/L"));
    assert!(n.contains("Switch planned to next agent (invented)"));
    let md = note::note_text(&case, &r, &meta(), NoteFormat::Markdown);
    assert!(md.starts_with("# Drug level note: gentamicin"));
    assert!(md.contains("| 2 | Wed 3 Mar 2027 07:05 | 6.1 mg/L | in the fit |"));
    assert!(md.contains("```text\n"));
}

#[test]
fn unused_levels_say_why() {
    let text = ebb::demo::DEMO_CASE.replace("value = 2.0\n", "value = 2.0\nuse = false\n");
    let case = CaseFile::parse(&text).unwrap().validate().unwrap();
    let r = report::build(&case).unwrap();
    let n = note::note_text(&case, &r, &meta(), NoteFormat::Text);
    assert!(n.contains("level 3  Wed 3 Mar 2027 11:50  2 mg/L  left out by the user (use = false)"));
}

#[test]
fn format_follows_the_file_name() {
    use std::path::Path;
    assert_eq!(
        NoteFormat::for_path(Path::new("a/note.md")),
        NoteFormat::Markdown
    );
    assert_eq!(
        NoteFormat::for_path(Path::new("note.MARKDOWN")),
        NoteFormat::Markdown
    );
    assert_eq!(
        NoteFormat::for_path(Path::new("note.txt")),
        NoteFormat::Text
    );
}
