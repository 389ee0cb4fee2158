//! The report as plain data: every figure of contract v1 in the case's unit and clock times,
//! plus the readable text form. The JSON wire form lives in `json`.

pub use crate::core::format::{method_word, num, when};
use crate::core::warning::{Code, Warning};
use std::io::{self, Write};

use crate::core::case::{Case, Targets};
use crate::core::clock::{span_words, ClockTime};
use crate::core::error::{Error, Result};
use crate::core::fit::{self, Fit};
use crate::core::fitted;
use crate::core::model::Disposition;
use crate::core::population::Summary;
use crate::core::projection::{self, Patient};
use crate::core::uncertainty;
use crate::core::units::auc_unit;
use crate::core::units::LevelUnit;

/// The caution shown first in every report, note and screen.
pub const CAUTION: &str = "Decision support only. Figures assume linear one-compartment kinetics. \
Check them against local protocols, with pharmacist or prescriber review, before acting.";

/// A short form of the caution for narrow screens.
pub const CAUTION_SHORT: &str =
    "Decision support only; one-compartment model; check local protocol and review before acting.";

/// The caution of a report whose fit is of a two-compartment model.
pub const CAUTION_TWO: &str =
    "Decision support only. Figures assume linear two-compartment kinetics. \
Check them against local protocols, with pharmacist or prescriber review, before acting.";

/// The short form of `CAUTION_TWO`.
pub const CAUTION_SHORT_TWO: &str =
    "Decision support only; two-compartment model; check local protocol and review before acting.";

/// The caution (full, short) for a fit of `compartments` compartments.
pub fn caution_for(compartments: u8) -> (&'static str, &'static str) {
    if compartments == 2 {
        (CAUTION_TWO, CAUTION_SHORT_TWO)
    } else {
        (CAUTION, CAUTION_SHORT)
    }
}

/// The fit, as reported.
#[derive(Debug, Clone, PartialEq)]
pub struct FitSection {
    /// "two-point" or "log-linear".
    pub method: &'static str,
    /// Rows of the levels in the fit.
    pub level_rows: Vec<usize>,
    /// k in 1/h.
    pub k_per_h: f64,
    /// Half-life in h.
    pub half_life_h: f64,
    /// r² (log-linear only).
    pub r_squared: Option<f64>,
    /// 95 % interval of k.
    pub k_ci95_per_h: Option<[f64; 2]>,
    /// 95 % interval of the half-life.
    pub half_life_ci95_h: Option<[f64; 2]>,
    /// Volume in L.
    pub volume_l: Option<f64>,
    /// "pre-dose level" or "dose record".
    pub volume_method: Option<&'static str>,
    /// Row of the pre-dose level used for the volume.
    pub pre_dose_row: Option<usize>,
    /// Clearance in L/h.
    pub clearance_l_per_h: Option<f64>,
    /// Row of the dose whose interval holds the fitted levels.
    pub window_dose_row: usize,
    /// 95 % interval of V in L (dose-history and Bayesian fits).
    pub volume_ci95_l: Option<[f64; 2]>,
    /// 95 % interval of the clearance in L/h (dose-history and Bayesian fits).
    pub clearance_ci95_l_per_h: Option<[f64; 2]>,
    /// The population values and the move from them (Bayesian fits).
    pub population: Option<Summary>,
    /// 1 or 2.
    pub compartments: u8,
    /// The second compartment of a two-compartment fit (`k_per_h` and `half_life_h` are then
    /// the terminal ones, `volume_l` the central volume).
    pub peripheral: Option<Peripheral>,
}

/// What a two-compartment fit adds to the fit section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Peripheral {
    /// Peripheral volume V2, L.
    pub volume_l: f64,
    /// Intercompartmental clearance Q, L/h.
    pub intercompartmental_l_per_h: f64,
    /// The distribution rate constant α, 1/h.
    pub alpha_per_h: f64,
    /// ln 2 / α, hours.
    pub distribution_half_life_h: f64,
    /// The range of V2 when the model lets it vary between patients (95 %, or the population's
    /// 90 % without a level); None when the model holds it at its typical value.
    pub volume_range_l: Option<[f64; 2]>,
    /// Whether the model holds the central volume at its typical value (no between-patient
    /// spread), so no level moves it.
    pub central_fixed: bool,
}

/// One target and whether the plan meets it.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetCheck {
    /// "peak", "trough" or "AUC24".
    pub name: &'static str,
    /// The target in words, e.g. `5–10` or `<= 1`.
    pub wanted: String,
    /// The projected value.
    pub value: f64,
    /// Whether it holds.
    pub met: bool,
}

/// The plan at steady state, as reported (concentrations in the level unit).
#[derive(Debug, Clone, PartialEq)]
pub struct PlanSection {
    /// 1/(1 - e^(-k·tau)).
    pub accumulation_factor: f64,
    /// Steady-state peak at the end of the infusion (bolus, oral: just after the dose).
    pub peak_ss: Option<f64>,
    /// Addition: the steady-state peak at the strategy's sampling time, when that is after
    /// the end of the infusion (peak targets are checked on it).
    pub peak_sampled_ss: Option<f64>,
    /// Addition: hours after the end of the infusion the peak target is defined at (0: end).
    pub peak_sampled_after_h: f64,
    /// Addition: hours per interval at or below the trough ceiling (strategies that care).
    pub drug_free_h: Option<f64>,
    /// Addition: hours after the start of a dose at which `peak_ss` falls (the end of the
    /// infusion; 0 for a bolus or an instant oral dose; the absorbed peak's time for an oral
    /// dose with a known absorption rate).
    pub peak_after_dose_h: f64,
    /// Addition: whether the plan's oral doses are absorbed first-order (the peak is then the
    /// highest level of the interval, not the level just after the dose).
    pub peak_absorbed: bool,
    /// Addition: the steady-state level 12 h after a dose, for a strategy that samples at
    /// 12 h (lithium); checked against the strategy's range by the profile warnings.
    pub level_12h_ss: Option<f64>,
    /// Steady-state trough.
    pub trough_ss: Option<f64>,
    /// Steady-state AUC over 24 h (level unit x h).
    pub auc24_ss: Option<f64>,
    /// Hours to 90 %, 95 %, 97 % of steady state.
    pub time_to_ss_h: [f64; 3],
    /// Whether every given target holds (None without targets or without V).
    pub meets_targets: Option<bool>,
    /// Each target on its own.
    pub checks: Vec<TargetCheck>,
    /// When the first plan dose falls.
    pub start: ClockTime,
    /// 95 % range of the steady-state peak (dose-history and Bayesian fits).
    pub peak_ss_ci95: Option<[f64; 2]>,
    /// 95 % range of the steady-state trough (dose-history and Bayesian fits).
    pub trough_ss_ci95: Option<[f64; 2]>,
    /// 95 % range of the steady-state AUC24 (dose-history and Bayesian fits).
    pub auc24_ss_ci95: Option<[f64; 2]>,
}

