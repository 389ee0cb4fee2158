//! Pieces every screen uses: the caution banner, field lines with their editor and error,
//! popups, and the semi-log chart.

pub mod chart;

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Widget, Wrap};

use crate::core::report::{CAUTION, CAUTION_SHORT, CAUTION_SHORT_TWO, CAUTION_TWO};
use crate::tui::app::{App, Editor, Mode, Target};
use crate::tui::fields::Field;
use crate::tui::strings;

/// The style of the selected line or cell.
pub fn selected() -> Style {
    Style::new().add_modifier(Modifier::REVERSED)
}

/// The style of a problem.
pub fn problem_style() -> Style {
    Style::new().fg(Color::Red).add_modifier(Modifier::BOLD)
}

/// The style of a section heading.
pub fn heading() -> Style {
    Style::new().fg(Color::Cyan).add_modifier(Modifier::BOLD)
}

/// The style of labels and quiet text.
pub fn quiet() -> Style {
    Style::new().fg(Color::Gray)
}

/// Words of `text` wrapped to `width` columns (a word longer than the width is cut).
pub fn wrap(text: &str, width: usize) -> Vec<String> {
    let width = width.max(1);
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        let mut word: String = word.to_string();
        loop {
            let used = line.chars().count();
            let wl = word.chars().count();
            if used == 0 && wl > width {
                let head: String = word.chars().take(width).collect();
                word = word.chars().skip(width).collect();
                lines.push(head);
                continue;
            }
            if used == 0 {
                line = word;
            } else if used + 1 + wl <= width {
                line.push(' ');
                line.push_str(&word);
            } else {
                lines.push(std::mem::take(&mut line));
                continue;
            }
            break;
        }
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

/// The caution banner's lines for a width: the full caution when it fits on two lines,
/// the short one otherwise.
pub fn caution_lines(width: u16) -> Vec<String> {
    caution_lines_of(width, CAUTION)
}

/// The caution banner's lines for a width, with `caution` as the full text (the saturable
/// one for a drug such as phenytoin): the short one when the full text needs three lines.
pub fn caution_lines_of(width: u16, caution: &str) -> Vec<String> {
    let w = usize::from(width);
    let full = wrap(&format!("{} {caution}", strings::CAUTION_WORD), w);
    if full.len() <= 2 {
        return full;
    }
    let short = if caution == CAUTION_TWO {
        CAUTION_SHORT_TWO
    } else {
        CAUTION_SHORT
    };
    wrap(&format!("{} {short}", strings::CAUTION_WORD), w)
}

/// Draw the caution banner into `area` (as many of its lines as fit).
pub fn caution(area: Rect, buf: &mut Buffer) {
    caution_of(area, buf, CAUTION);
}

/// Draw the caution banner with `caution` as its full text.
pub fn caution_of(area: Rect, buf: &mut Buffer, caution: &str) {
    let style = Style::new()
        .fg(Color::Black)
        .bg(Color::Yellow)
        .add_modifier(Modifier::BOLD);
    let lines: Vec<Line> = caution_lines_of(area.width, caution)
        .into_iter()
        .map(|l| Line::from(l).style(style))
        .collect();
    buf.set_style(area, style);
    Paragraph::new(lines).style(style).render(area, buf);
}

/// A rectangle of at most `w` x `h` centred in `area`.
pub fn centered(area: Rect, w: u16, h: u16) -> Rect {
    let w = w.min(area.width);
    let h = h.min(area.height);
    Rect {
        x: area.x + (area.width - w) / 2,
        y: area.y + (area.height - h) / 2,
        width: w,
        height: h,
    }
}

/// A popup: clears its area and draws a bordered block with `title` and `lines`.
pub fn popup(area: Rect, buf: &mut Buffer, title: &str, lines: Vec<Line<'_>>) {
    Clear.render(area, buf);
    Paragraph::new(lines)
        .wrap(Wrap { trim: false })
        .block(
            Block::default()
                .borders(Borders::ALL)
                .title(Span::styled(format!(" {title} "), heading())),
        )
        .render(area, buf);
}

/// The editor open on `field`, if any.
pub fn editor_on(app: &App, field: Field) -> Option<&Editor> {
    match &app.mode {
        Mode::Editing(e) if e.target == Target::Field(field) => Some(e),
        _ => None,
    }
}

/// The problem to show beside `field`: the editor's, else the core's when it names it.
pub fn problem_for(app: &App, field: Field) -> Option<String> {
    if let Some(e) = editor_on(app, field) {
        return e.error.clone();
    }
    let p = app.figures.problem.as_ref()?;
    let place = p.place.as_ref()?;
    if !field.owns_place(place) {
        return None;
    }
    let text = p.text.as_str();
    Some(
        text.strip_prefix(&format!("{place}: "))
            .unwrap_or(text)
            .to_string(),
    )
}

/// The editor's text with a visible cursor.
pub fn editor_spans(e: &Editor) -> Vec<Span<'static>> {
    let chars: Vec<char> = e.buffer.chars().collect();
    let at = e.cursor.min(chars.len());
    let before: String = chars[..at].iter().collect();
    let under: String = chars.get(at).map(|c| c.to_string()).unwrap_or(" ".into());
    let after: String = chars.iter().skip(at + 1).collect();
    let field = Style::new().fg(Color::White).bg(Color::DarkGray);
    if e.proposed {
        // The whole proposal is marked: typing replaces it.
        return vec![
            Span::styled(e.buffer.clone(), field.add_modifier(Modifier::REVERSED)),
            Span::styled(" ", field),
        ];
    }
    vec![
        Span::styled(before, field),
        Span::styled(under, field.add_modifier(Modifier::REVERSED)),
        Span::styled(after, field),
    ]
}

