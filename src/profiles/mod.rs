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
mod saturable;
pub mod schema;
mod text;
mod warn;

use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::core::case::Targets;
use crate::core::casefile::Defaults;
use crate::core::error::{Error, Result};
use crate::core::regimen::RegimenOptions;
use crate::core::units::LevelUnit;

pub use parse::parse_profile;
pub use prior::{default_model_name, models_of, prior_of};
pub use saturable::params_of as saturable_params;
pub use schema::{FirstOrder, Profile, Strategy};
pub use text::{write_list, write_profile_note, write_refusal, write_show};
pub use warn::{apply, refusal, warnings};

/// The largest profile file read, in bytes (1 MiB; a shipped profile is a few kilobytes).
pub const MAX_PROFILE_BYTES: u64 = 1024 * 1024;

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
            Origin::Replaces(p) => format!("{} (replaces the built-in)", shown(p)),
            Origin::Local(p) => format!("{} (local)", shown(p)),
        }
    }
}

/// A path as listings print it: its control characters made visible.
fn shown(p: &Path) -> String {
    crate::core::text::printable(&p.display().to_string()).into_owned()
}

/// One profile with its name (file stem) and origin (cheap to clone: the profile and its
/// text are shared).
#[derive(Debug, Clone, PartialEq)]
pub struct Entry {
    /// The file stem, as a case's `drug.profile` names it.
    pub name: String,
    /// Where it came from.
    pub origin: Origin,
    /// The parsed, validated profile.
    pub profile: Arc<Profile>,
    /// The TOML text as written (for `ebb profiles show NAME --toml`).
    pub text: ProfileText,
}

/// A profile's TOML text: a built-in's is the program's own (never copied), a local file's
/// is read once and shared between the entries that use it.
#[derive(Debug, Clone, PartialEq)]
pub enum ProfileText {
    /// Embedded in the program.
    BuiltIn(&'static str),
    /// Read from a file.
    Local(Arc<str>),
}

impl From<String> for ProfileText {
    fn from(text: String) -> ProfileText {
        ProfileText::Local(Arc::from(text))
    }
}

impl std::ops::Deref for ProfileText {
    type Target = str;

    fn deref(&self) -> &str {
        match self {
            ProfileText::BuiltIn(t) => t,
            ProfileText::Local(t) => t,
        }
    }
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

/// A built-in profile from its build-time JSON (`build.rs`): read into the same types as
/// the TOML. The shipped files are checked by the loader in the tests, which also read each
/// both ways and compare the two profiles field for field; a debug build checks the JSON's
/// profile again here. Should the JSON not give a valid profile, the TOML goes through the
/// ordinary loader, so any error is the loader's own, naming the file, line and field.
fn built_in_entry(name: &str, text: &'static str, json: &str) -> Result<Entry> {
    let profile = match serde_json::from_str::<Profile>(json) {
        Ok(p) if !cfg!(debug_assertions) || p.validate().is_ok() => p,
        _ => parse_profile(text, &format!("drug-profiles/{name}.toml (built-in)"))?,
    };
    Ok(Entry {
        name: name.to_string(),
        origin: Origin::BuiltIn,
        profile: Arc::new(profile),
        text: ProfileText::BuiltIn(text),
    })
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
        for (name, text, json) in builtin::BUILT_IN {
            entries.push(built_in_entry(name, text, json)?);
        }
        entries.sort_by(|a, b| a.name.cmp(&b.name));
        Ok(Catalog { entries })
    }

