//! The record note: a plain-text or Markdown note of one case to paste into a patient record,
//! written with the report's own number and time formatters so its figures match the report.

use std::io::{self, Write};

use crate::core::case::{Case, Sex};
use crate::core::report::{self, num, Report};
use crate::core::text;
use crate::core::units::auc_unit;

/// How the note is laid out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoteFormat {
    /// Plain text, for any record system.
    Text,
    /// Markdown (headings, tables, a fenced results block).
    Markdown,
}

impl NoteFormat {
    /// Markdown for a path ending in `.md` or `.markdown`, else plain text.
    pub fn for_path(path: &std::path::Path) -> Self {
        match path.extension().and_then(|e| e.to_str()) {
            Some(e) if e.eq_ignore_ascii_case("md") || e.eq_ignore_ascii_case("markdown") => {
                NoteFormat::Markdown
            }
            _ => NoteFormat::Text,
        }
    }
}

/// Who made the note and when (passed in, so a note can be reproduced in tests).
#[derive(Debug, Clone, PartialEq)]
pub struct NoteMeta {
    /// When the note was made, as the user's clock shows it.
    pub made_at: String,
    /// The tool's version.
    pub version: String,
    /// The case file's name, as given.
    pub source: String,
}

/// The published name of the fit, for the note.
fn method_words(method: &str) -> String {
    match method {
        "two-point" => "two-point log-linear elimination rate, k = ln(C1/C2)/(t2 - t1) (Sawchuk-Zaske one-compartment method)".into(),
        "log-linear" => "log-linear regression: ordinary least squares of ln(level) on time, with the 95 % interval of k from Student's t".into(),
        "dose-history" => "dose-history fit: weighted nonlinear least squares (Levenberg-Marquardt) of ln(level) against the superposition of the whole dose record, k and V together, 95 % intervals from the asymptotic covariance".into(),
        "bayesian" => "Bayesian maximum a posteriori (MAP) estimate: the drug profile's published population model (log-normal between-patient variability, its residual error model) updated by the levels; 95 % intervals by the Laplace approximation".into(),
        "population" => "population model alone (a-priori): the typical values of the drug profile's published population model for this patient's covariates; ranges are the population's 90 % range, not a measurement".into(),
        other => format!("{other} fit"),
    }
}

fn volume_words(method: Option<&str>, pre_row: Option<usize>, fixed: bool) -> String {
    if fixed && method == Some("bayesian") {
        return "volume: the population model's typical value (the model gives it no between-patient variability, so the levels do not move it)".into();
    }
    match (method, pre_row) {
        (Some("pre-dose level"), Some(r)) => format!(
            "volume by the Sawchuk-Zaske one-compartment infusion equation with pre-dose level {r}"
        ),
        (Some("dose record"), _) => {
            "volume by superposition of the whole dose record at the first fitted level".into()
        }
        (Some("dose-history"), _) => {
            "volume fitted together with k from every level (dose-history fit)".into()
        }
        (Some("bayesian"), _) => "volume estimated together with k (Bayesian MAP)".into(),
        (Some("population"), _) => "volume: the population model's typical value".into(),
        (Some(m), _) => format!("volume by {m}"),
        (None, _) => "no volume (dose amounts not known)".into(),
    }
}

/// Why a level is or is not in the fit, in a few words.
fn level_use(case: &Case, r: &Report, i: usize) -> String {
    let l = &case.levels[i];
    if r.fit.level_rows.contains(&l.row) {
        "in the fit".into()
    } else if r.fit.pre_dose_row == Some(l.row) {
        "pre-dose level, used for the volume".into()
    } else if l.below_limit {
        "below the assay's limit: left out of the fit".into()
    } else if !l.use_in_fit {
        "left out by the user (use = false)".into()
    } else {
        "not in the fitted dosing interval".into()
    }
}

/// The note as a string.
pub fn note_text(case: &Case, r: &Report, meta: &NoteMeta, format: NoteFormat) -> String {
    let mut buf = Vec::new();
    // Writing to a Vec cannot fail.
    let _ = write_note(&mut buf, case, r, meta, format);
    String::from_utf8_lossy(&buf).into_owned()
}

