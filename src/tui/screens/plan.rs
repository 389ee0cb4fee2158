//! Screen 3, the plan: dose, interval and infusion time adjustable with single keys, the
//! steady-state figures with each target met or not, and the projected course.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::core::clock::span_words;
use crate::core::report::{num, TargetCheck};
use crate::core::units::auc_unit;
use crate::tui::app::App;
use crate::tui::fields::Field;
use crate::tui::screens::{self, suggestions, PLAN_FIELDS};
use crate::tui::strings;

use crate::tui::view::note;
use crate::tui::widgets::chart::SemiLogChart;
use crate::tui::widgets::{self, field_line, heading, or_dash, problem_style, quiet};

/// Draw the plan screen.
pub fn draw(app: &App, area: Rect, buf: &mut Buffer) {
    let left_w = if area.width >= 120 { 60 } else { 41 };
    let [left, right] =
        Layout::horizontal([Constraint::Length(left_w), Constraint::Min(1)]).areas(area);
    let unit = app.file.drug.level_unit.clone().unwrap_or_default();
    let mut lines = vec![Line::styled(strings::REGIMEN, heading())];
    let plan_part = app.figures.report.as_ref().and_then(|r| r.plan.as_ref());
    let from_profile = screens::file_with_profile_targets(app);
    for (i, f) in PLAN_FIELDS.iter().enumerate() {
        let (label, u) = strings::field_label(*f);
        let mut u = if matches!(f, Field::TargetPeak | Field::TargetTrough) {
            unit.clone()
        } else if *f == Field::TargetAuc {
            auc_unit(&unit)
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
        if let Some(pf) = &from_profile {
            let t = f.text(pf);
            if i >= 6 && !t.is_empty() {
                shown = t;
                u = strings::from_profile(&u);
            }
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
    let has = |code: crate::core::warning::Code| {
        app.figures
            .report
            .as_ref()
            .is_some_and(|r| r.warnings.iter().any(|w| w.code() == code))
    };
    if has(crate::core::warning::Code::TargetsNotStrategy) {
        lines.push(Line::styled(strings::TARGETS_NOT_STRATEGY, problem_style()));
    }
    if has(crate::core::warning::Code::IntervalNotStrategy) {
        lines.push(Line::styled(
            strings::INTERVAL_NOT_STRATEGY,
            problem_style(),
        ));
    }
    lines.push(Line::styled(strings::AT_STEADY_STATE, heading()));
    let saturable = app
        .figures
        .case
        .as_ref()
        .zip(app.figures.saturable.as_ref());
    match (&app.file.plan, plan_part, &app.figures.problem) {
        _ if saturable.is_some() => {
            if let Some((case, s)) = saturable {
                lines.extend(screens::saturable::dose_lines(case, s, usize::from(left_w)));
            }
        }
        (None, _, _) => {
            for l in widgets::wrap(strings::NO_PLAN, usize::from(left_w)) {
                lines.push(Line::styled(l, quiet()));
            }
        }
        (Some(_), Some(p), _) => {
            let check = |name: &str| p.checks.iter().find(|c| c.name == name);
            match p.peak_sampled_ss {
                // The peak target is defined at a sampling time after the end of the infusion:
                // show both, and the check on the sampled one.
                Some(sampled) => {
                    let end = p
                        .peak_ss
                        .map_or(strings::NOT_KNOWN.into(), |v| format!("{} {unit}", num(v)));
                    lines.push(Line::from(vec![
                        Span::styled(format!("{:<8}", strings::PEAK), quiet()),
                        Span::styled(
                            format!("{end:<15}"),
                            Style::new().add_modifier(Modifier::BOLD),
                        ),
                        Span::styled(peak_where(p), quiet()),
                    ]));
                    let name = if p.level_12h_ss.is_some() {
                        strings::LEVEL_12H.to_string()
                    } else {
                        strings::peak_sampled(&num(p.peak_sampled_after_h))
                    };
                    lines.push(figure(&name, Some(sampled), &unit, check("peak")));
                }
                None => {
                    lines.push(figure(strings::PEAK, p.peak_ss, &unit, check("peak")));
                    if p.peak_absorbed {
                        lines.push(Line::styled(format!("{:<8}{}", "", peak_where(p)), quiet()));
                    }
                    if let Some(x) = p.level_12h_ss {
                        lines.push(figure(strings::LEVEL_12H, Some(x), &unit, None));
                    }
                }
            }
            lines.push(figure(strings::TROUGH, p.trough_ss, &unit, check("trough")));
            lines.push(figure(
                strings::AUC24,
                p.auc24_ss,
                &auc_unit(&unit),
                check("AUC24"),
            ));
            if let Some(h) = p.drug_free_h {
                lines.push(Line::from(vec![
                    Span::styled(format!("{:<13}", strings::DRUG_FREE), quiet()),
                    Span::raw(format!("{} h per interval", num(h))),
                ]));
            }
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
        (Some(_), None, Some(problem)) => {
            for l in widgets::wrap(&strings::no_figures(&problem.text), usize::from(left_w)) {
                lines.push(Line::styled(l, problem_style()));
            }
        }
        (Some(_), None, None) => lines.push(Line::styled(strings::NO_FIGURES_PLAIN, quiet())),
    }
    let wide = area.width >= 120;
    // Narrow: three suggestions at a time, so the chart keeps its room.
    let advice = suggestion_lines(app, wide, &unit, if wide { 5 } else { 3 });
    let mut chart_area = Rect {
        x: right.x + 1,
        width: right.width.saturating_sub(1),
        ..right
    };
    if wide {
        lines.push(Line::raw(""));
        lines.extend(advice);
    } else {
        let n = (advice.len() as u16).min(chart_area.height / 2);
        let [c, a] =
            Layout::vertical([Constraint::Min(1), Constraint::Length(n)]).areas(chart_area);
        Paragraph::new(advice).render(a, buf);
        chart_area = c;
    }
    // Keep a selected suggestion in view when the left column is too short for it.
    let h = usize::from(left.height);
    let sel_row = lines
        .iter()
        .position(|l| l.spans.first().is_some_and(|s| s.content == "▸"));
    let skip = match sel_row {
        Some(r) if wide && r + 1 > h => r + 1 - h,
        _ => 0,
    };
    let lines: Vec<Line> = lines.into_iter().skip(skip).collect();
    Paragraph::new(lines).render(left, buf);
    if let Some((case, s)) = saturable {
        // On a tall screen the projected course of the plan (with its 95 % band) above the
        // figures and warnings; on a short one the warnings keep the room.
        let mut text_area = chart_area;
        let mut charted = false;
        if let Some(c) = app
            .figures
            .saturable_chart()
            .filter(|c| !c.curves.is_empty() && chart_area.height >= 30)
        {
            let [top, rest] = Layout::vertical([Constraint::Percentage(45), Constraint::Min(1)])
                .spacing(1)
                .areas(chart_area);
            SemiLogChart {
                data: c,
                unit: &unit,
            }
            .render(top, buf);
            text_area = rest;
            charted = true;
        }
        let w = usize::from(text_area.width);
        let lines = if charted {
            screens::saturable::summary_lines(s, w)
        } else {
            screens::saturable::fit_lines(case, s, w, false)
        };
        return Paragraph::new(lines).render(text_area, buf);
    }
    match app.figures.plan_chart() {
        Some(c) => SemiLogChart {
            data: c,
            unit: &unit,
        }
        .render(chart_area, buf),
        None => note(strings::NO_PLAN_CHART, quiet()).render(chart_area, buf),
    }
}

/// A steady-state figure with its target and whether it is met, in words and a symbol.
/// Where the steady-state peak falls, in the screen's words.
fn peak_where(p: &crate::core::report::PlanSection) -> String {
    if p.peak_absorbed {
        strings::peak_absorbed(&crate::core::clock::span_words(p.peak_after_dose_h))
    } else if p.peak_after_dose_h > 0.0 {
        strings::PEAK_AT_END.into()
    } else {
        strings::PEAK_JUST_AFTER.into()
    }
}

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

/// The suggested regimens (the selected one marked), the loading dose, and the
/// proportional adjustment when there is no volume.
fn suggestion_lines(app: &App, wide: bool, unit: &str, rows: usize) -> Vec<Line<'static>> {
    let Some(r) = app.figures.report.as_ref() else {
        return Vec::new();
    };
    let a = &r.advice;
    let list = suggestions(app);
    let mut out = vec![Line::styled(
        if wide {
            strings::suggestions(unit)
        } else {
            strings::suggestions_short(unit)
        },
        heading(),
    )];
    let [c_dose, c_every, c_route, c_peak, c_trough, c_auc] = strings::SUGGESTION_COLUMNS;
    // Narrow, the AUC24 column replaces the route when AUC24 is a target (and the peak too
    // when the peak is not one), so every figure the targets judge stays in view.
    let targets = app.figures.case.as_ref().map(|c| c.targets.clone());
    let auc_target = targets.as_ref().is_some_and(|t| t.auc24.is_some());
    let peak_target = targets.as_ref().is_some_and(|t| t.peak.is_some());
    let row =
        |n: &str, dose: &str, every: &str, route: &str, peak: &str, trough: &str, auc: &str| {
            if wide {
                format!("{n:<2} {dose:<8} {every:<6} {route:<11} {peak:<9} {trough:<10} {auc}")
            } else if auc_target && peak_target {
                format!("{n:<2} {dose:<7} {every:<5} {peak:<6} {trough:<6} {auc}")
            } else if auc_target {
                format!("{n:<2} {dose:<8} {every:<6} {trough:<8} {auc}")
            } else {
                format!("{n:<2} {dose:<8} {every:<6} {peak:<8} {trough}")
            }
        };
    if list.is_empty() {
        let why = match &app.figures.case {
            Some(c) if c.targets.is_empty() => strings::NO_TARGETS_NO_SUGGESTIONS,
            _ => strings::NO_SUGGESTION_MEETS,
        };
        out.push(Line::styled(why, quiet()));
    } else {
        let head = row("", c_dose, c_every, c_route, c_peak, c_trough, c_auc);
        out.push(Line::styled(format!(" {head}"), quiet()));
    }
    // The window of `rows` suggestions that holds the selected one.
    let sel = app.cursors.plan.checked_sub(PLAN_FIELDS.len());
    let first = sel.map_or(0, |s| (s + 1).saturating_sub(rows));
    // Where the strategy draws the peak after the end of the infusion, the column shows that
    // level, the one the peak target judges (the end-of-infusion peak would look above it).
    let sampled_after = app
        .figures
        .case
        .as_ref()
        .map_or(0.0, |c| c.regimen.peak_sampled_after_h);
    let sampled = peak_target && sampled_after > 0.0;
    for (i, s) in list.iter().enumerate().skip(first).take(rows) {
        let selected = sel == Some(i);
        let text = row(
            &(i + 1).to_string(),
            &format!("{} mg", num(s.dose_mg)),
            &format!("{} h", num(s.interval_h)),
            &strings::route_words(s.route, s.infusion_h),
            &num(if sampled {
                s.peak_sampled_ss
            } else {
                s.peak_ss
            }),
            &num(s.trough_ss),
            &num(s.auc24_ss),
        );

        out.push(Line::from(vec![
            Span::raw(if selected {
                "▸"
            } else if s.current {
                strings::CURRENT_MARK
            } else {
                " "
            }),
            Span::styled(
                text,
                if selected {
                    widgets::selected()
                } else {
                    Style::new()
                },
            ),
        ]));
    }
    let current = list.iter().any(|s| s.current);
    if current || (sampled && !list.is_empty()) {
        let after = sampled.then(|| span_words(sampled_after));
        let width = if wide { 60 } else { 37 };
        for l in strings::suggestions_key(current, after.as_deref(), width) {
            out.push(Line::styled(l, quiet()));
        }
    }
    if let Some(l) = &a.loading {
        out.push(Line::raw(if wide {
            strings::loading_dose(
                &num(l.dose_mg),
                &strings::route_words(l.route, l.infusion_h),
                &num(l.peak),
                unit,
            )
        } else {
            strings::loading_dose_short(&num(l.dose_mg), &num(l.peak), unit)
        }));
    }
    if let Some(p) = &a.proportional {
        if let Some(d) = p.new_dose_mg {
            out.push(Line::raw(strings::proportional(&num(d), &num(p.factor))));
        }
    }
    out
}
