//! `Catalog::load_for` (what `ebb report` uses to find a case's profile without parsing
//! every built-in) answers exactly as the full catalog does.

use ebb::profiles::Catalog;

#[test]
fn a_lookup_by_name_matches_the_full_catalog() {
    let full = Catalog::load(None).unwrap();
    for name in full.names() {
        let one = Catalog::load_for(None, name).unwrap();
        assert_eq!(one.entries().len(), 1, "{name}");
        assert_eq!(
            one.lookup(name, "drug.profile").unwrap(),
            full.lookup(name, "drug.profile").unwrap()
        );
        // Twice: the second comes from the per-process cache and is the same.
        assert_eq!(Catalog::load_for(None, name).unwrap(), one);
    }
    let unknown = |c: &Catalog| c.lookup("nosuch", "drug.profile").unwrap_err().to_string();
    assert_eq!(
        unknown(&Catalog::load_for(None, "nosuch").unwrap()),
        unknown(&full)
    );
}

#[test]
fn with_a_profile_folder_every_file_is_still_read() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    std::fs::write(dir.join("broken.toml"), "half_life_h = [\n").unwrap();
    // A broken local file is reported even when the case names a built-in profile.
    let e = Catalog::load_for(Some(dir), "vancomycin")
        .unwrap_err()
        .to_string();
    assert!(e.contains("broken.toml: line 1:"), "{e}");
}
