//! Screen 5, the washout: each half-life after the last dose as a clock time, predicted
//! level and fraction remaining, in a table and a chart, and when the threshold is reached.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::Line;
use ratatui::widgets::{Paragraph, Widget};

use crate::core::clock::span_words;
use crate::core::report::num;
use crate::tui::app::App;
use crate::tui::screens::fit::no_figures;
use crate::tui::strings;
use crate::tui::widgets::chart::SemiLogChart;
use crate::tui::widgets::{self, heading, quiet};

/// Draw the washout screen.
pub fn draw(app: &App, area: Rect, buf: &mut Buffer) {
    let (Some(r), Some(chart)) = (app.figures.report.as_ref(), app.figures.washout_chart()) else {
        return no_figures(app, area, buf);
    };
    // The table's columns take the width their widest entry needs (a level in nmol/L
    // is longer than one in mg/L), and the left column grows to hold them whole.
    let unit_now = r.unit.as_str();
    let levels: Vec<String> = r
        .washout
        .iter()
        .map(|row| format!("{} {unit_now}", num(row.level)))
        .collect();
    let level_w = levels
        .iter()
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(0)
        .max(11);
    let table_w = 2 + 2 + 15 + 1 + level_w + 1 + 7 + 2;
    let left_w = if area.width >= 120 {
        60
    } else {
        let cap = (area.width * 3 / 5).max(41);
        (table_w as u16 + 1).max(41).min(cap)
    };
    let [left, right] =
        Layout::horizontal([Constraint::Length(left_w), Constraint::Min(1)]).areas(area);
    let unit = r.unit.as_str();
    let w = usize::from(left_w).saturating_sub(2);
    // The half-life stays whole on one line when the heading wraps.
    const KEEP: char = '\u{1}';
    let half_life = span_words(r.fit.half_life_h).replace(' ', &KEEP.to_string());
    let title = if r.fit.peripheral.is_some() {
        strings::washout_heading_terminal(&r.washout_from.readable(false), &half_life)
    } else {
        strings::washout_heading(&r.washout_from.readable(false), &half_life)
    };
    let mut lines: Vec<Line> = widgets::wrap(&title, w)
        .into_iter()
        .map(|l| Line::styled(l.replace(KEEP, " "), heading()))
        .collect();
    let [c_n, c_when, c_level, c_left] = strings::WASHOUT_COLUMNS;
    lines.push(Line::styled(
        format!("{c_n:>2}  {c_when:<15} {c_level:<level_w$} {c_left:>9}"),
        quiet(),
    ));
    for (row, level) in r.washout.iter().zip(&levels) {
        lines.push(Line::raw(format!(
            "{:>2}  {:<15} {:<level_w$} {:>7} %",
            row.half_lives,
            row.at.readable_near(&r.washout_from),
            level,
            num(row.fraction_remaining * 100.0)
        )));
    }
    lines.push(Line::raw(""));
    let text = match &r.threshold {
        Some(t) if t.hours_from_t0 <= 0.0 => {
            strings::washout_already_below(&num(t.below), unit, &t.t0.readable(false))
        }
        Some(t) => {
            strings::washout_threshold(&num(t.below), unit, &t.reached_at.readable_near(&t.t0))
        }
        None => strings::WASHOUT_NO_THRESHOLD.into(),
    };
    let style = if r.threshold.is_some() {
        Style::new().add_modifier(Modifier::BOLD)
    } else {
        quiet()
    };
    for l in widgets::wrap(&text, w) {
        lines.push(Line::styled(l, style));
    }
    if let Some(sw) = &r.advice.switch {
        if area.height > 24 {
            lines.push(Line::raw(""));
        }
        lines.push(Line::styled(strings::switch_heading(&sw.to), heading()));
        let rule = strings::switch_rule(sw.basis, &num(sw.value), unit, &sw.from.readable(false));
        let start =
            strings::switch_start(&sw.start_at.readable(false), &num(sw.level_at_start), unit);
        let range = match &sw.start_at_ci95 {
            Some([a, b]) => strings::range95(&a.readable(false), &b.readable(false)),
            None => strings::no_range(r.fit.method).to_string(),
        };
        for (text, style) in [
            (rule, quiet()),
            (start, Style::new().add_modifier(Modifier::BOLD)),
            (range, Style::new()),
        ] {
            for l in widgets::wrap(&text, w) {
                lines.push(Line::styled(l, style));
            }
        }
    }
    Paragraph::new(lines).render(left, buf);
    let chart_area = Rect {
        x: right.x + 1,
        width: right.width.saturating_sub(1),
        ..right
    };
    SemiLogChart { data: chart, unit }.render(chart_area, buf);
}
