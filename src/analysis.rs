//! The one analysis every surface runs (the report, the note, the plot and the screen): a
//! parsed case file and the drug profiles on offer go in; the drug profile, the validated
//! case, the fit and the report with the profile's warnings come out — as far as each step
//! gets, with the reason it stopped.
//!
//! The steps, always in this order: look up the profile the case names (once: the same entry
//! gives the case its defaults and the report its warnings); validate the case with the
//! profile's defaults; for a drug whose profile says first-order kinetics does not hold, run
//! the saturable (Michaelis-Menten) analysis when the profile has one and refuse otherwise;
//! fit; build the report; put the profile's warnings in front of the report's own.

use crate::core::case::Case;
use crate::core::casefile::CaseFile;
use crate::core::error::{Error, Result};
use crate::core::fit::{self, Fit};
use crate::core::report::{self, Report};
use crate::core::saturable_report::{self, Params, SaturableReport};
use crate::core::warning::{Code, Warning};
use crate::profiles::{self, Catalog, Entry};

/// Where drug profiles are looked up by name.
pub trait ProfileSource {
    /// The profile named `name` (its file stem), or an error at `drug.profile` saying why not.
    ///
    /// # Errors
    /// No profile of that name, or no profiles could be read at all.
    fn find(&self, name: &str) -> Result<&Entry>;
}

impl ProfileSource for Catalog {
    fn find(&self, name: &str) -> Result<&Entry> {
        self.lookup(name, "drug.profile")
    }
}

/// Why an analysis stopped before the report.
#[derive(Debug)]
pub enum Stop {
    /// The drug profile the case names could not be found.
    Profile(Error),
    /// The case file is not a valid case.
    Case(Error),
    /// The drug profile says first-order projections do not hold; the words say why.
    Refused(String),
    /// The levels gave no fit.
    Fit(Error),
    /// The report could not be built (a figure out of range).
    Report(Error),
}

impl Stop {
    /// The stop as an error; a refusal is an error at `drug.profile` naming the profile.
    pub fn to_error(&self, profile: Option<&Entry>) -> Error {
        match self {
            Stop::Profile(e) | Stop::Case(e) | Stop::Fit(e) | Stop::Report(e) => e.clone(),
            Stop::Refused(why) => Error::invalid(
                "drug.profile",
                format!(
                    "\"{}\": {why}; the report without --json lists the measured levels",
                    profile.map_or("", |e| e.name.as_str())
                ),
            ),
        }
    }

    /// Whether the case itself is invalid (rather than valid but without a report).
    pub fn is_invalid_case(&self) -> bool {
        matches!(self, Stop::Profile(_) | Stop::Case(_))
    }
}

/// Everything one analysis found, as far as it got.
#[derive(Debug)]
pub struct Analysis {
    /// The drug profile the case names, when it was found.
    pub profile: Option<Entry>,
    /// The validated case.
    pub case: Option<Case>,
    /// The fit.
    pub fit: Option<Fit>,
    /// The report, with the profile's warnings in front.
    pub report: Option<Report>,
    /// Why it stopped short of the report, when it did.
    pub stop: Option<Stop>,
    /// The saturable (Michaelis-Menten) analysis, for a drug whose profile has one: then
    /// `fit` and `report` (first-order) are `None` and `stop` is `None`.
    pub saturable: Option<Saturable>,
}

/// The saturable analysis of a case and the profile values it used.
#[derive(Debug, Clone)]
pub struct Saturable {
    /// What the profile gave.
    pub params: Params,
    /// The report.
    pub report: SaturableReport,
}

/// A finished analysis: every part there.
#[derive(Debug)]
pub struct Finished {
    /// The drug profile the case names, if any.
    pub profile: Option<Entry>,
    /// The validated case.
    pub case: Case,
    /// The fit.
    pub fit: Fit,
    /// The report, with the profile's warnings in front.
    pub report: Report,
}

impl Analysis {
    fn stopped(profile: Option<Entry>, case: Option<Case>, stop: Stop) -> Analysis {
        Analysis {
            profile,
            case,
            fit: None,
            report: None,
            stop: Some(stop),
            saturable: None,
        }
    }

