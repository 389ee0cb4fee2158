//! Drug profiles: typical values, targets and cautions per drug, each number with its source;
//! built-ins embedded in the binary, overridden or extended by a local directory.
//!
//! A profile is a TOML file named by its stem (`gentamicin`, `valproic-acid`, …); its schema
//! is in `docs/profiles.md` and in [`schema`]. [`Catalog::load`] gathers the built-ins and the
//! files of an override directory (given by `--profiles DIR` or the `EBB_PROFILES` variable);
//! a file there replaces the built-in of the same stem or adds a new profile.
//!
//! This module reads files (the override directory); the core never does. It hands the core
//! what it needs as plain data: [`defaults_for`] gives `casefile::Defaults`, [`warnings`]
//! gives the profile's warnings for a built report.

mod builtin;
mod parse;
mod prior;
pub mod schema;
mod text;
mod warn;

use std::path::{Path, PathBuf};

use crate::core::case::Targets;
use crate::core::casefile::Defaults;
use crate::core::error::{Error, Result};
use crate::core::regimen::RegimenOptions;
use crate::core::units::LevelUnit;

pub use parse::parse_profile;
pub use prior::prior_of;
pub use schema::{FirstOrder, Profile, Strategy};
pub use text::{write_list, write_profile_note, write_refusal, write_show};
pub use warn::{apply, refusal, warnings};

/// The environment variable naming an override directory (used when `--profiles` is not given).
pub const ENV_VAR: &str = "EBB_PROFILES";

/// Where a profile came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Origin {
    /// Embedded in the binary (from `drug-profiles/` at build time).
    BuiltIn,
    /// A file in the override directory that replaces the built-in of the same stem.
    Replaces(PathBuf),
    /// A file in the override directory with no built-in of that stem.
    Local(PathBuf),
}

impl Origin {
    /// Plain words for listings: `built-in`, `DIR/x.toml (replaces the built-in)`, `DIR/x.toml (local)`.
    pub fn words(&self) -> String {
        match self {
            Origin::BuiltIn => "built-in".into(),
            Origin::Replaces(p) => format!("{} (replaces the built-in)", p.display()),
            Origin::Local(p) => format!("{} (local)", p.display()),
        }
    }
}

/// One profile with its name (file stem) and origin.
#[derive(Debug, Clone, PartialEq)]
pub struct Entry {
    /// The file stem, as a case's `drug.profile` names it.
    pub name: String,
    /// Where it came from.
    pub origin: Origin,
    /// The parsed, validated profile.
    pub profile: Profile,
    /// The TOML text as written (for `ebb profiles show NAME --toml`).
    pub text: String,
}

impl Entry {
    /// The name shown to people.
    pub fn display_name(&self) -> &str {
        &self.profile.display_name
    }

    /// The cautions in plain words.
    pub fn cautions(&self) -> &[String] {
        &self.profile.cautions
    }
}

/// A short description of one profile, for lists on screens.
#[derive(Debug, Clone, PartialEq)]
pub struct Summary {
    /// The file stem.
    pub name: String,
    /// The name shown to people.
    pub display_name: String,
    /// The level unit of the profile's ranges.
    pub level_unit: String,
    /// Where it came from, in words.
    pub origin: String,
    /// The cautions in plain words.
    pub cautions: Vec<String>,
}

/// Every profile available, sorted by name.
#[derive(Debug, Clone, PartialEq)]
pub struct Catalog {
    entries: Vec<Entry>,
}

/// The override directory to use: the `--profiles` value when given, else `EBB_PROFILES`
/// when set and not empty, else none.
pub fn override_dir(flag: Option<&Path>) -> Option<PathBuf> {
    match flag {
        Some(p) => Some(p.to_path_buf()),
        None => std::env::var_os(ENV_VAR)
            .filter(|v| !v.is_empty())
            .map(PathBuf::from),
    }
}

