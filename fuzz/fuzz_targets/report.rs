//! Fuzz target: a valid case's report must never panic, and never hold a NaN or infinity.
#![no_main]

use libfuzzer_sys::fuzz_target;

fn all_finite(v: &serde_json::Value) -> bool {
    match v {
        serde_json::Value::Number(n) => n.as_f64().is_some_and(f64::is_finite),
        serde_json::Value::Array(a) => a.iter().all(all_finite),
        serde_json::Value::Object(o) => o.values().all(all_finite),
        _ => true,
    }
}

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(case) = ebb::core::casefile::CaseFile::parse(text).and_then(|f| f.validate()) else {
        return;
    };
    if let Ok(report) = ebb::core::report::build(&case) {
        let json = ebb::core::json::to_json(&report);
        let value: serde_json::Value = serde_json::from_str(&json).expect("the report is JSON");
        assert!(all_finite(&value), "a figure is not finite: {json}");
        let mut out = Vec::new();
        ebb::core::report::write_text(&mut out, &case, &report).expect("writes to memory");
    }
});