/// The threshold, as reported.
#[derive(Debug, Clone, PartialEq)]
pub struct ThresholdSection {
    /// The threshold in the level unit.
    pub below: f64,
    /// Where the projection starts.
    pub t0: ClockTime,
    /// The model's value at t0, level unit.
    pub c0: f64,
    /// When the level is at or below the threshold (rounded up to the minute).
    pub reached_at: ClockTime,
    /// Hours from t0 to `reached_at` (unrounded).
    pub hours_from_t0: f64,
    /// The 95 % range of `reached_at`.
    pub reached_at_ci95: Option<[ClockTime; 2]>,
    /// The procedure time, if given.
    pub procedure: Option<ClockTime>,
    /// The latest plan dose that still lets the level be below at the procedure.
    pub latest_plan_dose: Option<ClockTime>,
    /// Addition: how long the procedure lasts, hours (0 when not given).
    pub procedure_h: f64,
    /// Addition: plan doses that start before the procedure (with a plan and a procedure).
    pub plan_doses_before_procedure: Option<usize>,
    /// Addition: of those, the ones that have fully entered by the procedure.
    pub plan_doses_done_before_procedure: Option<usize>,
    /// The level at the procedure (level unit): the highest over the procedure window.
    pub level_at_procedure: Option<f64>,
    /// Addition: when the regimen may resume after the procedure (rounded up to the minute).
    pub resume_at: Option<ClockTime>,
    /// Addition: the level then (level unit).
    pub level_at_resume: Option<f64>,
}

/// One washout row, as reported.
#[derive(Debug, Clone, PartialEq)]
pub struct WashoutEntry {
    /// Whole half-lives since the end of the last dose.
    pub half_lives: u32,
    /// When.
    pub at: ClockTime,
    /// The level then (level unit).
    pub level: f64,
    /// 0.5^n.
    pub fraction_remaining: f64,
}

/// A whole report.
#[derive(Debug, Clone, PartialEq)]
pub struct Report {
    /// The case's level unit.
    pub unit: LevelUnit,
    /// The fit.
    pub fit: FitSection,
    /// The plan, when the case has one.
    pub plan: Option<PlanSection>,
    /// The threshold, when the case has one.
    pub threshold: Option<ThresholdSection>,
    /// The washout table.
    pub washout: Vec<WashoutEntry>,
    /// When the washout table starts (end of the last dose, or the last fitted level).
    pub washout_from: ClockTime,
    /// Specific warnings, most important first.
    pub warnings: Vec<Warning>,
    /// Suggested regimens, loading dose, AUC24 by two methods and the switch.
    pub advice: crate::core::advice::AdviceSection,
    /// The patient's covariates and what is derived from them.
    pub patient: PatientSection,
    /// Haemodialysis sessions (marked, not modelled), when the case records any.
    pub dialysis: Option<crate::core::dialysis::DialysisSection>,
}

/// The patient's covariates as recorded and the body size and kidney function derived from
/// them (creatinine clearance here: Cockcroft-Gault on total body weight; a population model
/// computes its own, shown with the fit).
#[derive(Debug, Clone, PartialEq)]
pub struct PatientSection {
    /// The recorded patient.
    pub recorded: crate::core::case::Patient,
    /// Ideal and adjusted body weight, BMI.
    pub body: crate::core::renal::BodySize,
    /// Cockcroft-Gault on total body weight, mL/min, when age, weight, sex and creatinine are known.
    pub crcl_ml_min: Option<f64>,
}

impl PatientSection {
    /// The figures for `p`.
    pub fn of(p: &crate::core::case::Patient) -> Self {
        PatientSection {
            recorded: p.clone(),
            body: crate::core::renal::body_size(p),
            crcl_ml_min: crate::core::renal::creatinine_clearance(p)
                .ok()
                .map(|c| c.ml_min),
        }
    }
}

fn place(case: &Case, t: f64, what: &str) -> Result<ClockTime> {
    case.clock.at_minute(t).ok_or_else(|| {
        Error::invalid(
            what,
            "lies too far from the case's dates to be placed on a calendar; check the levels and times",
        )
    })
}

fn place_up(case: &Case, t: f64, what: &str) -> Result<ClockTime> {
    case.clock.at_minute_up(t).ok_or_else(|| {
        Error::invalid(
            what,
            "lies too far from the case's dates to be placed on a calendar; check the threshold and levels",
        )
    })
}

/// Fit the case and build every part of the report.
///
/// # Errors
/// The fit's errors, or a projected time too far away for any calendar.
pub fn build(case: &Case) -> Result<Report> {
    let fit = fit::fit(case)?;
    build_from_fit(case, &fit)
}