/// A built-in profile, parsed once per process (a report looks its profile up twice: to
/// validate the case and to write the report).
fn parsed_built_in(name: &str, text: &str) -> Result<Entry> {
    static PARSED: std::sync::Mutex<Vec<Entry>> = std::sync::Mutex::new(Vec::new());
    if let Some(e) = PARSED
        .lock()
        .ok()
        .and_then(|cache| cache.iter().find(|e| e.name == name).cloned())
    {
        return Ok(e);
    }
    let file = format!("drug-profiles/{name}.toml (built-in)");
    let entry = Entry {
        name: name.to_string(),
        origin: Origin::BuiltIn,
        profile: parse_profile(text, &file)?,
        text: text.to_string(),
    };
    if let Ok(mut cache) = PARSED.lock() {
        cache.push(entry.clone());
    }
    Ok(entry)
}

impl Catalog {
    /// A catalog with no profile (for a case that names none).
    pub fn empty() -> Catalog {
        Catalog {
            entries: Vec::new(),
        }
    }

    /// The profiles a case that names `wanted` (or none) needs: none, or as `load_for`.
    ///
    /// # Errors
    /// As `load_for`.
    pub fn for_case(dir: Option<&Path>, wanted: Option<&str>) -> Result<Catalog> {
        match wanted {
            None => Ok(Catalog::empty()),
            Some(w) => Catalog::load_for(dir, w),
        }
    }

    /// The built-in profiles only.
    ///
    /// # Errors
    /// Only if a built-in file is broken (the tests keep them whole).
    pub fn built_in() -> Result<Catalog> {
        let mut entries = Vec::with_capacity(builtin::BUILT_IN.len());
        for (name, text) in builtin::BUILT_IN {
            let file = format!("drug-profiles/{name}.toml (built-in)");
            entries.push(Entry {
                name: (*name).to_string(),
                origin: Origin::BuiltIn,
                profile: parse_profile(text, &file)?,
                text: (*text).to_string(),
            });
        }
        entries.sort_by(|a, b| a.name.cmp(&b.name));
        Ok(Catalog { entries })
    }

    /// A catalog in which `wanted` can be looked up, parsing no more than it must: without
    /// `dir`, only the built-in named `wanted` (the others are not needed, and parsing them
    /// all dominated the start-up of `ebb report`); with `dir`, or when no built-in has that
    /// name, the same as `load(dir)`, so lookups, unknown-name messages and broken local
    /// files behave exactly as there.
    ///
    /// # Errors
    /// As `load`.
    pub fn load_for(dir: Option<&Path>, wanted: &str) -> Result<Catalog> {
        match (
            dir,
            builtin::BUILT_IN.iter().find(|(name, _)| *name == wanted),
        ) {
            (None, Some((name, text))) => Ok(Catalog {
                entries: vec![parsed_built_in(name, text)?],
            }),
            _ => Catalog::load(dir),
        }
    }

    /// The built-ins, then every `*.toml` file in `dir` (when given) by file stem.
    ///
    /// # Errors
    /// An unreadable directory or file, or a broken profile (file, line and field named):
    /// a broken local protocol is never skipped silently.
    pub fn load(dir: Option<&Path>) -> Result<Catalog> {
        let mut cat = Catalog::built_in()?;
        let Some(dir) = dir else {
            return Ok(cat);
        };
        let read_err = |reason: String| {
            Error::invalid(
                dir.display().to_string(),
                format!("cannot read the profile directory: {reason}"),
            )
        };
        let mut files: Vec<PathBuf> = Vec::new();
        for item in std::fs::read_dir(dir).map_err(|e| read_err(e.to_string()))? {
            let path = item.map_err(|e| read_err(e.to_string()))?.path();
            if path.is_file() && path.extension().is_some_and(|x| x == "toml") {
                files.push(path);
            }
        }
        files.sort();
        for path in files {
            let Some(name) = path.file_stem().and_then(|s| s.to_str()) else {
                continue;
            };
            let text = std::fs::read_to_string(&path).map_err(|e| Error::Read {
                path: path.clone(),
                reason: e.to_string(),
            })?;
            let profile = parse_profile(&text, &path.display().to_string())?;
            let entry = |origin| Entry {
                name: name.to_string(),
                origin,
                profile: profile.clone(),
                text: text.clone(),
            };
            match cat.entries.iter().position(|e| e.name == name) {
                Some(i) => cat.entries[i] = entry(Origin::Replaces(path.clone())),
                None => cat.entries.push(entry(Origin::Local(path.clone()))),
            }
        }
        cat.entries.sort_by(|a, b| a.name.cmp(&b.name));
        Ok(cat)
    }

