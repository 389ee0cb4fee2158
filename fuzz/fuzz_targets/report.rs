//! Fuzz target: a valid case's report (text, JSON, record note; with its built-in drug
//! profile when it names one) must never panic, and never hold a NaN or infinity.
#![no_main]

use std::sync::OnceLock;

use ebb::core::casefile::CaseFile;
use ebb::core::note::{self, NoteFormat, NoteMeta};
use ebb::profiles::Catalog;
use libfuzzer_sys::fuzz_target;

fn all_finite(v: &serde_json::Value) -> bool {
    match v {
        serde_json::Value::Number(n) => n.as_f64().is_some_and(f64::is_finite),
        serde_json::Value::Array(a) => a.iter().all(all_finite),
        serde_json::Value::Object(o) => o.values().all(all_finite),
        _ => true,
    }
}

/// Words that would mean a non-finite number reached the text.
fn non_finite_word(out: &str) -> bool {
    out.split(|c: char| !c.is_ascii_alphanumeric())
        .any(|w| matches!(w, "NaN" | "nan" | "inf" | "Inf" | "Infinity"))
}

fn catalog() -> &'static Catalog {
    static CATALOG: OnceLock<Catalog> = OnceLock::new();
    CATALOG.get_or_init(|| Catalog::built_in().expect("the built-in profiles parse"))
}

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(file) = CaseFile::parse(text) else {
        return;
    };
    // The one analysis `ebb report` runs, with the built-in profiles.
    let analysis = ebb::analysis::analyse(&file, catalog());
    let Some(case) = analysis.case.clone() else {
        return;
    };
    // Free text (names, notes) is echoed in the output; when the input itself holds one of
    // the words, only the JSON numbers can be checked.
    let check_words = !non_finite_word(text);
    for as_json in [false, true] {
        let mut out = Vec::new();
        if ebb::cli::write_report(&mut out, &analysis, "fuzz", as_json).is_ok() {
            let out = String::from_utf8(out).expect("the report is UTF-8");
            if as_json {
                let value: serde_json::Value = serde_json::from_str(&out).expect("JSON");
                assert!(all_finite(&value), "a figure is not finite: {out}");
            }
            assert!(
                !(check_words && non_finite_word(&out)),
                "a non-finite number in:\n{out}"
            );
        }
    }
    if let Ok(report) = ebb::core::report::build(&case) {
        let json = ebb::core::json::to_json(&report);
        let value: serde_json::Value = serde_json::from_str(&json).expect("the report is JSON");
        assert!(all_finite(&value), "a figure is not finite: {json}");
        let meta = NoteMeta {
            made_at: "2027-03-05 09:00".into(),
            version: "fuzz".into(),
            source: "fuzz".into(),
        };
        for format in [NoteFormat::Text, NoteFormat::Markdown] {
            let n = note::note_text(&case, &report, &meta, format);
            assert!(
                !(check_words && non_finite_word(&n)),
                "a non-finite number in the note:\n{n}"
            );
        }
    }
});
