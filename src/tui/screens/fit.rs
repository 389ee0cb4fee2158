//! Screen 2, the fit: the semi-log chart of the levels, fitted line and model course, and
//! k, half-life, r², residuals, volume and warnings (for a saturable drug: the integrated
//! Michaelis-Menten course beside Vmax, Km and their ranges).

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::core::report::num;
use crate::tui::app::App;
use crate::tui::strings;
use crate::tui::view::note;
use crate::tui::widgets::chart::{mark_symbol, MarkKind, SemiLogChart};
use crate::tui::widgets::{self, heading, problem_style, quiet};

/// Draw the fit screen.
pub fn draw(app: &App, area: Rect, buf: &mut Buffer) {
    if let (Some(case), Some(s)) = (app.figures.case.as_ref(), app.figures.saturable.as_ref()) {
        // The integrated Michaelis-Menten course beside the figures (no chart without a
        // volume: the course cannot be integrated).
        let (text_area, chart) = match app.figures.saturable_chart() {
            Some(chart) if !chart.curves.is_empty() => {
                let pct = if area.width >= 120 { 55 } else { 45 };
                let [left, right] =
                    Layout::horizontal([Constraint::Percentage(pct), Constraint::Min(1)])
                        .spacing(1)
                        .areas(area);
                (right, Some((left, chart)))
            }
            _ => (area, None),
        };
        // Beside a chart on a narrow screen the doses give way to it: the plan screen has them.
        let with_doses = chart.is_none() || area.width >= 120;
        if let Some((left, chart)) = chart {
            let unit = case.drug.scale.unit.as_str();
            SemiLogChart { data: chart, unit }.render(left, buf);
        }
        let w = usize::from(text_area.width.saturating_sub(1));
        let lines = crate::tui::screens::saturable::fit_lines(case, s, w, with_doses);
        return Paragraph::new(lines).render(text_area, buf);
    }
    let (Some(case), Some(fit), Some(r), Some(chart)) = (
        app.figures.case.as_ref(),
        app.figures.fit.as_ref(),
        app.figures.report.as_ref(),
        app.figures.fit_chart(),
    ) else {
        return no_fit(app, area, buf);
    };
    let pct = if area.width >= 120 { 60 } else { 45 };
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(pct), Constraint::Min(1)]).areas(area);
    let unit = r.unit.as_str();
    SemiLogChart { data: chart, unit }.render(left, buf);

    let w = usize::from(right.width.saturating_sub(1));
    let f = &r.fit;
    let rows: Vec<String> = f.level_rows.iter().map(|x| x.to_string()).collect();
    let record_fit = matches!(f.method, "dose-history" | "bayesian" | "population");
    let prior_only = f.method == "population";
    // A population model with no between-patient variability of the volume fixes it.
    let volume_fixed = f
        .population
        .as_ref()
        .is_some_and(|s| s.prior_share[1].is_none());
    let ci = |c: Option<[f64; 2]>| match (c, prior_only) {
        (Some([a, b]), true) => strings::pi90(&num(a), &num(b)),
        (c, _) => ci(c),
    };
    let title = if prior_only {
        strings::FIT_HEADING_PRIOR.to_string()
    } else if record_fit {
        strings::fit_heading_record(f.method, &rows.join(", "))
    } else {
        strings::fit_heading(f.method, &rows.join(", "), f.window_dose_row)
    };
    let mut lines = vec![
        Line::styled(title, heading()),
        method_line(app, Some(f.method)),
        kv(
            strings::K,
            format!("{} /h", num(f.k_per_h)),
            ci(f.k_ci95_per_h),
        ),
        kv(
            strings::HALF_LIFE,
            format!("{} h", num(f.half_life_h)),
            ci(f.half_life_ci95_h),
        ),
        kv(
            strings::R_SQUARED,
            f.r_squared.map(|x| format!("{x:.4}")).unwrap_or_else(|| {
                if record_fit {
                    strings::NOT_FOR_METHOD.into()
                } else {
                    strings::NOT_FOR_TWO.into()
                }
            }),
            String::new(),
        ),
        kv(
            strings::VOLUME,
            f.volume_l
                .map(|v| format!("{} L", num(v)))
                .unwrap_or_else(|| strings::NOT_KNOWN.into()),
            if volume_fixed {
                strings::VOLUME_FIXED.into()
            } else if record_fit {
                ci(f.volume_ci95_l)
            } else {
                strings::volume_how(f.volume_method, f.pre_dose_row)
            },
        ),
        kv(
            strings::CLEARANCE,
            f.clearance_l_per_h
                .map(|v| format!("{} L/h", num(v)))
                .unwrap_or_else(|| strings::NOT_KNOWN.into()),
            if record_fit {
                ci(f.clearance_ci95_l_per_h)
            } else {
                String::new()
            },
        ),
    ];
    if let Some(pe) = &f.peripheral {
        lines.insert(
            2,
            kv(
                strings::COMPARTMENTS,
                strings::two_compartments(&num(pe.distribution_half_life_h)),
                String::new(),
            ),
        );
        lines.insert(
            3,
            kv(
                strings::PERIPHERAL,
                strings::peripheral(&num(pe.volume_l), &num(pe.intercompartmental_l_per_h)),
                String::new(),
            ),
        );
    }
    if let Some(s) = &f.population {
        let p = &s.population;
        let (what, typical, u) = if p.on_clearance {
            ("CL", p.clearance_l_per_h, "L/h")
        } else {
            ("k", p.k_per_h, "/h")
        };
        lines.push(kv(
            strings::POPULATION,
            strings::population_values(what, &num(typical), u, &num(p.volume_l)),
            String::new(),
        ));
        lines.push(kv(
            "",
            strings::population_basis(
                &p.model,
                p.weight_kg.map(num).as_deref(),
                p.creatinine_clearance
                    .as_ref()
                    .map(|c| format!("{:.0}", c.ml_min))
                    .as_deref(),
            ),
            String::new(),
        ));
        if !prior_only {
            lines.push(kv(
                strings::MOVED,
                strings::population_moved(
                    what,
                    s.elimination_shift_sd,
                    (!volume_fixed).then_some(s.volume_shift_sd),
                ),
                String::new(),
            ));
        }
        if let (false, Some(share)) = (fit.used.is_empty(), s.prior_share[0]) {
            lines.push(kv(
                strings::WEIGHS,
                strings::population_weighs(1.0 - share),
                String::new(),
            ));
        }
    }
    lines.push(Line::styled(strings::LEVELS_AND_RESIDUALS, heading()));
    for (i, l) in case.levels.iter().enumerate() {
        // Levels are in time order in the case; the cursor counts file rows.
        let file_row = l.row - 1;
        let is_sel = app.cursors.fit_level == file_row;
        let kind = if let Some(pos) = fit.used.iter().position(|&u| u == i) {
            (MarkKind::InFit, fit.residuals.get(pos).copied())
        } else if l.use_in_fit {
            (MarkKind::NotInFit, None)
        } else {
            (MarkKind::LeftOut, None)
        };
        let (sym, style) = mark_symbol(kind.0);
        let status = match kind.0 {
            MarkKind::InFit => strings::IN_FIT,
            _ if fit.pre_dose_level == Some(i) => strings::PRE_DOSE,
            MarkKind::NotInFit => strings::NOT_IN_FIT,
            _ => strings::LEFT_OUT,
        };
        let when = l.time.weekday_time();
        let text = format!("{:<2} {when}  {:>7} ", l.row, l.value_words());
        // A residual that rounds to zero is shown as +0.000, not -0.000 (an exact two-level
        // fit leaves residuals of a few 1e-16 of either sign); one that is not finite is not
        // shown.
        let resid = kind
            .1
            .filter(|x| x.is_finite())
            .map(|x| format!("{:+.3}", if x.abs() < 5e-4 { 0.0 } else { x }))
            .unwrap_or_default();
        let body = Style::new();
        lines.push(Line::from(vec![
            Span::raw(if is_sel { "▸ " } else { "  " }),
            Span::styled(text, if is_sel { widgets::selected() } else { body }),
            Span::styled(sym, style),
            Span::raw(format!(" {status:<10} {resid}")),
        ]));
    }
    lines.push(Line::styled(strings::WARNINGS, heading()));
    if r.warnings.is_empty() {
        lines.push(Line::styled(strings::NO_WARNINGS, quiet()));
    }
    for warn in &r.warnings {
        for (j, l) in widgets::wrap(warn, w.saturating_sub(2))
            .into_iter()
            .enumerate()
        {
            let lead = if j == 0 { "- " } else { "  " };
            lines.push(Line::styled(format!("{lead}{l}"), problem_style()));
        }
    }
    let inner = Rect {
        x: right.x + 1,
        width: right.width.saturating_sub(1),
        ..right
    };
    // Too long for the panel: PgDn and PgUp scroll it, and a marker says what is hidden.
    let h = usize::from(inner.height);
    let skip = usize::from(app.cursors.fit_scroll).min(lines.len().saturating_sub(h));
    let hidden_below = lines.len().saturating_sub(skip + h);
    let mut shown: Vec<Line> = lines.into_iter().skip(skip).take(h).collect();
    if hidden_below > 0 {
        if let Some(last) = shown.last_mut() {
            *last = Line::styled(
                strings::more_lines(hidden_below + 1),
                quiet().add_modifier(Modifier::REVERSED),
            );
        }
    } else if skip > 0 {
        if let Some(first) = shown.first_mut() {
            *first = Line::styled(
                strings::MORE_ABOVE,
                quiet().add_modifier(Modifier::REVERSED),
            );
        }
    }
    Paragraph::new(shown).render(inner, buf);
}

