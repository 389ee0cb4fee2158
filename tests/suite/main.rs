//! ebb's integration tests, one module per subject, built as one test binary so that a change
//! in the library relinks one executable rather than one per file. Fixtures are in
//! `tests/cases` and `tests/data`, insta snapshots in `tests/suite/snapshots`, proptest
//! regressions in `proptest-regressions/` at the package root.

mod common;

mod amikacin_tod;
mod bayes_prior;
mod cli_json_keys;
mod cli_report;
mod core_cases;
mod core_contract_details;
mod core_facts;
mod core_hostile;
mod core_nist;
mod core_ode;
mod core_props;
mod core_time_zone;
mod dialysis;
mod docs_rejected;
mod files_safety;
mod history_cases;
mod history_recovery;
mod hostile_cli;
mod hostile_features;
mod layout;
mod note_cli;
mod note_figures;
mod ode;
mod oral;
mod plot_svg;
mod population_two;
mod profile_lookup;
mod profiles;
mod profiles_cli;
mod regimen_auc;
mod regimen_design;
mod regimen_switch;
mod saturable_cli;
mod store_kill;
mod time_zone_data;
mod tui_entry;
mod tui_features;
mod tui_keys;
mod tui_random_keys;
mod tui_save_conflict;
mod tui_screens;
mod tui_tmux;
mod two_compartment;
