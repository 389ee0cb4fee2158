//! The state of the bedside UI: the case being edited, where the user is, and the figures
//! the core computed from the case. No terminal types live here.

use std::path::{Path, PathBuf};

use crate::core::casefile::{CaseFile, DrugFile};
use crate::demo::DEMO_CASE;
use crate::files::store;
use crate::files::{recover, toml_keep};
use crate::tui::catalog::Profiles;
use crate::tui::effect::Effect;
use crate::tui::fields::Field;
use crate::tui::figures::{self, Figures};
use crate::tui::strings;

/// The five screens, in tab order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Screen {
    /// Patient, drug, doses and levels.
    Case,
    /// The fit of k, half-life and volume.
    Fit,
    /// The regimen at steady state.
    Plan,
    /// When the level falls below a threshold.
    Threshold,
    /// Each half-life after the last dose.
    Washout,
}

impl Screen {
    /// Every screen in tab order.
    pub const ALL: [Screen; 5] = [
        Screen::Case,
        Screen::Fit,
        Screen::Plan,
        Screen::Threshold,
        Screen::Washout,
    ];

    /// Position in tab order, from 0.
    pub fn index(self) -> usize {
        Screen::ALL.iter().position(|s| *s == self).unwrap_or(0)
    }

    /// The next screen (wrapping), or the previous one with `back`.
    pub fn step(self, back: bool) -> Screen {
        let n = Screen::ALL.len();
        let i = self.index();
        Screen::ALL[if back { (i + n - 1) % n } else { (i + 1) % n }]
    }
}

/// What the keys currently do.
#[derive(Debug, Clone, PartialEq)]
pub enum Mode {
    /// Moving about and giving commands.
    Normal,
    /// Typing into a field.
    Editing(Editor),
    /// The key list is shown.
    Help,
    /// A question waits for yes or no.
    Confirm(Confirm),
    /// A new row has just been filled in: letters and Space do nothing (they are not
    /// commands until Enter, Esc or an arrow key says the row is done).
    RowDone(NewRow),
    /// The drug-profile list is open; the number is the highlighted line (0: no profile).
    ChooseProfile(usize),
    /// The chosen profile's targets, sampling advice and cautions are shown, scrolled down
    /// by this many lines.
    ProfileInfo(u16),
    /// The run loop should end.
    Quitting,
}

/// What an editor is typing into.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Target {
    /// A field of the case.
    Field(Field),
    /// The file name to save to.
    SavePath,
    /// The file name to write the record note to.
    NotePath,
}

/// A one-line text editor over a field.
#[derive(Debug, Clone, PartialEq)]
pub struct Editor {
    /// What is being edited.
    pub target: Target,
    /// The text so far.
    pub buffer: String,
    /// Cursor position in characters.
    pub cursor: usize,
    /// Why the text would not be accepted as it stands (checked on every key).
    pub error: Option<String>,
    /// The fields to edit next, in order, when this one is accepted (for new rows).
    pub then: Vec<Field>,
    /// The row this editor is filling in for the first time: cancelling removes it.
    pub new_row: Option<NewRow>,
    /// The length of the undo list before the new row was added (a finished row is one
    /// undo step; a dropped one leaves none).
    pub undo_mark: Option<usize>,
    /// The text is a proposal (a new row's time): the first character typed replaces it,
    /// while a cursor key, Backspace or Delete keeps it to edit.
    pub proposed: bool,
}

/// A row being added.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NewRow {
    /// A dose row (0-based).
    Dose(usize),
    /// A level row (0-based).
    Level(usize),
}

impl Editor {
    /// An editor starting from `text`, cursor at its end.
    pub fn new(target: Target, text: String) -> Self {
        Editor {
            cursor: text.chars().count(),
            buffer: text,
            target,
            error: None,
            then: Vec::new(),
            new_row: None,
            undo_mark: None,
            proposed: false,
        }
    }
}

