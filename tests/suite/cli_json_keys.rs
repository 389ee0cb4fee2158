//! The report JSON carries exactly contract v1's keys, plus additions that docs/ names.

use std::collections::BTreeSet;
use std::path::Path;

use serde_json::Value;

fn report_json(name: &str) -> Value {
    let o = common::ebb()
        .args(["report", "--json", &format!("tests/cases/valid/{name}")])
        .output()
        .expect("the ebb binary runs");
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).unwrap()
}

fn keys(v: &Value) -> BTreeSet<String> {
    v.as_object()
        .unwrap_or_else(|| panic!("not an object: {v}"))
        .keys()
        .cloned()
        .collect()
}

use crate::common;
use common::{FIT, PLAN, THRESHOLD, TOP, WASHOUT};

/// Keys beyond the contract's: the contract allows additions only when documented, so
/// every extra key must be named in docs/.
fn documented_additions(v: &Value, contract: &[&str], docs: &str, place: &str) -> Vec<String> {
    let got = keys(v);
    for k in contract {
        assert!(got.contains(*k), "{place}.{k} is missing from {v}");
    }
    got.into_iter()
        .filter(|k| !contract.contains(&k.as_str()))
        .filter(|k| !docs.contains(&format!("`{k}`")) && !docs.contains(&format!("{place}.{k}")))
        .map(|k| format!("{place}.{k}"))
        .collect()
}

fn docs_text() -> String {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("docs");
    let mut all = String::new();
    for e in std::fs::read_dir(dir).into_iter().flatten().flatten() {
        if e.path().extension().is_some_and(|x| x == "md") {
            all += &std::fs::read_to_string(e.path()).unwrap_or_default();
        }
    }
    all
}

#[test]
fn json_keys_are_the_contract_keys_plus_documented_additions_only() {
    let docs = docs_text();
    let mut undocumented = Vec::new();
    for name in ["two_point_infusion.toml", "latest_plan_dose_found.toml"] {
        let v = report_json(name);
        undocumented.extend(documented_additions(&v, TOP, &docs, "report"));
        undocumented.extend(documented_additions(&v["fit"], FIT, &docs, "fit"));
        undocumented.extend(documented_additions(&v["plan"], PLAN, &docs, "plan"));
        undocumented.extend(documented_additions(
            &v["threshold"],
            THRESHOLD,
            &docs,
            "threshold",
        ));
        undocumented.extend(documented_additions(
            &v["washout"][0],
            WASHOUT,
            &docs,
            "washout",
        ));
    }
    undocumented.sort();
    undocumented.dedup();
    assert!(
        undocumented.is_empty(),
        "JSON keys beyond contract v1 that docs/ does not name: {undocumented:?}"
    );
}
