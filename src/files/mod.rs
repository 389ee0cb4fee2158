//! Everything the application writes to disk, and the rules it writes by: the safe save
//! (`store`), the guards on output files (`guard`), ebb's check line on its own notes and
//! plots (`mark`), comment-keeping TOML (`toml_keep`) and recovery files (`recover`). The
//! command line and the bedside screen both use it; the core never writes a file.

pub mod guard;
pub mod mark;
pub mod recover;
pub mod store;
pub mod toml_keep;

/// The record note's metadata for a case file named `source`, made now: the one place the
/// application reads the clock for a note (the CLI's `ebb note` and the screen's `n`).
pub fn note_meta_now(source: &str) -> crate::core::note::NoteMeta {
    crate::core::note::NoteMeta {
        made_at: chrono::Local::now().format("%Y-%m-%d %H:%M").to_string(),
        version: env!("CARGO_PKG_VERSION").to_string(),
        source: source.to_string(),
    }
}
