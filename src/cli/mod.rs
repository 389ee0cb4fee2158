//! The command-line shell: load a case, compute the report, write it; nothing else.

use std::io::Write;
use std::path::Path;

use crate::core::case::Case;
use crate::core::casefile::{self, CaseFile};
use crate::core::error::{Error, Result};
use crate::core::{json, report};
use crate::demo::{DEMO_CASE, DEMO_NAME};
use crate::profiles;

pub mod note;
pub mod plot;
pub mod store;

/// Load and validate a case from a file.
///
/// # Errors
/// Any read, parse or validation error, with the file name in front.
pub fn load_case(path: &Path) -> Result<Case> {
    load_case_with(path, profiles::override_dir(None).as_deref())
}

/// Load and validate a case, resolving its `drug.profile` among the built-in profiles and
/// those of `profiles_dir`: the profile supplies the molar mass, the oral bioavailability and
/// the default strategy's targets where the case is silent (the case's `[targets]` win).
///
/// # Errors
/// Any read, parse or validation error, with the file name in front; an unknown profile is
/// an error at `drug.profile`; a broken profile file names its own file, line and field.
pub fn load_case_with(path: &Path, profiles_dir: Option<&Path>) -> Result<Case> {
    let name = path.display().to_string();
    let file = casefile::read(path)?;
    validate_with_profile(&file, profiles_dir).map_err(|e| e.in_file(name))
}

/// Validate a parsed case, resolving its `drug.profile` among the built-in profiles and
/// those of `profiles_dir` for the defaults it supplies.
///
/// # Errors
/// The first invalid field; an unknown profile at `drug.profile`; a broken profile file.
pub fn validate_with_profile(file: &CaseFile, profiles_dir: Option<&Path>) -> Result<Case> {
    let defaults = match &file.drug.profile {
        None => casefile::Defaults::default(),
        Some(wanted) => {
            let catalog = profiles::Catalog::load_for(profiles_dir, wanted)?;
            let entry = catalog.lookup(wanted, "drug.profile")?;
            profiles::defaults_for_file(&entry.profile, file)
        }
    };
    file.validate_with(&defaults)
}

/// Load and validate the built-in demo case (with its drug profile).
///
/// # Errors
/// None in practice: the demo is tested.
pub fn load_demo() -> Result<Case> {
    CaseFile::parse(DEMO_CASE)
        .and_then(|f| validate_with_profile(&f, profiles::override_dir(None).as_deref()))
        .map_err(|e| e.in_file(DEMO_NAME))
}

/// Write the report of one case, text or JSON, to `out`.
///
/// # Errors
/// The fit's or the projection's errors, with `name` in front.
pub fn write_report(out: &mut dyn Write, case: &Case, name: &str, as_json: bool) -> Result<()> {
    write_report_with(
        out,
        case,
        name,
        as_json,
        profiles::override_dir(None).as_deref(),
    )
}

/// Write the report of one case, with its drug profile's warnings and cautions (the profile
/// is looked up among the built-ins and `profiles_dir`).
///
/// A profile whose kinetics are not first-order (phenytoin) refuses the projections: the
/// text report then shows the reason and the measured levels; the JSON report, whose fields
/// cannot be filled honestly, is an error at `drug.profile` (exit status 2, nothing on stdout).
///
/// # Errors
/// The fit's or the projection's errors, with `name` in front; an unknown profile; the
/// refusal above in JSON.
pub fn write_report_with(
    out: &mut dyn Write,
    case: &Case,
    name: &str,
    as_json: bool,
    profiles_dir: Option<&Path>,
) -> Result<()> {
    let output = |e: std::io::Error| Error::invalid("output", e.to_string());
    let catalog = catalog_for(case, profiles_dir)?;
    let entry = profile_entry(case, name, catalog.as_ref())?;
    if let (Some(e), false) = (entry, as_json) {
        if profiles::refusal(&e.profile).is_some() {
            return profiles::write_refusal(out, case, e).map_err(output);
        }
    }
    let r = report_for(case, name, entry)?;
    let written = if as_json {
        writeln!(out, "{}", json::to_json(&r))
    } else {
        report::write_text(out, case, &r).and_then(|()| match entry {
            Some(e) => profiles::write_profile_note(out, e),
            None => Ok(()),
        })
    };
    written.map_err(output)
}

/// The report of a case with its drug profile's warnings applied (the profile is looked up
/// among the built-ins and `profiles_dir`). This is the report the note and the JSON carry.
///
/// # Errors
/// The fit's or the projection's errors, with `name` in front; an unknown profile; a profile
/// whose kinetics are not first-order refuses the projections (an error at `drug.profile`).
pub fn report_with_profile(
    case: &Case,
    name: &str,
    profiles_dir: Option<&Path>,
) -> Result<report::Report> {
    let catalog = catalog_for(case, profiles_dir)?;
    let entry = profile_entry(case, name, catalog.as_ref())?;
    report_for(case, name, entry)
}

fn catalog_for(case: &Case, profiles_dir: Option<&Path>) -> Result<Option<profiles::Catalog>> {
    match &case.drug.profile {
        Some(wanted) => profiles::Catalog::load_for(profiles_dir, wanted).map(Some),
        None => Ok(None),
    }
}

fn profile_entry<'c>(
    case: &Case,
    name: &str,
    catalog: Option<&'c profiles::Catalog>,
) -> Result<Option<&'c profiles::Entry>> {
    match (&case.drug.profile, catalog) {
        (Some(wanted), Some(c)) => c
            .lookup(wanted, "drug.profile")
            .map(Some)
            .map_err(|e| e.in_file(name)),
        _ => Ok(None),
    }
}

fn report_for(case: &Case, name: &str, entry: Option<&profiles::Entry>) -> Result<report::Report> {
    if let Some(e) = entry {
        if let Some(why) = profiles::refusal(&e.profile) {
            return Err(Error::invalid(
                "drug.profile",
                format!(
                    "\"{}\": {why}; the report without --json lists the measured levels",
                    e.name
                ),
            )
            .in_file(name));
        }
    }
    let mut r = report::build(case).map_err(|e| e.in_file(name))?;
    if let Some(e) = entry {
        profiles::apply(&e.profile, case, &mut r);
    }
    Ok(r)
}
