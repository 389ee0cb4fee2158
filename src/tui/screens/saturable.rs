//! The saturable (Michaelis-Menten) figures as screen lines, for the fit and plan screens of
//! a drug such as phenytoin: the deciding level beside the measured total, the adjusted and
//! the free level; Vmax and Km; the dose for the target and the plan's steady state.

use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};

use crate::analysis::Saturable;
use crate::core::case::Case;
use crate::core::report::num;
use crate::core::saturable_report::{daily_words, Basis, Method};
use crate::tui::strings;
use crate::tui::widgets::{self, heading, problem_style, quiet};

fn kv(label: &str, value: String, width: usize) -> Vec<Line<'static>> {
    // The label in a 13-wide column; the value wraps within the rest, indented under it.
    let col = 13;
    let rest = width.saturating_sub(col).max(20);
    widgets::wrap(&value, rest)
        .into_iter()
        .enumerate()
        .map(|(i, l)| {
            let head = if i == 0 { label } else { "" };
            Line::from(vec![
                Span::styled(format!("{head:<col$}"), quiet()),
                Span::styled(l, Style::new().add_modifier(Modifier::BOLD)),
            ])
        })
        .collect()
}

/// The levels, Vmax and Km, then the doses when `with_doses` (the fit screen; the plan screen
/// shows the doses beside its fields), then the warnings.
pub fn fit_lines(case: &Case, s: &Saturable, width: usize, with_doses: bool) -> Vec<Line<'static>> {
    let r = &s.report;
    let u = case.drug.scale.unit.as_str();
    let lv = |x: f64| num(case.drug.scale.to_level(x));
    let mut out: Vec<Line<'static>> = widgets::wrap(strings::SATURABLE_HEADING, width)
        .into_iter()
        .map(|l| Line::styled(l, heading()))
        .collect();
    for l in widgets::wrap(strings::SATURABLE_NO_K, width) {
        out.push(Line::styled(l, quiet()));
    }
    let basis = match r.decision.basis {
        Basis::Total => strings::SATURABLE_BASIS_TOTAL,
        Basis::Adjusted => strings::SATURABLE_BASIS_ADJUSTED,
        Basis::Free => strings::SATURABLE_BASIS_FREE,
    };
    out.extend(kv(
        strings::SATURABLE_DECIDING,
        format!(
            "{} {u} ({basis}, level {})",
            lv(r.decision.decision_mg_l),
            r.decision.row
        ),
        width,
    ));
    if let Some(a) = &r.adjusted {
        out.extend(kv(
            strings::SATURABLE_TOTAL,
            format!("{} {u} (level {})", lv(a.total_mg_l), a.row),
            width,
        ));
        out.extend(kv(
            strings::SATURABLE_ADJUSTED,
            format!(
                "{} {u} (albumin {} g/dL; {})",
                lv(a.adjusted_mg_l),
                num(a.albumin_g_dl),
                a.form.words(&s.params.albumin)
            ),
            width,
        ));
    }
    if let Some((row, f)) = r.free {
        out.extend(kv(
            strings::SATURABLE_FREE,
            format!("{} {u} (level {row}; preferred)", lv(f)),
            width,
        ));
    }
    let range = |x: Option<[f64; 2]>| {
        x.map(|[a, b]| format!(" {}", strings::saturable_range95(&num(a), &num(b))))
            .unwrap_or_default()
    };
    out.extend(kv(
        "Vmax",
        format!(
            "{} mg/day{}",
            num(r.vmax_mg_per_day),
            range(r.ranges.map(|g| g.vmax))
        ),
        width,
    ));
    out.extend(kv(
        "Km",
        format!("{} mg/L{}", num(r.km_mg_l), range(r.ranges.map(|g| g.km))),
        width,
    ));
    out.extend(kv(
        strings::SATURABLE_HOW,
        r.method.words().to_string(),
        width,
    ));
    if let (Some(b), false) = (&r.bayesian, r.method == Method::Bayesian) {
        out.extend(kv(
            strings::SATURABLE_BAYESIAN,
            format!(
                "Vmax {} mg/day, Km {} mg/L",
                num(b.kinetics.vmax_mg_per_day),
                num(b.kinetics.km_mg_l)
            ),
            width,
        ));
    }
    if let Some(f) = r
        .record
        .filter(|_| !matches!(r.method, Method::Record { .. }))
    {
        out.extend(kv(
            strings::SATURABLE_RECORD,
            format!(
                "Vmax {} mg/day, Km {} mg/L{}",
                num(f.kinetics.vmax_mg_per_day),
                num(f.kinetics.km_mg_l),
                if f.km_fitted { "" } else { " (Km held)" }
            ),
            width,
        ));
    }
    let (m, v, k) = r.algebraic;
    out.extend(kv(
        strings::SATURABLE_ALGEBRA,
        format!("Vmax {} mg/day, Km {} mg/L ({})", num(v), num(k), m.words()),
        width,
    ));
    out.extend(kv(
        strings::SATURABLE_VOLUME,
        r.volume_l
            .map_or(strings::SATURABLE_NO_VOLUME.to_string(), |v| {
                format!("{} L", num(v))
            }),
        width,
    ));
    if with_doses {
        out.extend(dose_lines(case, s, width));
    }
    out.extend(warning_lines(s, width));
    out
}