/// Build the report from a fit already made.
///
/// # Errors
/// A projected time too far away for any calendar, or a figure that is not finite.
pub fn build_from_fit(case: &Case, fit: &Fit) -> Result<Report> {
    let scale = case.drug.scale;
    let to = |mg_l: f64| scale.to_level(mg_l);
    let patient = Patient::new(case, fit);
    let mut warnings = fit.warnings.clone();
    if fit.two.is_some() {
        two_compartment_phase(&mut warnings);
    }
    shape_warnings(case, fit, &mut warnings);
    warnings.extend(crate::core::dialysis::warnings(
        case,
        &fit.used,
        scale.unit.as_str(),
    ));

    let fit_part = FitSection {
        method: fit.method.name(),
        level_rows: fit.used.iter().map(|&i| case.levels[i].row).collect(),
        k_per_h: fit.k,
        half_life_h: fit.half_life_h,
        r_squared: fit.r_squared,
        k_ci95_per_h: fit.k_ci95,
        half_life_ci95_h: fit.half_life_ci95,
        volume_l: patient.v(),
        volume_method: patient.v().and(fit.volume_method.map(|m| m.name())),
        pre_dose_row: fit.pre_dose_level.map(|i| case.levels[i].row),
        clearance_l_per_h: patient.v().and(fit.clearance_l_per_h),
        window_dose_row: case.doses.get(fit.window_dose).map_or(0, |d| d.row),
        volume_ci95_l: patient.v().and(fit.volume_ci95),
        clearance_ci95_l_per_h: patient.v().and(fit.clearance_ci95),
        population: fit.population.clone(),
        compartments: fit.compartments(),
        peripheral: fit.two.map(|t| {
            let (alpha, _) = t.rates();
            let var = |i: usize| {
                fit.param_spread
                    .as_ref()
                    .and_then(|s| {
                        s.cov
                            .get(i)
                            .and_then(|r| r.get(i))
                            .map(|v| (*v, s.quantile))
                    })
                    .filter(|(v, _)| *v > 0.0)
            };
            Peripheral {
                volume_l: t.v2,
                intercompartmental_l_per_h: t.q,
                alpha_per_h: alpha,
                distribution_half_life_h: crate::core::model::half_life(alpha),
                volume_range_l: var(3).map(|(v, q)| {
                    let h = q * v.sqrt();
                    [t.v2 * (-h).exp(), t.v2 * h.exp()]
                }),
                central_fixed: var(1).is_none(),
            }
        }),
    };

    let plan = match &case.plan {
        None => None,
        Some(pl) => {
            let mut drug_free_h = None;
            let pp = projection::plan(&patient, pl);
            let ranges = patient
                .v()
                .and_then(|_| uncertainty::steady_ranges(fit, pl));
            let (peak, trough, auc) = match pp.steady {
                Some(s) => (
                    Some(to(s.peak_mg_l)),
                    Some(to(s.trough_mg_l)),
                    Some(to(s.auc24_mg_h_l)),
                ),
                None => (None, None, None),
            };
            if pp.steady.is_none() {
                warnings.push(Warning::new(Code::NoVolume,
                    "no volume: steady-state peak, trough and AUC24 cannot be projected; the times to steady state still hold",
                ));
            }
            // Peak targets are defined at the strategy's sampling time after the end of the
            // infusion: report that peak beside the end-of-infusion one and check it.
            let after = case.regimen.peak_sampled_after_h;
            // The course's shape (per litre when no volume is known: only ratios are used).
            let shape = fit
                .disposition()
                .unwrap_or(Disposition::One { k: fit.k, v: 1.0 });
            let sampled = pp.steady.map(|s| {
                crate::core::regimen::for_targets(s, pl.route, pl.interval_h, &shape, after)
                    .peak_mg_l
            });
            let peak_sampled = sampled.filter(|_| after > 0.0).map(to);
            let level_12h_ss = match (pp.steady, patient.disposition()) {
                (Some(_), Some(d)) if (after - LEVEL_12H_AFTER_H).abs() < 1e-9 => {
                    Some(to(d.steady_level(
                        pl.dose_mg,
                        pl.route,
                        pl.interval_h,
                        // With a shorter interval, 12 h after a dose falls in a later one.
                        match LEVEL_12H_AFTER_H.rem_euclid(pl.interval_h) {
                            s if s > 0.0 => s,
                            _ => pl.interval_h.min(LEVEL_12H_AFTER_H),
                        },
                    )))
                }
                _ => None,
            };
            let checks = target_checks(&case.targets, peak_sampled.or(peak), trough, auc);
            if let Some(d) = patient.disposition() {
                plan_limit_warnings(case, pl, &mut warnings);
                let drug_free = match (case.regimen.drug_free_time, case.targets.trough_max) {
                    (true, Some(m)) => Some(crate::core::regimen::drug_free_h(
                        pl.dose_mg,
                        pl.route,
                        pl.interval_h,
                        &d,
                        scale.to_mg_l(m),
                    )),
                    _ => None,
                };
                drug_free_h = drug_free;
            }
            let meets = if checks.is_empty() {
                None
            } else {
                Some(checks.iter().all(|c| c.met))
            };
            if matches!(pl.route, crate::core::model::Route::Infusion { .. })
                && pl.start_t < patient.last_dose_end()
            {
                warnings.push(Warning::new(
                    Code::PlanOverlap,
                    "the plan's first dose starts before the last recorded dose has finished",
                ));
            }
            Some(PlanSection {
                accumulation_factor: pp.accumulation_factor,
                peak_ss: peak,
                peak_sampled_ss: peak_sampled,
                peak_sampled_after_h: after,
                drug_free_h,
                peak_after_dose_h: shape
                    .steady_state(pl.dose_mg, pl.route, pl.interval_h)
                    .peak_after_h,
                peak_absorbed: pl.route.absorption().is_some(),
                level_12h_ss,
                trough_ss: trough,
                auc24_ss: auc,
                time_to_ss_h: pp.time_to_ss_h,
                meets_targets: meets,
                checks,
                start: place(case, pl.start_t, "plan.start")?,
                peak_ss_ci95: ranges.map(|r| r.peak.map(to)),
                trough_ss_ci95: ranges.map(|r| r.trough.map(to)),
                auc24_ss_ci95: ranges.map(|r| r.auc24.map(to)),
            })
        }
    };

    let threshold = match &case.threshold {
        None => None,
        Some(th) => {
            let tp = projection::threshold_window(
                &patient,
                scale.to_mg_l(th.below),
                th.procedure_t,
                th.procedure_h,
            );
            let hours = tp.reached_t - tp.t0;
            if hours > 3.0 * fit.half_life_h {
                warnings.push(Warning::new(Code::Extrapolation, format!(
                    "the threshold is reached {} after the last data, more than three half-lives: an extrapolation that assumes k stays as fitted",
                    span_words(hours)
                )));
            }
            // One crossing computation for the threshold and the switch.
            let reached_ci95_t =
                uncertainty::crossing_range(&patient, tp.t0, tp.c0_mg_l, tp.below_mg_l);
            if fit.spread.is_some() && reached_ci95_t.is_none() {
                warnings.push(Warning::new(Code::NoTimeRange,
                    "the spread of k is too wide to bound when the level falls below the threshold: the 95 % range is not given",
                ));
            }
            let ci = match reached_ci95_t {
                Some([a, b]) => Some([
                    place_up(case, a, "threshold.below")?,
                    place_up(case, b, "threshold.below")?,
                ]),
                None => None,
            };
            if let (Some(t), true) = (th.procedure_t, case.plan.is_some()) {
                if tp.latest_plan_dose.is_none() && patient.v().is_none() {
                    warnings.push(Warning::new(
                        Code::NoVolume,
                        "no volume: the latest plan dose before the procedure cannot be found",
                    ));
                }
                if t < tp.t0 {
                    warnings.push(Warning::new(
                        Code::ProcedureBeforeData,
                        "the procedure time is before the last dose or level",
                    ));
                }
            }
            let latest = match tp.latest_plan_dose {
                Some((_, t)) => Some(place(case, t, "plan.start")?),
                None => None,
            };
            let resume = th.procedure_t.and_then(|t| {
                crate::core::procedure::resume(
                    &patient,
                    &tp,
                    t,
                    th.procedure_h,
                    th.resume_below.map(|x| scale.to_mg_l(x)),
                    th.resume_after_h,
                )
            });
            let resume_at = match &resume {
                Some(r) => Some(place_up(case, r.resume_t, "threshold.resume_below")?),
                None => None,
            };
            Some(ThresholdSection {
                below: th.below,
                t0: place_up(case, tp.t0, "threshold")?,
                c0: to(tp.c0_mg_l),
                reached_at: place_up(case, tp.reached_t, "threshold.below")?,
                hours_from_t0: hours,
                reached_at_ci95: ci,
                procedure: match th.procedure_t {
                    Some(t) => Some(place(case, t, "threshold.procedure")?),
                    None => None,
                },
                latest_plan_dose: latest,
                procedure_h: th.procedure_h,
                plan_doses_before_procedure: tp.plan_doses_before,
                plan_doses_done_before_procedure: tp.plan_doses_done_before,
                level_at_procedure: tp.level_at_procedure_mg_l.map(to),
                resume_at,
                level_at_resume: resume.map(|r| to(r.level_mg_l)),
            })
        }
    };

    let plan_peak_mg_l = plan
        .as_ref()
        .and_then(|p| p.peak_ss)
        .map(|x| scale.to_mg_l(x));
    let advice = crate::core::advice::build(case, fit, plan_peak_mg_l, &mut warnings)?;
    let below_mg_l = case.threshold.as_ref().map(|t| scale.to_mg_l(t.below));
    // No dose on record (a regimen before the first dose): nothing to wash out yet.
    let rows = if case.doses.is_empty() {
        Vec::new()
    } else {
        projection::washout(&patient, below_mg_l)
    };
    let washout_start = if case.doses.is_empty() {
        case.plan.as_ref().map_or(0.0, |p| p.start_t)
    } else {
        projection::washout_start(&patient)
    };
    let mut washout = Vec::with_capacity(rows.len());
    for r in rows {
        washout.push(WashoutEntry {
            half_lives: r.half_lives,
            at: place(case, r.t, "washout (half-life)")?,
            level: to(r.level_mg_l),
            fraction_remaining: r.fraction_remaining,
        });
    }
    let report = Report {
        unit: scale.unit,
        fit: fit_part,
        plan,
        threshold,
        washout,
        washout_from: place(case, washout_start, "washout")?,
        warnings,
        advice,
        patient: PatientSection::of(&case.patient),
        dialysis: crate::core::dialysis::section(case),
    };
    check_finite(&report)?;
    Ok(report)
}

