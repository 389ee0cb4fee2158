//! Screen 4, the threshold: the level to fall below and the procedure time as inputs; when
//! the level is below it as a clock time with its 95 % range, and the last plan dose that
//! may still be given.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::Line;
use ratatui::widgets::{Paragraph, Widget};

use crate::core::clock::span_words;
use crate::core::report::num;
use crate::tui::app::App;
use crate::tui::fields::Field;
use crate::tui::screens::THRESHOLD_FIELDS;
use crate::tui::strings;
use crate::tui::view::note;
use crate::tui::widgets::chart::SemiLogChart;
use crate::tui::widgets::{self, field_line, heading, or_dash, problem_style, quiet};

/// Draw the threshold screen.
pub fn draw(app: &App, area: Rect, buf: &mut Buffer) {
    let left_w = if area.width >= 120 { 64 } else { 41 };
    let [left, right] =
        Layout::horizontal([Constraint::Length(left_w), Constraint::Min(1)]).areas(area);
    let w = usize::from(left_w).saturating_sub(2);
    let unit = app.file.drug.level_unit.clone().unwrap_or_default();
    let mut lines = vec![Line::styled(strings::THRESHOLD_HEADING, heading())];
    for (i, f) in THRESHOLD_FIELDS.iter().enumerate() {
        let (label, u) = strings::field_label(*f);
        let u = if matches!(f, Field::ThresholdBelow | Field::ResumeBelow) {
            unit.as_str()
        } else {
            u
        };
        lines.push(field_line(
            app,
            *f,
            label,
            12,
            or_dash(f.text(&app.file)),
            u,
            app.cursors.threshold == i,
        ));
    }
    lines.push(Line::raw(""));
    let wrapped = |lines: &mut Vec<Line<'static>>, text: String, style: Style| {
        for l in widgets::wrap(&text, w) {
            lines.push(Line::styled(format!("  {l}"), style));
        }
    };
    let part = app
        .figures
        .report
        .as_ref()
        .and_then(|r| r.threshold.as_ref());
    match (part, &app.figures.problem) {
        (Some(t), _) => {
            lines.push(Line::styled(strings::WHEN_BELOW, heading()));
            let bold = Style::new().add_modifier(Modifier::BOLD);
            if t.hours_from_t0 <= 0.0 {
                wrapped(
                    &mut lines,
                    strings::already_below(&t.t0.readable(false), &num(t.c0), &unit),
                    bold,
                );
            } else {
                wrapped(
                    &mut lines,
                    strings::below_at(
                        &t.reached_at.readable_near(&t.t0),
                        &span_words(t.hours_from_t0),
                    ),
                    bold,
                );
                let from = strings::threshold_from(app.figures.threshold_from);
                wrapped(
                    &mut lines,
                    strings::counted_from(from, &t.t0.readable(false), &num(t.c0), &unit),
                    quiet(),
                );
            }
            match &t.reached_at_ci95 {
                Some([a, b]) => wrapped(
                    &mut lines,
                    strings::range95(&a.readable_near(&t.t0), &b.readable_near(&t.t0)),
                    Style::new(),
                ),
                None => wrapped(
                    &mut lines,
                    strings::no_range(app.figures.report.as_ref().map_or("", |r| r.fit.method))
                        .into(),
                    quiet(),
                ),
            }
            if let Some(p) = &t.procedure {
                lines.push(Line::styled(
                    strings::procedure_heading(&p.readable(false)),
                    heading(),
                ));
                let has_plan = app.figures.case.as_ref().is_some_and(|c| c.plan.is_some());
                let text = match (&t.latest_plan_dose, t.level_at_procedure) {
                    (Some(d), Some(l)) => {
                        strings::last_plan_dose(&d.readable(false), &num(l), &unit)
                    }
                    (None, Some(l)) if has_plan && l <= t.below => {
                        match (
                            t.plan_doses_before_procedure,
                            t.plan_doses_done_before_procedure,
                        ) {
                            (Some(0), _) => strings::no_plan_dose_before(&num(l), &unit),
                            (_, Some(0)) => strings::first_dose_still_running(&num(l), &unit),
                            _ => strings::hold_every_dose(&num(l), &unit),
                        }
                    }
                    (None, Some(l)) if has_plan => strings::not_below_even_holding(&num(l), &unit),
                    (None, Some(l)) => strings::level_at_procedure(&num(l), &unit, l <= t.below),
                    (_, None) => strings::NOT_KNOWN.into(),
                };
                wrapped(&mut lines, text, Style::new());
                if let Some(at) = &t.resume_at {
                    let text = strings::resume_from(
                        &at.readable_near(p),
                        t.level_at_resume.map(num).as_deref(),
                        &unit,
                    );
                    wrapped(&mut lines, text, Style::new().add_modifier(Modifier::BOLD));
                }
            } else {
                wrapped(&mut lines, strings::NO_PROCEDURE.into(), quiet());
            }
        }
        (None, _) if app.file.threshold.is_none() => {
            wrapped(&mut lines, strings::NO_THRESHOLD.into(), quiet())
        }
        (None, Some(p)) => wrapped(&mut lines, strings::no_figures(&p.text), problem_style()),
        (None, None) => wrapped(&mut lines, strings::NO_FIGURES_PLAIN.into(), quiet()),
    }
    Paragraph::new(lines).render(left, buf);
    let chart_area = Rect {
        x: right.x + 1,
        width: right.width.saturating_sub(1),
        ..right
    };
    match app.figures.threshold_chart() {
        Some(c) => SemiLogChart {
            data: c,
            unit: &unit,
        }
        .render(chart_area, buf),
        None => note("", quiet()).render(chart_area, buf),
    }
}
