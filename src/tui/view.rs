//! Drawing the whole window from the state: banner, screen tabs, the screen, the message
//! line, the key hints and any popup. Reads the state only.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};
use ratatui::Frame;

use crate::tui::app::{App, Confirm, Mode, Screen, Target};
use crate::tui::keymap;
use crate::tui::screens;
use crate::tui::strings;
use crate::tui::widgets::{self, caution_lines, editor_spans, popup, problem_style, quiet};

/// The smallest window the screens are laid out for.
pub const MIN_WIDTH: u16 = 80;
/// The smallest window height the screens are laid out for.
pub const MIN_HEIGHT: u16 = 24;

/// Draw the app into the frame.
pub fn draw(app: &App, frame: &mut Frame) {
    let area = frame.area();
    let buf = frame.buffer_mut();
    if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
        return too_small(area, buf);
    }
    // A saturable drug's figures do not assume linear kinetics: its own caution says so.
    let caution = if app.figures.saturable.is_some() {
        crate::core::saturable_report::CAUTION
    } else {
        let compartments = app
            .figures
            .report
            .as_ref()
            .map_or(1, |r| r.fit.compartments);
        crate::core::report::caution_for(compartments).0
    };
    let banner_h = widgets::caution_lines_of(area.width, caution).len() as u16;
    // A long message wraps (up to three lines) rather than being cut.
    let message_h = message_text(app)
        .map(|(t, _)| widgets::wrap(&t, usize::from(area.width)).len().clamp(1, 3))
        .unwrap_or(1) as u16;
    let [banner, tabs, body, message, hints] = Layout::vertical([
        Constraint::Length(banner_h),
        Constraint::Length(1),
        Constraint::Min(1),
        Constraint::Length(message_h),
        Constraint::Length(1),
    ])
    .areas(area);
    widgets::caution_of(banner, buf, caution);
    tab_line(app, tabs, buf);
    match app.screen {
        Screen::Case => screens::case::draw(app, body, buf),
        Screen::Fit => screens::fit::draw(app, body, buf),
        Screen::Plan => screens::plan::draw(app, body, buf),
        Screen::Threshold => screens::threshold::draw(app, body, buf),
        Screen::Washout => screens::washout::draw(app, body, buf),
    }
    message_line(app, message, buf);
    hint_line(app, hints, buf);
    overlay(app, body, buf);
}

fn too_small(area: Rect, buf: &mut ratatui::buffer::Buffer) {
    // The caution first, then the request, as much as fits.
    let w = usize::from(area.width);
    let mut lines: Vec<Line> = caution_lines(area.width)
        .into_iter()
        .map(|l| {
            Line::from(l).style(
                Style::new()
                    .fg(Color::Black)
                    .bg(Color::Yellow)
                    .add_modifier(Modifier::BOLD),
            )
        })
        .collect();
    if caution_lines(area.width).len() > 2 {
        lines = widgets::wrap(
            &format!(
                "{} {}",
                strings::CAUTION_WORD,
                crate::core::report::CAUTION_SHORT
            ),
            w,
        )
        .into_iter()
        .map(|l| Line::from(l).style(Style::new().fg(Color::Black).bg(Color::Yellow)))
        .collect();
    }
    lines.push(Line::raw(""));
    for l in widgets::wrap(
        &format!(
            "{} {}",
            strings::enlarge(MIN_WIDTH, MIN_HEIGHT, area.width, area.height),
            strings::KEYS_WAIT
        ),
        w,
    ) {
        lines.push(Line::raw(l));
    }
    Paragraph::new(lines).render(area, buf);
}

fn tab_line(app: &App, area: Rect, buf: &mut ratatui::buffer::Buffer) {
    let mut spans = Vec::new();
    for s in Screen::ALL {
        let label = format!("{} {}", s.index() + 1, strings::screen_name(s));
        if s == app.screen {
            spans.push(Span::styled(
                format!("[{label}]"),
                Style::new().add_modifier(Modifier::REVERSED | Modifier::BOLD),
            ));
        } else {
            spans.push(Span::styled(format!(" {label} "), quiet()));
        }
        spans.push(Span::raw(" "));
    }
    let used: usize = spans.iter().map(|s| s.content.chars().count()).sum();
    let mut title = app.title.clone();
    if app.dirty {
        title.push_str(strings::UNSAVED_MARK);
    }
    let room = usize::from(area.width).saturating_sub(used + 1);
    let count = title.chars().count();
    if count > room {
        // Keep the end of a long path: the file name matters most.
        let tail: String = title.chars().skip(count + 1 - room.max(1)).collect();
        title = format!("…{tail}");
    }
    spans.push(Span::raw(
        " ".repeat(room.saturating_sub(title.chars().count())),
    ));
    spans.push(Span::styled(
        title,
        Style::new().add_modifier(Modifier::BOLD),
    ));
    Paragraph::new(Line::from(spans)).render(area, buf);
}

/// The message line's text and whether it reports a problem: the editor's error, else
/// the message, else the load error.
fn message_text(app: &App) -> Option<(String, bool)> {
    if let Some(err) = app.editor().and_then(|e| e.error.as_ref()) {
        return Some((format!("✗ {err}"), true));
    }
    match &app.message {
        Some(m) if m.is_error => Some((format!("✗ {}", m.text), true)),
        Some(m) => Some((format!("· {}", m.text), false)),
        None => app.load_error.as_ref().map(|e| (format!("✗ {e}"), true)),
    }
}

