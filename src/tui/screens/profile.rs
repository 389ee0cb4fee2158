//! The drug profile on screen: the list to choose one from (with a preview of each), the
//! overlay of the chosen one's targets, sampling advice and cautions, and the case screen's
//! panel of the same.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Widget};

use crate::tui::app::App;
use crate::tui::screens::{entry_lines, profile_info_lines, InfoKind};
use crate::tui::strings;
use crate::tui::widgets::{self, heading, problem_style, quiet};

fn style_of(kind: InfoKind) -> Style {
    match kind {
        InfoKind::Heading => heading(),
        InfoKind::Text => Style::new(),
        InfoKind::Caution => Style::new().fg(Color::Yellow),
    }
}

/// Lines wrapped to `width`, continuation lines indented under a leading "- ".
pub fn wrapped(lines: &[(InfoKind, String)], width: usize) -> Vec<Line<'static>> {
    let mut out = Vec::new();
    for (kind, text) in lines {
        let bullet = text.starts_with("- ");
        for (j, l) in widgets::wrap(
            text,
            width.saturating_sub(if bullet { 2 } else { 0 }).max(8),
        )
        .into_iter()
        .enumerate()
        {
            let l = if bullet && j > 0 { format!("  {l}") } else { l };
            out.push(Line::styled(l, style_of(*kind)));
        }
    }
    out
}

fn framed(area: Rect, buf: &mut Buffer, title: &str) -> Rect {
    Clear.render(area, buf);
    let block = Block::default()
        .borders(Borders::ALL)
        .title(Span::styled(format!(" {title} "), heading()));
    let inner = block.inner(area);
    block.render(area, buf);
    inner
}

/// The list of profiles over the case screen, line `at` highlighted (0 is "no profile"),
/// with the highlighted profile's details beside it.
pub fn draw_chooser(app: &App, at: usize, body: Rect, buf: &mut Buffer) {
    let entries = app.profiles.entries();
    // As tall as the list, and room for a preview, within the body.
    let n = entries.map(|e| e.len()).unwrap_or(0) + 1;
    let want = (n as u16 + 2).max(body.height.min(24));
    let area = widgets::centered(body, body.width.min(120), want);
    let inner = framed(area, buf, strings::CHOOSER_TITLE);
    let mut names: Vec<(String, String)> = vec![(strings::NO_PROFILE.into(), String::new())];
    if let Ok(es) = entries {
        names.extend(
            es.iter()
                .map(|e| (e.display_name().to_string(), e.profile.level_unit.clone())),
        );
    }
    let name_w = names
        .iter()
        .map(|(n, _)| n.chars().count())
        .max()
        .unwrap_or(4);
    let unit_w = names
        .iter()
        .map(|(_, u)| u.chars().count())
        .max()
        .unwrap_or(0);
    let list_w = (name_w + unit_w + 5).min(usize::from(inner.width) / 2) as u16;
    let chosen = app.file.drug.profile.as_deref();
    let list: Vec<Line> = names
        .iter()
        .enumerate()
        .map(|(i, (n, u))| {
            let is_case = match (i, &entries) {
                (0, _) => chosen.is_none(),
                (i, Ok(es)) => es.get(i - 1).map(|e| e.name.as_str()) == chosen,
                _ => false,
            };
            let mark = if is_case { "●" } else { " " };
            let text = format!("{mark} {n:<name_w$} {u:<unit_w$} ");
            if i == at {
                Line::from(vec![
                    Span::raw("▸"),
                    Span::styled(text, widgets::selected()),
                ])
            } else {
                Line::from(vec![Span::raw(" "), Span::raw(text)])
            }
        })
        .collect();
    // Keep the highlighted line in view.
    let h = usize::from(inner.height);
    let skip = (at + 1).saturating_sub(h);
    let list: Vec<Line> = list.into_iter().skip(skip).collect();
    let list_area = Rect {
        width: list_w.min(inner.width),
        ..inner
    };
    Paragraph::new(list).render(list_area, buf);
    let right = Rect {
        x: inner.x + list_w + 1,
        width: inner.width.saturating_sub(list_w + 1),
        ..inner
    };
    for y in right.top()..right.bottom() {
        buf.set_string(right.x.saturating_sub(1), y, "│", quiet());
    }
    let text_w = usize::from(right.width.saturating_sub(1));
    let preview: Vec<Line> = match (&entries, at) {
        (Err(e), _) => wrapped(&[(InfoKind::Text, e.to_string())], text_w)
            .into_iter()
            .map(|l| l.style(problem_style()))
            .collect(),
        (Ok(_), 0) => wrapped(
            &[(InfoKind::Text, strings::NO_PROFILE_MEANS.into())],
            text_w,
        ),
        (Ok(es), i) => match es.get(i - 1) {
            Some(e) => wrapped(&entry_lines(e, None), text_w),
            None => Vec::new(),
        },
    };
    let right = Rect {
        x: right.x + 1,
        width: right.width.saturating_sub(1),
        ..right
    };
    Paragraph::new(preview).render(right, buf);
}

/// The chosen profile's details in an overlay, scrolled down by `top` lines.
pub fn draw_info(app: &App, top: u16, body: Rect, buf: &mut Buffer) {
    let w = body.width.min(110);
    // Inside the border, one column of margin.
    let lines = wrapped(&profile_info_lines(app), usize::from(w.saturating_sub(3)));
    let want = (lines.len() as u16).saturating_add(2);
    let area = widgets::centered(body, w, want);
    let inner = framed(area, buf, strings::INFO_TITLE);
    let h = usize::from(inner.height);
    let most = lines.len().saturating_sub(h);
    let skip = usize::from(top).min(most);
    let more_below = skip + h < lines.len();
    let mut shown: Vec<Line> = lines.into_iter().skip(skip).take(h).collect();
    if more_below {
        if let Some(last) = shown.last_mut() {
            *last = Line::styled(
                strings::MORE_BELOW,
                quiet().add_modifier(Modifier::REVERSED),
            );
        }
    }
    let text = Rect {
        x: inner.x + 1,
        width: inner.width.saturating_sub(1),
        ..inner
    };
    Paragraph::new(shown).render(text, buf);
}

/// The profile panel of the wide case screen (empty without a profile).
pub fn panel(app: &App, width: usize) -> Vec<Line<'static>> {
    let lines = profile_info_lines(app);
    if lines.is_empty() {
        return Vec::new();
    }
    wrapped(&lines, width)
}