    /// Every profile, sorted by name.
    pub fn entries(&self) -> &[Entry] {
        &self.entries
    }

    /// A profile by file stem.
    pub fn get(&self, name: &str) -> Option<&Entry> {
        self.entries.iter().find(|e| e.name == name)
    }

    /// The names, sorted.
    pub fn names(&self) -> Vec<&str> {
        self.entries.iter().map(|e| e.name.as_str()).collect()
    }

    /// A profile by file stem, or an error at `field` (e.g. `drug.profile`) listing the names.
    ///
    /// # Errors
    /// No profile of that name.
    pub fn lookup(&self, name: &str, field: &str) -> Result<&Entry> {
        self.get(name).ok_or_else(|| {
            Error::invalid(
                field,
                format!(
                    "no drug profile named \"{name}\"; known: {} (see `ebb profiles`)",
                    self.names().join(", ")
                ),
            )
        })
    }

    /// As `lookup`, but a name typed in other capitals (`Vancomycin`) or spaced like the
    /// display name (`valproic acid`) finds its profile too: for people typing commands,
    /// not for case files.
    ///
    /// # Errors
    /// No profile of that name in any capitals.
    pub fn lookup_loosely(&self, name: &str, field: &str) -> Result<&Entry> {
        let loose = |s: &str| s.trim().to_lowercase().replace(' ', "-");
        let want = loose(name);
        match self.entries.iter().find(|e| loose(&e.name) == want) {
            Some(e) => Ok(e),
            None => self.lookup(name, field),
        }
    }

    /// Name, display name, unit, origin and cautions of every profile (for a chooser list).
    pub fn summaries(&self) -> Vec<Summary> {
        self.entries
            .iter()
            .map(|e| Summary {
                name: e.name.clone(),
                display_name: e.profile.display_name.clone(),
                level_unit: e.profile.level_unit.clone(),
                origin: e.origin.words(),
                cautions: e.profile.cautions.clone(),
            })
            .collect()
    }
}

/// How many of the case's level unit make one of the profile's, or `None` when they cannot
/// be converted (a molar unit on one side and no molar mass anywhere).
pub fn unit_factor(
    profile: &Profile,
    case_unit: LevelUnit,
    case_molar_mass: Option<f64>,
) -> Option<f64> {
    let profile_unit = profile.unit().ok()?;
    let mm = case_molar_mass.or(profile.molar_mass_g_mol.as_ref().map(|m| m.value));
    let case_per = case_unit.per_mg_l(mm)?;
    let profile_per = profile_unit.per_mg_l(mm)?;
    let f = case_per / profile_per;
    (f.is_finite() && f > 0.0).then_some(f)
}

/// A strategy's targets in the case's unit (multiply by `factor`, from [`unit_factor`]).
pub fn targets_of(strategy: &Strategy, factor: f64) -> Targets {
    Targets {
        peak: strategy
            .peak
            .as_ref()
            .map(|r| [r.low * factor, r.high * factor]),
        trough_max: strategy.trough_max.as_ref().map(|t| t.value * factor),
        auc24: strategy
            .auc24
            .as_ref()
            .map(|r| [r.low * factor, r.high * factor]),
    }
}