/// A change that can be undone: the case as it was before, and what the change was.
#[derive(Debug, Clone, PartialEq)]
pub struct Undo {
    /// The case before the change.
    pub file: CaseFile,
    /// What the message line said about the change (empty until it says something).
    pub what: String,
}

/// How many changes can be undone.
pub const UNDO_DEPTH: usize = 200;

/// A question that needs a yes or no.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Confirm {
    /// Quit with unsaved changes.
    Quit,
    /// Delete a dose row (0-based).
    DeleteDose(usize),
    /// Delete a level row (0-based).
    DeleteLevel(usize),
    /// Overwrite the file at `App::pending_overwrite`, which changed on disk since it was
    /// opened (or, with `App::pending_exists`, was there when the case was started).
    Overwrite,
    /// Replace the file at `App::pending_note`, which ebb did not write or which was edited
    /// since ebb wrote it.
    ReplaceNote,
    /// Load the unsaved changes of `App::recovery`, written when ebb was stopped.
    Recover,
}

/// The line under the screen: what just happened.
#[derive(Debug, Clone, PartialEq)]
pub struct Message {
    /// The words.
    pub text: String,
    /// Whether it reports a problem.
    pub is_error: bool,
}

/// Where the selection is on each screen.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Cursors {
    /// Selected line on the case screen (counting selectable lines only).
    pub case_line: usize,
    /// Selected column in a table row on the case screen.
    pub case_col: usize,
    /// Selected level on the fit screen.
    pub fit_level: usize,
    /// Selected line on the plan screen: a field, then (past the fields) a suggested regimen.
    pub plan: usize,
    /// Selected field on the threshold screen.
    pub threshold: usize,
    /// Lines the fit screen's figures and warnings are scrolled by.
    pub fit_scroll: u16,
}

/// The whole UI state.
#[derive(Debug, Clone)]
pub struct App {
    /// The case as it will be saved.
    pub file: CaseFile,
    /// Where it is saved (None: not yet chosen).
    pub path: Option<PathBuf>,
    /// What the title bar calls the case.
    pub title: String,
    /// The file name offered when saving a case that has no file yet.
    pub suggested_path: Option<PathBuf>,
    /// Why the file could not be opened, shown until the case is saved.
    pub load_error: Option<String>,
    /// Whether the case differs from the one last loaded or saved.
    pub dirty: bool,
    /// The case as last loaded or saved (to tell whether there are changes).
    pub saved: CaseFile,
    /// The screen shown.
    pub screen: Screen,
    /// What the keys do.
    pub mode: Mode,
    /// The selection on each screen.
    pub cursors: Cursors,
    /// The message line.
    pub message: Option<Message>,
    /// Everything the core computed from `file`.
    pub figures: Figures,
    /// Quit as soon as the pending save succeeds.
    pub quit_after_save: bool,
    /// The text the case was read from or last saved as: a save keeps its comments.
    pub source_text: Option<String>,
    /// A file that did not load: the case is never saved over it.
    pub never_save_over: Option<PathBuf>,
    /// The file a save found already there (rather than changed since it was opened).
    pub pending_exists: bool,
    /// The note file the user is asked about replacing.
    pub pending_note: Option<PathBuf>,
    /// The recovery file offered at open, and the case it holds.
    pub recovery: Option<(PathBuf, CaseFile)>,
    /// The recovery file whose changes were loaded: the next save removes it.
    pub recovered_from: Option<PathBuf>,
    /// Effects asked for by the change being applied, handed to the run loop by `update`.
    pub effects: Vec<Effect>,
    /// The drug profiles on offer (built-in and the override directory).
    pub profiles: Profiles,
    /// What the file at `path` held when opened or last saved: a save over anything else
    /// asks first.
    pub on_disk: store::Expect,
    /// The file a save found changed on disk, while the user is asked about overwriting it.
    pub pending_overwrite: Option<PathBuf>,
    /// The window size in cells, when known (the run loop sets it): below the smallest
    /// size the screen is not drawn and no key but quit acts.
    pub window: Option<(u16, u16)>,
    /// The changes that can be undone, oldest first.
    pub undo: Vec<Undo>,
    /// Whether the last undo entry still waits for the message that describes it.
    pub undo_unlabelled: bool,
    /// The editor a quit question interrupted (given back when the user stays).
    pub held_editor: Option<Editor>,
}