/// Where the reported steady-state peak falls, in words.
pub fn peak_where(p: &PlanSection) -> String {
    if p.peak_absorbed {
        format!(
            "{} after the dose (oral absorption, first-order)",
            span_words(p.peak_after_dose_h)
        )
    } else if p.peak_after_dose_h > 0.0 {
        "at the end of the infusion".into()
    } else {
        "just after the dose".into()
    }
}

/// The sampling time of the standard lithium level: 12 h after the dose (common practice;
/// NICE CKS lithium monitoring). A strategy whose peak is sampled then gets `level_12h_ss`.
pub const LEVEL_12H_AFTER_H: f64 = 12.0;

/// A fitted half-life below this (5 minutes, in hours) is flagged as implausible: the
/// drugs managed by levels have half-lives of an hour or more even with the fastest
/// clearance (common practice), so such a fit comes from a slip in the times.
pub const MIN_PLAUSIBLE_HALF_LIFE_H: f64 = 5.0 / 60.0;
/// Levels reported below the assay's limit: the Bayesian estimate takes each as an upper
/// bound; no other method can, so there it is left out and the fitted course is checked
/// against it.
fn below_limit_warnings(case: &Case, fit: &Fit, warnings: &mut Vec<Warning>) {
    let patient = Patient::new(case, fit);
    let u = case.drug.scale.unit.as_str();
    for l in case.levels.iter().filter(|l| l.below_limit) {
        let model = case.drug.scale.to_level(patient.level_mg_l(l.t));
        let check = if model.is_finite() && model > l.value {
            format!(
                "the fitted course gives {} {u} then, ABOVE that limit: the fit and the laboratory disagree; check the times, the doses and the fit",
                num(model)
            )
        } else {
            format!(
                "the fitted course gives {} {u} then, below the limit, as it should",
                num(model)
            )
        };
        let used = if fit.method == fit::Method::Bayesian {
            "the Bayesian estimate takes it as an upper bound (the chance that the level lies below the limit), not as a value"
        } else {
            "this fit cannot use a level known only to lie below a limit, so it is left out and only bounds the level at that time"
        };
        warnings.push(Warning::about_level(
            Code::BelowLimit,
            l.row,
            format!(
                "level {} was reported below the assay's limit ({} {u}): {used}; {check}",
                l.row,
                l.value_words()
            ),
        ));
    }
}

