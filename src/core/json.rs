//! The report's JSON wire form, exactly as contract v1 names it (kept apart from the
//! internal types so the format never leaks them).

use serde::Serialize;

use crate::core::case::Case;
use crate::core::report::Report;
use crate::core::saturable_report::{Basis, SaturableReport};

/// The whole report on the wire.
#[derive(Debug, Serialize)]
pub struct JsonReport {
    /// Addition: the caution every report carries, so it travels with the figures.
    caution: &'static str,
    fit: Option<JsonFit>,
    plan: Option<JsonPlan>,
    threshold: Option<JsonThreshold>,
    washout: Vec<JsonWashout>,
    warnings: Vec<String>,
    /// Addition: the code of each warning, in the same order (`crate::core::warning::Code`).
    warning_codes: Vec<&'static str>,
    /// Addition: regimens that meet every target, best first, at most 5.
    suggestions: Vec<JsonSuggestion>,
    /// Addition: the loading dose in mg (null without V).
    loading_dose_mg: Option<f64>,
    /// Addition: the switch to another agent (null without `[switch]`).
    switch: Option<JsonSwitch>,
    /// Addition: the proportional adjustment used without V (null otherwise).
    proportional: Option<JsonProportional>,
    /// Addition: AUC24 over the fitted interval by the trapezoid and by k and V.
    auc24_methods: Option<JsonAuc>,
    /// Addition: the patient's covariates and what is derived from them.
    patient: JsonPatient,
    /// Addition: the saturable (Michaelis-Menten) analysis; null for a first-order drug.
    saturable: Option<JsonSaturable>,
    /// Addition: the case's haemodialysis sessions in time order (empty without any).
    dialysis_sessions: Vec<JsonSession>,
    /// Addition: what the report says about the sessions (null without any).
    dialysis: Option<JsonDialysis>,
}

#[derive(Debug, Serialize)]
struct JsonSession {
    start: String,
    end: String,
    duration_h: f64,
}

#[derive(Debug, Serialize)]
struct JsonDialysis {
    modelled: bool,
    statement: &'static str,
    pre_dialysis_level: Option<JsonPreDialysis>,
    next_dose_due: Option<JsonNextDose>,
}

#[derive(Debug, Serialize)]
struct JsonPreDialysis {
    level: usize,
    value: f64,
    session: usize,
    hours_before: f64,
    range: Option<[f64; 2]>,
    within: Option<bool>,
}

#[derive(Debug, Serialize)]
struct JsonNextDose {
    session: Option<usize>,
    at: Option<String>,
    source: String,
}

/// The sessions and the dialysis object of a report's dialysis section.
fn dialysis_json(
    d: Option<&crate::core::dialysis::DialysisSection>,
) -> (Vec<JsonSession>, Option<JsonDialysis>) {
    let Some(d) = d else {
        return (Vec::new(), None);
    };
    let sessions = d
        .sessions
        .iter()
        .map(|s| JsonSession {
            start: s.start.iso_minute(),
            end: s.end.iso_minute(),
            duration_h: s.duration_h,
        })
        .collect();
    let dialysis = JsonDialysis {
        modelled: false,
        statement: crate::core::dialysis::NOT_MODELLED,
        pre_dialysis_level: d.pre_dialysis.as_ref().map(|p| JsonPreDialysis {
            level: p.level,
            value: p.value,
            session: p.session,
            hours_before: p.hours_before,
            range: p.range.as_ref().map(|(r, _)| *r),
            within: p.within,
        }),
        next_dose_due: d.next_dose.as_ref().map(|n| JsonNextDose {
            session: n.session,
            at: n.at.as_ref().map(|a| a.iso_minute()),
            source: n.source.clone(),
        }),
    };
    (sessions, Some(dialysis))
}

#[derive(Debug, Serialize)]
struct JsonPatient {
    weight_kg: Option<f64>,
    height_cm: Option<f64>,
    age_years: Option<f64>,
    sex: Option<&'static str>,
    creatinine_mg_dl: Option<f64>,
    albumin_g_dl: Option<f64>,
    dialysis: Option<bool>,
    ideal_weight_kg: Option<f64>,
    adjusted_weight_kg: Option<f64>,
    bmi: Option<f64>,
    creatinine_clearance_ml_min: Option<f64>,
}