/// Write the note to `w`.
///
/// # Errors
/// Only the writer's errors.
pub fn write_note(
    w: &mut dyn Write,
    case: &Case,
    r: &Report,
    meta: &NoteMeta,
    format: NoteFormat,
) -> io::Result<()> {
    let md = format == NoteFormat::Markdown;
    let u = r.unit.as_str();
    let heading = |w: &mut dyn Write, text: &str| -> io::Result<()> {
        if md {
            writeln!(w, "## {text}\n")
        } else {
            writeln!(
                w,
                "{}\n{}",
                text.to_uppercase(),
                "-".repeat(text.chars().count())
            )
        }
    };
    let free = |s: &str| free_text(md, s);
    let drug = if case.drug.name.is_empty() {
        "drug not named".to_string()
    } else {
        free(&case.drug.name)
    };
    let item = write_head(
        w,
        md,
        &drug,
        report::caution_for(r.fit.compartments).0,
        meta,
        &free,
    )?;
    write_patient(w, case, item, &free)?;
    if let Some(pr) = &case.drug.profile {
        writeln!(w, "{item}Drug profile: {}", free(pr))?;
    }
    writeln!(w, "{item}Levels in {u}")?;
    writeln!(w)?;

    heading(w, "Doses given")?;
    if md {
        writeln!(w, "| dose | time | amount | route |\n|---|---|---|---|")?;
    }
    for d in &case.doses {
        let amount = d
            .amount_mg
            .map_or("not known".into(), |a| format!("{} mg", num(a)));
        let route = crate::core::advice::route_of(d.route);
        if md {
            writeln!(
                w,
                "| {} | {} | {amount} | {route} |",
                d.row,
                d.time.readable(true)
            )?;
        } else {
            writeln!(
                w,
                "  dose {}  {}  {amount}  {route}",
                d.row,
                d.time.readable(true)
            )?;
        }
    }
    writeln!(w)?;
    heading(w, "Levels measured")?;
    if md {
        writeln!(
            w,
            "| level | time | value | use | note |\n|---|---|---|---|---|"
        )?;
    }
    for (i, l) in case.levels.iter().enumerate() {
        let why = level_use(case, r, i);
        let note = free(l.note.as_deref().unwrap_or(""));
        if md {
            writeln!(
                w,
                "| {} | {} | {} {u} | {why} | {note} |",
                l.row,
                l.time.readable(true),
                l.value_words()
            )?;
        } else {
            let tail = if note.is_empty() {
                String::new()
            } else {
                format!("  ({note})")
            };
            writeln!(
                w,
                "  level {}  {}  {} {u}  {why}{tail}",
                l.row,
                l.time.readable(true),
                l.value_words()
            )?;
        }
    }
    writeln!(w)?;
    if let Some(d) = &r.dialysis {
        write_sessions(w, md, d, &heading)?;
    }

    heading(w, "Method")?;
    match &r.fit.peripheral {
        Some(pe) => writeln!(
            w,
            "{item}Linear two-compartment model, first-order elimination (distribution half-life {} h; k and half-life are the terminal phase's; the levels may be drawn in the distribution phase)",
            num(pe.distribution_half_life_h)
        )?,
        None => writeln!(
            w,
            "{item}Linear one-compartment model, first-order elimination"
        )?,
    }
    let routes = || {
        case.doses
            .iter()
            .map(|d| d.route)
            .chain(case.plan.as_ref().map(|p| p.route))
    };
    let rates: Vec<String> =
        routes()
            .filter_map(|r| r.absorption())
            .fold(Vec::new(), |mut seen, a| {
                let words = if a.lag_h > 0.0 {
                    format!("ka {} /h, lag {} h", num(a.ka_per_h), num(a.lag_h))
                } else {
                    format!("ka {} /h", num(a.ka_per_h))
                };
                if !seen.contains(&words) {
                    seen.push(words);
                }
                seen
            });
    if !rates.is_empty() {
        writeln!(
            w,
            "{item}Oral doses absorbed first-order ({}, from the drug profile)",
            rates.join("; ")
        )?;
    }
    if routes().any(|r| r.is_instant_oral()) {
        writeln!(
            w,
            "{item}Oral doses modelled as instant (no absorption rate known)"
        )?;
    }
    writeln!(w, "{item}k: {}", method_words(r.fit.method))?;
    writeln!(
        w,
        "{item}{}",
        volume_words(
            r.fit.volume_method,
            r.fit.pre_dose_row,
            r.fit
                .population
                .as_ref()
                .is_some_and(|s| s.prior_share[1].is_none()),
        )
    )?;
    writeln!(
        w,
        "{item}Projections by superposition of single-dose responses"
    )?;
    if r.advice.auc24.is_some() {
        writeln!(
            w,
            "{item}AUC24 from two levels by the {}",
            crate::core::advice::TRAPEZOID_METHOD
        )?;
    }
    let t = &case.targets;
    if !t.is_empty() {
        let mut parts = Vec::new();
        if let Some([a, b]) = t.peak {
            parts.push(format!("peak {}–{} {u}", num(a), num(b)));
        }
        if let Some(m) = t.trough_max {
            parts.push(format!("trough <= {} {u}", num(m)));
        }
        if let Some([a, b]) = t.auc24 {
            parts.push(format!("AUC24 {}–{} {}", num(a), num(b), auc_unit(u)));
        }
        writeln!(w, "{item}Targets: {}", parts.join(", "))?;
    }
    if let Some(sw) = &case.switch {
        writeln!(w, "{item}Switch planned to {}", free(&sw.to))?;
    }
    writeln!(w)?;

    heading(w, "Results")?;
    // The report itself, so every figure is the report's, formatted once.
    let mut body = Vec::new();
    report::write_text(&mut body, case, r)?;
    let body = String::from_utf8_lossy(&body);
    // The caution is already at the top of the note.
    let body = body
        .split_once("\n\n")
        .map_or(body.as_ref(), |(_, rest)| rest)
        .trim_end();
    if md {
        // A fence longer than any run of backticks in the body, so no text inside can
        // close it (CommonMark, fenced code blocks).
        let run = body.split(|c| c != '`').map(str::len).max().unwrap_or(0);
        let fence = "`".repeat(run.max(2) + 1);
        writeln!(w, "{fence}text")?;
        for line in body.lines() {
            writeln!(w, "{}", text::printable(line))?;
        }
        writeln!(w, "{fence}")?;
    } else {
        for line in body.lines() {
            let line = text::printable(line);
            if line.is_empty() {
                writeln!(w)?;
            } else {
                writeln!(w, "  {line}")?;
            }
        }
    }
    writeln!(w)?;
    writeln!(
        w,
        "{item}Checked by: ______________________   Date/time: ______________"
    )?;
    Ok(())
}