/// Warnings read off the shape of the data: timing, route and curvature.
fn shape_warnings(case: &Case, fit: &Fit, warnings: &mut Vec<Warning>) {
    below_limit_warnings(case, fit, warnings);
    if case.doses.iter().any(|d| d.route.is_instant_oral())
        || case
            .plan
            .as_ref()
            .is_some_and(|p| p.route.is_instant_oral())
    {
        warnings.push(Warning::new(Code::OralAbsorption,
            "no absorption rate (ka) is known for these oral doses (the drug profile gives no formulation), so each is modelled as an instant dose of F x amount: measured peaks will be lower and later than projected",
        ));
    }
    if fit.half_life_h.is_finite() && fit.half_life_h < MIN_PLAUSIBLE_HALF_LIFE_H {
        let seconds = fit.half_life_h * 3600.0;
        let shown = if seconds < 60.0 {
            format!("{} s", num(seconds))
        } else {
            format!("{} min", num(seconds / 60.0))
        };
        warnings.push(Warning::new(
            Code::HalfLifeImplausible,
            format!(
                "the fitted half-life is {shown}, far below any drug managed by levels (under 5 minutes): check the dates and times of the levels and doses before using any figure here"
            ),
        ));
    }
    if matches!(
        fit.method,
        fit::Method::DoseHistory | fit::Method::Bayesian | fit::Method::Population
    ) {
        // These fits span doses: their own warnings cover the timing of each level.
        return;
    }
    let dose = &case.doses[fit.window_dose];
    if let Some(a) = dose.route.absorption() {
        // Before about the peak of the dose the level is still rising, or falling slower than
        // elimination alone: the log-linear line through it understates k.
        let peak_after = crate::core::model::single_peak_time(dose.route, fit.k);
        for &i in &fit.used {
            let after = case.levels[i].t - dose.t;
            if after < peak_after {
                warnings.push(Warning::about_level(Code::AbsorptionPhase, case.levels[i].row, format!(
                    "{} was drawn {} after oral dose {}, before its expected peak (about {} after it, absorption rate {} /h{}): it is in the absorption phase, where the log-linear fit understates k; use levels drawn after the peak, or the dose-history fit, which models absorption",
                    case.level_name(i),
                    span_words(after),
                    dose.row,
                    span_words(peak_after),
                    num(a.ka_per_h),
                    if a.lag_h > 0.0 { format!(", lag {} h", num(a.lag_h)) } else { String::new() }
                )));
            }
        }
    }
    for &i in &fit.used {
        let after = case.levels[i].t - dose.end();
        if fitted::in_distribution_phase(after, fitted::DISTRIBUTION_PHASE_H) {
            warnings.push(Warning::about_level(Code::DistributionPhase, case.levels[i].row, format!(
                "{} was drawn {} after the end of dose {}: it may be in the distribution phase, which would overstate k",
                case.level_name(i),
                span_words(after),
                dose.row
            )));
        }
    }
    // Curvature: compare the first and the last segment's slopes (3 or more levels).
    if fit.used.len() >= 3 {
        let seg = |a: usize, b: usize| {
            let (la, lb) = (&case.levels[a], &case.levels[b]);
            (la.mg_l / lb.mg_l).ln() / (lb.t - la.t)
        };
        let u = &fit.used;
        let (first, last) = (seg(u[0], u[1]), seg(u[u.len() - 2], u[u.len() - 1]));
        if first > 0.0 && last > 0.0 {
            if last > 1.5 * first {
                warnings.push(Warning::new(Code::NonlinearKinetics,
                    "the levels fall faster as they get lower: elimination may be saturable (nonlinear kinetics), and first-order projections would mislead",
                ));
            } else if first > 1.5 * last {
                warnings.push(Warning::new(Code::DistributionPhase, format!(
                    "the early levels fall faster than the later ones: {} may be in the distribution phase",
                    case.level_name(u[0])
                )));
            }
        }
    }
}

/// With a two-compartment fit a level drawn in the distribution phase is described by the
/// model: the warnings that it may bias k are replaced by one saying it is used as drawn.
fn two_compartment_phase(warnings: &mut Vec<Warning>) {
    let rows: Vec<usize> = warnings
        .iter()
        .filter(|w| w.code() == Code::DistributionPhase)
        .filter_map(|w| w.level_row())
        .collect();
    warnings.retain(|w| !(w.code() == Code::DistributionPhase && w.level_row().is_some()));
    if !rows.is_empty() {
        let names: Vec<String> = rows.iter().map(|r| format!("level {r}")).collect();
        warnings.push(Warning::new(
            Code::DistributionPhase,
            format!(
                "{} drawn in the distribution phase: the two-compartment model describes that phase, so {} used as drawn (the fit still rests on when each was drawn: check the times)",
                names.join(", "),
                if rows.len() == 1 { "it is" } else { "they are" }
            ),
        ));
    }
}

/// Flag a plan that breaks one of the profile's limits: the infusion rate, the single or the
/// daily dose.
fn plan_limit_warnings(case: &Case, pl: &crate::core::case::Plan, warnings: &mut Vec<Warning>) {
    let o = &case.regimen;
    if let (crate::core::model::Route::Infusion { hours }, Some(r)) =
        (pl.route, o.max_rate_mg_per_min)
    {
        let rate = pl.dose_mg / (hours * 60.0);
        if rate > r + 1e-9 {
            warnings.push(Warning::new(Code::RateLimit, format!(
                "the plan infuses {} mg over {} h, {} mg/min: faster than the profile's maximum of {} mg/min; give it over at least {} h",
                num(pl.dose_mg),
                num(hours),
                num(rate),
                num(r),
                num((pl.dose_mg / (r * 60.0) * 4.0 - 1e-9).ceil() / 4.0)
            )));
        }
    }
    if let Some(m) = o.max_single_dose_mg.filter(|m| pl.dose_mg > *m) {
        warnings.push(Warning::new(
            Code::DoseLimit,
            format!(
                "the plan's dose of {} mg is above the profile's largest single dose of {} mg",
                num(pl.dose_mg),
                num(m)
            ),
        ));
    }
    let daily = pl.dose_mg * 24.0 / pl.interval_h;
    if let Some(m) = o.max_daily_dose_mg.filter(|m| daily > *m * (1.0 + 1e-9)) {
        warnings.push(Warning::new(
            Code::DoseLimit,
            format!(
                "the plan gives {} mg a day, above the profile's largest daily dose of {} mg",
                num(daily),
                num(m)
            ),
        ));
    }
}