    /// Every part, or the reason there is none (a refusal as an error at `drug.profile`).
    ///
    /// # Errors
    /// The step that stopped the analysis, as an error.
    pub fn finished(self) -> Result<Finished> {
        if let Some(stop) = &self.stop {
            return Err(stop.to_error(self.profile.as_ref()));
        }
        match (self.case, self.fit, self.report) {
            (Some(case), Some(fit), Some(report)) => Ok(Finished {
                profile: self.profile,
                case,
                fit,
                report,
            }),
            _ => Err(Error::Fit("the analysis did not finish".into())),
        }
    }
}

/// The first steps alone: the drug profile the case names (looked up in `profiles`) and the
/// case validated with that profile's defaults.
///
/// # Errors
/// An unknown profile (at `drug.profile`), or the first invalid field of the case.
pub fn validate(file: &CaseFile, profiles: &dyn ProfileSource) -> Result<(Case, Option<Entry>)> {
    let profile = match file.drug.profile.as_deref() {
        None => None,
        Some(name) => Some(profiles.find(name)?.clone()),
    };
    let case = validate_with(file, profile.as_ref())?;
    Ok((case, profile))
}

fn validate_with(file: &CaseFile, profile: Option<&Entry>) -> Result<Case> {
    let defaults = profile
        .map(|e| profiles::defaults_for_file(&e.profile, file))
        .unwrap_or_default();
    file.validate_with(&defaults)
}

/// Run the analysis of a parsed case file with the drug profiles of `profiles`.
pub fn analyse(file: &CaseFile, profiles: &dyn ProfileSource) -> Analysis {
    analyse_with_fit(file, profiles, None)
}