fn message_line(app: &App, area: Rect, buf: &mut ratatui::buffer::Buffer) {
    let Some((text, is_error)) = message_text(app) else {
        return;
    };
    let style = if is_error {
        problem_style()
    } else {
        Style::new()
    };
    let lines: Vec<Line> = widgets::wrap(&text, usize::from(area.width))
        .into_iter()
        .map(|l| Line::styled(l, style))
        .collect();
    Paragraph::new(lines).render(area, buf);
}

fn hint_line(app: &App, area: Rect, buf: &mut ratatui::buffer::Buffer) {
    let text = match &app.mode {
        Mode::Editing(_) => strings::HINT_EDITING,
        Mode::Help => strings::HINT_HELP,
        Mode::Confirm(_) => strings::HINT_CONFIRM,
        Mode::RowDone(_) => strings::HINT_ROW_DONE,
        Mode::ChooseProfile(_) => strings::HINT_CHOOSER,
        Mode::ProfileInfo(_) => strings::HINT_INFO,
        _ => strings::hint(app.screen),
    };
    Paragraph::new(Line::styled(text, quiet())).render(area, buf);
}

fn overlay(app: &App, body: Rect, buf: &mut ratatui::buffer::Buffer) {
    match &app.mode {
        Mode::Help => {
            let keys = keymap::help(app.screen);
            let kw = keys
                .iter()
                .map(|(k, _)| k.chars().count())
                .max()
                .unwrap_or(4);
            let lines: Vec<Line> = keys
                .iter()
                .map(|(k, what)| {
                    Line::from(vec![
                        Span::styled(
                            format!(" {k:<kw$}  "),
                            Style::new().add_modifier(Modifier::BOLD),
                        ),
                        Span::raw(*what),
                    ])
                })
                .collect();
            let h = lines.len() as u16 + 2;
            let w = (body.width * 9 / 10).min(96);
            let area = widgets::centered(body, w, h);
            popup(area, buf, &strings::help_title(app.screen), lines);
        }
        Mode::Confirm(c) => {
            let (title, text) = match c {
                Confirm::Quit => (
                    strings::CONFIRM_QUIT_TITLE,
                    match &app.held_editor {
                        Some(ed) => strings::confirm_quit_typing(
                            &match ed.target {
                                Target::Field(f) => f.name(),
                                Target::SavePath => strings::SAVE_AS_TITLE.to_lowercase(),
                                Target::NotePath => strings::NOTE_AS_TITLE.to_lowercase(),
                            },
                            &ed.buffer,
                        ),
                        None => strings::CONFIRM_QUIT.to_string(),
                    },
                ),
                Confirm::DeleteDose(i) => (
                    strings::CONFIRM_DELETE_TITLE,
                    strings::confirm_delete_dose(i + 1),
                ),
                Confirm::DeleteLevel(i) => (
                    strings::CONFIRM_DELETE_TITLE,
                    strings::confirm_delete_level(i + 1),
                ),
                Confirm::Overwrite if app.pending_exists => (
                    strings::CONFIRM_EXISTS_TITLE,
                    strings::confirm_exists(&shown(&app.pending_overwrite)),
                ),
                Confirm::Overwrite => (
                    strings::CONFIRM_OVERWRITE_TITLE,
                    strings::confirm_overwrite(&shown(&app.pending_overwrite)),
                ),
                Confirm::ReplaceNote => (
                    strings::CONFIRM_NOTE_TITLE,
                    strings::confirm_replace_note(&shown(&app.pending_note), app.pending_exists),
                ),
                Confirm::Recover => (
                    strings::CONFIRM_RECOVER_TITLE,
                    strings::confirm_recover(&shown(&app.recovery.as_ref().map(|r| r.0.clone()))),
                ),
            };
            // Wrapped here, so the box is as tall as the question.
            let lines: Vec<Line> = text
                .lines()
                .flat_map(|l| widgets::wrap(l, 60 - 2))
                .map(Line::raw)
                .collect();
            let area = widgets::centered(body, 60, lines.len() as u16 + 2);
            popup(area, buf, title, lines);
        }
        Mode::ChooseProfile(at) => screens::profile::draw_chooser(app, *at, body, buf),
        Mode::ProfileInfo(top) => screens::profile::draw_info(app, *top, body, buf),
        Mode::Editing(e) if e.target == Target::NotePath => {
            let mut lines = vec![
                Line::raw(strings::NOTE_AS_PROMPT),
                Line::from(editor_spans(e)),
            ];
            if let Some(err) = &e.error {
                lines.push(Line::styled(format!("✗ {err}"), problem_style()));
            }
            let area = widgets::centered(body, 70, lines.len() as u16 + 2);
            popup(area, buf, strings::NOTE_AS_TITLE, lines);
        }
        Mode::Editing(e) if e.target == Target::SavePath => {
            let mut lines = vec![
                Line::raw(strings::SAVE_AS_PROMPT),
                Line::from(editor_spans(e)),
            ];
            if app.load_error.is_some() {
                lines.push(Line::styled(strings::SAVE_OVER_BROKEN, quiet()));
            }
            if let Some(err) = &e.error {
                lines.push(Line::styled(format!("✗ {err}"), problem_style()));
            }
            let area = widgets::centered(body, 70, lines.len() as u16 + 2);
            popup(area, buf, strings::SAVE_AS_TITLE, lines);
        }
        _ => {}
    }
}

/// A paragraph of wrapped text (for screens that show a reason instead of figures).
pub fn note(text: &str, style: Style) -> Paragraph<'_> {
    Paragraph::new(Line::styled(text, style)).wrap(Wrap { trim: true })
}

/// A path for a question, or nothing.
fn shown(path: &Option<std::path::PathBuf>) -> String {
    path.as_ref()
        .map(|p| p.display().to_string())
        .unwrap_or_default()
}
