//! What several integration tests share: the contract's JSON keys.
#![allow(dead_code)]

/// The contract's keys (case-and-report.md, "ebb report CASE.toml --json").
pub const TOP: &[&str] = &["fit", "plan", "threshold", "washout", "warnings"];
pub const FIT: &[&str] = &[
    "method",
    "levels_used",
    "k_per_h",
    "half_life_h",
    "r_squared",
    "k_ci95_per_h",
    "half_life_ci95_h",
    "volume_l",
    "volume_method",
    "clearance_l_per_h",
];
pub const PLAN: &[&str] = &[
    "accumulation_factor",
    "peak_ss",
    "trough_ss",
    "auc24_ss",
    "time_to_90pct_ss_h",
    "time_to_95pct_ss_h",
    "time_to_97pct_ss_h",
    "meets_targets",
];
pub const THRESHOLD: &[&str] = &[
    "below",
    "reached_at",
    "reached_at_ci95",
    "latest_plan_dose",
    "level_at_procedure",
];
pub const WASHOUT: &[&str] = &["half_lives", "at", "level", "fraction_remaining"];
