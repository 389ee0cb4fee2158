//! Every key binding in one place: which key means which intent on which screen and in
//! which mode, and the key list the help overlay shows.

use crossterm::event::{KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

use crate::tui::action::Action;
use crate::tui::app::{App, Confirm, Mode, Screen};
use crate::tui::strings;
use crate::tui::update::update;

impl App {
    /// Handle one key: map it to an intent, apply it, and carry out the effects it asks
    /// for (saving, writing the note). Only presses count (not repeats or releases).
    pub fn handle_key(&mut self, key: KeyEvent) {
        if key.kind != KeyEventKind::Press {
            return;
        }
        if let Some(action) = action_for(self, key) {
            let effects = update(self, action);
            crate::tui::effect::carry_out_all(self, effects);
        }
    }
}

/// The intent of `key` in the app's current mode and screen, if it has one.
pub fn action_for(app: &App, key: KeyEvent) -> Option<Action> {
    let ctrl = key.modifiers.contains(KeyModifiers::CONTROL);
    if ctrl {
        return match key.code {
            KeyCode::Char('c') | KeyCode::Char('q') => Some(Action::Quit),
            KeyCode::Char('s') if !matches!(app.mode, Mode::Editing(_)) => Some(Action::Save),
            _ => None,
        };
    }
    match &app.mode {
        Mode::Quitting => None,
        Mode::Help => match key.code {
            KeyCode::Char('?') | KeyCode::Esc | KeyCode::Enter | KeyCode::Char('q') => {
                Some(Action::Help)
            }
            _ => None,
        },
        Mode::ChooseProfile(_) => match key.code {
            KeyCode::Up | KeyCode::Char('k') => Some(Action::Up),
            KeyCode::Down | KeyCode::Char('j') => Some(Action::Down),
            KeyCode::Enter | KeyCode::Char(' ') => Some(Action::Accept),
            KeyCode::Esc | KeyCode::Char('q') => Some(Action::Cancel),
            _ => None,
        },
        Mode::ProfileInfo(_) => match key.code {
            KeyCode::Up | KeyCode::Char('k') => Some(Action::Up),
            KeyCode::Down | KeyCode::Char('j') => Some(Action::Down),
            KeyCode::Esc | KeyCode::Enter | KeyCode::Char('q') | KeyCode::Char('i') => {
                Some(Action::Cancel)
            }
            _ => None,
        },
        Mode::Confirm(c) => match key.code {
            KeyCode::Char('y') | KeyCode::Char('Y') => Some(Action::Yes),
            KeyCode::Char('n') | KeyCode::Char('N') | KeyCode::Esc => Some(Action::No),
            KeyCode::Char('s') | KeyCode::Char('S') if *c == Confirm::Quit => {
                Some(Action::SaveThenQuit)
            }
            _ => None,
        },
        Mode::Editing(_) => match key.code {
            // Alt-letters are not text (a quick Esc then a key arrives as one).
            KeyCode::Char(_) if key.modifiers.contains(KeyModifiers::ALT) => None,
            KeyCode::Char(c) => Some(Action::Type(c)),
            KeyCode::Backspace => Some(Action::Backspace),
            KeyCode::Delete => Some(Action::DeleteForward),
            KeyCode::Left => Some(Action::CursorLeft),
            KeyCode::Right => Some(Action::CursorRight),
            KeyCode::Home => Some(Action::CursorHome),
            KeyCode::End => Some(Action::CursorEnd),
            KeyCode::Enter => Some(Action::Accept),
            KeyCode::Esc => Some(Action::Cancel),
            _ => None,
        },
        Mode::Normal => normal(app.screen, key.code),
    }
}

fn normal(screen: Screen, code: KeyCode) -> Option<Action> {
    let global = match code {
        KeyCode::Char('1') => Some(Action::Show(Screen::Case)),
        KeyCode::Char('2') => Some(Action::Show(Screen::Fit)),
        KeyCode::Char('3') => Some(Action::Show(Screen::Plan)),
        KeyCode::Char('4') => Some(Action::Show(Screen::Threshold)),
        KeyCode::Char('5') => Some(Action::Show(Screen::Washout)),
        KeyCode::Tab => Some(Action::NextScreen(false)),
        KeyCode::BackTab => Some(Action::NextScreen(true)),
        KeyCode::Char('?') => Some(Action::Help),
        KeyCode::Char('q') => Some(Action::Quit),
        KeyCode::Char('n') => Some(Action::WriteNote),
        KeyCode::Esc => Some(Action::Cancel),
        KeyCode::Up => Some(Action::Up),
        KeyCode::Down => Some(Action::Down),
        _ => None,
    };
    if global.is_some() {
        return global;
    }
    match (screen, code) {
        (Screen::Case, KeyCode::Left) => Some(Action::Left),
        (Screen::Case, KeyCode::Right) => Some(Action::Right),
        (Screen::Case, KeyCode::Char('a')) => Some(Action::AddRow),
        (Screen::Case, KeyCode::Char('x')) => Some(Action::DeleteRow),
        (Screen::Case | Screen::Fit, KeyCode::Char('u')) => Some(Action::ToggleUse),
        (Screen::Fit, KeyCode::Char(' ')) => Some(Action::ToggleUse),
        (Screen::Case | Screen::Plan | Screen::Threshold, KeyCode::Enter) => Some(Action::Activate),
        (Screen::Case | Screen::Plan, KeyCode::Char(' ')) => Some(Action::Step),
        (Screen::Case | Screen::Plan | Screen::Threshold, KeyCode::Delete) => Some(Action::Clear),
        (Screen::Plan, KeyCode::Char('+') | KeyCode::Char('=')) => Some(Action::PlanDose(true)),
        (Screen::Plan, KeyCode::Char('-')) => Some(Action::PlanDose(false)),
        (Screen::Plan, KeyCode::Char(']')) => Some(Action::PlanInterval(true)),
        (Screen::Plan, KeyCode::Char('[')) => Some(Action::PlanInterval(false)),
        (Screen::Plan, KeyCode::Char('}')) => Some(Action::PlanInfusion(true)),
        (Screen::Plan, KeyCode::Char('{')) => Some(Action::PlanInfusion(false)),
        (Screen::Plan, KeyCode::Char('r')) => Some(Action::PlanRoute),
        (Screen::Plan, KeyCode::Char('t')) => Some(Action::TakeSuggestion),
        (Screen::Case, KeyCode::Char('p')) => Some(Action::ChooseProfile),
        (Screen::Case | Screen::Plan, KeyCode::Char('i')) => Some(Action::ProfileInfo),
        (Screen::Fit, KeyCode::Char('m')) => Some(Action::FitMethod),
        _ => None,
    }
}

/// The keys of a screen, as (keys, what they do), for the help overlay: the screen's own
/// keys first, then the keys that work everywhere.
pub fn help(screen: Screen) -> Vec<(&'static str, &'static str)> {
    let own: &[(&str, &str)] = match screen {
        Screen::Case => strings::KEYS_CASE,
        Screen::Fit => strings::KEYS_FIT,
        Screen::Plan => strings::KEYS_PLAN,
        Screen::Threshold => strings::KEYS_THRESHOLD,
        Screen::Washout => strings::KEYS_WASHOUT,
    };
    own.iter()
        .chain(strings::KEYS_EDITING)
        .chain(strings::KEYS_GLOBAL)
        .copied()
        .collect()
}
