//! The command-line shell: read a case file, run the one analysis (`crate::analysis`), write
//! the report; nothing else.

use std::io::Write;
use std::path::Path;

use crate::analysis::{self, Analysis, Stop};
use crate::core::case::Case;
use crate::core::casefile::{self, CaseFile};
use crate::core::error::{Error, Result};
use crate::core::{json, report};
use crate::demo::{DEMO_CASE, DEMO_NAME};
use crate::profiles::{self, Catalog};

pub mod commands;
pub mod note;
pub mod out;
pub mod plot;

/// Run the analysis of a parsed case file, with the drug profile it names looked up once
/// among the built-ins and those of `profiles_dir`.
///
/// # Errors
/// Only a profile directory that cannot be read, or a broken profile file in it (its own
/// file, line and field named); every other problem is the analysis's `stop`.
pub fn analyse_parsed(file: &CaseFile, profiles_dir: Option<&Path>) -> Result<Analysis> {
    let catalog = Catalog::for_case(profiles_dir, file.drug.profile.as_deref())?;
    Ok(analysis::analyse(file, &catalog))
}

/// Read a case file and run the analysis (see `analyse_parsed`).
///
/// # Errors
/// A file that cannot be read or parsed, or a broken profile directory, with the file name
/// in front.
pub fn analyse_file(path: &Path, profiles_dir: Option<&Path>) -> Result<Analysis> {
    let file = casefile::read(path)?;
    analyse_parsed(&file, profiles_dir).map_err(|e| e.in_file(path.display().to_string()))
}

/// Run the analysis of the built-in demo case (with its drug profile).
///
/// # Errors
/// None in practice: the demo is tested.
pub fn analyse_demo(profiles_dir: Option<&Path>) -> Result<Analysis> {
    CaseFile::parse(DEMO_CASE)
        .and_then(|f| analyse_parsed(&f, profiles_dir))
        .map_err(|e| e.in_file(DEMO_NAME))
}

/// Load and validate a case from a file, with the defaults of the drug profile it names
/// (among the built-ins and the `EBB_PROFILES` directory).
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

/// Validate a parsed case with the defaults of the drug profile it names (the first steps
/// of the analysis).
///
/// # Errors
/// The first invalid field; an unknown profile at `drug.profile`; a broken profile file.
pub fn validate_with_profile(file: &CaseFile, profiles_dir: Option<&Path>) -> Result<Case> {
    let catalog = Catalog::for_case(profiles_dir, file.drug.profile.as_deref())?;
    analysis::validate(file, &catalog).map(|(case, _)| case)
}

/// Write the report of an analysis, text or JSON, to `out`.
///
/// A drug whose profile refuses first-order projections (phenytoin): the text report shows
/// the reason and the measured levels; the JSON report, whose fields cannot be filled
/// honestly, is an error at `drug.profile` (exit status 2, nothing on stdout).
///
/// # Errors
/// The step that stopped the analysis, with `name` in front; a write error.
pub fn write_report(out: &mut dyn Write, a: &Analysis, name: &str, as_json: bool) -> Result<()> {
    let output = |e: std::io::Error| Error::invalid("output", e.to_string());
    if let (None, Some(case), Some(sat)) = (&a.stop, &a.case, &a.saturable) {
        let written = if as_json {
            writeln!(out, "{}", json::saturable_to_json(case, &sat.report))
        } else {
            crate::core::saturable_report::write_text(out, case, &sat.report, &sat.params).and_then(
                |()| match &a.profile {
                    Some(e) => {
                        profiles::write_profile_note(out, e, case.regimen.strategy.as_deref())
                    }
                    None => Ok(()),
                },
            )
        };
        return written.map_err(output);
    }
    match (&a.stop, &a.case, &a.profile, &a.report) {
        (Some(Stop::Refused(_)), Some(case), Some(entry), _) if !as_json => {
            profiles::write_refusal(out, case, entry).map_err(output)
        }
        (Some(stop), ..) => Err(stop.to_error(a.profile.as_ref()).in_file(name)),
        (None, Some(case), profile, Some(r)) => {
            let written = if as_json {
                writeln!(out, "{}", json::to_json(r))
            } else {
                report::write_text(out, case, r).and_then(|()| match profile {
                    Some(e) => {
                        profiles::write_profile_note(out, e, case.regimen.strategy.as_deref())
                    }
                    None => Ok(()),
                })
            };
            written.map_err(output)
        }
        _ => Err(Error::Fit("the analysis did not finish".into()).in_file(name)),
    }
}
