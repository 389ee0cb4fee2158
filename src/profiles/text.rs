//! Profiles for people: the list, one profile in full, the note under a report, and the
//! refusal report for a drug whose kinetics are not first-order.

use std::io::{self, Write};

use crate::core::case::Case;
use crate::core::clock::span_words;
use crate::core::report::{num, CAUTION};
use crate::core::units::auc_unit;
use crate::profiles::schema::{Estimate, FirstOrder, Sourced, SourcedRange};
use crate::profiles::{refusal, Catalog, Entry};

/// `ebb profiles`: one line per profile with where it came from.
///
/// # Errors
/// Only the writer's errors.
pub fn write_list(w: &mut dyn Write, cat: &Catalog) -> io::Result<()> {
    let width = cat
        .entries()
        .iter()
        .map(|e| e.name.len())
        .max()
        .unwrap_or(4)
        .max(4);
    let dwidth = cat
        .entries()
        .iter()
        .map(|e| e.profile.display_name.chars().count())
        .max()
        .unwrap_or(12)
        .max(12);
    writeln!(
        w,
        "{:<width$}  {:<dwidth$}  {:<7}  from",
        "name", "display name", "unit"
    )?;
    for e in cat.entries() {
        writeln!(
            w,
            "{:<width$}  {:<dwidth$}  {:<7}  {}",
            e.name,
            e.profile.display_name,
            e.profile.level_unit,
            e.origin.words()
        )?;
    }
    Ok(())
}

fn range(r: &SourcedRange, unit: &str) -> String {
    let body = if r.low == r.high {
        format!("{}{unit} {}", num(r.low), r.source)
    } else {
        format!("{}–{}{unit} {}", num(r.low), num(r.high), r.source)
    };
    match &r.note {
        Some(n) => format!("{body}; {n}"),
        None => body,
    }
}

fn one(s: &Sourced, unit: &str) -> String {
    let body = format!("{}{unit} {}", num(s.value), s.source);
    match &s.note {
        Some(n) => format!("{body}; {n}"),
        None => body,
    }
}

fn estimate(e: &Estimate, unit: &str) -> String {
    let cv = e
        .cv_percent
        .map(|c| format!(" (CV {} %)", num(c)))
        .unwrap_or_default();
    let body = format!("{}{unit}{cv} {}", num(e.value), e.source);
    match &e.note {
        Some(n) => format!("{body}; {n}"),
        None => body,
    }
}