#[derive(Debug, Serialize)]
struct JsonSaturable {
    method: &'static str,
    vmax_mg_per_day: f64,
    km_mg_l: f64,
    volume_l: Option<f64>,
    adjusted_level: Option<f64>,
    free_level: Option<f64>,
    dose_for_target_mg_per_day: Option<f64>,
    level_at_plan_ss: Option<f64>,
    time_to_90pct_ss_h: Option<f64>,
    salt: String,
    salt_factor: f64,
    bioavailability: f64,
    deciding_level: f64,
    deciding_basis: &'static str,
    algebraic: JsonAlgebraic,
    record_fit: Option<JsonRecordFit>,
    current_mg_per_day: Option<f64>,
    target_level: Option<f64>,
    level_at_target_dose_ss: Option<f64>,
    next_step_mg_per_day: Option<f64>,
    level_at_next_step_ss: Option<f64>,
    max_increase_mg_per_day: Option<f64>,
    plan_mg_per_day: Option<f64>,
    fall: Vec<JsonFall>,
    below_threshold_at: Option<String>,
    level_at_procedure: Option<f64>,
    bayesian: Option<JsonBayesian>,
    ranges_from: Option<&'static str>,
    vmax_ci95: Option<[f64; 2]>,
    km_ci95: Option<[f64; 2]>,
    level_at_plan_ss_ci95: Option<[Option<f64>; 2]>,
    level_at_target_dose_ss_ci95: Option<[Option<f64>; 2]>,
    dose_for_target_ci95_mg_per_day: Option<[f64; 2]>,
}

#[derive(Debug, Serialize)]
struct JsonBayesian {
    vmax_mg_per_day: f64,
    km_mg_l: f64,
    prior_vmax_mg_per_day: f64,
    prior_km_mg_l: f64,
    omega_vmax: f64,
    omega_km: f64,
    sigma_log: f64,
}

#[derive(Debug, Serialize)]
struct JsonAlgebraic {
    method: &'static str,
    vmax_mg_per_day: f64,
    km_mg_l: f64,
    levels: Vec<usize>,
}

#[derive(Debug, Serialize)]
struct JsonRecordFit {
    vmax_mg_per_day: f64,
    km_mg_l: f64,
    km_fitted: bool,
    rms_log: f64,
}

#[derive(Debug, Serialize)]
struct JsonFall {
    at: String,
    hours: f64,
    level: f64,
    half_life_here_h: f64,
}

#[derive(Debug, Serialize)]
struct JsonSuggestion {
    dose_mg: f64,
    interval_h: f64,
    infusion_h: f64,
    route: &'static str,
    peak_ss: f64,
    trough_ss: f64,
    auc24_ss: f64,
    /// Addition: the peak at the time the peak target is defined on.
    peak_sampled_ss: f64,
    /// Addition: whether this is the regimen the patient is on.
    current: bool,
    /// Addition: hours per interval at or below the trough ceiling, or null.
    drug_free_h: Option<f64>,
    /// Addition: whether the infusion was lengthened for the maximum rate.
    lengthened: bool,
}

#[derive(Debug, Serialize)]
struct JsonSwitch {
    to: String,
    start_at: String,
    start_at_ci95: Option<[String; 2]>,
    level_at_start: f64,
    basis: &'static str,
}

#[derive(Debug, Serialize)]
struct JsonProportional {
    basis: &'static str,
    interval_h: f64,
    measured: f64,
    target: f64,
    factor: f64,
    dose_given_mg: Option<f64>,
    new_dose_mg: Option<f64>,
    trough_after: f64,
}

#[derive(Debug, Serialize)]
struct JsonAuc {
    method: &'static str,
    interval_h: f64,
    by_levels: f64,
    by_k_and_v: Option<f64>,
}