    /// A catalog in which `wanted` can be looked up, reading no more than it must: without
    /// `dir`, only the built-in named `wanted` (the others are not needed); with `dir`, or
    /// when no built-in has that name, the same as `load(dir)`, so lookups, unknown-name
    /// messages and broken local files behave exactly as there.
    ///
    /// # Errors
    /// As `load`.
    pub fn load_for(dir: Option<&Path>, wanted: &str) -> Result<Catalog> {
        match (
            dir,
            builtin::BUILT_IN
                .iter()
                .find(|(name, _, _)| *name == wanted),
        ) {
            (None, Some((name, text, json))) => Ok(Catalog {
                entries: vec![built_in_entry(name, text, json)?],
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
            // Every `*.toml` entry is a profile, whatever it is or links to: a link to a
            // device, a FIFO or a folder is reported below (by the read), never skipped.
            if path.extension().is_some_and(|x| x == "toml") {
                files.push(path);
            }
        }
        files.sort();
        for path in files {
            let name = match path.file_stem().and_then(|s| s.to_str()) {
                Some(n) if crate::core::text::problem(n).is_none() => n,
                _ => {
                    return Err(Error::Read {
                        path: PathBuf::from(
                            crate::core::text::printable(&path.to_string_lossy()).into_owned(),
                        ),
                        reason: "the file name is not plain printable text, so no case could name this profile; rename it".into(),
                    })
                }
            };
            let text =
                crate::core::casefile::read_text(&path, MAX_PROFILE_BYTES).map_err(|reason| {
                    Error::Read {
                        path: path.clone(),
                        reason,
                    }
                })?;
            let profile = Arc::new(parse_profile(&text, &path.display().to_string())?);
            let text: Arc<str> = Arc::from(text);
            let entry = |origin| Entry {
                name: name.to_string(),
                origin,
                profile: Arc::clone(&profile),
                text: ProfileText::Local(Arc::clone(&text)),
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
                    "no drug profile named {}; known: {} (see `ebb profiles`)",
                    crate::core::text::quoted(name),
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
    defaults_for_strategy(profile, None, case_unit, case_molar_mass)
}

/// As `defaults_for`, with the strategy the case names (`drug.strategy`) in place of the
/// profile's default. An unknown name keeps the default's figures; validation then refuses
/// the case, listing the profile's strategies.
#[allow(clippy::needless_update)]
pub fn defaults_for_strategy(
    profile: &Profile,
    strategy: Option<&str>,
    case_unit: Option<&str>,
    case_molar_mass: Option<f64>,
) -> Defaults {
    let chosen = strategy
        .and_then(|n| profile.strategy(n))
        .or_else(|| profile.default_strategy());
    let targets = case_unit
        .and_then(|u| LevelUnit::parse(u, "drug.level_unit").ok())
        .and_then(|u| unit_factor(profile, u, case_molar_mass))
        .and_then(|f| chosen.map(|s| targets_of(s, f)))
        .unwrap_or_default();
    let mut regimen = regimen_of(profile, chosen);
    // The pre-dialysis range converts to the case's unit as the targets do (left out when
    // it cannot be converted; the unit warning says why).
    if let (Some(r), Some(f)) = (
        chosen.and_then(|s| s.pre_dialysis.as_ref()),
        case_unit
            .and_then(|u| LevelUnit::parse(u, "drug.level_unit").ok())
            .and_then(|u| unit_factor(profile, u, case_molar_mass)),
    ) {
        regimen.dialysis.pre_dialysis = Some([r.low * f, r.high * f]);
        regimen.dialysis.pre_dialysis_source = r.source.clone();
    }
    // Every model once; the default is one of them.
    let models = prior::models_of(profile);
    let default = profile
        .default_model
        .clone()
        .or_else(|| models.first().map(|m| m.name.clone()));
    Defaults {
        molar_mass_g_mol: profile.molar_mass_g_mol.as_ref().map(|m| m.value),
        bioavailability: profile.bioavailability.as_ref().map(|f| f.value),
        targets,
        prior: default.and_then(|n| models.iter().find(|m| m.name == n).cloned()),
        models,
        model_reason: profile.default_model_reason.clone(),
        regimen: Some(regimen),
        strategies: profile.strategies.iter().map(|s| s.name.clone()).collect(),
        formulations: profile
            .absorption
            .iter()
            .map(|a| {
                (
                    a.formulation.clone(),
                    crate::core::model::Absorption {
                        ka_per_h: a.ka_per_h.value,
                        lag_h: a.lag_h.as_ref().map_or(0.0, |l| l.value),
                    },
                )
            })
            .collect(),
        ..Defaults::default()
    }
}

/// The defaults `profile` supplies to a parsed case file (its unit and molar mass decide
/// how the profile's targets convert).
pub fn defaults_for_file(profile: &Profile, file: &crate::core::casefile::CaseFile) -> Defaults {
    defaults_for_strategy(
        profile,
        file.drug.strategy.as_deref(),
        file.drug.level_unit.as_deref(),
        file.drug.molar_mass_g_mol,
    )
}

/// The profile's regimen choices and rules for `strategy`: its usual intervals (the
/// strategy's own over the profile's), dose rounding, limits, tablet strengths, loading rule,
/// peak sampling time and drug-free time, over the common defaults where it is silent.
fn regimen_of(profile: &Profile, strategy: Option<&Strategy>) -> RegimenOptions {
    use crate::core::regimen::LoadingRule;
    let mut opts = RegimenOptions::default();
    if let Some(r) = &profile.dose_rounding_mg {
        opts.dose_step_mg = r.value;
    }
    if let Some(l) = strategy
        .and_then(|s| s.usual_intervals_h.as_ref())
        .or(profile.usual_intervals_h.as_ref())
    {
        opts.intervals_h = l.values.clone();
    }
    opts.strategy = strategy.map(|s| s.name.clone());
    opts.drug_free_time = strategy.is_some_and(|s| s.drug_free_time);
    opts.peak_sampled_after_h = strategy
        .and_then(|s| s.peak_sampled_after_h.as_ref())
        .map_or(0.0, |x| x.value);
    if let Some(r) = strategy.and_then(|s| s.dose_after_session.as_ref()) {
        opts.dialysis.dose_after_session = true;
        opts.dialysis.dose_after_session_source = r.source.clone();
    }
    opts.max_rate_mg_per_min = profile
        .max_infusion_rate_mg_per_min
        .as_ref()
        .map(|x| x.value);
    opts.max_single_dose_mg = profile.max_single_dose_mg.as_ref().map(|x| x.value);
    opts.max_daily_dose_mg = profile.max_daily_dose_mg.as_ref().map(|x| x.value);
    opts.dose_forms_mg = profile
        .dose_forms_mg
        .as_ref()
        .map(|l| l.values.clone())
        .unwrap_or_default();
    opts.loading = match &profile.loading {
        None => LoadingRule::Never,
        Some(l) => match &l.mg_per_kg {
            None => LoadingRule::Kinetic,
            Some(r) => LoadingRule::PerKg {
                mg_per_kg: [r.low, r.high],
                max_mg: l.max_mg.as_ref().map(|m| m.value),
            },
        },
    };
    opts
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
        assert_eq!(r.strategy.as_deref(), Some("conventional"));
        // The default (conventional) strategy's own usual intervals win over the profile's.
        let want: Vec<f64> = g
            .default_strategy()
            .and_then(|s| s.usual_intervals_h.as_ref())
            .unwrap()
            .values
            .clone();
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
    fn the_case_chooses_the_strategy_and_its_intervals_follow() {
        // Extended-interval gentamicin: trough below 1 mg/L [SouthTeesGent], intervals 24, 36
        // and 48 h by creatinine clearance [Nicolau95], drug-free time shown; conventional:
        // 8 and 12 h (from memory, unverified).
        let cat = Catalog::built_in().unwrap();
        let g = &cat.get("gentamicin").unwrap().profile;
        let text = "[drug]\nlevel_unit = \"mg/L\"\nprofile = \"gentamicin\"\nstrategy = \"extended-interval\"\n";
        let file = crate::core::casefile::CaseFile::parse(text).unwrap();
        let case = file.validate_with(&defaults_for_file(g, &file)).unwrap();
        assert_eq!(case.regimen.intervals_h, vec![24.0, 36.0, 48.0]);
        assert!(case.regimen.drug_free_time);
        assert_eq!(case.targets.trough_max, Some(1.0));
        assert_eq!(case.targets.peak, None);
        // An unknown name is an error listing the profile's strategies.
        let bad =
            crate::core::casefile::CaseFile::parse(&text.replace("extended-interval", "weekly"))
                .unwrap();
        let e = bad
            .validate_with(&defaults_for_file(g, &bad))
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with("drug.strategy: the profile has no strategy \"weekly\""),
            "{e}"
        );
        assert!(
            e.contains("conventional, conventional-serious, extended-interval"),
            "{e}"
        );
        // Without a profile there is no strategy to choose.
        let none = crate::core::casefile::CaseFile::parse(
            "[drug]\nlevel_unit = \"mg/L\"\nstrategy = \"conventional\"\n",
        )
        .unwrap();
        assert!(none
            .validate()
            .unwrap_err()
            .to_string()
            .starts_with("drug.strategy:"));
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

#[cfg(test)]
mod dosing_rule_tests {
    use super::*;
    use crate::core::casefile::CaseFile;
    use crate::core::report::{self, Report};

    fn report_of(profile: &str, text: &str) -> (crate::core::case::Case, Report) {
        let cat = Catalog::built_in().unwrap();
        let p = &cat.get(profile).unwrap().profile;
        let file = CaseFile::parse(text).unwrap();
        let case = file.validate_with(&defaults_for_file(p, &file)).unwrap();
        let mut r = report::build(&case).unwrap();
        apply(p, &case, &mut r);
        (case, r)
    }

    /// Two 1000 mg vancomycin doses over 2 h, 12 h apart, with two levels after the second;
    /// `extra` is appended. Invented data.
    fn vanc(extra: &str) -> String {
        format!(
            r#"[patient]
weight_kg = 80.0
[drug]
profile = "vancomycin"
level_unit = "mg/L"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 1000.0
route = "infusion"
infusion_h = 2.0
[[dose]]
time = 2027-03-02T20:00:00
amount_mg = 1000.0
route = "infusion"
infusion_h = 2.0
[[level]]
time = 2027-03-02T23:00:00
value = 28.0
[[level]]
time = 2027-03-03T07:30:00
value = 14.0
{extra}"#
        )
    }

    #[test]
    fn vancomycin_suggestions_keep_to_ten_mg_per_minute_and_a_fast_plan_is_flagged() {
        // Vancomycin infusion rate at most 10 mg/min (profile: from memory, unverified).
        let (_, r) = report_of(
            "vancomycin",
            &vanc("[plan]\ndose_mg = 1500.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 1.0\n"),
        );
        assert!(!r.advice.suggestions.is_empty());
        for s in &r.advice.suggestions {
            assert!(s.dose_mg / (s.infusion_h * 60.0) <= 10.0 + 1e-9, "{s:?}");
        }
        assert!(
            r.warnings.iter().any(
                |w| w.contains("faster than the profile's maximum of 10 mg/min")
                    && w.contains("at least 2.5 h")
            ),
            "{:?}",
            r.warnings
        );
    }

    #[test]
    fn vancomycin_loading_is_weight_based_capped_and_only_with_no_drug_on_board() {
        // 25-30 mg/kg of actual body weight [PMC5579760], at most 3000 mg [Kidney360-Vanc]:
        // 27.5 mg/kg x 80 kg = 2200 mg; with drug on board, no loading dose and why.
        let later = vanc(
            "[plan]\ndose_mg = 1000.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 2.0\nstart = 2027-03-12T08:00:00\n",
        );
        let (_, r) = report_of("vancomycin", &later);
        let l = r
            .advice
            .loading
            .as_ref()
            .expect("a loading dose after washout");
        assert_eq!(l.dose_mg, 2250.0, "27.5 x 80 = 2200, on the 250 mg step");
        assert!(l.dose_mg / (l.infusion_h * 60.0) <= 10.0 + 1e-9);
        let heavy = later.replace("weight_kg = 80.0", "weight_kg = 150.0");
        let (_, r) = report_of("vancomycin", &heavy);
        assert_eq!(r.advice.loading.as_ref().unwrap().dose_mg, 3000.0);
        let (_, r) = report_of(
            "vancomycin",
            &vanc("[plan]\ndose_mg = 1000.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 2.0\n"),
        );
        assert!(r.advice.loading.is_none());
        assert!(r
            .warnings
            .iter()
            .any(|w| w.starts_with("no loading dose: the drug is on board")));
    }

    #[test]
    fn the_conventional_gentamicin_peak_is_checked_30_min_after_the_infusion() {
        // Conventional gentamicin: the peak target 5-10 mg/L is for a level 30 min after the
        // end of a 30-min infusion [MedscapeGent][UIHC-Gent][CLN-Gent]. A plan whose end-of-
        // infusion peak is above 10 but whose 30-min peak is inside meets it.
        let text = crate::demo::DEMO_CASE.replace("dose_mg = 160.0", "dose_mg = 200.0");
        let (case, r) = report_of("gentamicin", &text);
        let p = r.plan.as_ref().unwrap();
        let k = r.fit.k_per_h;
        let sampled = p.peak_sampled_ss.unwrap();
        assert!((sampled - p.peak_ss.unwrap() * (-0.5 * k).exp()).abs() < 1e-12);
        assert_eq!(p.peak_sampled_after_h, 0.5);
        let c = p.checks.iter().find(|c| c.name == "peak").unwrap();
        assert_eq!(c.value, sampled);
        assert_eq!(c.met, (5.0..=10.0).contains(&sampled));
        assert!(case.targets.peak.is_some());
    }

    #[test]
    fn lithium_doses_are_tablet_multiples_checked_at_12_h_and_never_loaded() {
        // Lithium 0.6-0.8 mmol/L at 12 h after the dose [NICE-QS95][CKS-Li]; tablets of 200
        // and 400 mg (profile: from memory, unverified); never a loading dose (common practice).
        let mut text = String::from(
            "[patient]\nweight_kg = 70.0\n[drug]\nprofile = \"lithium\"\nlevel_unit = \"mmol/L\"\n",
        );
        for day in 2..=8 {
            text += &format!(
                "[[dose]]\ntime = 2027-03-0{day}T20:00:00\namount_mg = 800.0\nroute = \"oral\"\n"
            );
        }
        text += "[[level]]\ntime = 2027-03-09T08:00:00\nvalue = 0.62\n[[level]]\ntime = 2027-03-09T18:00:00\nvalue = 0.47\n";
        text += "[plan]\ndose_mg = 800.0\ninterval_h = 24.0\nroute = \"oral\"\n";
        let (_, r) = report_of("lithium", &text);
        assert!(!r.advice.suggestions.is_empty());
        for s in &r.advice.suggestions {
            assert_eq!(s.dose_mg % 200.0, 0.0, "{s:?}");
            assert!((0.6..=0.8).contains(&s.peak_sampled_ss), "{s:?}");
        }
        assert!(r.advice.loading.is_none());
        assert!(!r.warnings.iter().any(|w| w.contains("loading")));
        let p = r.plan.as_ref().unwrap();
        assert_eq!(p.peak_sampled_after_h, 12.0);
        assert!(p.checks.iter().any(|c| c.name == "peak"));
    }
}

#[cfg(test)]
mod plausibility_tests {
    use super::*;
    use crate::core::casefile::CaseFile;
    use crate::core::report;

    fn warnings_of(profile: &str, text: &str) -> Vec<String> {
        let cat = Catalog::built_in().unwrap();
        let p = &cat.get(profile).unwrap().profile;
        let file = CaseFile::parse(text).unwrap();
        let case = file.validate_with(&defaults_for_file(p, &file)).unwrap();
        let mut r = report::build(&case).unwrap();
        apply(p, &case, &mut r);
        r.warnings.iter().map(|w| w.text().to_string()).collect()
    }

    #[test]
    fn a_unit_slip_of_x1000_is_flagged_by_volume_and_level() {
        // Gentamicin volume 0.25-0.28 L/kg [NottmRLO][Bauer3e-AG][TraumaHartford]: levels
        // typed in ng/mL under mg/L make the volume a thousand times too small.
        let slip = crate::demo::DEMO_CASE
            .replace("value = 0.9\n", "value = 900.0\n")
            .replace("value = 6.1\n", "value = 6100.0\n")
            .replace("value = 2.0\n", "value = 2000.0\n")
            .replace("value = 1.4\n", "value = 1400.0\n")
            .replace("below = 1.0", "below = 1000.0");
        let w = warnings_of("gentamicin", &slip);
        assert!(
            w.iter()
                .any(|x| x.starts_with("the fitted volume") && x.contains("far outside")),
            "{w:?}"
        );
        assert!(w
            .iter()
            .any(|x| x.starts_with("level 2 (6100 mg/L) is above 60 mg/L")));
        // The demo itself is plausible, and its half-life of 3.006 h is inside 2-3 h.
        let w = warnings_of("gentamicin", crate::demo::DEMO_CASE);
        assert!(!w
            .iter()
            .any(|x| x.contains("far outside") || x.contains("beyond any")));
        assert!(!w.iter().any(|x| x.contains("half-life")), "{w:?}");
    }

    #[test]
    fn values_outside_a_range_are_flagged_only_when_clearly_outside() {
        // Common practice: 3.0 h against 2-3 h is inside; 3.5 h is outside.
        assert!(!warn::clearly_outside(3.0, 2.0, 3.0));
        assert!(!warn::clearly_outside(3.006, 2.0, 3.0));
        assert!(warn::clearly_outside(3.5, 2.0, 3.0));
        assert!(warn::clearly_outside(1.5, 2.0, 3.0));
    }

    fn codes_of(profile: &str, text: &str) -> Vec<(crate::core::warning::Code, String)> {
        let cat = Catalog::built_in().unwrap();
        let p = &cat.get(profile).unwrap().profile;
        let file = CaseFile::parse(text).unwrap();
        let case = file.validate_with(&defaults_for_file(p, &file)).unwrap();
        let mut r = report::build(&case).unwrap();
        apply(p, &case, &mut r);
        r.warnings
            .iter()
            .map(|w| (w.code(), w.text().to_string()))
            .collect()
    }

    fn contradiction(w: &[(crate::core::warning::Code, String)]) -> Option<&str> {
        w.iter()
            .find(|(c, _)| *c == crate::core::warning::Code::TargetsNotStrategy)
            .map(|(_, t)| t.as_str())
    }

    #[test]
    fn conventional_targets_with_extended_interval_dosing_are_flagged() {
        // Extended-interval gentamicin sets a trough below 1 mg/L and no peak [SouthTeesGent];
        // the demo's own targets are the conventional peak 5-10 and trough below 2 mg/L
        // [UKMi-Gent][MedscapeGent]: they contradict it, and the warning says which are used.
        let text = crate::demo::DEMO_CASE.replace(
            "level_unit = \"mg/L\"\n",
            "level_unit = \"mg/L\"\nstrategy = \"extended-interval\"\n",
        );
        let w = codes_of("gentamicin", &text);
        let t = contradiction(&w).unwrap_or_else(|| panic!("{w:?}"));
        assert!(
            t.starts_with(
                "the case's own targets (peak 5–10 mg/L, trough at most 2 mg/L) contradict the dosing strategy \"extended-interval\" (Extended interval (once daily, 7 mg/kg); targets trough at most 1 mg/L [SouthTeesGent])"
            ),
            "{t}"
        );
        assert!(t.contains("the strategy sets no peak target"), "{t}");
        assert!(
            t.contains("the trough ceiling 2 is above the strategy's 1"),
            "{t}"
        );
        assert!(t.contains("use the case's own targets"), "{t}");
        // The demo as it is: its targets are the default (conventional) strategy's.
        assert_eq!(
            contradiction(&codes_of("gentamicin", crate::demo::DEMO_CASE)),
            None
        );
        // Without [targets] the strategy's own apply: nothing to contradict.
        let own_gone = text.replace("[targets]\npeak = [5.0, 10.0]\ntrough_max = 2.0\n", "");
        assert_ne!(own_gone, text);
        assert_eq!(contradiction(&codes_of("gentamicin", &own_gone)), None);
    }

    #[test]
    fn targets_inside_the_strategys_are_not_flagged_and_wider_ones_are() {
        // Serious gram-negative infection: peak 8-10 mg/L [Bauer3e-AG][Wallace81], trough
        // below 2 mg/L [UKMi-Gent][MedscapeGent]. A peak of 8.5-9.5 is stricter (kept
        // quiet); 5-10 reaches below 8 (flagged).
        let serious = crate::demo::DEMO_CASE.replace(
            "level_unit = \"mg/L\"\n",
            "level_unit = \"mg/L\"\nstrategy = \"conventional-serious\"\n",
        );
        let w = codes_of("gentamicin", &serious);
        let t = contradiction(&w).unwrap_or_else(|| panic!("{w:?}"));
        assert!(
            t.contains("the peak range 5–10 reaches outside the strategy's 8–10"),
            "{t}"
        );
        assert!(!t.contains("trough ceiling"), "{t}");
        let stricter = serious.replace("peak = [5.0, 10.0]", "peak = [8.5, 9.5]");
        assert_eq!(contradiction(&codes_of("gentamicin", &stricter)), None);
    }

    #[test]
    fn a_projection_below_the_trough_range_is_flagged() {
        // Vancomycin trough 15-20 mg/L (2009 surrogate) [Rybak20exec][Rybak20]: a plan whose
        // steady-state trough is far below 15 says so.
        let text = r#"[drug]
profile = "vancomycin"
strategy = "trough-2009"
level_unit = "mg/L"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 1000.0
route = "infusion"
infusion_h = 2.0
[[level]]
time = 2027-03-02T11:00:00
value = 25.0
[[level]]
time = 2027-03-02T19:00:00
value = 10.0
[plan]
dose_mg = 750.0
interval_h = 24.0
route = "infusion"
infusion_h = 2.0
"#;
        let w = warnings_of("vancomycin", text);
        assert!(
            w.iter()
                .any(|x| x.starts_with("the plan's steady-state trough")
                    && x.contains("below Vancomycin's range of 15–20 mg/L")),
            "{w:?}"
        );
    }

    /// The interval warning of a case, if any.
    fn interval_warning(profile: &str, text: &str) -> Option<String> {
        codes_of(profile, text)
            .into_iter()
            .find(|(c, _)| *c == crate::core::warning::Code::IntervalNotStrategy)
            .map(|(_, t)| t)
    }

    const ONCE_DAILY: &str = r#"[patient]
weight_kg = 80.0
[drug]
profile = "amikacin"
level_unit = "mg/L"
[[dose]]
time = 2027-06-01T10:00:00
amount_mg = 1200.0
route = "infusion"
infusion_h = 0.5
[[level]]
time = 2027-06-01T12:00:00
value = 48.0
[[level]]
time = 2027-06-01T18:00:00
value = 14.5
[plan]
dose_mg = 1200.0
interval_h = 24.0
route = "infusion"
infusion_h = 0.5
"#;

    #[test]
    fn a_once_daily_regimen_read_against_the_conventional_strategy_is_flagged() {
        // The amikacin profile: conventional dosing every 8 or 12 h (from memory,
        // unverified), once daily every 24 h [ReviewODA][ForthValleyAmik]. A 24-hourly plan
        // with no strategy named gets the conventional one by default: the warning names
        // the strategy whose interval it is.
        let w = interval_warning("amikacin", ONCE_DAILY).unwrap();
        assert!(
            w.starts_with(
                "the dosing interval of 24 h (the plan's) is not one of the usual intervals of \
                 the strategy in force, \"conventional\" (8, 12 h), but is one of strategy \
                 \"once-daily\" (Once daily"
            ),
            "{w}"
        );
        // Chosen, it is in force and nothing is said.
        let chosen = ONCE_DAILY.replace(
            "profile = \"amikacin\"\n",
            "profile = \"amikacin\"\nstrategy = \"once-daily\"\n",
        );
        assert_eq!(interval_warning("amikacin", &chosen), None);
        // A conventional plan is the conventional strategy's own.
        let q12 = ONCE_DAILY.replace("interval_h = 24.0", "interval_h = 12.0");
        assert_eq!(interval_warning("amikacin", &q12), None);
        // An interval no strategy uses (every 36 h) has no other strategy to point to.
        let q36 = ONCE_DAILY.replace("interval_h = 24.0", "interval_h = 36.0");
        assert_eq!(interval_warning("amikacin", &q36), None);
        // Without a plan the interval between the last two recorded doses is read, to within
        // 10 % (a dose given an hour late still counts as 24-hourly).
        let record = ONCE_DAILY
            .split("[plan]")
            .next()
            .unwrap()
            .replacen(
                "[[level]]",
                "[[dose]]\ntime = 2027-06-02T11:00:00\namount_mg = 1200.0\nroute = \"infusion\"\ninfusion_h = 0.5\n[[level]]",
                1,
            );
        let w = interval_warning("amikacin", &record).unwrap();
        assert!(
            w.starts_with("the dosing interval of 25 h (between the last two doses)"),
            "{w}"
        );
    }

    #[test]
    fn a_haemodialysis_strategy_is_pointed_to_only_for_a_patient_on_haemodialysis() {
        // Vancomycin: the default AUC24 strategy uses the profile's 8, 12 and 24 h; the
        // haemodialysis strategy 48 and 72 h (both from memory, unverified). A 48-hourly
        // plan in renal impairment is not a reason to dose as on dialysis.
        let text = r#"[patient]
weight_kg = 70.0
age_years = 70
sex = "male"
creatinine_umol_l = 250.0
[drug]
profile = "vancomycin"
level_unit = "mg/L"
[fit]
method = "log-linear"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 1000.0
route = "infusion"
infusion_h = 2.0
[[level]]
time = 2027-03-02T12:00:00
value = 30.0
[[level]]
time = 2027-03-03T08:00:00
value = 18.0
[plan]
dose_mg = 1000.0
interval_h = 48.0
route = "infusion"
infusion_h = 2.0
"#;
        assert_eq!(interval_warning("vancomycin", text), None);
        let on_dialysis = text.replace("sex = \"male\"\n", "sex = \"male\"\ndialysis = true\n");
        let w = interval_warning("vancomycin", &on_dialysis).unwrap();
        assert!(
            w.contains("but is one of strategy \"haemodialysis\""),
            "{w}"
        );
    }

    const TOD_CASE: &str = r#"[patient]
weight_kg = 80.0
age_years = 58
sex = "male"
creatinine_umol_l = 95.0
[drug]
profile = "amikacin"
level_unit = "mg/L"
[fit]
method = "bayesian"
model = "tod-1998"
[[dose]]
time = 2027-06-01T10:00:00
amount_mg = 1200.0
route = "infusion"
infusion_h = 0.5
[[level]]
time = 2027-06-01T12:00:00
value = 48.0
[[level]]
time = 2027-06-01T18:00:00
value = 14.5
"#;

    #[test]
    fn a_two_compartment_volume_is_judged_whole_and_every_covariate_is_named() {
        // Tod 1998 (amikacin, two compartments): V1 8.92 L and V2 11.4 L; the profile's
        // 0.25-0.28 L/kg [NottmRLO][Bauer3e-AG][TraumaHartford] describes the whole volume,
        // so the central 8.92 L alone is no unit slip at 80 kg: V1 + V2 = 20.3 L is inside.
        let w = warnings_of("amikacin", TOD_CASE);
        assert!(!w.iter().any(|x| x.contains("far outside")), "{w:?}");
        // At 200 kg the whole volume is far below 0.25 x 200 / 2 = 25 L, and said as such.
        let heavy = TOD_CASE.replace("weight_kg = 80.0", "weight_kg = 200.0");
        let w = warnings_of("amikacin", &heavy);
        assert!(
            w.iter()
                .any(|x| x.starts_with("the steady-state volume (central + peripheral)")),
            "{w:?}"
        );
        // The model reads age, sex and serum creatinine as well as weight: all are named.
        let w = warnings_of("amikacin", TOD_CASE);
        assert!(
            w.iter().any(|x| x
                == "the population model tod-1998 used weight 80 kg, age 58 years, serum creatinine 95 µmol/L, male"),
            "{w:?}"
        );
    }
}
