//! What several integration tests share: the `ebb` binary, the contract's JSON keys and a
//! local drug profile.
#![allow(dead_code)]

/// The `ebb` binary built for these tests, to be run from the package root (where the
/// fixtures' relative paths start).
pub fn ebb() -> assert_cmd::Command {
    let mut c = assert_cmd::cargo::cargo_bin_cmd!("ebb");
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

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

/// A local drug profile (an invented hospital protocol, for tests only) whose one strategy
/// holds `target_line`, e.g. `trough_max = { value = 1.5, source = "[Local]" }`.
pub fn local_profile(display: &str, target_line: &str) -> String {
    format!(
        r#"schema = 1
display_name = "{display}"
level_unit = "mg/L"
default_strategy = "local"
half_life_h = {{ low = 1.5, high = 4.0, source = "[Local]" }}
cautions = ["Local protocol [Local]."]

[volume]
l_per_kg = {{ low = 0.2, high = 0.3, source = "[Local]" }}
weight = "ideal"
weight_source = "[Local]"

[kinetics]
first_order = "yes"
why = "linear"
source = "[Local]"

[[strategy]]
name = "local"
label = "Local protocol"
sampling = "as the protocol says"
{target_line}

[sources]
Local = "Invented hospital protocol for tests, version 1"
"#
    )
}

/// Keys for the screen, as a user presses them (the key-sequence tests share these).
pub fn key(app: &mut ebb::tui::App, code: crossterm::event::KeyCode) {
    app.handle_key(crossterm::event::KeyEvent::new(
        code,
        crossterm::event::KeyModifiers::NONE,
    ));
}

pub fn ctrl(app: &mut ebb::tui::App, c: char) {
    app.handle_key(crossterm::event::KeyEvent::new(
        crossterm::event::KeyCode::Char(c),
        crossterm::event::KeyModifiers::CONTROL,
    ));
}

pub fn typed(app: &mut ebb::tui::App, text: &str) {
    for c in text.chars() {
        key(app, crossterm::event::KeyCode::Char(c));
    }
}

pub fn clear_field(app: &mut ebb::tui::App) {
    key(app, crossterm::event::KeyCode::End);
    for _ in 0..40 {
        key(app, crossterm::event::KeyCode::Backspace);
    }
}