#[derive(Debug, Serialize)]
struct JsonFit {
    method: &'static str,
    levels_used: usize,
    k_per_h: f64,
    half_life_h: f64,
    r_squared: Option<f64>,
    k_ci95_per_h: Option<[f64; 2]>,
    half_life_ci95_h: Option<[f64; 2]>,
    volume_l: Option<f64>,
    volume_method: Option<&'static str>,
    clearance_l_per_h: Option<f64>,
    /// Addition: 95 % interval of V (dose-history and Bayesian fits, else null).
    v_ci95_l: Option<[f64; 2]>,
    /// Addition: 95 % interval of the clearance (dose-history and Bayesian fits, else null).
    clearance_ci95_l_per_h: Option<[f64; 2]>,
    /// Addition: the population values and the move from them (Bayesian fits, else null).
    population: Option<JsonPopulation>,
    /// Addition: the population model's name (first author and year), or null.
    model: Option<String>,
    /// Addition: compartments of the model behind the fit.
    compartments: u8,
    /// Addition (two compartments, else null): peripheral volume, L.
    peripheral_volume_l: Option<f64>,
    /// Addition (two compartments, else null): intercompartmental clearance, L/h.
    intercompartmental_clearance_l_per_h: Option<f64>,
    /// Addition (two compartments, else null): distribution half-life ln 2/α, h.
    distribution_half_life_h: Option<f64>,
    /// Addition: the population's 90 % ranges (method "population" only, else null).
    k_pi90_per_h: Option<[f64; 2]>,
    half_life_pi90_h: Option<[f64; 2]>,
    v_pi90_l: Option<[f64; 2]>,
    clearance_pi90_l_per_h: Option<[f64; 2]>,
}

#[derive(Debug, Serialize)]
struct JsonPopulation {
    k_per_h: f64,
    volume_l: f64,
    clearance_l_per_h: f64,
    prior_on: &'static str,
    model: String,
    model_label: String,
    creatinine_clearance_ml_min: Option<f64>,
    weight_kg: Option<f64>,
    daily_dose_mg: Option<f64>,
    /// Posterior over prior variance of η (elimination, volume): 1 = the levels add nothing.
    prior_share: [Option<f64>; 2],
    elimination_shift_sd: f64,
    volume_shift_sd: f64,
    sources: Vec<String>,
}

#[derive(Debug, Serialize)]
struct JsonPlan {
    accumulation_factor: f64,
    peak_ss: Option<f64>,
    trough_ss: Option<f64>,
    auc24_ss: Option<f64>,
    time_to_90pct_ss_h: f64,
    time_to_95pct_ss_h: f64,
    time_to_97pct_ss_h: f64,
    meets_targets: Option<bool>,
    /// Addition: the steady-state peak at the strategy's sampling time, or null.
    peak_sampled_ss: Option<f64>,
    /// Addition: hours after the end of the infusion the peak target is defined at.
    peak_sampled_after_h: f64,
    /// Addition: hours per interval at or below the trough ceiling, or null.
    drug_free_h: Option<f64>,
    /// Addition: hours after the start of a dose at which `peak_ss` falls.
    peak_after_dose_h: f64,
    /// Addition: the steady-state level 12 h after a dose (strategies sampled at 12 h), or null.
    level_12h_ss: Option<f64>,
    /// Addition: 95 % ranges of the steady-state figures (dose-history and Bayesian fits).
    peak_ss_ci95: Option<[f64; 2]>,
    trough_ss_ci95: Option<[f64; 2]>,
    auc24_ss_ci95: Option<[f64; 2]>,
    /// Addition: the population's 90 % ranges (method "population" only, else null).
    peak_ss_pi90: Option<[f64; 2]>,
    trough_ss_pi90: Option<[f64; 2]>,
    auc24_ss_pi90: Option<[f64; 2]>,
}

#[derive(Debug, Serialize)]
struct JsonThreshold {
    below: f64,
    reached_at: String,
    reached_at_ci95: Option<[String; 2]>,
    latest_plan_dose: Option<String>,
    level_at_procedure: Option<f64>,
    resume_at: Option<String>,
    level_at_resume: Option<f64>,
    /// Addition: how long the procedure lasts, hours.
    procedure_h: f64,
    /// Addition: plan doses that start before the procedure (null without a plan or procedure).
    plan_doses_before_procedure: Option<usize>,
}

#[derive(Debug, Serialize)]
struct JsonWashout {
    half_lives: u32,
    at: String,
    level: f64,
    fraction_remaining: f64,
}

