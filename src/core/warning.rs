//! Warnings as values: a stable code that programs (the JSON reader, a drug profile) match
//! on, the level it is about when there is one, and the sentence people read.

use std::fmt;

/// What a warning is about. The code never changes once published; the sentence may.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Code {
    /// A level drawn during an infusion, at the first dose or before any dose: in no dosing
    /// window, so out of the fit.
    OutsideWindow,
    /// A level drawn soon after a dose, or levels whose early fall is steeper than the late:
    /// the distribution phase may bias the fit.
    DistributionPhase,
    /// A later level is not below an earlier one.
    RisingLevels,
    /// k (or k and V) from as many levels as parameters: no interval can be given.
    NoInterval,
    /// The 95 % interval of k reaches zero or below.
    IntervalReachesZero,
    /// The levels scatter about the fitted line (low r²).
    Scatter,
    /// A used level follows a different dose from the fitted levels.
    OtherDose,
    /// A dose has no amount: no volume.
    NoAmount,
    /// The pre-dose level does not give a volume; the dose record does instead.
    PreDoseLevel,
    /// No volume could be found, so figures that need one are not given.
    NoVolume,
    /// The intervals of k and V are too wide to give.
    WideIntervals,
    /// A Bayesian estimate from few levels leans on the population values.
    PriorWeighs,
    /// Which weight and creatinine clearance the population values used.
    PopulationCovariates,
    /// The patient lies outside the population a model was built on.
    OutsidePopulation,
    /// A population model assumes something the case does not record.
    ModelAssumes,
    /// A level lies far from what the population model predicts.
    LevelUnexpected,
    /// No regimen meets every target, or none can be chosen from the targets given.
    NoSuggestion,
    /// A strategy with only a trough ceiling: the suggestions keep the dose and lengthen the
    /// interval (extended-interval dosing).
    DoseKept,
    /// The dose adjustment is proportional (no volume).
    Proportional,
    /// The plan's first dose overlaps the last recorded dose.
    PlanOverlap,
    /// A projection reaches far beyond the data.
    Extrapolation,
    /// The 95 % range of a projected time cannot be given.
    NoTimeRange,
    /// The procedure is before the last dose or level.
    ProcedureBeforeData,
    /// Oral doses are modelled without absorption: no absorption rate is known (the fallback).
    OralAbsorption,
    /// A level in a log-linear fit was drawn while an oral dose was still being absorbed.
    AbsorptionPhase,
    /// The levels suggest saturable (nonlinear) elimination.
    NonlinearKinetics,
    /// AUC24 from two levels assumes a steady state the interval is not in.
    AucNotSteady,
    /// The case's level unit differs from its drug profile's.
    ProfileUnit,
    /// The drug profile says first-order kinetics holds only with a limit.
    ProfileKinetics,
    /// The route does not suit the drug profile.
    ProfileRoute,
    /// The fitted half-life is outside the drug's typical range.
    HalfLifeImplausible,
    /// A level marked `use = false` still sets the volume as the pre-dose level.
    UnusedLevelSetsVolume,
    /// An infusion faster than the profile's maximum rate, or suggestions lengthened for it.
    RateLimit,
    /// A dose above the profile's largest single or daily dose.
    DoseLimit,
    /// Why no loading dose is given (drug on board, no weight).
    NoLoadingDose,
    /// The fitted volume is far outside the drug's L/kg range.
    VolumeImplausible,
    /// A level beyond any clinical value for the drug.
    LevelImplausible,
    /// A projection leaves the strategy's therapeutic range.
    OutsideRange,
    /// Local clock times with no time zone span a change of the machine's UTC offset.
    ClockChange,
    /// A level was reported below the assay's limit: out of the fit, checked as a bound.
    BelowLimit,
    /// The case's own targets contradict its dosing strategy's (a target the strategy does
    /// not use, or a bound outside the strategy's); the case's are the ones used.
    TargetsNotStrategy,
    /// The regimen's dosing interval is not among the strategy in force's usual intervals
    /// but is among another strategy's (a once-daily regimen read against conventional
    /// targets).
    IntervalNotStrategy,
    /// Saturable elimination: a dose increase larger than the small steps of common practice.
    LargeDoseStep,
    /// Saturable elimination: a level drawn before the dose rate could reach steady state.
    NotSteadyState,
    /// Saturable elimination: low albumin or renal failure without a measured free level.
    BindingUncertain,
    /// Saturable elimination: a daily dose at or above Vmax has no steady state.
    AboveVmax,
    /// Saturable elimination: how Vmax and Km were found and what limits them.
    SaturableEstimate,
    /// Haemodialysis sessions are marked, not modelled: projections after one are too high.
    DialysisNotModelled,
    /// A level drawn during a dialysis session or in the rebound after it: not pre-dialysis.
    NotPreDialysis,
    /// The fitted levels span a dialysis session.
    FitAcrossSession,
    /// The last pre-dialysis level is outside the strategy's pre-dialysis range.
    PreDialysisRange,
    /// Dialysis sessions are recorded but `[patient] dialysis` is not true.
    DialysisCovariate,
    /// Saturable elimination: a dose near Vmax, whose steady state is very uncertain.
    NearVmax,
    /// Which of the drug profile's population models the estimate used, and why.
    ModelChoice,
}