impl App {
    fn with_file(file: CaseFile, title: String, profiles: Profiles) -> Self {
        let figures = Figures::compute(&file, &profiles);
        App {
            saved: file.clone(),
            file,
            path: None,
            title,
            suggested_path: None,
            load_error: None,
            dirty: false,
            screen: Screen::Case,
            mode: Mode::Normal,
            cursors: Cursors::default(),
            message: None,
            figures,
            quit_after_save: false,
            source_text: None,
            never_save_over: None,
            pending_exists: false,
            pending_note: None,
            recovery: None,
            recovered_from: None,
            effects: Vec::new(),
            profiles,
            on_disk: store::Expect::Unchanged(None),
            pending_overwrite: None,
            window: None,
            undo: Vec::new(),
            undo_unlabelled: false,
            held_editor: None,
        }
    }

    /// A new, empty case (levels in mg/L until the user says otherwise), with the profiles
    /// of `EBB_PROFILES` when set.
    pub fn new_case() -> Self {
        App::new_case_in(Profiles::from_env())
    }

    /// A new, empty case offering `profiles`.
    pub fn new_case_in(profiles: Profiles) -> Self {
        let file = CaseFile {
            schema: Some(1),
            drug: DrugFile {
                level_unit: Some("mg/L".into()),
                ..DrugFile::default()
            },
            ..CaseFile::default()
        };
        let mut app = App::with_file(file, strings::NEW_CASE.into(), profiles);
        app.message = Some(Message {
            text: strings::NEW_CASE_HINT.into(),
            is_error: false,
        });
        app
    }

    /// The built-in demo case (not tied to a file: saving asks for a name).
    pub fn demo() -> Self {
        App::demo_in(Profiles::from_env())
    }

    /// The built-in demo case, offering `profiles`.
    pub fn demo_in(profiles: Profiles) -> Self {
        match CaseFile::parse(DEMO_CASE) {
            Ok(file) => App::with_file(file, strings::DEMO_TITLE.into(), profiles),
            Err(e) => {
                let mut app = App::new_case_in(profiles);
                app.load_error = Some(e.to_string());
                app
            }
        }
    }

    /// Open a case file (profiles of `EBB_PROFILES` when set). A file that cannot be read
    /// or parsed opens as an empty case that shows the error and is never saved over that
    /// file (saving asks for another name).
    pub fn open(path: &Path) -> Self {
        App::open_in(path, Profiles::from_env())
    }

    /// Open a case file, offering `profiles`; a recovery file left by a stopped session is
    /// offered first.
    pub fn open_in(path: &Path, profiles: Profiles) -> Self {
        // Taken before reading: a change in between makes the save ask (the safe side).
        let on_disk = store::expect_at_open(path);
        // The case through the core's reader (its checks on what may be read), then the
        // same text again for its comments, kept only if it is the same case.
        match crate::core::casefile::read(path) {
            Ok(file) => {
                let text = store::read_with_fingerprint(path)
                    .ok()
                    .map(|(t, _)| t)
                    .filter(|t| CaseFile::parse(t).ok().as_ref() == Some(&file));
                let mut app = App::with_file(file, path.display().to_string(), profiles);
                app.path = Some(path.to_path_buf());
                app.on_disk = on_disk;
                if text.as_deref().is_some_and(toml_keep::has_comments) {
                    app.say(strings::COMMENTS_KEPT);
                }
                app.source_text = text;
                app.offer_recovery()
            }
            Err(e) => {
                let mut app = App::new_case_in(profiles);
                app.title = strings::did_not_load_title(&path.display().to_string());
                app.never_save_over = Some(path.to_path_buf());
                app.load_error = Some(e.to_string());
                app.message = Some(Message {
                    text: strings::LOAD_FAILED.into(),
                    is_error: true,
                });
                app
            }
        }
    }

