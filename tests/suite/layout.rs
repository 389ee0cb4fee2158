//! The integration tests stay one binary: no test file outside `tests/suite/`, and every
//! module file in it is listed in `main.rs` (cargo would silently skip either).

use std::path::Path;

fn rust_files(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file() && p.extension().is_some_and(|e| e == "rs"))
        .map(|p| p.file_stem().unwrap().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

#[test]
fn every_test_file_is_a_module_of_the_suite() {
    let tests = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests");
    let stray = rust_files(&tests);
    assert!(
        stray.is_empty(),
        "move {stray:?} into tests/suite/ and list each in tests/suite/main.rs"
    );
    let main = std::fs::read_to_string(tests.join("suite/main.rs")).unwrap();
    let unlisted: Vec<String> = rust_files(&tests.join("suite"))
        .into_iter()
        .filter(|m| m != "main" && !main.contains(&format!("mod {m};")))
        .collect();
    assert!(
        unlisted.is_empty(),
        "list {unlisted:?} in tests/suite/main.rs"
    );
}