impl Code {
    /// Every code, in declaration order.
    pub const ALL: [Code; 54] = [
        Code::OutsideWindow,
        Code::DistributionPhase,
        Code::RisingLevels,
        Code::NoInterval,
        Code::IntervalReachesZero,
        Code::Scatter,
        Code::OtherDose,
        Code::NoAmount,
        Code::PreDoseLevel,
        Code::NoVolume,
        Code::WideIntervals,
        Code::PriorWeighs,
        Code::PopulationCovariates,
        Code::OutsidePopulation,
        Code::ModelAssumes,
        Code::LevelUnexpected,
        Code::NoSuggestion,
        Code::DoseKept,
        Code::Proportional,
        Code::PlanOverlap,
        Code::Extrapolation,
        Code::NoTimeRange,
        Code::ProcedureBeforeData,
        Code::OralAbsorption,
        Code::AbsorptionPhase,
        Code::NonlinearKinetics,
        Code::AucNotSteady,
        Code::ProfileUnit,
        Code::ProfileKinetics,
        Code::ProfileRoute,
        Code::HalfLifeImplausible,
        Code::UnusedLevelSetsVolume,
        Code::RateLimit,
        Code::DoseLimit,
        Code::NoLoadingDose,
        Code::VolumeImplausible,
        Code::LevelImplausible,
        Code::OutsideRange,
        Code::ClockChange,
        Code::BelowLimit,
        Code::TargetsNotStrategy,
        Code::IntervalNotStrategy,
        Code::LargeDoseStep,
        Code::NotSteadyState,
        Code::BindingUncertain,
        Code::AboveVmax,
        Code::SaturableEstimate,
        Code::DialysisNotModelled,
        Code::NotPreDialysis,
        Code::FitAcrossSession,
        Code::PreDialysisRange,
        Code::DialysisCovariate,
        Code::NearVmax,
        Code::ModelChoice,
    ];