impl From<&Report> for JsonReport {
    fn from(r: &Report) -> Self {
        let prior_only = r.fit.method == "population";
        // Before any level the ranges are the population's 90 % range, not a 95 % interval.
        let ci = |x: Option<[f64; 2]>| if prior_only { None } else { x };
        let pi = |x: Option<[f64; 2]>| if prior_only { x } else { None };
        let p = &r.patient;
        let (dialysis_sessions, dialysis) = dialysis_json(r.dialysis.as_ref());
        JsonReport {
            dialysis_sessions,
            dialysis,
            patient: patient_json(p),
            caution: crate::core::report::caution_for(r.fit.compartments).0,
            fit: Some(JsonFit {
                method: r.fit.method,
                levels_used: r.fit.level_rows.len(),
                k_per_h: r.fit.k_per_h,
                half_life_h: r.fit.half_life_h,
                r_squared: r.fit.r_squared,
                k_ci95_per_h: ci(r.fit.k_ci95_per_h),
                half_life_ci95_h: ci(r.fit.half_life_ci95_h),
                k_pi90_per_h: pi(r.fit.k_ci95_per_h),
                half_life_pi90_h: pi(r.fit.half_life_ci95_h),
                v_pi90_l: pi(r.fit.volume_ci95_l),
                clearance_pi90_l_per_h: pi(r.fit.clearance_ci95_l_per_h),
                model: r
                    .fit
                    .population
                    .as_ref()
                    .map(|s| s.population.model.clone()),
                compartments: r.fit.compartments,
                peripheral_volume_l: r.fit.peripheral.map(|p| p.volume_l),
                intercompartmental_clearance_l_per_h: r
                    .fit
                    .peripheral
                    .map(|p| p.intercompartmental_l_per_h),
                distribution_half_life_h: r.fit.peripheral.map(|p| p.distribution_half_life_h),
                volume_l: r.fit.volume_l,
                volume_method: r.fit.volume_method,
                clearance_l_per_h: r.fit.clearance_l_per_h,
                v_ci95_l: ci(r.fit.volume_ci95_l),
                clearance_ci95_l_per_h: ci(r.fit.clearance_ci95_l_per_h),
                population: r.fit.population.as_ref().map(|s| JsonPopulation {
                    k_per_h: s.population.k_per_h,
                    volume_l: s.population.volume_l,
                    clearance_l_per_h: s.population.clearance_l_per_h,
                    prior_on: if s.population.on_clearance {
                        "clearance"
                    } else {
                        "k"
                    },
                    model: s.population.model.clone(),
                    model_label: s.population.label.clone(),
                    creatinine_clearance_ml_min: s
                        .population
                        .creatinine_clearance
                        .map(|c| c.ml_min),
                    weight_kg: s.population.weight_kg,
                    daily_dose_mg: s.population.daily_dose_mg,
                    prior_share: s.prior_share,
                    elimination_shift_sd: s.elimination_shift_sd,
                    volume_shift_sd: s.volume_shift_sd,
                    sources: s.sources.clone(),
                }),
            }),
            plan: r.plan.as_ref().map(|p| JsonPlan {
                accumulation_factor: p.accumulation_factor,
                peak_ss: p.peak_ss,
                trough_ss: p.trough_ss,
                auc24_ss: p.auc24_ss,
                time_to_90pct_ss_h: p.time_to_ss_h[0],
                time_to_95pct_ss_h: p.time_to_ss_h[1],
                time_to_97pct_ss_h: p.time_to_ss_h[2],
                meets_targets: p.meets_targets,
                peak_sampled_ss: p.peak_sampled_ss,
                peak_sampled_after_h: p.peak_sampled_after_h,
                drug_free_h: p.drug_free_h,
                peak_after_dose_h: p.peak_after_dose_h,
                level_12h_ss: p.level_12h_ss,
                peak_ss_ci95: ci(p.peak_ss_ci95),
                trough_ss_ci95: ci(p.trough_ss_ci95),
                auc24_ss_ci95: ci(p.auc24_ss_ci95),
                peak_ss_pi90: pi(p.peak_ss_ci95),
                trough_ss_pi90: pi(p.trough_ss_ci95),
                auc24_ss_pi90: pi(p.auc24_ss_ci95),
            }),
            threshold: r.threshold.as_ref().map(|t| JsonThreshold {
                below: t.below,
                reached_at: t.reached_at.iso_minute(),
                reached_at_ci95: t
                    .reached_at_ci95
                    .as_ref()
                    .map(|[a, b]| [a.iso_minute(), b.iso_minute()]),
                latest_plan_dose: t.latest_plan_dose.as_ref().map(|s| s.iso_minute()),
                level_at_procedure: t.level_at_procedure,
                resume_at: t.resume_at.as_ref().map(|s| s.iso_minute()),
                level_at_resume: t.level_at_resume,
                procedure_h: t.procedure_h,
                plan_doses_before_procedure: t.plan_doses_before_procedure,
            }),
            washout: r
                .washout
                .iter()
                .map(|w| JsonWashout {
                    half_lives: w.half_lives,
                    at: w.at.iso_minute(),
                    level: w.level,
                    fraction_remaining: w.fraction_remaining,
                })
                .collect(),
            warnings: r.warnings.iter().map(|w| w.text().to_string()).collect(),
            warning_codes: r.warnings.iter().map(|w| w.code().as_str()).collect(),
            suggestions: r
                .advice
                .suggestions
                .iter()
                .map(|s| JsonSuggestion {
                    dose_mg: s.dose_mg,
                    interval_h: s.interval_h,
                    infusion_h: s.infusion_h,
                    route: s.route,
                    peak_ss: s.peak_ss,
                    trough_ss: s.trough_ss,
                    auc24_ss: s.auc24_ss,
                    peak_sampled_ss: s.peak_sampled_ss,
                    current: s.current,
                    drug_free_h: s.drug_free_h,
                    lengthened: s.lengthened,
                })
                .collect(),
            loading_dose_mg: r.advice.loading.as_ref().map(|l| l.dose_mg),
            switch: r.advice.switch.as_ref().map(|s| JsonSwitch {
                to: s.to.clone(),
                start_at: s.start_at.iso_minute(),
                start_at_ci95: s
                    .start_at_ci95
                    .as_ref()
                    .map(|[a, b]| [a.iso_minute(), b.iso_minute()]),
                level_at_start: s.level_at_start,
                basis: s.basis,
            }),
            proportional: r.advice.proportional.as_ref().map(|q| JsonProportional {
                basis: q.basis,
                interval_h: q.interval_h,
                measured: q.measured,
                target: q.target,
                factor: q.factor,
                dose_given_mg: q.dose_given_mg,
                new_dose_mg: q.new_dose_mg,
                trough_after: q.trough_after,
            }),
            auc24_methods: r.advice.auc24.as_ref().map(|a| JsonAuc {
                method: a.method,
                interval_h: a.interval_h,
                by_levels: a.by_levels,
                by_k_and_v: a.by_k_and_v,
            }),
            saturable: None,
        }
    }
}

