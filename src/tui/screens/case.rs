//! Screen 1, the case: patient and drug fields, the dose record and the levels as tables.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::Style;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::core::report::num;
use crate::tui::app::App;
use crate::tui::fields::{self, Field};
use crate::tui::rows;
use crate::tui::screens::{
    self, profile, CaseLine, CLOCK_FIELDS, DRUG_FIELDS, PATIENT_FIELDS, SWITCH_FIELDS,
};
use crate::tui::strings;
use crate::tui::widgets::{self, field_line, heading, or_dash, problem_style, quiet};

/// Column widths of the dose table: number, time, amount, route, infusion, F.
const DOSE_W: [usize; 6] = [3, 17, 9, 9, 9, 5];
/// Column widths of the level table: number, time, value, use, note.
const LEVEL_W: [usize; 5] = [3, 17, 10, 4, 20];

/// Width of the right column of the wide layout (patient, drug and profile).
const PANEL_W: u16 = 52;

/// A line of the screen and, when selectable, its place in `case_lines`.
type Row = (Line<'static>, Option<usize>);

/// Draw the case screen.
pub fn draw(app: &App, area: Rect, buf: &mut Buffer) {
    let footer_lines = footer(app, area.width);
    let [main, foot] = Layout::vertical([
        Constraint::Min(1),
        Constraint::Length(footer_lines.len() as u16),
    ])
    .areas(area);
    let selected = screens::selected_case_line(app);
    let lines = screens::case_lines(&app.file);
    let sel_index = lines.iter().position(|l| *l == selected);
    // The fields' column: the wide layout's right panel, or the whole width.
    let fields_w = if area.width >= 120 {
        usize::from(PANEL_W.saturating_sub(2))
    } else {
        usize::from(area.width)
    };
    let mut left = field_rows(app, &lines, selected, fields_w);
    let right = table_rows(app, &lines, selected);
    if area.width >= 120 {
        // The profile's targets, sampling advice and cautions under the drug fields.
        let panel = profile::panel(app, usize::from(PANEL_W).saturating_sub(3));
        if !panel.is_empty() {
            left.push((Line::raw(""), None));
            left.extend(panel.into_iter().map(|l| (l, None)));
        }
        let [l, r] =
            Layout::horizontal([Constraint::Min(1), Constraint::Length(PANEL_W)]).areas(main);
        scrolled(right, sel_index, l, buf);
        let r = Rect {
            x: r.x + 2,
            width: r.width.saturating_sub(2),
            ..r
        };
        scrolled(left, sel_index, r, buf);
    } else {
        let mut all = right;
        all.push((Line::raw(""), None));
        all.extend(left);
        scrolled(all, sel_index, main, buf);
    }
    Paragraph::new(footer_lines).render(foot, buf);
}

/// `text` cut to `room` characters, ending in `…` when cut.
fn cut(text: &str, room: usize) -> String {
    if text.chars().count() <= room {
        return text.to_string();
    }
    let mut out: String = text.chars().take(room.saturating_sub(1)).collect();
    out.push('…');
    out
}

fn scrolled(rows: Vec<Row>, sel: Option<usize>, area: Rect, buf: &mut Buffer) {
    let h = usize::from(area.height);
    let at = sel.and_then(|s| rows.iter().position(|(_, i)| *i == Some(s)));
    let offset = match at {
        Some(a) if a + 3 > h => (a + 3 - h).min(rows.len().saturating_sub(h)),
        _ => 0,
    };
    let shown: Vec<Line> = rows
        .into_iter()
        .skip(offset)
        .take(h)
        .map(|(l, _)| l)
        .collect();
    Paragraph::new(shown).render(area, buf);
}

fn index_of(lines: &[CaseLine], line: CaseLine) -> Option<usize> {
    lines.iter().position(|l| *l == line)
}

/// Body size and kidney function derived from the patient's fields, each with its formula.
fn derived(app: &App) -> Vec<String> {
    let Some(case) = app.figures.case.as_ref() else {
        return Vec::new();
    };
    let p = &case.patient;
    let size = crate::core::renal::body_size(p);
    let crcl = crate::core::renal::creatinine_clearance(p)
        .ok()
        .map(|c| c.ml_min);
    strings::derived_patient(size.ideal_kg, size.adjusted_kg, size.bmi, crcl)
}

/// The patient, drug, clock and switch fields, `width` columns wide at most.
fn field_rows(app: &App, lines: &[CaseLine], selected: CaseLine, width: usize) -> Vec<Row> {
    let mut out: Vec<Row> = vec![(Line::styled(strings::PATIENT, heading()), None)];
    let unit_now = app.file.drug.level_unit.clone().unwrap_or_default();
    let groups = PATIENT_FIELDS
        .iter()
        .chain(DRUG_FIELDS.iter())
        .chain(CLOCK_FIELDS.iter())
        .chain(SWITCH_FIELDS.iter());
    for (i, f) in groups.enumerate() {
        let heading_here = match i {
            i if i == PATIENT_FIELDS.len() => Some(strings::DRUG),
            i if i == PATIENT_FIELDS.len() + DRUG_FIELDS.len() => Some(strings::CLOCK),
            i if i == PATIENT_FIELDS.len() + DRUG_FIELDS.len() + CLOCK_FIELDS.len() => {
                Some(strings::SWITCH)
            }
            _ => None,
        };
        if i == PATIENT_FIELDS.len() {
            for l in derived(app) {
                out.push((Line::styled(l, quiet()), None));
            }
        }
        if let Some(h) = heading_here {
            out.push((Line::styled(h, heading()), None));
        }
        let line = CaseLine::Field(*f);
        let is_sel = selected == line;
        let shown = or_dash(f.text(&app.file));
        let (label, unit) = strings::field_label(*f);
        // The strategy's label beside its name, cut to the room left on the line.
        let strategy_label = (*f == Field::Strategy)
            .then(|| screens::strategy_in_force(app))
            .flatten()
            .map(|(label, is_default)| {
                let room = width.saturating_sub(2 + 15 + shown.chars().count() + 1);
                cut(&strings::strategy_shown(&label, is_default), room)
            });
        // Likewise the population model's label beside its name.
        let model_label = (*f == Field::Model)
            .then(|| screens::model_in_force(app))
            .flatten()
            .map(|(label, is_default)| {
                let room = width.saturating_sub(2 + 15 + shown.chars().count() + 1);
                cut(&strings::model_shown(&label, is_default), room)
            });
        let unit = match (*f, &strategy_label, &model_label) {
            (Field::SwitchBelow, _, _) => unit_now.as_str(),
            (Field::Strategy, Some(l), _) | (Field::Model, _, Some(l)) => l.as_str(),
            _ => unit,
        };
        out.push((
            field_line(app, *f, label, 14, shown, unit, is_sel),
            index_of(lines, line),
        ));
    }
    out
}

fn cell(app: &App, field: Field, text: String, width: usize, is_sel: bool) -> Vec<Span<'static>> {
    let padded = format!("{text:<width$}");
    let mut spans = widgets::value_spans(app, field, padded, is_sel);
    spans.push(Span::raw(" "));
    spans
}

