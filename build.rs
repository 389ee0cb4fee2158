//! Build step: embed the built-in drug profiles with their TOML already parsed, so that
//! starting `ebb` does not parse TOML for them.
//!
//! For each `drug-profiles/STEM.toml` this writes `$OUT_DIR/profiles/STEM.json`, the same
//! document as JSON (a format the program reads several times faster than TOML), and
//! `$OUT_DIR/built_in_profiles.rs`, the table of (stem, TOML text, JSON text) that
//! `src/profiles/builtin.rs` includes. Nothing here knows the profile schema: the program
//! reads the JSON into the same serde types as the TOML and validates it, and a test checks
//! that both give the same profile for every shipped file. A file this step cannot convert
//! (a syntax error, a date, a number JSON cannot hold) gets an empty JSON text: the program
//! then reads its TOML with the ordinary loader, whose message names the line and field.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

fn main() {
    let root = PathBuf::from(std::env::var_os("CARGO_MANIFEST_DIR").expect("set by cargo"));
    let out = PathBuf::from(std::env::var_os("OUT_DIR").expect("set by cargo"));
    let src = root.join("drug-profiles");
    println!("cargo::rerun-if-changed={}", src.display());
    let mut stems: Vec<(String, PathBuf)> = std::fs::read_dir(&src)
        .expect("drug-profiles/ is readable")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .filter_map(|p| Some((p.file_stem()?.to_str()?.to_string(), p)))
        .collect();
    stems.sort();
    let json_dir = out.join("profiles");
    std::fs::create_dir_all(&json_dir).expect("OUT_DIR is writable");
    let mut table = String::from(
        "/// (file stem, TOML text, the same as JSON or empty) of every built-in profile.\n\
         pub(crate) const BUILT_IN: &[(&str, &str, &str)] = &[\n",
    );
    for (stem, path) in &stems {
        println!("cargo::rerun-if-changed={}", path.display());
        let json = std::fs::read_to_string(path)
            .ok()
            .and_then(|text| toml::from_str::<toml::Table>(&text).ok())
            .and_then(|t| {
                let mut s = String::new();
                table_json(&t, &mut s).then_some(s)
            })
            .unwrap_or_default();
        let json_path = json_dir.join(format!("{stem}.json"));
        std::fs::write(&json_path, json).expect("OUT_DIR is writable");
        let _ = writeln!(
            table,
            "    ({stem:?}, include_str!({:?}), include_str!({:?})),",
            literal_path(path),
            literal_path(&json_path)
        );
    }
    table.push_str("];\n");
    std::fs::write(out.join("built_in_profiles.rs"), table).expect("OUT_DIR is writable");
}

fn literal_path(p: &Path) -> String {
    p.display().to_string()
}

/// Write `t` as a JSON object; false when some value has no JSON form.
fn table_json(t: &toml::Table, out: &mut String) -> bool {
    out.push('{');
    for (i, (k, v)) in t.iter().enumerate() {
        if i > 0 {
            out.push(',');
        }
        string_json(k, out);
        out.push(':');
        if !value_json(v, out) {
            return false;
        }
    }
    out.push('}');
    true
}

fn value_json(v: &toml::Value, out: &mut String) -> bool {
    match v {
        toml::Value::String(s) => string_json(s, out),
        toml::Value::Integer(i) => {
            let _ = write!(out, "{i}");
        }
        // `{:?}` writes the shortest text that reads back as the same f64.
        toml::Value::Float(x) if x.is_finite() => {
            let _ = write!(out, "{x:?}");
        }
        toml::Value::Float(_) | toml::Value::Datetime(_) => return false,
        toml::Value::Boolean(b) => out.push_str(if *b { "true" } else { "false" }),
        toml::Value::Array(items) => {
            out.push('[');
            for (i, item) in items.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                if !value_json(item, out) {
                    return false;
                }
            }
            out.push(']');
        }
        toml::Value::Table(t) => return table_json(t, out),
    }
    true
}

fn string_json(s: &str, out: &mut String) {
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            c if u32::from(c) < 0x20 => {
                let _ = write!(out, "\\u{:04x}", u32::from(c));
            }
            c => out.push(c),
        }
    }
    out.push('"');
}