/// What the report says about the plan doses before a procedure (`u` is the level unit).
pub fn procedure_words(t: &ThresholdSection, has_plan: bool, u: &str) -> String {
    let held = if t.procedure_h > 0.0 {
        "the highest level during it"
    } else {
        "level at the procedure"
    };
    match (&t.latest_plan_dose, t.level_at_procedure) {
        (Some(d), Some(l)) => format!(
            "the last plan dose that may be given is {} ({held} {} {u})",
            when(d),
            num(l)
        ),
        (None, Some(l)) if l <= t.below && has_plan => match (
            t.plan_doses_before_procedure,
            t.plan_doses_done_before_procedure,
        ) {
            (Some(0), _) => format!(
                "no plan dose falls before the procedure (level then {} {u}, at or below the threshold)",
                num(l)
            ),
            (_, Some(0)) => format!(
                "hold every plan dose before it: the first would still be infusing at the procedure (level with none {} {u})",
                num(l)
            ),
            _ => format!(
                "hold every plan dose before it: even the first would leave the level above the threshold (level with none {} {u})",
                num(l)
            ),
        },
        (None, Some(l)) if has_plan => format!(
            "NOT below even if every plan dose is held (level then {} {u})",
            num(l)
        ),
        (None, Some(l)) => format!("level then {} {u}", num(l)),
        (_, None) => "level not known".into(),
    }
}

fn target_checks(
    t: &Targets,
    peak: Option<f64>,
    trough: Option<f64>,
    auc: Option<f64>,
) -> Vec<TargetCheck> {
    let mut out = Vec::new();
    if let (Some([lo, hi]), Some(v)) = (t.peak, peak) {
        out.push(TargetCheck {
            name: "peak",
            wanted: format!("{}–{}", num(lo), num(hi)),
            value: v,
            met: v >= lo && v <= hi,
        });
    }
    if let (Some(max), Some(v)) = (t.trough_max, trough) {
        out.push(TargetCheck {
            name: "trough",
            wanted: format!("<= {}", num(max)),
            value: v,
            met: v <= max,
        });
    }
    if let (Some([lo, hi]), Some(v)) = (t.auc24, auc) {
        out.push(TargetCheck {
            name: "AUC24",
            wanted: format!("{}–{}", num(lo), num(hi)),
            value: v,
            met: v >= lo && v <= hi,
        });
    }
    out
}

/// How a range is named: the population's 90 % range before any level, else a 95 % range.
pub fn range_name(method: &str) -> &'static str {
    if method == "population" {
        "90 % population range"
    } else {
        "95 % range"
    }
}

/// Every figure must be finite; the first part holding one that is not is named (the fit by
/// its levels, then the plan, the threshold and the washout).
fn check_finite(r: &Report) -> Result<()> {
    let mut fit = vec![r.fit.k_per_h, r.fit.half_life_h];
    fit.extend(r.fit.r_squared);
    fit.extend(r.fit.k_ci95_per_h.into_iter().flatten());
    fit.extend(r.fit.half_life_ci95_h.into_iter().flatten());
    fit.extend(r.fit.volume_l);
    fit.extend(r.fit.clearance_l_per_h);
    fit.extend(r.fit.volume_ci95_l.into_iter().flatten());
    fit.extend(r.fit.clearance_ci95_l_per_h.into_iter().flatten());
    if let Some(s) = &r.fit.population {
        let p = &s.population;
        fit.extend([p.k_per_h, p.volume_l, p.clearance_l_per_h]);
        fit.extend([s.elimination_shift_sd, s.volume_shift_sd]);
    }
    let mut plan = Vec::new();
    if let Some(p) = &r.plan {
        plan.push(p.accumulation_factor);
        for range in [p.peak_ss_ci95, p.trough_ss_ci95, p.auc24_ss_ci95] {
            plan.extend(range.into_iter().flatten());
        }
        plan.extend(p.peak_ss);
        plan.extend(p.trough_ss);
        plan.extend(p.auc24_ss);
        plan.extend(p.time_to_ss_h);
    }
    let mut threshold = Vec::new();
    if let Some(t) = &r.threshold {
        threshold.push(t.c0);
        threshold.extend(t.level_at_procedure);
        threshold.extend(t.level_at_resume);
    }
    let washout: Vec<f64> = r.washout.iter().map(|w| w.level).collect();
    for (place, xs, check) in [
        (
            "level",
            fit,
            "the level values and times and the dose amounts",
        ),
        (
            "plan",
            plan,
            "plan.dose_mg, plan.interval_h and plan.infusion_h",
        ),
        ("threshold", threshold, "threshold.below and the levels"),
        ("washout", washout, "the level values and times"),
    ] {
        if !xs.iter().all(|x| x.is_finite()) {
            return Err(Error::invalid(
                place,
                format!("the values are too extreme for the model to give finite figures; check {check}"),
            ));
        }
    }
    Ok(())
}