fn row_problem(app: &App, cols: &[Field]) -> Option<String> {
    cols.iter().find_map(|f| widgets::problem_for(app, *f))
}

fn table_rows(app: &App, lines: &[CaseLine], selected: CaseLine) -> Vec<Row> {
    let col = app.cursors.case_col;
    let unit = app.file.drug.level_unit.clone().unwrap_or_default();
    let mut out: Vec<Row> = vec![(Line::styled(strings::DOSES, heading()), None)];
    let head = |names: &[&str], widths: &[usize]| {
        let mut s = String::from("  ");
        for (n, w) in names.iter().zip(widths) {
            s.push_str(&format!("{n:<w$} "));
        }
        Line::styled(s, quiet())
    };
    out.push((head(&strings::DOSE_COLUMNS, &DOSE_W), None));
    for i in 0..app.file.doses.len() {
        let line = CaseLine::Dose(i);
        let is_row = selected == line;
        let cols = fields::dose_columns(i);
        let d = &app.file.doses[i];
        let texts = [
            Field::DoseTime(i).text(&app.file),
            d.amount_mg
                .map(|a| format!("{} mg", num(a)))
                .unwrap_or("—".into()),
            d.route.clone(),
            d.infusion_h
                .map(|h| format!("{} h", num(h)))
                .unwrap_or("—".into()),
            d.bioavailability.map(num).unwrap_or("—".into()),
        ];
        let mut spans = vec![
            Span::raw(if is_row { "▸ " } else { "  " }),
            Span::styled(format!("{:<w$} ", i + 1, w = DOSE_W[0]), quiet()),
        ];
        for (c, (f, t)) in cols.iter().zip(texts).enumerate() {
            spans.extend(cell(app, *f, t, DOSE_W[c + 1], is_row && col == c));
        }
        if let Some(p) = row_problem(app, &cols) {
            spans.push(Span::styled(format!("✗ {p}"), problem_style()));
        } else if rows::dose_far_below(&app.file, i).is_some() {
            spans.push(Span::styled(strings::DOSE_FAR_BELOW_MARK, problem_style()));
        }
        out.push((Line::from(spans), index_of(lines, line)));
    }
    let add = |line: CaseLine, text: &str| -> Row {
        let is_sel = selected == line;
        let style = if is_sel { widgets::selected() } else { quiet() };
        (
            Line::from(vec![
                Span::raw(if is_sel { "▸ " } else { "  " }),
                Span::styled(text.to_string(), style),
            ]),
            index_of(lines, line),
        )
    };
    out.push(add(CaseLine::AddDose, strings::ADD_DOSE));
    out.push((
        Line::styled(strings::levels_heading(&unit), heading()),
        None,
    ));
    out.push((head(&strings::LEVEL_COLUMNS, &LEVEL_W), None));
    for i in 0..app.file.levels.len() {
        let line = CaseLine::Level(i);
        let is_row = selected == line;
        let cols = fields::level_columns(i);
        let l = &app.file.levels[i];
        let texts = [
            Field::LevelTime(i).text(&app.file),
            if l.below_limit {
                format!("<{}", num(l.value))
            } else {
                num(l.value)
            },
            Field::LevelUse(i).text(&app.file),
            l.note.clone().unwrap_or_default(),
        ];
        let mut spans = vec![
            Span::raw(if is_row { "▸ " } else { "  " }),
            Span::styled(format!("{:<w$} ", i + 1, w = LEVEL_W[0]), quiet()),
        ];
        for (c, (f, t)) in cols.iter().zip(texts).enumerate() {
            let editing = widgets::editor_on(app, *f).is_some();
            // The note takes the room it needs; the other cells keep their width.
            let w = if c == 3 && !editing {
                t.chars().count().max(LEVEL_W[4])
            } else {
                LEVEL_W[c + 1]
            };
            spans.extend(cell(app, *f, t, w, is_row && col == c));
        }
        if let Some(p) = row_problem(app, &cols) {
            spans.push(Span::styled(format!("✗ {p}"), problem_style()));
        }
        out.push((Line::from(spans), index_of(lines, line)));
    }
    out.push(add(CaseLine::AddLevel, strings::ADD_LEVEL));
    // Haemodialysis sessions, read-only here: marked on the course, not modelled.
    if let Some(case) = app
        .figures
        .case
        .as_ref()
        .filter(|c| !c.dialysis_sessions.is_empty())
    {
        out.push((Line::styled(strings::DIALYSIS_SESSIONS, heading()), None));
        for s in &case.dialysis_sessions {
            let end = case
                .stamp(s.end())
                .map_or(String::new(), |e| e.weekday_time());
            out.push((
                Line::styled(
                    strings::dialysis_session_row(
                        s.row,
                        &s.start.readable(false),
                        &end,
                        &num(s.duration_h),
                    ),
                    quiet(),
                ),
                None,
            ));
        }
    }
    out
}

/// Under the tables: the problem with the case, or the fit in one line.
fn footer(app: &App, width: u16) -> Vec<Line<'static>> {
    let w = usize::from(width);
    let mut out = Vec::new();
    if let Some(e) = &app.load_error {
        for l in widgets::wrap(&format!("{} {e}", strings::COULD_NOT_OPEN), w)
            .into_iter()
            .take(3)
        {
            out.push(Line::styled(l, problem_style()));
        }
    } else if let Some(p) = &app.figures.problem {
        let style = if p.invalid_case {
            problem_style()
        } else {
            Style::new()
        };
        let lead = if p.invalid_case {
            strings::CASE_PROBLEM
        } else {
            strings::NO_FIT_YET
        };
        for l in widgets::wrap(&format!("{lead} {}", p.text), w)
            .into_iter()
            .take(3)
        {
            out.push(Line::styled(l, style));
        }
    } else if let Some(r) = &app.figures.report {
        for l in widgets::wrap(&strings::fit_summary(r), w)
            .into_iter()
            .take(2)
        {
            out.push(Line::styled(l, heading()));
        }
    }
    out
}