/// The haemodialysis sessions on the course, with clock times, and the sentence that they are
/// marked, not modelled.
fn write_sessions(
    w: &mut dyn Write,
    md: bool,
    d: &crate::core::dialysis::DialysisSection,
    heading: &dyn Fn(&mut dyn Write, &str) -> io::Result<()>,
) -> io::Result<()> {
    heading(w, "Dialysis sessions")?;
    let indent = if md { "" } else { "  " };
    writeln!(w, "{indent}{}", crate::core::dialysis::NOT_MODELLED)?;
    writeln!(w)?;
    if md {
        writeln!(w, "| session | start | end | hours |\n|---|---|---|---|")?;
    }
    for s in &d.sessions {
        if md {
            writeln!(
                w,
                "| {} | {} | {} | {} |",
                s.row,
                s.start.readable(true),
                s.end.readable(true),
                num(s.duration_h)
            )?;
        } else {
            writeln!(
                w,
                "  session {}  {} to {}  {} h",
                s.row,
                s.start.readable(true),
                s.end.readable(true),
                num(s.duration_h)
            )?;
        }
    }
    writeln!(w)
}

/// Free text from the file is data: escaped for Markdown, or made printable for plain text,
/// so it can neither start a line nor become markup.
fn free_text(md: bool, s: &str) -> String {
    if md {
        text::markdown(s)
    } else {
        text::printable(s).into_owned()
    }
}

