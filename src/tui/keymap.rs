//! Every key binding in one place: which key means which intent on which screen and in
//! which mode. The help overlay is generated from the same tables, so a key that works is
//! a key the help lists.

use crossterm::event::{KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

use crate::tui::action::Action;
use crate::tui::app::{App, Confirm, Mode, Screen};
use crate::tui::update::update;

impl App {
    /// Handle one key: map it to an intent, apply it, and carry out the effects it asks
    /// for (saving, writing the note). Only presses count (not repeats or releases). While
    /// the window is too small to draw the screens, only quit acts.
    pub fn handle_key(&mut self, key: KeyEvent) {
        if key.kind != KeyEventKind::Press {
            return;
        }
        if let Some(action) = action_for(self, key) {
            if self.window_too_small() && action != Action::Quit {
                return;
            }
            let effects = update(self, action);
            crate::tui::effect::carry_out_all(self, effects);
        }
    }
}

/// Where a binding works.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum On {
    /// On every screen.
    Everywhere,
    /// On these screens only.
    Only(&'static [Screen]),
}

impl On {
    /// Whether the binding works on `screen`.
    pub fn covers(self, screen: Screen) -> bool {
        match self {
            On::Everywhere => true,
            On::Only(s) => s.contains(&screen),
        }
    }
}

/// A key: its code, and whether Ctrl is held.
pub type Key = (KeyCode, bool);

/// One binding of the normal mode: keys, where they work, the intent, and the help line.
#[derive(Debug, Clone, Copy)]
pub struct Binding {
    /// The keys that carry the intent.
    pub keys: &'static [Key],
    /// The screens it works on.
    pub on: On,
    /// The intent.
    pub action: Action,
    /// How the help names the keys (empty: listed with the binding before it).
    pub label: &'static str,
    /// What the keys do, for the help.
    pub what: &'static str,
}

const fn c(ch: char) -> Key {
    (KeyCode::Char(ch), false)
}
const fn k(code: KeyCode) -> Key {
    (code, false)
}
const fn ctrl(ch: char) -> Key {
    (KeyCode::Char(ch), true)
}

const CASE: On = On::Only(&[Screen::Case]);
const FIT: On = On::Only(&[Screen::Fit]);
const PLAN: On = On::Only(&[Screen::Plan]);
const THRESHOLD: On = On::Only(&[Screen::Threshold]);
const CASE_PLAN: On = On::Only(&[Screen::Case, Screen::Plan]);

const fn b(
    keys: &'static [Key],
    on: On,
    action: Action,
    label: &'static str,
    what: &'static str,
) -> Binding {
    Binding {
        keys,
        on,
        action,
        label,
        what,
    }
}

/// The normal mode's bindings, in the order the help lists them: each screen's own, then
/// the ones that work everywhere.
pub const NORMAL: &[Binding] = &[
    // Case screen.
    b(
        &[k(KeyCode::Up)],
        CASE,
        Action::Up,
        "↑ ↓",
        "move between fields and rows",
    ),
    b(&[k(KeyCode::Down)], CASE, Action::Down, "", ""),
    b(
        &[k(KeyCode::Left)],
        CASE,
        Action::Left,
        "← →",
        "move between the columns of a row",
    ),
    b(&[k(KeyCode::Right)], CASE, Action::Right, "", ""),
    b(
        &[k(KeyCode::Enter)],
        CASE,
        Action::Activate,
        "Enter",
        "edit the field (a choice steps to its next value)",
    ),
    b(
        &[c(' ')],
        CASE,
        Action::Step,
        "Space",
        "step a choice; on a level row, toggle use in fit",
    ),
    b(
        &[c('a')],
        CASE,
        Action::AddRow,
        "a",
        "add a dose or a level (walks its fields in order)",
    ),
    b(
        &[c('x')],
        CASE,
        Action::DeleteRow,
        "x",
        "delete the dose or level row (asks first)",
    ),
    b(
        &[c('u')],
        CASE,
        Action::ToggleUse,
        "u",
        "toggle use in fit of the level row",
    ),
    b(
        &[k(KeyCode::Delete)],
        CASE,
        Action::Clear,
        "Delete",
        "clear an optional field",
    ),
    b(
        &[c('p')],
        CASE,
        Action::ChooseProfile,
        "p",
        "choose the drug profile from a list",
    ),
    // Fit screen.
    b(&[k(KeyCode::Up)], FIT, Action::Up, "↑ ↓", "select a level"),
    b(&[k(KeyCode::Down)], FIT, Action::Down, "", ""),
    b(
        &[c(' '), c('u')],
        FIT,
        Action::ToggleUse,
        "Space, u",
        "toggle use in fit of the selected level",
    ),
    b(
        &[k(KeyCode::PageDown)],
        FIT,
        Action::Scroll(true),
        "PgDn PgUp",
        "scroll the figures and warnings",
    ),
    b(&[k(KeyCode::PageUp)], FIT, Action::Scroll(false), "", ""),
    b(
        &[c('m')],
        FIT,
        Action::FitMethod,
        "m",
        "fit method: auto, log-linear, dose-history, Bayesian",
    ),
    // Plan screen.
    b(
        &[c('+'), c('=')],
        PLAN,
        Action::PlanDose(true),
        "+ -, =",
        "raise (+ or =) or lower (-) the dose by about 5 %",
    ),
    b(&[c('-')], PLAN, Action::PlanDose(false), "", ""),
    b(
        &[c(']')],
        PLAN,
        Action::PlanInterval(true),
        "] [",
        "next longer or shorter usual interval",
    ),
    b(&[c('[')], PLAN, Action::PlanInterval(false), "", ""),
    b(
        &[c('}')],
        PLAN,
        Action::PlanInfusion(true),
        "} {",
        "infusion time 0.25 h longer or shorter",
    ),
    b(&[c('{')], PLAN, Action::PlanInfusion(false), "", ""),
    b(
        &[c('r')],
        PLAN,
        Action::PlanRoute,
        "r",
        "next route (bolus, infusion, oral)",
    ),
    b(
        &[k(KeyCode::Up)],
        PLAN,
        Action::Up,
        "↑ ↓",
        "select a field, or below them a suggestion",
    ),
    b(&[k(KeyCode::Down)], PLAN, Action::Down, "", ""),
    b(
        &[k(KeyCode::Enter)],
        PLAN,
        Action::Activate,
        "Enter",
        "type a value (targets as 5-10), or take a suggestion",
    ),
    b(
        &[c(' ')],
        PLAN,
        Action::Step,
        "Space",
        "step the route on the Route line",
    ),
    b(
        &[k(KeyCode::Delete)],
        PLAN,
        Action::Clear,
        "Delete",
        "clear an optional field",
    ),
    b(
        &[c('t')],
        PLAN,
        Action::TakeSuggestion,
        "t",
        "copy the selected (or first) suggestion to the plan",
    ),
    b(
        &[c('i')],
        CASE_PLAN,
        Action::ProfileInfo,
        "i",
        "the profile's targets, sampling advice, cautions",
    ),
    // Threshold screen.
    b(
        &[k(KeyCode::Up)],
        THRESHOLD,
        Action::Up,
        "↑ ↓",
        "select a field",
    ),
    b(&[k(KeyCode::Down)], THRESHOLD, Action::Down, "", ""),
    b(
        &[k(KeyCode::Enter)],
        THRESHOLD,
        Action::Activate,
        "Enter",
        "type a value (time as 2027-03-02 08:00)",
    ),
    b(
        &[k(KeyCode::Delete)],
        THRESHOLD,
        Action::Clear,
        "Delete",
        "clear it (clearing Below clears the rest)",
    ),
    // Every screen.
    b(
        &[c('1'), c('2'), c('3'), c('4'), c('5')],
        On::Everywhere,
        Action::Show(Screen::Case),
        "1 … 5, Tab",
        "Case, Fit, Plan, Threshold, Washout; Shift-Tab back",
    ),
    b(
        &[k(KeyCode::Tab)],
        On::Everywhere,
        Action::NextScreen(false),
        "",
        "",
    ),
    b(
        &[k(KeyCode::BackTab)],
        On::Everywhere,
        Action::NextScreen(true),
        "",
        "",
    ),
    b(
        &[ctrl('z')],
        On::Everywhere,
        Action::Undo,
        "Ctrl-Z",
        "undo the last change (again: the one before)",
    ),
    b(
        &[c('n')],
        On::Everywhere,
        Action::WriteNote,
        "n",
        "write the record note beside the case (CASE.note.txt)",
    ),
    b(
        &[ctrl('s')],
        On::Everywhere,
        Action::Save,
        "Ctrl-S",
        "save the case (asks for a file name the first time)",
    ),
    b(
        &[c('?')],
        On::Everywhere,
        Action::Help,
        "?",
        "show or hide this list",
    ),
    b(&[k(KeyCode::Esc)], On::Everywhere, Action::Cancel, "", ""),
    b(
        &[c('q'), ctrl('c'), ctrl('q')],
        On::Everywhere,
        Action::Quit,
        "q, Ctrl-C",
        "quit (asks first when there are unsaved changes)",
    ),
];

/// The editor's bindings (any other character is typed), in help order.
pub const EDITING: &[Binding] = &[
    b(
        &[k(KeyCode::Enter)],
        On::Everywhere,
        Action::Accept,
        "Enter / Esc",
        "in a field: accept / cancel the typing",
    ),
    b(&[k(KeyCode::Esc)], On::Everywhere, Action::Cancel, "", ""),
    b(
        &[k(KeyCode::Backspace)],
        On::Everywhere,
        Action::Backspace,
        "",
        "",
    ),
    b(
        &[k(KeyCode::Delete)],
        On::Everywhere,
        Action::DeleteForward,
        "",
        "",
    ),
    b(
        &[k(KeyCode::Left)],
        On::Everywhere,
        Action::CursorLeft,
        "",
        "",
    ),
    b(
        &[k(KeyCode::Right)],
        On::Everywhere,
        Action::CursorRight,
        "",
        "",
    ),
    b(
        &[k(KeyCode::Home)],
        On::Everywhere,
        Action::CursorHome,
        "",
        "",
    ),
    b(
        &[k(KeyCode::End)],
        On::Everywhere,
        Action::CursorEnd,
        "",
        "",
    ),
    b(
        &[ctrl('c'), ctrl('q')],
        On::Everywhere,
        Action::Quit,
        "",
        "",
    ),
];

fn find(table: &[Binding], screen: Screen, key: Key) -> Option<Action> {
    table
        .iter()
        .find(|b| b.on.covers(screen) && b.keys.contains(&key))
        .map(|b| match b.action {
            // One binding carries the five screen digits.
            Action::Show(_) => match key.0 {
                KeyCode::Char(d @ '1'..='5') => {
                    Action::Show(Screen::ALL[usize::from(d as u8 - b'1')])
                }
                _ => b.action,
            },
            a => a,
        })
}

/// The intent of `key` in the app's current mode and screen, if it has one.
pub fn action_for(app: &App, key: KeyEvent) -> Option<Action> {
    let held = key.modifiers.contains(KeyModifiers::CONTROL);
    let code = match key.code {
        // Some terminals send Ctrl-letters in capitals.
        KeyCode::Char(ch) if held => KeyCode::Char(ch.to_ascii_lowercase()),
        other => other,
    };
    let pressed: Key = (code, held);
    if held && matches!(code, KeyCode::Char('c') | KeyCode::Char('q')) {
        return Some(Action::Quit);
    }
    match &app.mode {
        Mode::Quitting => None,
        Mode::Help => match code {
            KeyCode::Char('?') | KeyCode::Esc | KeyCode::Enter | KeyCode::Char('q') => {
                Some(Action::Help)
            }
            _ => None,
        },
        // Only arrows and Enter: letters typed by mistake never move or choose.
        Mode::ChooseProfile(_) if !held => match code {
            KeyCode::Up => Some(Action::Up),
            KeyCode::Down => Some(Action::Down),
            KeyCode::Enter => Some(Action::Accept),
            KeyCode::Esc | KeyCode::Char('q') => Some(Action::Cancel),
            _ => None,
        },
        Mode::ProfileInfo(_) if !held => match code {
            KeyCode::Up | KeyCode::Char('k') => Some(Action::Up),
            KeyCode::Down | KeyCode::Char('j') => Some(Action::Down),
            KeyCode::Esc | KeyCode::Enter | KeyCode::Char('q') | KeyCode::Char('i') => {
                Some(Action::Cancel)
            }
            _ => None,
        },
        Mode::Confirm(c) if !held => match code {
            KeyCode::Char('y') | KeyCode::Char('Y') => Some(Action::Yes),
            KeyCode::Char('n') | KeyCode::Char('N') | KeyCode::Esc => Some(Action::No),
            KeyCode::Char('s') | KeyCode::Char('S') if *c == Confirm::Quit => {
                Some(Action::SaveThenQuit)
            }
            _ => None,
        },
        Mode::Editing(_) => match code {
            // Alt-letters are not text (a quick Esc then a key arrives as one).
            KeyCode::Char(_) if key.modifiers.contains(KeyModifiers::ALT) => None,
            KeyCode::Char(_) if held => None,
            KeyCode::Char(ch) => Some(Action::Type(ch)),
            _ => find(EDITING, app.screen, pressed),
        },
        Mode::RowDone(_) => match code {
            _ if held => find(NORMAL, app.screen, pressed)
                .filter(|a| matches!(a, Action::Undo | Action::Save)),
            KeyCode::Enter => Some(Action::Accept),
            KeyCode::Esc => Some(Action::Cancel),
            KeyCode::Up => Some(Action::Up),
            KeyCode::Down => Some(Action::Down),
            KeyCode::Left => Some(Action::Left),
            KeyCode::Right => Some(Action::Right),
            KeyCode::Tab => Some(Action::NextScreen(false)),
            KeyCode::BackTab => Some(Action::NextScreen(true)),
            KeyCode::Char(ch) => Some(Action::Stray(ch)),
            _ => None,
        },
        Mode::Normal => find(NORMAL, app.screen, pressed),
        _ => None,
    }
}

/// The keys of a screen, as (keys, what they do), for the help overlay: the screen's own
/// keys first, then the editor's, then the keys that work everywhere.
pub fn help(screen: Screen) -> Vec<(&'static str, &'static str)> {
    let own = NORMAL
        .iter()
        .filter(|b| b.on != On::Everywhere && b.on.covers(screen));
    let everywhere = NORMAL.iter().filter(|b| b.on == On::Everywhere);
    let editing = match screen {
        Screen::Fit | Screen::Washout => None,
        _ => Some(EDITING.iter()),
    };
    own.chain(editing.into_iter().flatten())
        .chain(everywhere)
        .filter(|b| !b.label.is_empty())
        .map(|b| (b.label, b.what))
        .collect()
}

/// Every key the normal mode of `screen` answers to (for tests that check the help).
pub fn keys_of(screen: Screen) -> Vec<Key> {
    NORMAL
        .iter()
        .filter(|b| b.on.covers(screen))
        .flat_map(|b| b.keys.iter().copied())
        .collect()
}