fn patient_json(p: &crate::core::report::PatientSection) -> JsonPatient {
    JsonPatient {
        weight_kg: p.recorded.weight_kg,
        height_cm: p.recorded.height_cm,
        age_years: p.recorded.age_years,
        sex: p.recorded.sex.map(|s| match s {
            crate::core::case::Sex::Female => "female",
            crate::core::case::Sex::Male => "male",
        }),
        creatinine_mg_dl: p.recorded.creatinine_mg_dl,
        albumin_g_dl: p.recorded.albumin_g_dl,
        dialysis: p.recorded.dialysis,
        ideal_weight_kg: p.body.ideal_kg,
        adjusted_weight_kg: p.body.adjusted_kg,
        bmi: p.body.bmi,
        creatinine_clearance_ml_min: p.crcl_ml_min,
    }
}

/// A 95 % range of a steady-state level in the level unit; the upper end null when there may
/// be no steady state.
fn level_range(c: [f64; 2], lv: &dyn Fn(f64) -> f64) -> [Option<f64>; 2] {
    [
        Some(lv(c[0])).filter(|x| x.is_finite()),
        Some(lv(c[1])).filter(|x| x.is_finite()),
    ]
}

/// The saturable report as one line of JSON: the first-order sections are null or empty
/// and `saturable` carries the figures (concentrations in the case's level unit, Km in mg/L,
/// daily doses in mg/day as written in the case's salt form).
pub fn saturable_to_json(case: &Case, r: &SaturableReport) -> String {
    let lv = |x: f64| case.drug.scale.to_level(x);
    let sat = JsonSaturable {
        method: r.method.name(),
        vmax_mg_per_day: r.vmax_mg_per_day,
        km_mg_l: r.km_mg_l,
        volume_l: r.volume_l,
        adjusted_level: r.adjusted.map(|a| lv(a.adjusted_mg_l)),
        free_level: r.free.map(|(_, f)| lv(f)),
        dose_for_target_mg_per_day: r.dose_for_target.map(|d| d.written_mg_per_day),
        level_at_plan_ss: r.plan.and_then(|p| p.level_ss_mg_l).map(lv),
        time_to_90pct_ss_h: r.plan.and_then(|p| p.time_to_90pct_h),
        salt: r.salt.0.clone(),
        salt_factor: r.salt.1,
        bioavailability: r.bioavailability,
        deciding_level: lv(r.decision.decision_mg_l),
        deciding_basis: match r.decision.basis {
            Basis::Total => "total",
            Basis::Adjusted => "adjusted",
            Basis::Free => "free",
        },
        algebraic: JsonAlgebraic {
            method: r.algebraic.0.name(),
            vmax_mg_per_day: r.algebraic.1,
            km_mg_l: r.algebraic.2,
            levels: r.algebra_rows.clone(),
        },
        record_fit: r.record.map(|f| JsonRecordFit {
            vmax_mg_per_day: f.kinetics.vmax_mg_per_day,
            km_mg_l: f.kinetics.km_mg_l,
            km_fitted: f.km_fitted,
            rms_log: f.rms_log,
        }),
        current_mg_per_day: r.current_mg_per_day,
        target_level: r.target_mg_l.map(lv),
        level_at_target_dose_ss: r.dose_for_target.and_then(|d| d.level_ss_mg_l).map(lv),
        next_step_mg_per_day: r.next_step.map(|d| d.written_mg_per_day),
        level_at_next_step_ss: r.next_step.and_then(|d| d.level_ss_mg_l).map(lv),
        max_increase_mg_per_day: r.max_increase_mg_per_day,
        plan_mg_per_day: r.plan.map(|p| p.written_mg_per_day),
        fall: r
            .fall
            .iter()
            .map(|f| JsonFall {
                at: f.at.iso_minute(),
                hours: f.hours,
                level: lv(f.level_mg_l),
                half_life_here_h: f.half_life_here_h,
            })
            .collect(),
        below_threshold_at: r.threshold.as_ref().map(|t| t.reached_at.iso_minute()),
        level_at_procedure: r
            .threshold
            .as_ref()
            .and_then(|t| t.level_at_procedure_mg_l)
            .map(lv),
        bayesian: r.bayesian.zip(r.prior).map(|(b, p)| JsonBayesian {
            vmax_mg_per_day: b.kinetics.vmax_mg_per_day,
            km_mg_l: b.kinetics.km_mg_l,
            prior_vmax_mg_per_day: p.vmax_mg_per_day,
            prior_km_mg_l: p.km_mg_l,
            omega_vmax: p.omega_vmax,
            omega_km: p.omega_km,
            sigma_log: p.sigma_log,
        }),
        ranges_from: r.ranges.map(|g| g.source.name()),
        vmax_ci95: r.ranges.map(|g| g.vmax),
        km_ci95: r.ranges.map(|g| g.km),
        level_at_plan_ss_ci95: r
            .plan
            .and_then(|d| d.level_ss_ci95)
            .map(|c| level_range(c, &lv)),
        level_at_target_dose_ss_ci95: r
            .dose_for_target
            .and_then(|d| d.level_ss_ci95)
            .map(|c| level_range(c, &lv)),
        dose_for_target_ci95_mg_per_day: r.ranges.and_then(|g| g.dose_for_target_mg_per_day),
    };
    let (dialysis_sessions, dialysis) =
        dialysis_json(crate::core::dialysis::section(case).as_ref());
    let whole = JsonReport {
        dialysis_sessions,
        dialysis,
        caution: crate::core::saturable_report::CAUTION,
        fit: None,
        plan: None,
        threshold: None,
        washout: Vec::new(),
        warnings: r.warnings.iter().map(|w| w.text().to_string()).collect(),
        warning_codes: r.warnings.iter().map(|w| w.code().as_str()).collect(),
        suggestions: Vec::new(),
        loading_dose_mg: None,
        switch: None,
        proportional: None,
        auc24_methods: None,
        patient: patient_json(&crate::core::report::PatientSection::of(&case.patient)),
        saturable: Some(sat),
    };
    serde_json::to_string(&whole)
        .unwrap_or_else(|e| format!("{{\"error\":\"{}\"}}", e.to_string().replace('"', "'")))
}

/// The report as one line of JSON.
pub fn to_json(r: &Report) -> String {
    // Every number was checked finite when the report was built, so serialising cannot fail.
    serde_json::to_string(&JsonReport::from(r))
        .unwrap_or_else(|e| format!("{{\"error\":\"{}\"}}", e.to_string().replace('"', "'")))
}