/// The warnings, under their heading (none without warnings).
fn warning_lines(s: &Saturable, width: usize) -> Vec<Line<'static>> {
    let mut out = Vec::new();
    if !s.report.warnings.is_empty() {
        out.push(Line::styled(strings::WARNINGS_HEADING, heading()));
        for w in &s.report.warnings {
            for l in widgets::wrap(&format!("- {w}"), width) {
                out.push(Line::styled(l, problem_style()));
            }
        }
    }
    out
}

/// Under the plan screen's chart: Vmax and Km with their ranges and how they were found (the
/// rest is on the fit screen), then the warnings.
pub fn summary_lines(s: &Saturable, width: usize) -> Vec<Line<'static>> {
    let r = &s.report;
    let range = |x: Option<[f64; 2]>| {
        x.map(|[a, b]| format!(" {}", strings::saturable_range95(&num(a), &num(b))))
            .unwrap_or_default()
    };
    let mut out: Vec<Line<'static>> = widgets::wrap(strings::SATURABLE_HEADING, width)
        .into_iter()
        .map(|l| Line::styled(l, heading()))
        .collect();
    out.extend(kv(
        "Vmax, Km",
        format!(
            "{} mg/day{}, {} mg/L{}; {}",
            num(r.vmax_mg_per_day),
            range(r.ranges.map(|g| g.vmax)),
            num(r.km_mg_l),
            range(r.ranges.map(|g| g.km)),
            r.method.words()
        ),
        width,
    ));
    out.extend(warning_lines(s, width));
    out
}

/// The dose for the target, the first step and the plan (the plan screen).
pub fn dose_lines(case: &Case, s: &Saturable, width: usize) -> Vec<Line<'static>> {
    let r = &s.report;
    let u = case.drug.scale.unit.as_str();
    let lv = |x: f64| case.drug.scale.to_level(x);
    let mut out = Vec::new();
    // The plan first (it may have no steady state), then the first step, the dose for the
    // target and the current dose: the most pressing first on a short screen.
    if let Some(d) = &r.plan {
        out.extend(kv(strings::SATURABLE_PLAN, daily_words(d, &lv, u), width));
    }
    if let Some(d) = &r.next_step {
        out.extend(kv(
            strings::SATURABLE_FIRST_STEP,
            daily_words(d, &lv, u),
            width,
        ));
    }
    if let (Some(t), Some(d)) = (r.target_mg_l, &r.dose_for_target) {
        out.extend(kv(
            &strings::saturable_for_target(&num(lv(t)), u),
            daily_words(d, &lv, u),
            width,
        ));
    }
    if let Some(c) = r.current_mg_per_day {
        out.extend(kv(
            strings::SATURABLE_CURRENT,
            format!("{} mg/day ({})", num(c), r.salt.0),
            width,
        ));
    }
    out
}
