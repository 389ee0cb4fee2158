//! What the screen asks the outside world to do, and what came of it. `update` never writes
//! a file or reads the clock: it returns `Effect`s; the run loop (`App::handle_key`) carries
//! each out here and hands the `Outcome` back to `update::settle`, which is pure again.

use std::path::{Path, PathBuf};

use crate::core::note::{note_text, NoteFormat};
use crate::files::guard::{self, OutputError};
use crate::files::mark::Style;
use crate::files::store::{self, Expect, Fingerprint, SaveError};
use crate::files::{recover, toml_keep};
use crate::tui::app::App;

/// A request from `update` to the outside world.
#[derive(Debug, Clone, PartialEq)]
pub enum Effect {
    /// Save the case (with the comments of the text it was read from) to `path`, finding
    /// the file there as `expect` says; never over `never_over` (a file that did not load).
    Save {
        /// Where.
        path: PathBuf,
        /// What must be on disk there now.
        expect: Expect,
    },
    /// Write the record note to `path`, reading the clock for its time; `force` replaces a
    /// file ebb did not write, or edited since (the user said yes).
    WriteNote {
        /// Where.
        path: PathBuf,
        /// The case file named in the note.
        source: String,
        /// Replace a file ebb did not write (or that was edited since).
        force: bool,
    },
    /// Remove this recovery file (the case it holds was saved since).
    DropRecovery(PathBuf),
}

/// What came of an effect.
#[derive(Debug)]
pub enum Outcome {
    /// The case was saved; the file now holds this (and this text).
    Saved {
        /// Where.
        path: PathBuf,
        /// The file's fingerprint now.
        print: Fingerprint,
        /// The text written (the comments of the next save come from it).
        text: String,
        /// The file's comments could not be kept (see `toml_keep::render_checked`).
        comments_lost: bool,
    },
    /// The save did not happen; the old file is whole.
    NotSaved {
        /// Where.
        path: PathBuf,
        /// Why.
        error: SaveError,
    },
    /// The note was written.
    NoteWritten(PathBuf),
    /// The note was not written; nothing on disk changed.
    NoteNotWritten {
        /// Where.
        path: PathBuf,
        /// Why.
        error: OutputError,
    },
    /// Nothing to report.
    Done,
}

/// Carry out one effect: the only place the screen touches files or the clock.
pub fn carry_out(app: &App, effect: Effect) -> Outcome {
    match effect {
        Effect::Save { path, expect } => save(app, path, &expect),
        Effect::WriteNote {
            path,
            source,
            force,
        } => write_note(app, path, source, force),
        Effect::DropRecovery(file) => {
            recover::remove_file(&file);
            Outcome::Done
        }
    }
}

fn save(app: &App, path: PathBuf, expect: &Expect) -> Outcome {
    if let Some(bad) = &app.never_save_over {
        if bad == &path || guard::same_file(bad, &path) {
            return Outcome::NotSaved {
                error: SaveError::DidNotLoad { path: path.clone() },
                path,
            };
        }
    }
    let (text, comments_lost) =
        match toml_keep::render_checked(&app.file, app.source_text.as_deref()) {
            Ok(t) => t,
            Err(reason) => {
                return Outcome::NotSaved {
                    error: SaveError::Toml {
                        path: path.clone(),
                        reason,
                    },
                    path,
                }
            }
        };
    match store::save_bytes(&path, text.as_bytes(), expect) {
        Ok(print) => Outcome::Saved {
            path,
            print,
            text,
            comments_lost,
        },
        Err(error) => Outcome::NotSaved { path, error },
    }
}

fn write_note(app: &App, path: PathBuf, source: String, force: bool) -> Outcome {
    let (Some(case), Some(report)) = (&app.figures.case, &app.figures.report) else {
        return Outcome::Done;
    };
    let format = NoteFormat::for_path(&path);
    let text = note_text(case, report, &crate::files::note_meta_now(&source), format);
    let style = match format {
        NoteFormat::Markdown => Style::Comment,
        NoteFormat::Text => Style::Plain,
    };
    let inputs: Vec<&Path> = app
        .path
        .iter()
        .chain(&app.never_save_over)
        .map(PathBuf::as_path)
        .collect();
    match guard::write_output(&path, &text, style, &inputs, force) {
        Ok(()) => Outcome::NoteWritten(path),
        Err(error) => Outcome::NoteNotWritten { path, error },
    }
}

/// Carry out `effects` and every effect their outcomes ask for, in order.
pub fn carry_out_all(app: &mut App, effects: Vec<Effect>) {
    let mut queue: std::collections::VecDeque<Effect> = effects.into();
    while let Some(e) = queue.pop_front() {
        let outcome = carry_out(app, e);
        queue.extend(crate::tui::update::settle(app, outcome));
    }
}