/// Write the readable report.
///
/// # Errors
/// Only the writer's errors.
pub fn write_text(w: &mut dyn Write, case: &Case, r: &Report) -> io::Result<()> {
    let u = r.unit.as_str();
    let title = match (&case.patient.label, case.drug.name.as_str()) {
        (Some(l), "") => l.clone(),
        (Some(l), d) => format!("{l} — {d}"),
        (None, "") => "case".into(),
        (None, d) => d.to_string(),
    };
    writeln!(w, "CAUTION: {}", caution_for(r.fit.compartments).0)?;
    writeln!(w)?;
    writeln!(w, "ebb report: {title} (levels in {u})")?;
    writeln!(w)?;

    let f = &r.fit;
    let rows: Vec<String> = f.level_rows.iter().map(|r| r.to_string()).collect();
    let spans_doses = matches!(f.method, "dose-history" | "bayesian" | "population");
    if !spans_doses {
        writeln!(
            w,
            "Fit: {} over {} levels (level {}) after dose {}",
            method_word(f.method),
            f.level_rows.len(),
            rows.join(", "),
            f.window_dose_row
        )?;
    } else if rows.is_empty() {
        writeln!(
            w,
            "Fit: {} model alone (no level in the fit)",
            method_word(f.method)
        )?;
    } else {
        writeln!(
            w,
            "Fit: {} over {} level{} (level {}) against the whole dose record",
            method_word(f.method),
            rows.len(),
            if rows.len() == 1 { "" } else { "s" },
            rows.join(", ")
        )?;
    }
    let range_words = if f.method == "population" {
        "90 % population range"
    } else {
        "95 % interval"
    };
    let ci = |c: Option<[f64; 2]>| match c {
        Some([a, b]) => format!("({range_words} {} to {})", num(a), num(b)),
        None => "(no interval)".into(),
    };
    let terminal = if f.peripheral.is_some() {
        " (terminal)"
    } else {
        ""
    };
    if let Some(pe) = &f.peripheral {
        writeln!(
            w,
            "  model       two compartments: distribution half-life {} h, then the terminal phase below",
            num(pe.distribution_half_life_h)
        )?;
    }
    writeln!(
        w,
        "  k           {} /h  {}{terminal}",
        num(f.k_per_h),
        ci(f.k_ci95_per_h)
    )?;
    writeln!(
        w,
        "  half-life   {} h  {}{terminal}",
        num(f.half_life_h),
        ci(f.half_life_ci95_h)
    )?;
    if let Some(r2) = f.r_squared {
        writeln!(w, "  r²          {r2:.4}")?;
    }
    // A population model that gives the volume no between-patient variability holds it at
    // its typical value: the levels cannot move it.
    let volume_fixed = f
        .population
        .as_ref()
        .is_some_and(|s| s.prior_share[1].is_none());
    match (f.volume_l, f.volume_method) {
        (Some(v), Some(m)) => {
            let by = match f.pre_dose_row {
                Some(row) if m == "pre-dose level" => format!("by pre-dose level {row}"),
                _ if spans_doses => {
                    let how = if f.method == "population" {
                        "the population model's"
                    } else if f.peripheral.is_some_and(|p| p.central_fixed) || volume_fixed {
                        "the model's typical value: the model does not let it vary"
                    } else if f.peripheral.is_some() {
                        "estimated with the clearance"
                    } else {
                        "fitted with k"
                    };
                    match f.volume_ci95_l {
                        Some([a, b]) => {
                            format!("{how}; {range_words} {} to {}", num(a), num(b))
                        }
                        None => format!("{how}; no interval"),
                    }
                }
                _ => format!("by {m}"),
            };
            match &f.peripheral {
                Some(pe) => {
                    writeln!(w, "  volume      {} L central  ({by})", num(v))?;
                    let v2 = match (pe.volume_range_l, f.method == "population") {
                        (Some([a, b]), true) => {
                            format!(
                                "the population model's; {range_words} {} to {}",
                                num(a),
                                num(b)
                            )
                        }
                        (Some([a, b]), false) => {
                            format!("estimated; {range_words} {} to {}", num(a), num(b))
                        }
                        (None, _) => "the model's typical value".to_string(),
                    };
                    writeln!(w, "              {} L peripheral  ({v2})", num(pe.volume_l))?;
                    writeln!(
                        w,
                        "              exchanging at {} L/h  (the model's typical value)",
                        num(pe.intercompartmental_l_per_h)
                    )?;
                }
                None => writeln!(w, "  volume      {} L  ({by})", num(v))?,
            }
        }
        _ if case.given().is_err() => writeln!(w, "  volume      not known (no dose amounts)")?,
        _ => writeln!(
            w,
            "  volume      not known (the levels and the dose record give none; see the warnings)"
        )?,
    }
    if let Some(cl) = f.clearance_l_per_h {
        if spans_doses {
            writeln!(
                w,
                "  clearance   {} L/h  {}",
                num(cl),
                ci(f.clearance_ci95_l_per_h)
            )?;
        } else {
            writeln!(w, "  clearance   {} L/h", num(cl))?;
        }
    }
    if let Some(s) = &f.population {
        let p = &s.population;
        let (what, typical, unit) = if p.on_clearance {
            ("clearance", p.clearance_l_per_h, "L/h")
        } else {
            ("k", p.k_per_h, "/h")
        };
        writeln!(w, "  model       {}: {}", p.model, p.label)?;
        let mut basis = Vec::new();
        if let Some(x) = p.weight_kg {
            basis.push(format!("{} kg recorded body weight", num(x)));
        }
        if let Some(c) = &p.creatinine_clearance {
            basis.push(format!(
                "creatinine clearance {} mL/min by Cockcroft-Gault",
                num(c.ml_min)
            ));
        }
        if let Some(d) = p.daily_dose_mg {
            basis.push(format!("daily dose {} mg", num(d)));
        }
        basis.extend(p.other_covariates.iter().cloned());
        writeln!(
            w,
            "  population  {what} {} {unit}, volume {} L{}",
            num(typical),
            num(p.volume_l),
            if basis.is_empty() {
                String::new()
            } else {
                format!(" ({})", basis.join(", "))
            }
        )?;
        if f.method != "population" {
            // A posterior variance at or above the prior's (a Laplace approximation can give
            // one) means the levels carry nothing: 0 %, never "-0 %" or "-1 %".
            let share = s.prior_share[0]
                .map(|x| {
                    format!(
                        "; the levels carry {:.0} % of what is known of {what}",
                        ((1.0 - x) * 100.0).clamp(0.0, 100.0)
                    )
                })
                .unwrap_or_default();
            if volume_fixed {
                let which = if f.peripheral.is_some() {
                    "central volume"
                } else {
                    "volume"
                };
                writeln!(
                    w,
                    "  moved       {what} {} between-patient SDs from the population toward the levels (the model fixes the {which}){share}",
                    crate::core::format::signed2(s.elimination_shift_sd)
                )?;
            } else {
                writeln!(
                    w,
                    "  moved       {what} {} and volume {} between-patient SDs from the population toward the levels{share}",
                    crate::core::format::signed2(s.elimination_shift_sd),
                    crate::core::format::signed2(s.volume_shift_sd)
                )?;
            }
        }
        if !s.sources.is_empty() {
            writeln!(w, "  model from  {}", s.sources.join("; "))?;
        }
    }
    writeln!(w)?;
    if let Some(d) = &r.dialysis {
        crate::core::dialysis::write_text(w, d, u)?;
    }

    if let (Some(p), Some(pl)) = (&r.plan, &case.plan) {
        let route = match pl.route {
            crate::core::model::Route::Infusion { hours } => {
                format!("infusion over {} h", num(hours))
            }
            other => other.name().to_string(),
        };
        writeln!(
            w,
            "Plan: {} mg {route} every {} h, from {}",
            num(pl.dose_mg),
            num(pl.interval_h),
            when(&p.start)
        )?;
        let line = |w: &mut dyn Write,
                    name: &str,
                    v: Option<f64>,
                    range: Option<[f64; 2]>,
                    unit: &str|
         -> io::Result<()> {
            let unit = match range {
                Some([a, b]) => {
                    format!("{unit} ({} {} to {})", range_name(f.method), num(a), num(b))
                }
                None => unit.to_string(),
            };
            let check = p.checks.iter().find(|c| c.name == name);
            let tail = match check {
                Some(c) => format!(
                    "  target {}: {}",
                    c.wanted,
                    if c.met { "met" } else { "NOT MET" }
                ),
                None => String::new(),
            };
            match v {
                Some(v) => writeln!(w, "  {name:<8} at steady state  {} {unit}{tail}", num(v)),
                None => writeln!(w, "  {name:<8} at steady state  not known (no volume)"),
            }
        };
        match p.peak_sampled_ss {
            Some(sampled) => {
                // The target is defined on the sampled peak: check that line, not the end.
                let end = p
                    .peak_ss
                    .map_or("not known".into(), |x| format!("{} {u}", num(x)));
                if p.peak_absorbed {
                    writeln!(w, "  peak     at steady state  {end}, {}", peak_where(p))?;
                } else {
                    writeln!(w, "  peak     {}  {end}", peak_where(p))?;
                }
                let name = if p.level_12h_ss.is_some() {
                    "level 12 h after a dose".to_string()
                } else if p.peak_absorbed {
                    format!("level {} h after the dose", num(p.peak_sampled_after_h))
                } else {
                    format!("peak {} h after the end", num(p.peak_sampled_after_h))
                };
                let check = p.checks.iter().find(|c| c.name == "peak");
                let tail = match check {
                    Some(c) => format!(
                        "  target {}: {}",
                        c.wanted,
                        if c.met { "met" } else { "NOT MET" }
                    ),
                    None => String::new(),
                };
                writeln!(w, "  {name} at steady state  {} {u}{tail}", num(sampled))?;
            }
            None => {
                line(w, "peak", p.peak_ss, p.peak_ss_ci95, u)?;
                if p.peak_absorbed {
                    writeln!(w, "           {}", peak_where(p))?;
                }
            }
        }
        if let (Some(x), None) = (p.level_12h_ss, p.peak_sampled_ss) {
            writeln!(
                w,
                "  level 12 h after a dose at steady state  {} {u}",
                num(x)
            )?;
        }
        line(w, "trough", p.trough_ss, p.trough_ss_ci95, u)?;
        line(w, "AUC24", p.auc24_ss, p.auc24_ss_ci95, &auc_unit(u))?;
        if let Some(h) = p.drug_free_h {
            writeln!(
                w,
                "  drug-free   {} h per interval at or below the trough ceiling",
                num(h)
            )?;
        }
        writeln!(w, "  accumulation factor   {}", num(p.accumulation_factor))?;
        writeln!(
            w,
            "  90 / 95 / 97 % of steady state after {} / {} / {}",
            span_words(p.time_to_ss_h[0]),
            span_words(p.time_to_ss_h[1]),
            span_words(p.time_to_ss_h[2])
        )?;
        match p.meets_targets {
            Some(true) => writeln!(w, "  every target met")?,
            Some(false) => writeln!(w, "  NOT every target met")?,
            None => {}
        }
        writeln!(w)?;
    }

    crate::core::advice::write_regimen_text(w, &r.advice, u)?;

    if let Some(t) = &r.threshold {
        writeln!(w, "Threshold: below {} {u}", num(t.below))?;
        if t.hours_from_t0 <= 0.0 {
            writeln!(
                w,
                "  already at or below it at {} ({} {u})",
                when(&t.t0),
                num(t.c0)
            )?;
        } else {
            writeln!(
                w,
                "  below it at {}, in {} from {} ({} {u} then)",
                t.reached_at.readable_near(&t.t0),
                span_words(t.hours_from_t0),
                when(&t.t0),
                num(t.c0)
            )?;
        }
        match &t.reached_at_ci95 {
            Some([a, b]) => writeln!(
                w,
                "  {} {} to {}",
                range_name(f.method),
                a.readable_near(&t.t0),
                b.readable_near(&t.t0)
            )?,
            None if matches!(r.fit.method, "dose-history" | "bayesian" | "population") => writeln!(
                w,
                "  {} not known (the spread of k and V is too wide to bound it)",
                range_name(f.method)
            )?,
            None => writeln!(w, "  {} not known (no interval of k)", range_name(f.method))?,
        }
        if let Some(p) = &t.procedure {
            if t.procedure_h > 0.0 {
                write!(
                    w,
                    "  procedure {} for {}: ",
                    when(p),
                    span_words(t.procedure_h)
                )?;
            } else {
                write!(w, "  procedure {}: ", when(p))?;
            }
            writeln!(w, "{}", procedure_words(t, case.plan.is_some(), u))?;
        }
        if let Some(at) = &t.resume_at {
            write!(w, "  the regimen may resume from {}", when(at))?;
            match t.level_at_resume {
                Some(l) => writeln!(w, " (level then {} {u})", num(l))?,
                None => writeln!(w)?,
            }
        }
        writeln!(w)?;
    }
    crate::core::advice::write_switch_text(w, &r.advice, u)?;

    if !r.washout.is_empty() {
        writeln!(w, "Washout from {}", when(&r.washout_from))?;
        if r.fit.peripheral.is_some() {
            writeln!(
                w,
                "  by the terminal half-life ({} h): the level is the two-compartment model's; \"remaining\" is the terminal phase's share",
                num(r.fit.half_life_h)
            )?;
        }
        writeln!(w, "  half-lives  at                 level       remaining")?;
        for row in &r.washout {
            writeln!(
                w,
                "  {:<10}  {:<17}  {:<10}  {} %",
                row.half_lives,
                row.at.readable_near(&r.washout_from),
                format!("{} {u}", num(row.level)),
                num(row.fraction_remaining * 100.0)
            )?;
        }
        writeln!(w)?;
    }
    if r.warnings.is_empty() {
        writeln!(w, "Warnings: none")?;
    } else {
        writeln!(w, "Warnings:")?;
        for x in &r.warnings {
            writeln!(w, "  - {x}")?;
        }
    }
    Ok(())
}