    /// The code as the JSON report spells it.
    pub fn as_str(self) -> &'static str {
        match self {
            Code::OutsideWindow => "outside-window",
            Code::DistributionPhase => "distribution-phase",
            Code::RisingLevels => "rising-levels",
            Code::NoInterval => "no-interval",
            Code::IntervalReachesZero => "interval-reaches-zero",
            Code::Scatter => "scatter",
            Code::OtherDose => "other-dose",
            Code::NoAmount => "no-amount",
            Code::PreDoseLevel => "pre-dose-level",
            Code::NoVolume => "no-volume",
            Code::WideIntervals => "wide-intervals",
            Code::PriorWeighs => "prior-weighs",
            Code::PopulationCovariates => "population-covariates",
            Code::OutsidePopulation => "outside-population",
            Code::ModelAssumes => "model-assumes",
            Code::LevelUnexpected => "level-unexpected",
            Code::NoSuggestion => "no-suggestion",
            Code::DoseKept => "dose-kept",
            Code::Proportional => "proportional",
            Code::PlanOverlap => "plan-overlap",
            Code::Extrapolation => "extrapolation",
            Code::NoTimeRange => "no-time-range",
            Code::ProcedureBeforeData => "procedure-before-data",
            Code::OralAbsorption => "oral-absorption",
            Code::AbsorptionPhase => "absorption-phase",
            Code::NonlinearKinetics => "nonlinear-kinetics",
            Code::AucNotSteady => "auc-not-steady",
            Code::ProfileUnit => "profile-unit",
            Code::ProfileKinetics => "profile-kinetics",
            Code::ProfileRoute => "profile-route",
            Code::HalfLifeImplausible => "half-life-implausible",
            Code::UnusedLevelSetsVolume => "unused-level-sets-volume",
            Code::RateLimit => "rate-limit",
            Code::DoseLimit => "dose-limit",
            Code::NoLoadingDose => "no-loading-dose",
            Code::VolumeImplausible => "volume-implausible",
            Code::LevelImplausible => "level-implausible",
            Code::OutsideRange => "outside-range",
            Code::ClockChange => "clock-change",
            Code::BelowLimit => "below-limit",
            Code::TargetsNotStrategy => "targets-not-strategy",
            Code::IntervalNotStrategy => "interval-not-strategy",
            Code::LargeDoseStep => "large-dose-step",
            Code::NotSteadyState => "not-steady-state",
            Code::BindingUncertain => "binding-uncertain",
            Code::AboveVmax => "above-vmax",
            Code::SaturableEstimate => "saturable-estimate",
            Code::DialysisNotModelled => "dialysis-not-modelled",
            Code::NotPreDialysis => "not-pre-dialysis",
            Code::FitAcrossSession => "fit-across-session",
            Code::PreDialysisRange => "pre-dialysis-range",
            Code::DialysisCovariate => "dialysis-covariate",
            Code::NearVmax => "near-vmax",
            Code::ModelChoice => "model-choice",
        }
    }
}

impl fmt::Display for Code {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// One warning: its code, the level it is about (file row), and its sentence.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Warning {
    code: Code,
    level_row: Option<usize>,
    text: String,
}

impl Warning {
    /// A warning about the case as a whole.
    pub fn new(code: Code, text: impl Into<String>) -> Self {
        Warning {
            code,
            level_row: None,
            text: text.into(),
        }
    }

    /// A warning about one level (its row in the file, counting from 1).
    pub fn about_level(code: Code, row: usize, text: impl Into<String>) -> Self {
        Warning {
            code,
            level_row: Some(row),
            text: text.into(),
        }
    }

    /// What it is about.
    pub fn code(&self) -> Code {
        self.code
    }

    /// The level it is about, when it is about one.
    pub fn level_row(&self) -> Option<usize> {
        self.level_row
    }

    /// The sentence people read.
    pub fn text(&self) -> &str {
        &self.text
    }
}

/// A warning reads as its sentence wherever text is expected.
impl std::ops::Deref for Warning {
    type Target = str;
    fn deref(&self) -> &str {
        &self.text
    }
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.text)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_are_distinct_kebab_case() {
        let mut seen = std::collections::HashSet::new();
        for c in Code::ALL {
            let s = c.as_str();
            assert!(seen.insert(s), "{s} twice");
            assert!(s.chars().all(|ch| ch.is_ascii_lowercase() || ch == '-'));
        }
    }

    #[test]
    fn a_warning_reads_as_its_sentence() {
        let w = Warning::about_level(Code::DistributionPhase, 3, "level 3 was drawn early");
        assert!(w.starts_with("level 3"));
        assert_eq!(w.to_string(), "level 3 was drawn early");
        assert_eq!(w.level_row(), Some(3));
        assert_eq!(w.code().as_str(), "distribution-phase");
    }
}