/// The value cell of `field`: the editor when open, otherwise `shown`; selected cells are
/// reversed.
pub fn value_spans(
    app: &App,
    field: Field,
    shown: String,
    is_selected: bool,
) -> Vec<Span<'static>> {
    match editor_on(app, field) {
        Some(e) => editor_spans(e),
        None if is_selected => vec![Span::styled(shown, selected())],
        None => vec![Span::raw(shown)],
    }
}

/// A labelled field line: `label  value  unit  ✗ problem`.
pub fn field_line(
    app: &App,
    field: Field,
    label: &str,
    label_width: usize,
    shown: String,
    unit: &str,
    is_selected: bool,
) -> Line<'static> {
    let marker = if is_selected { "▸ " } else { "  " };
    let mut spans = vec![
        Span::raw(marker),
        Span::styled(format!("{label:<label_width$} "), quiet()),
    ];
    spans.extend(value_spans(app, field, shown, is_selected));
    if !unit.is_empty() {
        spans.push(Span::styled(format!(" {unit}"), quiet()));
    }
    if let Some(p) = problem_for(app, field) {
        spans.push(Span::styled(format!("  ✗ {p}"), problem_style()));
    }
    Line::from(spans)
}

/// `—` for an empty value.
pub fn or_dash(s: String) -> String {
    if s.is_empty() {
        "—".into()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrapping_keeps_every_word_and_the_width() {
        let w = wrap("one two three four five", 9);
        assert_eq!(w, vec!["one two", "three", "four five"]);
        assert_eq!(wrap("abcdefghij", 4), vec!["abcd", "efgh", "ij"]);
        assert!(wrap("", 5).is_empty());
    }

    #[test]
    fn the_caution_fits_two_lines_at_every_supported_width() {
        for w in 80..=200u16 {
            for text in [CAUTION, CAUTION_TWO, crate::core::saturable_report::CAUTION] {
                let lines = caution_lines_of(w, text);
                assert!(lines.len() <= 2, "{w}");
                assert!(lines.iter().all(|l| l.chars().count() <= usize::from(w)));
            }
        }
    }
}
