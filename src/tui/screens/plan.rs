//! Screen 3, the plan: dose, interval and infusion time adjustable with single keys, the
//! steady-state figures with each target met or not, and the projected course.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::core::clock::span_words;
use crate::core::report::{num, TargetCheck};
use crate::tui::app::App;
use crate::tui::fields::Field;
use crate::tui::screens::PLAN_FIELDS;
use crate::tui::strings;
use crate::tui::view::note;
use crate::tui::widgets::chart::SemiLogChart;
use crate::tui::widgets::{field_line, heading, or_dash, problem_style, quiet};

/// Draw the plan screen.
pub fn draw(app: &App, area: Rect, buf: &mut Buffer) {
    let left_w = if area.width >= 120 { 60 } else { 41 };
    let [left, right] =
        Layout::horizontal([Constraint::Length(left_w), Constraint::Min(1)]).areas(area);
    let unit = app.file.drug.level_unit.clone().unwrap_or_default();
    let mut lines = vec![Line::styled(strings::REGIMEN, heading())];
    let plan_part = app.figures.report.as_ref().and_then(|r| r.plan.as_ref());
    for (i, f) in PLAN_FIELDS.iter().enumerate() {
        let (label, u) = strings::field_label(*f);
        let u = if matches!(f, Field::TargetPeak | Field::TargetTrough) {
            unit.clone()
        } else if *f == Field::TargetAuc {
            format!("{unit}·h")
        } else {
            u.to_string()
        };
        let mut shown = or_dash(f.text(&app.file));
        if *f == Field::PlanStart && app.file.plan.as_ref().is_some_and(|p| p.start.is_none()) {
            if let Some(p) = plan_part {
                shown = strings::start_by_default(&p.start.readable(false));
            }
        }
        if app.file.plan.is_none() && i < 6 {
            shown = "—".into();
        }
        lines.push(field_line(
            app,
            *f,
            label,
            12,
            shown,
            &u,
            app.cursors.plan == i,
        ));
    }
    lines.push(Line::styled(strings::AT_STEADY_STATE, heading()));
    match (&app.file.plan, plan_part, &app.figures.problem) {
        (None, _, _) => lines.push(Line::styled(strings::NO_PLAN, quiet())),
        (Some(_), Some(p), _) => {
            let check = |name: &str| p.checks.iter().find(|c| c.name == name);
            lines.push(figure(strings::PEAK, p.peak_ss, &unit, check("peak")));
            lines.push(figure(strings::TROUGH, p.trough_ss, &unit, check("trough")));
            lines.push(figure(
                strings::AUC24,
                p.auc24_ss,
                &format!("{unit}·h"),
                check("AUC24"),
            ));
            lines.push(Line::from(vec![
                Span::styled(format!("{:<13}", strings::ACCUMULATION), quiet()),
                Span::raw(num(p.accumulation_factor)),
            ]));
            for (pct, h) in ["90", "95", "97"].iter().zip(p.time_to_ss_h) {
                lines.push(Line::from(vec![
                    Span::styled(strings::ss_after(pct), quiet()),
                    Span::raw(span_words(h)),
                ]));
            }
        }
        (Some(_), None, Some(problem)) => lines.push(Line::styled(
            strings::no_figures(&problem.text),
            problem_style(),
        )),
        (Some(_), None, None) => lines.push(Line::styled(strings::NO_FIGURES_PLAIN, quiet())),
    }
    Paragraph::new(lines).render(left, buf);
    let chart_area = Rect {
        x: right.x + 1,
        width: right.width.saturating_sub(1),
        ..right
    };
    match &app.figures.charts.plan {
        Some(c) => SemiLogChart {
            data: c,
            unit: &unit,
        }
        .render(chart_area, buf),
        None => note(strings::NO_PLAN_CHART, quiet()).render(chart_area, buf),
    }
}

/// A steady-state figure with its target and whether it is met, in words and a symbol.
fn figure(name: &str, v: Option<f64>, unit: &str, check: Option<&TargetCheck>) -> Line<'static> {
    let value = match v {
        Some(v) => format!("{} {unit}", num(v)),
        None => strings::NOT_KNOWN.into(),
    };
    let mut spans = vec![
        Span::styled(format!("{name:<8}"), quiet()),
        Span::styled(
            format!("{value:<15}"),
            Style::new().add_modifier(Modifier::BOLD),
        ),
    ];
    match check {
        Some(c) => {
            spans.push(Span::styled(format!("{:<7}", c.wanted), quiet()));
            spans.push(if c.met {
                Span::styled(
                    strings::MET,
                    Style::new().fg(Color::Green).add_modifier(Modifier::BOLD),
                )
            } else {
                Span::styled(
                    strings::NOT_MET,
                    Style::new().fg(Color::Red).add_modifier(Modifier::BOLD),
                )
            });
        }
        None => spans.push(Span::styled(strings::NO_TARGET, quiet())),
    }
    Line::from(spans)
}