    /// Offer the recovery file of this case (or of an unsaved case), if there is one that
    /// holds a case different from this one.
    pub fn offer_recovery(mut self) -> Self {
        let Some((at, text)) = recover::find(self.path.as_deref()) else {
            return self;
        };
        match CaseFile::parse(&text) {
            Ok(f) if f != self.file => {
                self.recovery = Some((at, f));
                self.mode = Mode::Confirm(Confirm::Recover);
            }
            _ => {}
        }
        self
    }

    /// Change the case: `change` works on a copy, which replaces the case only when it
    /// succeeds; then every figure is recomputed.
    ///
    /// # Errors
    /// The change's own error; the case is then unchanged.
    pub fn change(
        &mut self,
        change: impl FnOnce(&mut CaseFile) -> Result<(), String>,
    ) -> Result<(), String> {
        let mut next = self.file.clone();
        change(&mut next)?;
        if next != self.file {
            let mut before = std::mem::replace(&mut self.file, next);
            let plan_alone = figures::plan_alone_differs(&mut before, &self.file);
            self.undo.push(Undo {
                file: before,
                what: String::new(),
            });
            if self.undo.len() > UNDO_DEPTH {
                self.undo.remove(0);
            }
            self.undo_unlabelled = true;
            self.dirty = self.file != self.saved;
            self.figures =
                Figures::after_change(&self.figures, plan_alone, &self.file, &self.profiles);
        }
        Ok(())
    }

    /// Show a message on the message line.
    pub fn say(&mut self, text: impl Into<String>) {
        let text = text.into();
        self.label_undo(&text);
        self.message = Some(Message {
            text,
            is_error: false,
        });
    }

    /// Show a problem on the message line.
    pub fn complain(&mut self, text: impl Into<String>) {
        let text = text.into();
        self.label_undo(&text);
        self.message = Some(Message {
            text,
            is_error: true,
        });
    }

    /// The first message after a change describes it in the undo list.
    fn label_undo(&mut self, text: &str) {
        if std::mem::take(&mut self.undo_unlabelled) {
            if let Some(u) = self.undo.last_mut() {
                u.what = text.to_string();
            }
        }
    }

    /// Put the case back as it was before the last change; `None` when there is nothing
    /// to undo, else what was undone.
    pub fn undo_last(&mut self) -> Option<String> {
        let mut u = self.undo.pop()?;
        self.undo_unlabelled = false;
        let plan_alone = figures::plan_alone_differs(&mut u.file, &self.file);
        self.file = u.file;
        self.dirty = self.file != self.saved;
        self.figures = Figures::after_change(&self.figures, plan_alone, &self.file, &self.profiles);
        Some(u.what)
    }

    /// Make every change since the undo list had `mark` entries one undo step, described
    /// by `what`.
    pub fn merge_undo_since(&mut self, mark: usize, what: &str) {
        if self.undo.len() > mark {
            self.undo.truncate(mark + 1);
            if let Some(u) = self.undo.last_mut() {
                u.what = what.to_string();
            }
            self.undo_unlabelled = false;
        }
    }

    /// Forget the changes since the undo list had `mark` entries (a row that was dropped).
    pub fn drop_undo_since(&mut self, mark: usize) {
        self.undo.truncate(mark);
        self.undo_unlabelled = false;
    }

    /// Whether the window is known to be smaller than the screens are laid out for.
    pub fn window_too_small(&self) -> bool {
        self.window.is_some_and(|(w, h)| {
            w < crate::tui::view::MIN_WIDTH || h < crate::tui::view::MIN_HEIGHT
        })
    }

    /// Whether the run loop should end.
    pub fn should_quit(&self) -> bool {
        self.mode == Mode::Quitting
    }

    /// The editor, when one is open.
    pub fn editor(&self) -> Option<&Editor> {
        match &self.mode {
            Mode::Editing(e) => Some(e),
            _ => None,
        }
    }
}