fn ci(c: Option<[f64; 2]>) -> String {
    match c {
        Some([a, b]) => strings::ci95(&num(a), &num(b)),
        None => strings::NO_INTERVAL.into(),
    }
}

fn kv(label: &str, value: String, tail: String) -> Line<'static> {
    Line::from(vec![
        Span::styled(format!("{label:<10}"), quiet()),
        Span::raw(value),
        Span::styled(format!(" {tail}"), quiet()),
    ])
}

/// The method line: what the case asks for, what was used, and the key that switches it.
fn method_line(app: &App, used: Option<&str>) -> Line<'static> {
    let chosen = app.file.fit.as_ref().and_then(|f| f.method.as_deref());
    kv(
        strings::METHOD,
        strings::method_line(chosen, used),
        strings::METHOD_KEY.to_string(),
    )
}

/// The fit screen without figures: the method line (so it can be switched back), then the
/// reason.
fn no_fit(app: &App, area: Rect, buf: &mut Buffer) {
    let [top, rest] = Layout::vertical([Constraint::Length(1), Constraint::Min(1)]).areas(area);
    Paragraph::new(method_line(app, None)).render(top, buf);
    no_figures(app, rest, buf);
}

/// The screen when the core could not give figures: the reason, plainly.
pub fn no_figures(app: &App, area: Rect, buf: &mut Buffer) {
    let text = match &app.figures.problem {
        Some(p) => strings::no_figures(&p.text),
        None => strings::NO_FIGURES_PLAIN.to_string(),
    };
    note(&text, problem_style()).render(area, buf);
}