/// `ebb profiles show NAME`: the whole profile in plain words, every number with its source.
///
/// # Errors
/// Only the writer's errors.
pub fn write_show(w: &mut dyn Write, e: &Entry) -> io::Result<()> {
    let p = &e.profile;
    let u = format!(" {}", p.level_unit);
    writeln!(w, "{} ({}; {})", p.display_name, e.name, e.origin.words())?;
    writeln!(w)?;
    writeln!(w, "level unit          {}", p.level_unit)?;
    if let Some(m) = &p.molar_mass_g_mol {
        writeln!(w, "molar mass          {}", one(m, " g/mol"))?;
    }
    writeln!(w, "half-life (adult)   {}", range(&p.half_life_h, " h"))?;
    writeln!(
        w,
        "volume              {}",
        range(&p.volume.l_per_kg, " L/kg")
    )?;
    writeln!(
        w,
        "  of                {}: {}",
        p.volume.weight.words(),
        p.volume.weight_source
    )?;
    match &p.bioavailability {
        Some(f) => writeln!(w, "oral F              {}", one(f, ""))?,
        None => writeln!(w, "oral F              none (not given by mouth)")?,
    }
    for (i, a) in p.absorption.iter().enumerate() {
        let lag = a
            .lag_h
            .as_ref()
            .map(|l| format!("; lag {}", one(l, " h")))
            .unwrap_or_default();
        writeln!(
            w,
            "{}{}{}: ka {}{lag}",
            if i == 0 {
                "oral absorption     "
            } else {
                "                    "
            },
            a.formulation,
            if i == 0 { " (default)" } else { "" },
            one(&a.ka_per_h, " /h")
        )?;
    }
    if p.absorption.is_empty() && p.bioavailability.is_some() {
        writeln!(
            w,
            "oral absorption     no rate known: oral doses are modelled as instant"
        )?;
    }
    match &p.level_valid_after_h {
        Some(v) => writeln!(
            w,
            "levels valid from   {}",
            one(v, " h after the end of a dose")
        )?,
        None => writeln!(w, "levels valid from   no minimum given; see sampling")?,
    }
    let fo = match p.kinetics.first_order {
        FirstOrder::Yes => "yes",
        FirstOrder::Partly => "partly",
        FirstOrder::No => "NO (first-order projections are refused)",
    };
    writeln!(
        w,
        "first-order         {fo}: {} {}",
        p.kinetics.why, p.kinetics.source
    )?;
    if let Some(r) = &p.dose_rounding_mg {
        writeln!(w, "dose rounding       {}", one(r, " mg"))?;
    }
    if let Some(l) = &p.usual_intervals_h {
        let vals: Vec<String> = l.values.iter().map(|v| num(*v)).collect();
        let note = l
            .note
            .as_ref()
            .map(|n| format!("; {n}"))
            .unwrap_or_default();
        writeln!(
            w,
            "usual intervals     {} h {}{note}",
            vals.join(", "),
            l.source
        )?;
    }
    writeln!(w)?;
    writeln!(w, "Strategies (default: {}):", p.default_strategy)?;
    for s in &p.strategies {
        let mark = if s.name == p.default_strategy {
            " [default]"
        } else {
            ""
        };
        writeln!(w, "  {} — {}{mark}", s.name, s.label)?;
        if let Some(r) = &s.peak {
            writeln!(w, "    peak        {}", range(r, &u))?;
        }
        if let Some(t) = &s.trough_max {
            writeln!(w, "    trough max  {}", one(t, &u))?;
        }
        if let Some(a) = &s.auc24 {
            writeln!(w, "    AUC24       {}", range(a, &auc_unit(&u)))?;
        }
        if let Some(r) = &s.range {
            writeln!(w, "    range       {} (shown, not checked)", range(r, &u))?;
        }
        if let Some(r) = &s.pre_dialysis {
            writeln!(w, "    pre-dialysis {}", range(r, &u))?;
        }
        if let Some(r) = &s.dose_after_session {
            let note = r
                .note
                .as_deref()
                .map(|n| format!("; {n}"))
                .unwrap_or_default();
            writeln!(
                w,
                "    dosing      after each haemodialysis session {}{note}",
                r.source
            )?;
        }
        writeln!(w, "    sampling    {}", s.sampling)?;
        if let Some(n) = &s.note {
            writeln!(w, "    note        {n}")?;
        }
    }
    if let Some(pop) = &p.population {
        let est = pop.estimates();
        if !est.is_empty() {
            writeln!(w)?;
            writeln!(w, "Population values (for later Bayesian work):")?;
            for (name, e) in est {
                writeln!(w, "  {name:<18} {}", estimate(e, ""))?;
            }
        }
    }
    let models = crate::profiles::models_of(p);
    if !models.is_empty() {
        let default = crate::profiles::default_model_name(p);
        writeln!(w)?;
        writeln!(
            w,
            "Population models (a case chooses with [fit] model; default: {}):",
            default.as_deref().unwrap_or("none")
        )?;
        for m in &models {
            let mark = if Some(&m.name) == default.as_ref() {
                "*"
            } else {
                " "
            };
            let n = m.compartments();
            writeln!(
                w,
                "  {mark} {:<16} {} ({n} compartment{})",
                m.name,
                m.label,
                if n == 1 { "" } else { "s" }
            )?;
        }
        if let (true, Some(r)) = (models.len() > 1, &p.default_model_reason) {
            writeln!(w, "    the default because {r}")?;
        }
    }
    writeln!(w)?;
    writeln!(w, "Cautions:")?;
    for c in &p.cautions {
        writeln!(w, "  - {c}")?;
    }
    writeln!(w)?;
    writeln!(w, "Sources:")?;
    for (k, v) in &p.sources {
        writeln!(w, "  [{k}] {v}")?;
    }
    Ok(())
}