/// The note's first lines: its title, the caution, and who made it from what; returns the
/// list-item prefix of the format.
fn write_head(
    w: &mut dyn Write,
    md: bool,
    drug: &str,
    caution: &str,
    meta: &NoteMeta,
    free: &dyn Fn(&str) -> String,
) -> io::Result<&'static str> {
    if md {
        writeln!(w, "# Drug level note: {drug}\n")?;
        writeln!(w, "> **CAUTION:** {caution}\n")?;
    } else {
        writeln!(w, "DRUG LEVEL NOTE: {drug}\n")?;
        writeln!(w, "CAUTION: {caution}\n")?;
    }
    let item = if md { "- " } else { "  " };
    writeln!(
        w,
        "{item}Made {} with ebb {} from {}",
        free(&meta.made_at),
        free(&meta.version),
        free(&meta.source)
    )?;
    Ok(item)
}

/// The patient as recorded (label, covariates) and the body size and kidney function
/// derived from them.
fn write_patient(
    w: &mut dyn Write,
    case: &Case,
    item: &str,
    free: &dyn Fn(&str) -> String,
) -> io::Result<()> {
    let p = &case.patient;
    if let Some(l) = &p.label {
        writeln!(w, "{item}Patient: {}", free(l))?;
    }
    let mut facts = Vec::new();
    if let Some(x) = p.weight_kg {
        facts.push(format!("weight {} kg", num(x)));
    }
    if let Some(x) = p.age_years {
        facts.push(format!("age {} years", num(x)));
    }
    if let Some(s) = p.sex {
        facts.push(match s {
            Sex::Female => "female".to_string(),
            Sex::Male => "male".to_string(),
        });
    }
    // In the unit it was entered in, as the laboratory reported it.
    match (p.creatinine_umol_l, p.creatinine_mg_dl) {
        (Some(x), _) => facts.push(format!("creatinine {} umol/L", num(x))),
        (None, Some(x)) => facts.push(format!("creatinine {} mg/dL", num(x))),
        (None, None) => {}
    }
    if let Some(x) = p.height_cm {
        facts.push(format!("height {} cm", num(x)));
    }
    match (p.albumin_g_l, p.albumin_g_dl) {
        (Some(x), _) => facts.push(format!("albumin {} g/L", num(x))),
        (None, Some(x)) => facts.push(format!("albumin {} g/dL", num(x))),
        (None, None) => {}
    }
    if p.renal_failure == Some(true) {
        facts.push("renal failure".into());
    }
    match p.dialysis {
        Some(true) => facts.push("on intermittent haemodialysis".into()),
        Some(false) => facts.push("not on dialysis".into()),
        None => {}
    }
    let size = crate::core::renal::body_size(p);
    if let Some(x) = size.ideal_kg {
        facts.push(format!("ideal body weight {} kg (Devine)", num(x)));
    }
    if let Some(x) = size.adjusted_kg {
        facts.push(format!("adjusted body weight {} kg", num(x)));
    }
    if let Some(x) = size.bmi {
        facts.push(format!("BMI {}", num(x)));
    }
    if let Ok(c) = crate::core::renal::creatinine_clearance(p) {
        facts.push(format!(
            "creatinine clearance {} mL/min (Cockcroft-Gault, total weight)",
            num(c.ml_min)
        ));
    }
    if !facts.is_empty() {
        writeln!(w, "{item}{}", facts.join(", "))?;
    }
    Ok(())
}

/// Write the record note of a drug with saturable elimination (phenytoin): the saturable
/// caution, who made it, the patient, then the saturable report's body (in a fenced block in
/// Markdown, so nothing in it becomes markup).
///
/// # Errors
/// Only the writer's errors.
pub fn write_saturable_note(
    w: &mut dyn Write,
    case: &Case,
    r: &crate::core::saturable_report::SaturableReport,
    params: &crate::core::saturable_report::Params,
    meta: &NoteMeta,
    format: NoteFormat,
) -> io::Result<()> {
    use crate::core::saturable_report::{write_body, CAUTION as SATURABLE_CAUTION};
    let md = format == NoteFormat::Markdown;
    let free = |s: &str| free_text(md, s);
    let drug = if case.drug.name.is_empty() {
        free(&params.drug)
    } else {
        free(&case.drug.name)
    };
    let item = write_head(w, md, &drug, SATURABLE_CAUTION, meta, &free)?;
    write_patient(w, case, item, &free)?;
    writeln!(w)?;
    if md {
        writeln!(w, "```text")?;
    }
    write_body(w, case, r, params)?;
    if md {
        writeln!(w, "```")?;
    }
    Ok(())
}
