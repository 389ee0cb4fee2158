//! The bedside terminal UI: state (`app`), intents (`action`), keys (`keymap`), changes
//! (`update`), entering rows and undoing (`rows`), the drug profiles on offer (`catalog`),
//! figures from the core (`figures`), drawing (`view`, `screens`, `widgets`), words
//! (`strings`), the effects `update` asks for (`effect`: saving, the note) and the run loop
//! (`run`).

pub mod action;
pub mod app;
pub mod catalog;
pub mod effect;
pub mod entry;
pub mod fields;
pub mod figures;
pub mod keymap;
pub mod rows;
pub mod run;
pub mod screens;
pub mod strings;
pub mod update;
pub mod view;
pub mod widgets;

pub use app::App;
pub use run::run;