/// The short block written under a report: which profile, its default strategy, its cautions.
///
/// # Errors
/// Only the writer's errors.
pub fn write_profile_note(w: &mut dyn Write, e: &Entry, strategy: Option<&str>) -> io::Result<()> {
    let p = &e.profile;
    writeln!(w)?;
    let chosen = strategy
        .and_then(|n| p.strategy(n))
        .filter(|s| s.name != p.default_strategy);
    match chosen {
        Some(s) => writeln!(
            w,
            "Drug profile: {} ({}, {}); strategy \"{}\" chosen by the case (drug.strategy); its targets unless the case has [targets]",
            p.display_name,
            e.name,
            e.origin.words(),
            s.name
        )?,
        None => writeln!(
            w,
            "Drug profile: {} ({}, {}); default targets from strategy \"{}\" unless the case has [targets]",
            p.display_name,
            e.name,
            e.origin.words(),
            p.default_strategy
        )?,
    }
    if let Some(s) = chosen.or_else(|| p.default_strategy()) {
        writeln!(w, "  sampling: {}", s.sampling)?;
        if let Some(r) = &s.range {
            writeln!(w, "  range: {}", range(r, &format!(" {}", p.level_unit)))?;
        }
    }
    writeln!(w, "Cautions:")?;
    for c in &p.cautions {
        writeln!(w, "  - {c}")?;
    }
    Ok(())
}

/// The report for a drug whose kinetics are not first-order: the caution, the reason the
/// projections are refused, and the measured levels.
///
/// # Errors
/// Only the writer's errors.
pub fn write_refusal(w: &mut dyn Write, case: &Case, e: &Entry) -> io::Result<()> {
    let p = &e.profile;
    let u = case.drug.scale.unit.as_str();
    writeln!(w, "CAUTION: {CAUTION}")?;
    writeln!(w)?;
    let title = match (&case.patient.label, case.drug.name.as_str()) {
        (Some(l), "") => format!("{l} — {}", p.display_name),
        (Some(l), d) => format!("{l} — {d}"),
        (None, "") => p.display_name.clone(),
        (None, d) => d.to_string(),
    };
    writeln!(w, "ebb report: {title} (levels in {u})")?;
    writeln!(w)?;
    let why = refusal(p).unwrap_or_default();
    writeln!(w, "NO PROJECTION: {why}.")?;
    writeln!(w)?;
    writeln!(w, "Measured levels:")?;
    if case.levels.is_empty() {
        writeln!(w, "  none on record")?;
    }
    for l in &case.levels {
        let since = case
            .doses
            .iter()
            .rev()
            .find(|d| d.t < l.t)
            .map(|d| {
                let after = l.t - d.end();
                if after < 0.0 {
                    format!("during dose {}", d.row)
                } else {
                    format!("{} after the end of dose {}", span_words(after), d.row)
                }
            })
            .unwrap_or_else(|| "before any dose".into());
        let used = if l.use_in_fit { "" } else { "  (use = false)" };
        let note = l
            .note
            .as_ref()
            .map(|n| format!("  {n}"))
            .unwrap_or_default();
        writeln!(
            w,
            "  level {:<3} {}  {} {u}  {since}{used}{note}",
            l.row,
            l.time.readable(false),
            num(l.value)
        )?;
    }
    if let Some(s) = p.default_strategy() {
        if let Some(r) = &s.range {
            writeln!(w)?;
            writeln!(
                w,
                "Range ({}): {}",
                s.label,
                range(r, &format!(" {}", p.level_unit))
            )?;
            writeln!(w, "  sampling: {}", s.sampling)?;
        }
    }
    writeln!(w)?;
    writeln!(w, "Cautions:")?;
    for c in &p.cautions {
        writeln!(w, "  - {c}")?;
    }
    Ok(())
}