/// The defaults a profile gives a case: molar mass, oral bioavailability and the default
/// strategy's targets converted to the case's unit. `case_unit` is the case's
/// `drug.level_unit` as written (targets are left out when it is missing, unknown, or cannot
/// be converted; validation and the unit warning then say why).
// The struct update keeps this compiling when `Defaults` gains fields the profile does not
// fill (the Bayesian work adds some); today it may have none left over.
#[allow(clippy::needless_update)]
pub fn defaults_for(
    profile: &Profile,
    case_unit: Option<&str>,
    case_molar_mass: Option<f64>,
) -> Defaults {
    let targets = case_unit
        .and_then(|u| LevelUnit::parse(u, "drug.level_unit").ok())
        .and_then(|u| unit_factor(profile, u, case_molar_mass))
        .and_then(|f| profile.default_strategy().map(|s| targets_of(s, f)))
        .unwrap_or_default();
    Defaults {
        molar_mass_g_mol: profile.molar_mass_g_mol.as_ref().map(|m| m.value),
        bioavailability: profile.bioavailability.as_ref().map(|f| f.value),
        targets,
        prior: prior_of(profile),
        regimen: regimen_of(profile),
    }
}

/// The defaults `profile` supplies to a parsed case file (its unit and molar mass decide
/// how the profile's targets convert).
pub fn defaults_for_file(profile: &Profile, file: &crate::core::casefile::CaseFile) -> Defaults {
    defaults_for(
        profile,
        file.drug.level_unit.as_deref(),
        file.drug.molar_mass_g_mol,
    )
}

/// The profile's usual intervals and dose rounding, over the common defaults where it is
/// silent.
fn regimen_of(profile: &Profile) -> Option<RegimenOptions> {
    if profile.dose_rounding_mg.is_none() && profile.usual_intervals_h.is_none() {
        return None;
    }
    let mut opts = RegimenOptions::default();
    if let Some(r) = &profile.dose_rounding_mg {
        opts.dose_step_mg = r.value;
    }
    if let Some(l) = &profile.usual_intervals_h {
        opts.intervals_h = l.values.clone();
    }
    Some(opts)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lithium_targets_convert_between_molar_units() {
        let cat = Catalog::built_in().unwrap();
        let li = &cat.get("lithium").unwrap().profile;
        // mmol/L -> umol/L is x 1000 whatever the molar mass (definition of the units).
        let f = unit_factor(li, LevelUnit::UmolPerL, None).unwrap();
        assert!((f - 1000.0).abs() < 1e-9);
        // mg/L and ug/mL are the same quantity.
        let g = &cat.get("gentamicin").unwrap().profile;
        assert_eq!(unit_factor(g, LevelUnit::UgPerMl, None), Some(1.0));
        assert_eq!(unit_factor(g, LevelUnit::NgPerMl, None), Some(1000.0));
    }

    #[test]
    fn regimen_choices_come_from_the_profile() {
        let cat = Catalog::built_in().unwrap();
        let g = &cat.get("gentamicin").unwrap().profile;
        let d = defaults_for(g, Some("mg/L"), None);
        let r = d.regimen.clone().unwrap();
        let want: Vec<f64> = g.usual_intervals_h.as_ref().unwrap().values.clone();
        assert_eq!(r.intervals_h, want);
        assert_eq!(r.dose_step_mg, g.dose_rounding_mg.as_ref().unwrap().value);
        // The validated case carries them to the regimen search.
        let text = "[drug]\nlevel_unit = \"mg/L\"\nprofile = \"gentamicin\"\n";
        let case = crate::core::casefile::CaseFile::parse(text)
            .unwrap()
            .validate_with(&d)
            .unwrap();
        assert_eq!(case.regimen.intervals_h, want);
    }

    #[test]
    fn defaults_carry_the_default_strategy() {
        let cat = Catalog::built_in().unwrap();
        let g = &cat.get("gentamicin").unwrap().profile;
        let d = defaults_for(g, Some("ng/mL"), None);
        // Conventional gentamicin: peak 5-10, trough < 2 mg/L ([UKMi-Gent][MedscapeGent],
        // drug-facts.md), here in ng/mL (x 1000).
        assert_eq!(d.targets.peak, Some([5000.0, 10000.0]));
        assert_eq!(d.targets.trough_max, Some(2000.0));
        assert_eq!(d.bioavailability, None);
        let unknown = defaults_for(g, Some("grains"), None);
        assert!(unknown.targets.is_empty());
    }
}
