//! The built-in profiles: the files of `drug-profiles/`, embedded at build time by file stem.

/// (file stem, TOML text) of every built-in profile.
pub(crate) const BUILT_IN: &[(&str, &str)] = &[
    (
        "amikacin",
        include_str!("../../drug-profiles/amikacin.toml"),
    ),
    (
        "carbamazepine",
        include_str!("../../drug-profiles/carbamazepine.toml"),
    ),
    ("digoxin", include_str!("../../drug-profiles/digoxin.toml")),
    (
        "gentamicin",
        include_str!("../../drug-profiles/gentamicin.toml"),
    ),
    ("lithium", include_str!("../../drug-profiles/lithium.toml")),
    (
        "phenytoin",
        include_str!("../../drug-profiles/phenytoin.toml"),
    ),
    (
        "theophylline",
        include_str!("../../drug-profiles/theophylline.toml"),
    ),
    (
        "tobramycin",
        include_str!("../../drug-profiles/tobramycin.toml"),
    ),
    (
        "valproic-acid",
        include_str!("../../drug-profiles/valproic-acid.toml"),
    ),
    (
        "vancomycin",
        include_str!("../../drug-profiles/vancomycin.toml"),
    ),
];