/// As `analyse`, but with `known` (when given) as the fit: the fit of an earlier analysis of
/// a case file that differs from this one in nothing that fit reads (the screen keeps a
/// two-point, log-linear or dose-history fit when only the plan changed; a Bayesian or
/// population fit may read the plan's daily dose).
pub fn analyse_with_fit(
    file: &CaseFile,
    profiles: &dyn ProfileSource,
    known: Option<&Fit>,
) -> Analysis {
    let profile = match file.drug.profile.as_deref() {
        None => None,
        Some(name) => match profiles.find(name) {
            Ok(e) => Some(e.clone()),
            Err(e) => return Analysis::stopped(None, None, Stop::Profile(e)),
        },
    };
    let case = match validate_with(file, profile.as_ref()) {
        Ok(c) => c,
        Err(e) => return Analysis::stopped(profile, None, Stop::Case(e)),
    };
    let params = profile
        .as_ref()
        .and_then(|e| profiles::saturable_params(&e.profile, &case));
    if let Some(params) = params {
        return match saturable_report::analyse(&case, &params) {
            Ok(mut report) => {
                // Sessions are marked, not modelled, in the saturable analysis too.
                report.warnings.extend(crate::core::dialysis::warnings(
                    &case,
                    &[],
                    case.drug.scale.unit.as_str(),
                ));
                Analysis {
                    profile,
                    case: Some(case),
                    fit: None,
                    report: None,
                    stop: None,
                    saturable: Some(Saturable { params, report }),
                }
            }
            Err(e @ Error::Invalid { .. }) => Analysis::stopped(profile, Some(case), Stop::Case(e)),
            Err(e) => Analysis::stopped(profile, Some(case), Stop::Fit(e)),
        };
    }
    if let Some(l) = case.levels.iter().find(|l| l.free) {
        let e = Error::invalid(
            format!("level {}", l.row),
            "free: a free (unbound) level is read only for a drug whose profile has saturable \
             elimination (phenytoin); enter the total level for this drug",
        );
        return Analysis::stopped(profile, Some(case), Stop::Case(e));
    }
    if let Some(why) = profile.as_ref().and_then(|e| profiles::refusal(&e.profile)) {
        return Analysis::stopped(profile, Some(case), Stop::Refused(why));
    }
    let fit = match known.map_or_else(|| fit::fit(&case), |f| Ok(f.clone())) {
        Ok(f) => f,
        Err(e) => return Analysis::stopped(profile, Some(case), Stop::Fit(e)),
    };
    let mut report = match report::build_from_fit(&case, &fit) {
        Ok(r) => r,
        Err(e) => {
            return Analysis {
                profile,
                case: Some(case),
                fit: Some(fit),
                report: None,
                stop: Some(Stop::Report(e)),
                saturable: None,
            }
        }
    };
    if let Some(e) = &profile {
        profiles::apply(&e.profile, &case, &mut report);
    }
    if let Some(text) = crate::core::casefile::machine_clock_warning(&case) {
        report.warnings.push(Warning::new(Code::ClockChange, text));
    }
    Analysis {
        profile,
        case: Some(case),
        fit: Some(fit),
        report: Some(report),
        stop: None,
        saturable: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> CaseFile {
        CaseFile::parse(text).unwrap()
    }

    const DOSES: &str = r#"
[drug]
level_unit = "mg/L"
profile = "PROFILE"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 400.0
route = "infusion"
infusion_h = 0.5
[[level]]
time = 2027-03-02T10:00:00
value = 12.0
[[level]]
time = 2027-03-02T20:00:00
value = 2.0
"#;

    #[test]
    fn an_unknown_profile_stops_before_the_case() {
        let cat = Catalog::built_in().unwrap();
        let a = analyse(&parse(&DOSES.replace("PROFILE", "no-such")), &cat);
        assert!(matches!(a.stop, Some(Stop::Profile(_))));
        assert!(a.case.is_none());
        let e = a.finished().unwrap_err().to_string();
        assert!(
            e.starts_with("drug.profile: no drug profile named \"no-such\""),
            "{e}"
        );
    }

    #[test]
    fn a_saturable_drug_gets_the_saturable_analysis_and_no_first_order_fit() {
        let cat = Catalog::built_in().unwrap();
        let a = analyse(&parse(&DOSES.replace("PROFILE", "phenytoin")), &cat);
        assert!(a.stop.is_none(), "{:?}", a.stop);
        assert!(a.fit.is_none() && a.report.is_none());
        let s = a.saturable.unwrap();
        // One level on 400 mg/day with the population Km of 5.7 mg/L: Vmax = 400·(5.7 + C)/C
        // for the last level, C = 2 mg/L (no weight: the algebra alone).
        assert!((s.report.vmax_mg_per_day - 400.0 * 7.7 / 2.0).abs() < 1e-9);
    }

    struct One(Entry);

    impl ProfileSource for One {
        fn find(&self, _: &str) -> Result<&Entry> {
            Ok(&self.0)
        }
    }

    #[test]
    fn a_drug_that_is_not_first_order_without_a_saturable_section_is_refused() {
        let text = include_str!("../drug-profiles/phenytoin.toml");
        let cut = text.find("\n[saturable]\n").unwrap();
        let rest = &text[cut..];
        let end = rest.find("\n[sources]\n").unwrap();
        let text = format!("{}{}", &text[..cut], &rest[end..]);
        let profile = profiles::parse_profile(&text, "phenytoin.toml").unwrap();
        let entry = Entry {
            name: "phenytoin".into(),
            origin: profiles::Origin::BuiltIn,
            profile: profile.into(),
            text: text.into(),
        };
        let a = analyse(&parse(&DOSES.replace("PROFILE", "phenytoin")), &One(entry));
        assert!(matches!(a.stop, Some(Stop::Refused(_))));
        let e = a.finished().unwrap_err().to_string();
        assert!(e.starts_with("drug.profile: \"phenytoin\": "), "{e}");
    }

    #[test]
    fn a_free_level_of_a_first_order_drug_is_refused_by_row() {
        let cat = Catalog::built_in().unwrap();
        let text = DOSES
            .replace("PROFILE", "gentamicin")
            .replace("value = 2.0\n", "value = 2.0\nfree = true\n");
        let e = analyse(&parse(&text), &cat)
            .finished()
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with("level 2: free: a free (unbound) level"),
            "{e}"
        );
    }

    #[test]
    fn the_profile_that_gave_the_defaults_gives_the_warnings() {
        let cat = Catalog::built_in().unwrap();
        let done = analyse(&parse(&DOSES.replace("PROFILE", "gentamicin")), &cat)
            .finished()
            .unwrap();
        assert_eq!(done.profile.as_ref().unwrap().name, "gentamicin");
        // Conventional gentamicin's peak target came from the profile (peak 5-10 mg/L,
        // [UKMi-Gent][MedscapeGent] in drug-profiles/gentamicin.toml).
        assert_eq!(done.case.targets.peak, Some([5.0, 10.0]));
        // Its typical half-life (2-3 h) flags this fit's 3.9 h as implausible.
        assert!(done
            .report
            .warnings
            .iter()
            .any(|w| w.code() == crate::core::warning::Code::HalfLifeImplausible));
    }
}
