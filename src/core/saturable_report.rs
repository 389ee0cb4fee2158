//! The report for a drug with saturable (Michaelis-Menten) elimination, as plain data and as
//! text: which levels decide (measured total, albumin-adjusted, free), Vmax and Km by the
//! steady-state algebra and by the dose record, the dose for the target, the plan's steady
//! state and its approach, and the fall after the doses stop. No first-order k, half-life
//! or AUC appears here: they do not hold for such a drug.

use std::io::{self, Write};

use crate::core::case::{Case, Level};
use crate::core::clock::{span_words, ClockTime};
use crate::core::error::{Error, Result};
use crate::core::format::num;
use crate::core::saturable::{
    self, AlbuminForm, AlbuminRule, Input, Kinetics, Posterior, Prior, RecordFit, HOURS_PER_DAY,
};
use crate::core::warning::{Code, Warning};

/// What a drug profile says about the drug's saturable elimination (the profile layer fills
/// it in; every number here carries its source in the profile).
#[derive(Debug, Clone, PartialEq)]
pub struct Params {
    /// The drug's name for people.
    pub drug: String,
    /// Population Km, mg/L.
    pub km_mg_l: f64,
    /// Population Vmax of a 70-kg adult, mg/day.
    pub vmax_70kg_mg_per_day: f64,
    /// Vmax scales with (weight/70)^this.
    pub vmax_weight_exponent: f64,
    /// Free fraction with normal binding.
    pub free_fraction: f64,
    /// The albumin adjustment.
    pub albumin: AlbuminRule,
    /// Salt names and their factors (mg of the drug per mg written).
    pub salts: Vec<(String, f64)>,
    /// Level bounds (mg/L) of the increase rule.
    pub increase_below_mg_l: Vec<f64>,
    /// Largest daily increase (mg/day as written) per band: one more than the bounds.
    pub increase_max_mg_per_day: Vec<f64>,
    /// Volume, L/kg of actual weight.
    pub volume_l_per_kg: f64,
    /// The target range of a total level with normal binding, mg/L.
    pub range_mg_l: Option<[f64; 2]>,
    /// Tablet or capsule strengths, mg.
    pub dose_forms_mg: Vec<f64>,
    /// The spreads of the Bayesian estimate, when the profile gives them.
    pub spread: Option<PriorSpread>,
}

/// The spreads that make the population values a prior (fractions, e.g. 0.2 for 20 %).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PriorSpread {
    /// Between-patient coefficient of variation of Vmax.
    pub vmax_cv: f64,
    /// Between-patient coefficient of variation of Km.
    pub km_cv: f64,
    /// Proportional residual error of a measured level.
    pub residual_cv: f64,
}

/// How Vmax and Km were found.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Vmax from one steady-state level, Km the population value.
    OneLevel,
    /// Vmax and Km from two steady-state levels at two dose rates.
    TwoLevels,
    /// Fitted to the levels of the dose record by integrating the model (Km held at the
    /// population value when `km_fitted` is false).
    Record {
        /// Whether Km was fitted too.
        km_fitted: bool,
    },
    /// Bayesian (maximum a posteriori): Vmax and Km from the levels over the dose record with
    /// the population values as priors.
    Bayesian,
}

impl Method {
    /// The JSON name.
    pub fn name(self) -> &'static str {
        match self {
            Method::OneLevel => "one-level-population-km",
            Method::TwoLevels => "two-levels",
            Method::Record { km_fitted: true } => "dose-record",
            Method::Record { km_fitted: false } => "dose-record-population-km",
            Method::Bayesian => "bayesian",
        }
    }

    /// In words.
    pub fn words(self) -> &'static str {
        match self {
            Method::OneLevel => "one steady-state level with the population Km",
            Method::TwoLevels => "two steady-state levels at two dose rates",
            Method::Record { km_fitted: true } => "fit to the dose record (Vmax and Km)",
            Method::Record { km_fitted: false } => {
                "fit to the dose record (Vmax; Km the population value)"
            }
            Method::Bayesian => "Bayesian fit to the dose record with population priors",
        }
    }
}

/// Why the level that decides is the one it is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Basis {
    /// The measured total level (no albumin given).
    Total,
    /// The total level adjusted for albumin.
    Adjusted,
    /// A measured free level over the normal free fraction (preferred).
    Free,
}

/// A level as the analysis reads it.
#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    /// Row in the file.
    pub row: usize,
    /// When drawn.
    pub time: ClockTime,
    /// Hours on the axis.
    pub t: f64,
    /// Measured value, mg/L (free or total as drawn).
    pub measured_mg_l: f64,
    /// The total level with normal binding it stands for, mg/L.
    pub decision_mg_l: f64,
    /// How `decision_mg_l` was made.
    pub basis: Basis,
    /// Daily dose rate reaching the circulation in the 24 h before it, mg/day.
    pub rate_mg_per_day: f64,
    /// Hours on that same daily rate before the level.
    pub hours_on_rate: f64,
}

/// The albumin adjustment shown.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Adjusted {
    /// Row of the total level adjusted.
    pub row: usize,
    /// The measured total, mg/L.
    pub total_mg_l: f64,
    /// The adjusted level, mg/L.
    pub adjusted_mg_l: f64,
    /// Albumin, g/dL.
    pub albumin_g_dl: f64,
    /// Which formula.
    pub form: AlbuminForm,
}

/// A daily dose and its steady state.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DailyDose {
    /// mg/day as written (the case's salt form).
    pub written_mg_per_day: f64,
    /// Steady-state level, mg/L (`None`: at or above Vmax, no steady state).
    pub level_ss_mg_l: Option<f64>,
    /// Hours to 90 % of that steady state from a level of zero (needs the volume).
    pub time_to_90pct_h: Option<f64>,
    /// The 95 % range of the steady-state level, mg/L (the upper end +∞ when Vmax may be at
    /// or below the dose: no steady state), when Vmax and Km have a range.
    pub level_ss_ci95: Option<[f64; 2]>,
}

/// Where the 95 % ranges of Vmax and Km come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RangeSource {
    /// The Laplace approximation at the Bayesian estimate.
    Laplace,
    /// The curvature of the fit to the dose record (residual error from the profile).
    RecordCurvature,
}

impl RangeSource {
    /// The JSON name.
    pub fn name(self) -> &'static str {
        match self {
            RangeSource::Laplace => "bayesian-laplace",
            RangeSource::RecordCurvature => "dose-record-curvature",
        }
    }

    /// In words.
    pub fn words(self) -> &'static str {
        match self {
            RangeSource::Laplace => "Laplace approximation at the Bayesian estimate",
            RangeSource::RecordCurvature => "curvature of the fit to the dose record",
        }
    }
}

/// The 95 % ranges of Vmax and Km and of what follows from them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ranges {
    /// Where they come from.
    pub source: RangeSource,
    /// Covariance of (ln Vmax, ln Km).
    pub cov_log: [[f64; 2]; 2],
    /// Vmax, mg/day.
    pub vmax: [f64; 2],
    /// Km, mg/L.
    pub km: [f64; 2],
    /// The (unrounded) daily dose for the target, mg/day as written.
    pub dose_for_target_mg_per_day: Option<[f64; 2]>,
}

/// One row of the fall after the doses stop.
#[derive(Debug, Clone, PartialEq)]
pub struct FallRow {
    /// When.
    pub at: ClockTime,
    /// Hours from the start of the fall.
    pub hours: f64,
    /// The level then, mg/L.
    pub level_mg_l: f64,
    /// The half-life at that level, h: 0.693·V·(Km + C)/Vmax — it changes with the level.
    pub half_life_here_h: f64,
}

/// The threshold under saturable elimination.
#[derive(Debug, Clone, PartialEq)]
pub struct FallThreshold {
    /// The threshold, mg/L.
    pub below_mg_l: f64,
    /// When the level is at or below it with no further dose (rounded up to the minute).
    pub reached_at: ClockTime,
    /// The level at the procedure with no further dose, mg/L.
    pub level_at_procedure_mg_l: Option<f64>,
}

/// The whole saturable report (concentrations in mg/L; the text and JSON convert).
#[derive(Debug, Clone, PartialEq)]
pub struct SaturableReport {
    /// How Vmax and Km were found (the one used).
    pub method: Method,
    /// The kinetics used (volume 0 when unknown: see `volume_l`).
    pub vmax_mg_per_day: f64,
    /// Km, mg/L.
    pub km_mg_l: f64,
    /// Volume, L (needs the weight).
    pub volume_l: Option<f64>,
    /// The algebraic estimate (Vmax, Km) and its method.
    pub algebraic: (Method, f64, f64),
    /// The record fit, when made.
    pub record: Option<RecordFit>,
    /// The Bayesian estimate, when made (needs the volume and the profile's spreads).
    pub bayesian: Option<Posterior>,
    /// The prior of the Bayesian estimate.
    pub prior: Option<Prior>,
    /// The 95 % ranges of Vmax, Km and the doses' steady states, when they can be given.
    pub ranges: Option<Ranges>,
    /// Rows of the levels the algebra used.
    pub algebra_rows: Vec<usize>,
    /// The salt named and its factor.
    pub salt: (String, f64),
    /// Bioavailability used to turn a daily rate into a written dose.
    pub bioavailability: f64,
    /// The used levels as read.
    pub readings: Vec<Reading>,
    /// The level that decides (the latest reading).
    pub decision: Reading,
    /// The albumin adjustment of the latest total, when albumin is known.
    pub adjusted: Option<Adjusted>,
    /// The latest measured free level: (row, mg/L).
    pub free: Option<(usize, f64)>,
    /// The current daily dose as written, mg/day.
    pub current_mg_per_day: Option<f64>,
    /// The target level, mg/L (middle of the range).
    pub target_mg_l: Option<f64>,
    /// The daily dose for the target, rounded to the strengths.
    pub dose_for_target: Option<DailyDose>,
    /// The next step when the dose for the target is a larger jump than common practice.
    pub next_step: Option<DailyDose>,
    /// The largest increase common practice allows at the deciding level, mg/day.
    pub max_increase_mg_per_day: Option<f64>,
    /// The plan's daily dose and its steady state.
    pub plan: Option<DailyDose>,
    /// Where the fall starts, and the level then (mg/L).
    pub fall_from: Option<(ClockTime, f64)>,
    /// The fall after the doses stop.
    pub fall: Vec<FallRow>,
    /// The threshold, when the case has one.
    pub threshold: Option<FallThreshold>,
    /// Specific warnings.
    pub warnings: Vec<Warning>,
}

/// The fewest days on one daily dose before a level counts as steady state, whatever the
/// estimate says (common practice for phenytoin: steady state takes 7-35 days, [Liverpool]
/// in the profile).
pub const MIN_DAYS_TO_STEADY: f64 = 7.0;

fn stamp(case: &Case, t: f64, what: &str) -> Result<ClockTime> {
    case.clock.at_minute(t).ok_or_else(|| {
        Error::invalid(
            what,
            "lies too far from the case's dates to be placed on a calendar",
        )
    })
}

/// The daily rate reaching the circulation (mg/day) in the 24 h before `t`.
fn rate_before(inputs: &[(f64, f64)], t: f64) -> f64 {
    inputs
        .iter()
        .filter(|(ti, _)| *ti < t && *ti >= t - HOURS_PER_DAY - 1e-9)
        .map(|(_, a)| a)
        .sum()
}

fn same_rate(a: f64, b: f64) -> bool {
    (a - b).abs() <= 0.02 * a.abs().max(b.abs())
}

/// Round a daily dose to a multiple of the smallest strength (10 mg without strengths).
fn grid(dose_forms: &[f64]) -> f64 {
    dose_forms
        .iter()
        .copied()
        .filter(|x| x.is_finite() && *x > 0.0)
        .fold(f64::INFINITY, f64::min)
        .min(1e9)
        .max(if dose_forms.is_empty() { 10.0 } else { 0.0 })
}

/// The recorded doses as inputs: mg of the drug itself reaching the circulation.
fn inputs_of(case: &Case, salt_factor: f64) -> Vec<Input> {
    case.doses
        .iter()
        .map(|d| Input {
            t: d.t,
            amount_mg: d.amount_mg.unwrap_or(0.0) * salt_factor * d.route.bioavailability(),
            hours: d.route.infusion_h(),
        })
        .collect()
}

/// Points of a curve: (hours on the case's axis, mg/L).
pub type Points = Vec<(f64, f64)>;

/// The most plan doses a chart integrates.
const MAX_CHART_PLAN_DOSES: usize = 400;

/// The model's course for a chart, on the deciding level's scale.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ChartCourse {
    /// The recorded doses alone, to the plan's start (without a plan to the span's end: the
    /// fall after the last dose), (hours on the case's axis, mg/L).
    pub record: Points,
    /// From the plan's start: the record followed by the plan's doses.
    pub plan: Points,
    /// The lower and upper edges of the 95 % range of the course at the same times, when
    /// Vmax and Km have a range.
    pub band: Option<[Points; 2]>,
}

/// Points on the ellipse of the 95 % range a chart's band is drawn from (the course moves one
/// way with Vmax and one way with Km, so its extremes at each time lie on the ellipse).
const BAND_POINTS: u32 = 48;

/// The model's course for a chart over `span`: `n` evenly spaced times plus each dose's time
/// and the moment after it (so the rise at each dose shows), integrated over the record and
/// the plan's doses from its start; with the 95 % band when there are ranges. Empty without a
/// volume.
pub fn chart_course(case: &Case, r: &SaturableReport, span: [f64; 2], n: usize) -> ChartCourse {
    let Some(volume_l) = r.volume_l else {
        return ChartCourse::default();
    };
    let mut inputs = inputs_of(case, r.salt.1);
    let plan_start = case
        .plan
        .as_ref()
        .filter(|pl| pl.start_t < span[1])
        .map(|pl| {
            let per_dose = pl.dose_mg * r.salt.1 * pl.route.bioavailability();
            let mut t = pl.start_t;
            let mut count = 0;
            while t < span[1] && count < MAX_CHART_PLAN_DOSES {
                inputs.push(Input {
                    t,
                    amount_mg: per_dose,
                    hours: pl.route.infusion_h(),
                });
                t += pl.interval_h;
                count += 1;
            }
            pl.start_t.max(span[0])
        });
    let first = inputs.iter().map(|i| i.t).fold(span[0], f64::min) - 1e-9;
    let n = n.max(2);
    let mut ts: Vec<f64> = (0..n)
        .map(|i| span[0] + (span[1] - span[0]) * i as f64 / (n - 1) as f64)
        .chain(plan_start)
        .collect();
    for i in &inputs {
        ts.extend([i.t, i.t + 1e-6, i.t + i.hours]);
    }
    ts.retain(|t| *t >= span[0] && *t <= span[1]);
    ts.sort_by(f64::total_cmp);
    ts.dedup();
    let at = |vmax: f64, km: f64| {
        let k = Kinetics {
            vmax_mg_per_day: vmax,
            km_mg_l: km,
            volume_l,
        };
        saturable::course(&k, &inputs, 0.0, first, &ts)
    };
    let centre = at(r.vmax_mg_per_day, r.km_mg_l);
    let points = |cs: &[f64], keep: &dyn Fn(f64) -> bool| -> Points {
        ts.iter()
            .zip(cs)
            .filter(|(t, c)| c.is_finite() && keep(**t))
            .map(|(t, c)| (*t, *c))
            .collect()
    };
    let (record, plan) = match plan_start {
        Some(s) => (points(&centre, &|t| t <= s), points(&centre, &|t| t >= s)),
        None => (points(&centre, &|_| true), Vec::new()),
    };
    let band = r.ranges.map(|g| {
        let mut lo = centre.clone();
        let mut hi = centre.clone();
        for (v, k) in saturable::ellipse95(r.vmax_mg_per_day, r.km_mg_l, &g.cov_log, BAND_POINTS) {
            for (i, c) in at(v, k).into_iter().enumerate() {
                if c.is_finite() {
                    lo[i] = lo[i].min(c);
                    hi[i] = hi[i].max(c);
                }
            }
        }
        [points(&lo, &|_| true), points(&hi, &|_| true)]
    });
    ChartCourse { record, plan, band }
}

/// The time span of the course chart, hours on the case's axis: from the first dose to a
/// little past the last dose or level, or with a plan to its 90 % of steady state (at least
/// a week, at most four weeks after its start).
pub fn chart_span(case: &Case, r: &SaturableReport) -> [f64; 2] {
    let first = case.doses.iter().map(|d| d.t).fold(f64::INFINITY, f64::min);
    let data_end = case
        .doses
        .iter()
        .map(|d| d.end())
        .chain(case.levels.iter().map(|l| l.t))
        .fold(first, f64::max);
    let first = if first.is_finite() { first } else { 0.0 };
    let data_end = if data_end.is_finite() {
        data_end
    } else {
        first
    };
    let end = match (&case.plan, &r.plan) {
        (Some(pl), Some(d)) => {
            let reach = d
                .time_to_90pct_h
                .unwrap_or(f64::INFINITY)
                .clamp(7.0 * HOURS_PER_DAY, 28.0 * HOURS_PER_DAY);
            (pl.start_t + reach).max(data_end)
        }
        _ => data_end + (0.12 * (data_end - first)).max(HOURS_PER_DAY),
    };
    [first, end.max(first + 1.0)]
}

/// Analyse a validated case of a drug with saturable elimination.
///
/// # Errors
/// A dose without an amount, a salt the profile does not know, no level that follows a
/// daily dose, or levels that cannot give Vmax and Km (each says what is missing).
pub fn analyse(case: &Case, p: &Params) -> Result<SaturableReport> {
    let mut warnings = Vec::new();
    let salt = match case.drug.salt.as_deref() {
        None => (p.drug.to_lowercase(), 1.0),
        Some(name) => match p.salts.iter().find(|(n, _)| n == name) {
            Some((n, f)) => (n.clone(), *f),
            None => {
                let names: Vec<&str> = p.salts.iter().map(|(n, _)| n.as_str()).collect();
                return Err(Error::invalid(
                    "drug.salt",
                    format!(
                        "the drug profile knows no salt \"{name}\"; it knows {}",
                        names.join(", ")
                    ),
                ));
            }
        },
    };
    let missing: Vec<String> = case
        .doses
        .iter()
        .filter(|d| d.amount_mg.is_none())
        .map(|d| d.row.to_string())
        .collect();
    if !missing.is_empty() {
        return Err(Error::invalid(
            format!("dose {}", missing[0]),
            format!(
                "amount_mg: needed for saturable (Michaelis-Menten) elimination, which depends on \
                 the daily dose; give the amount of dose {}",
                missing.join(", ")
            ),
        ));
    }
    // Effective inputs: mg of the drug itself reaching the circulation.
    let inputs = inputs_of(case, salt.1);
    let starts: Vec<(f64, f64)> = inputs.iter().map(|i| (i.t, i.amount_mg)).collect();
    let albumin = case.patient.albumin_g_dl;
    let renal = case.patient.renal_failure == Some(true) || case.patient.dialysis == Some(true);
    let form = if renal {
        AlbuminForm::RenalFailure
    } else {
        AlbuminForm::Usual
    };

    // Readings: free levels over the free fraction; totals adjusted when albumin is known;
    // a total drawn with a free level at the same time gives way to the free one.
    let used: Vec<&Level> = case.levels.iter().filter(|l| l.use_in_fit).collect();
    let mut readings = Vec::new();
    for l in &used {
        if !l.free && used.iter().any(|o| o.free && o.t == l.t) {
            continue;
        }
        let (decision, basis) = if l.free {
            (l.mg_l / p.free_fraction, Basis::Free)
        } else if let Some(alb) = albumin {
            (p.albumin.adjust(l.mg_l, alb, form), Basis::Adjusted)
        } else {
            (l.mg_l, Basis::Total)
        };
        let rate = rate_before(&starts, l.t);
        let mut back = 0.0;
        while back < 3650.0 * HOURS_PER_DAY {
            let earlier = rate_before(&starts, l.t - back - HOURS_PER_DAY);
            if !same_rate(earlier, rate) {
                break;
            }
            back += HOURS_PER_DAY;
        }
        let first = case.doses.first().map_or(l.t, |d| d.t);
        readings.push(Reading {
            row: l.row,
            time: l.time,
            t: l.t,
            measured_mg_l: l.mg_l,
            decision_mg_l: decision,
            basis,
            rate_mg_per_day: rate,
            hours_on_rate: (back + HOURS_PER_DAY).min(l.t - first),
        });
    }
    let Some(decision) = readings.last().cloned() else {
        return Err(Error::Fit(
            "no level is in use: the saturable analysis needs at least one level drawn on a \
             regular daily dose"
                .into(),
        ));
    };
    let dosed: Vec<&Reading> = readings
        .iter()
        .filter(|r| r.rate_mg_per_day > 0.0)
        .collect();
    let Some(last) = dosed.last().copied() else {
        return Err(Error::Fit(format!(
            "level {}: no dose in the 24 h before it; the saturable analysis needs a level drawn \
             on a regular daily dose (enter the doses of the days before the level)",
            decision.row
        )));
    };
    // The steady-state algebra.
    let other = dosed
        .iter()
        .rev()
        .find(|r| !same_rate(r.rate_mg_per_day, last.rate_mg_per_day))
        .copied();
    let (alg_method, alg_vmax, alg_km, algebra_rows) = match other {
        Some(o) => {
            let (vmax, km) = saturable::from_two_levels(
                o.rate_mg_per_day,
                o.decision_mg_l,
                last.rate_mg_per_day,
                last.decision_mg_l,
            )
            .ok_or_else(|| {
                Error::Fit(format!(
                    "levels {} and {} do not fit saturable elimination: {} mg/L on {} mg/day and \
                     {} mg/L on {} mg/day (reaching the circulation) give no positive Km (the level must rise more than in \
                     proportion to the dose); check that both were drawn at steady state and \
                     that the doses were taken, or set use = false on one",
                    o.row,
                    last.row,
                    num(o.decision_mg_l),
                    num(o.rate_mg_per_day),
                    num(last.decision_mg_l),
                    num(last.rate_mg_per_day)
                ))
            })?;
            (Method::TwoLevels, vmax, km, vec![o.row, last.row])
        }
        None => {
            let vmax =
                saturable::vmax_from_one_level(last.rate_mg_per_day, last.decision_mg_l, p.km_mg_l);
            (Method::OneLevel, vmax, p.km_mg_l, vec![last.row])
        }
    };
    if !(alg_vmax.is_finite() && alg_km.is_finite()) {
        return Err(Error::invalid(
            format!("level {}", last.row),
            "value: too small for the saturable algebra (Vmax would be infinite); check the \
             value and its unit",
        ));
    }
    // The record fit and the Bayesian estimate, when the volume is known.
    let volume = case.patient.weight_kg.map(|w| w * p.volume_l_per_kg);
    let weight = case.patient.weight_kg.unwrap_or(70.0);
    let typical = p.vmax_70kg_mg_per_day * (weight / 70.0).powf(p.vmax_weight_exponent);
    let obs: Vec<(f64, f64)> = readings.iter().map(|r| (r.t, r.decision_mg_l)).collect();
    let prior = p.spread.map(|sp| Prior {
        vmax_mg_per_day: typical,
        km_mg_l: p.km_mg_l,
        omega_vmax: saturable::log_sd_of_cv(sp.vmax_cv),
        omega_km: saturable::log_sd_of_cv(sp.km_cv),
        sigma_log: saturable::log_sd_of_cv(sp.residual_cv),
    });
    let mut record = None;
    let mut bayesian = None;
    if let Some(v) = volume {
        let start = Kinetics {
            vmax_mg_per_day: alg_vmax,
            km_mg_l: alg_km,
            volume_l: v,
        };
        let fit_km = alg_method == Method::TwoLevels;
        record = saturable::fit_record(&start, &inputs, &obs, fit_km);
        bayesian = prior.and_then(|pr| saturable::fit_map(&pr, v, &inputs, &obs));
    }
    // The rule: the levels alone when they identify both Vmax and Km (levels on two daily
    // doses and a record fit of both that settles); otherwise the Bayesian estimate, which
    // takes what the levels cannot give from the population; failing both, the record fit
    // with the population Km, and failing that the algebra.
    let method = match (&record, &bayesian) {
        (Some(f), _) if f.km_fitted => Method::Record { km_fitted: true },
        (_, Some(_)) => Method::Bayesian,
        (Some(f), None) => Method::Record {
            km_fitted: f.km_fitted,
        },
        (None, None) => alg_method,
    };
    let method_words = method.words();
    if alg_method == Method::OneLevel {
        let same: Vec<String> = dosed
            .iter()
            .filter(|r| r.row != last.row)
            .map(|r| r.row.to_string())
            .collect();
        let more = if same.is_empty() {
            String::new()
        } else {
            format!(
                " (level {} was on the same daily dose, so it cannot tell Vmax from Km)",
                same.join(", ")
            )
        };
        let text = match (method, prior) {
            (Method::Bayesian, Some(pr)) => format!(
                "the levels are all on one daily dose, so they cannot give both Vmax and Km: the \
                 Bayesian estimate takes what they cannot give from the population values (Vmax \
                 {} mg/day for {} kg, Km {} mg/L, which varies about {} % between patients); a \
                 level on a second, different daily dose at steady state would give both{more}",
                num(pr.vmax_mg_per_day),
                num(weight),
                num(p.km_mg_l),
                num(100.0 * p.spread.map_or(0.0, |sp| sp.km_cv))
            ),
            _ => format!(
                "Km is the population value ({} mg/L) and only Vmax comes from this patient: a \
                 level on a second, different daily dose at steady state would give both{more}",
                num(p.km_mg_l)
            ),
        };
        let code = if method == Method::Bayesian {
            Code::PriorWeighs
        } else {
            Code::SaturableEstimate
        };
        warnings.push(Warning::new(code, text));
    }
    if volume.is_some() {
        match &record {
            None => warnings.push(Warning::new(
                Code::SaturableEstimate,
                if method == Method::Bayesian {
                    "the fit to the dose record alone did not settle, so the Bayesian estimate is \
                     used"
                } else {
                    "the fit to the dose record did not settle, so Vmax and Km come from the \
                     steady-state algebra alone"
                },
            )),
            Some(f) => {
                let off = |a: f64, b: f64| (a / b - 1.0).abs() > 0.25;
                if off(f.kinetics.vmax_mg_per_day, alg_vmax) || off(f.kinetics.km_mg_l, alg_km) {
                    warnings.push(Warning::new(
                        Code::SaturableEstimate,
                        format!(
                            "the fit to the dose record (Vmax {} mg/day, Km {} mg/L) and the \
                             steady-state algebra (Vmax {} mg/day, Km {} mg/L) disagree by more \
                             than 25 %: the algebra takes each level as the steady-state average \
                             (no swing within the dosing interval) and the record fit takes the \
                             record to start drug-free, so enter any earlier doses and check that \
                             the levels were at steady state; the {method_words} is used",
                            num(f.kinetics.vmax_mg_per_day),
                            num(f.kinetics.km_mg_l),
                            num(alg_vmax),
                            num(alg_km)
                        ),
                    ));
                }
                if f.rms_log > 0.2 {
                    warnings.push(Warning::new(
                        Code::SaturableEstimate,
                        format!(
                            "the levels scatter about the fitted course (root mean square {} % \
                             on the log scale): check the dose times and amounts",
                            num(100.0 * f.rms_log)
                        ),
                    ));
                }
            }
        }
    } else {
        warnings.push(Warning::new(
            Code::SaturableEstimate,
            "no weight, so no volume: Vmax and Km come from the steady-state algebra alone, and \
             the time to steady state, the fall after stopping and the 95 % ranges are not given",
        ));
    }
    let (vmax, km) = match (method, &record, &bayesian) {
        (Method::Bayesian, _, Some(b)) => (b.kinetics.vmax_mg_per_day, b.kinetics.km_mg_l),
        (Method::Record { .. }, Some(f), _) => (f.kinetics.vmax_mg_per_day, f.kinetics.km_mg_l),
        _ => (alg_vmax, alg_km),
    };
    // The 95 % ranges: the Laplace approximation at the Bayesian estimate, or the curvature
    // of the record fit of both (its residual error from the profile's spreads).
    let cov = match (method, &bayesian, volume, prior) {
        (Method::Bayesian, Some(b), _, _) => Some((RangeSource::Laplace, b.cov_log)),
        (Method::Record { km_fitted: true }, _, Some(v), Some(pr)) => {
            let k = Kinetics {
                vmax_mg_per_day: vmax,
                km_mg_l: km,
                volume_l: v,
            };
            saturable::data_covariance(&k, &inputs, &obs, pr.sigma_log)
                .map(|c| (RangeSource::RecordCurvature, c))
        }
        _ => None,
    };
    if volume.is_some() && cov.is_none() {
        warnings.push(Warning::new(
            Code::SaturableEstimate,
            if p.spread.is_none() {
                "the drug profile gives no spreads for Vmax and Km, so no 95 % range is given: \
                 follow every change with a level at the new steady state"
            } else {
                "no 95 % range of Vmax and Km could be found from these levels: follow every \
                 change with a level at the new steady state"
            },
        ));
    }
    // A Vmax far from the population's (whose between-patient spread is 10-20 %) points to
    // missed doses, a wrong dose record or unit, or a level drawn at the wrong time.
    if vmax > 2.0 * typical || vmax < 0.5 * typical {
        warnings.push(Warning::new(
            Code::SaturableEstimate,
            format!(
                "Vmax {} mg/day is far from the population value of about {} mg/day for {} kg: \
                 check that the doses were taken as recorded, the dose record and units, and \
                 the level's time before using these figures",
                num(vmax),
                num(typical),
                num(weight)
            ),
        ));
    }
    let kin = volume.map(|v| Kinetics {
        vmax_mg_per_day: vmax,
        km_mg_l: km,
        volume_l: v,
    });

    // Steady state of the levels the algebra used: at least MIN_DAYS_TO_STEADY days on the
    // same daily dose, and at least the time to 90 % of steady state when the volume is known.
    for r in dosed.iter().filter(|r| algebra_rows.contains(&r.row)) {
        let t90 = volume
            .and_then(|v| saturable::days_to_90pct(vmax, km, v, r.rate_mg_per_day))
            .map(|d| d * HOURS_PER_DAY);
        if saturable::ss_level(vmax, km, r.rate_mg_per_day).is_none() {
            warnings.push(Warning::about_level(
                Code::NotSteadyState,
                r.row,
                format!(
                    "level {}: its daily dose is at or above Vmax, so it was not at steady state",
                    r.row
                ),
            ));
            continue;
        }
        let needed = t90.unwrap_or(0.0).max(MIN_DAYS_TO_STEADY * HOURS_PER_DAY);
        if r.hours_on_rate < needed {
            let why = match t90 {
                Some(h) if h >= MIN_DAYS_TO_STEADY * HOURS_PER_DAY => format!(
                    "about {} are needed to reach 90 % of steady state on that dose",
                    span_words(h)
                ),
                _ => format!(
                    "steady state takes at least {} days",
                    num(MIN_DAYS_TO_STEADY)
                ),
            };
            warnings.push(Warning::about_level(
                Code::NotSteadyState,
                r.row,
                format!(
                    "level {}: drawn {} after the daily dose last changed (or the record \
                     began); {why}, so the steady-state figures may be wrong — repeat the level \
                     later",
                    r.row,
                    span_words(r.hours_on_rate)
                ),
            ));
        }
    }

    // Binding.
    let latest_total = used.iter().rev().find(|l| !l.free);
    let latest_free = used.iter().rev().find(|l| l.free);
    let adjusted = match (albumin, latest_total) {
        (Some(alb), Some(l)) => Some(Adjusted {
            row: l.row,
            total_mg_l: l.mg_l,
            adjusted_mg_l: p.albumin.adjust(l.mg_l, alb, form),
            albumin_g_dl: alb,
            form,
        }),
        _ => None,
    };
    if latest_free.is_none() {
        let low = albumin.is_some_and(|a| a < 3.5);
        if low || renal {
            let why = match (low, renal) {
                (true, true) => "low albumin and renal failure change",
                (true, false) => "low albumin changes",
                _ => "renal failure changes",
            };
            warnings.push(Warning::new(
                Code::BindingUncertain,
                format!(
                    "{why} {} binding, and the albumin adjustment is only an estimate \
                     (biased and imprecise in critical care): measure a free level before acting \
                     on it",
                    p.drug.to_lowercase()
                ),
            ));
        }
    }

    // Doses.
    let f_route = case
        .plan
        .as_ref()
        .map(|pl| pl.route.bioavailability())
        .or_else(|| case.doses.last().map(|d| d.route.bioavailability()))
        .unwrap_or(1.0);
    let per_written = salt.1 * f_route;
    if !(1.0 / per_written).is_finite() {
        // A bioavailability of 5e-324: every dose written for a level would be infinite.
        let place = match (&case.plan, case.doses.last()) {
            (Some(_), _) | (None, None) => "plan.bioavailability".to_string(),
            (None, Some(d)) => format!("dose {}: bioavailability", d.row),
        };
        return Err(Error::invalid(
            place,
            format!(
                "{} is too small for any dose to be computed from it; check it",
                crate::core::format::written(f_route)
            ),
        ));
    }
    let daily = |written: f64| -> DailyDose {
        let r = written * per_written;
        DailyDose {
            written_mg_per_day: written,
            level_ss_mg_l: saturable::ss_level(vmax, km, r),
            time_to_90pct_h: volume
                .and_then(|v| saturable::days_to_90pct(vmax, km, v, r))
                .map(|d| d * HOURS_PER_DAY),
            level_ss_ci95: cov.map(|(_, c)| {
                saturable::range95(vmax, km, &c, &|v, k| saturable::ss_level_or_inf(v, k, r))
            }),
        }
    };
    let current = case.doses.last().map(|d| {
        case.doses
            .iter()
            .filter(|o| o.t > d.t - HOURS_PER_DAY + 1e-9 && o.t <= d.t)
            .map(|o| o.amount_mg.unwrap_or(0.0))
            .sum::<f64>()
    });
    let range = case
        .targets
        .peak
        .map(|r| r.map(|x| case.drug.scale.to_mg_l(x)))
        .or(p.range_mg_l);
    let target = range.map(|r| (r[0] + r[1]) / 2.0);
    let step = grid(&p.dose_forms_mg);
    let dose_for_target = target.map(|c| {
        let exact = saturable::rate_for_level(vmax, km, c) / per_written;
        let lo = (exact / step).floor() * step;
        let hi = lo + step;
        let inside = |d: &DailyDose| {
            d.level_ss_mg_l
                .zip(range)
                .is_some_and(|(l, r)| l >= r[0] && l <= r[1])
        };
        let (a, b) = (daily(lo.max(0.0)), daily(hi));
        let gap = |d: &DailyDose| d.level_ss_mg_l.map_or(f64::INFINITY, |l| (l - c).abs());
        // The one whose steady state is closer to the target, preferring one inside the
        // range; the lower dose on a tie (the safer side).
        let pick_a = match (inside(&a), inside(&b)) {
            (true, false) => true,
            (false, true) => false,
            _ => gap(&a) <= gap(&b),
        };
        if pick_a {
            a
        } else {
            b
        }
    });
    let band = p
        .increase_below_mg_l
        .iter()
        .position(|b| decision.decision_mg_l < *b)
        .unwrap_or(p.increase_below_mg_l.len());
    let max_increase = p.increase_max_mg_per_day.get(band).copied();
    let mut next_step = None;
    if let (Some(cur), Some(d), Some(max)) = (current, dose_for_target, max_increase) {
        let rise = d.written_mg_per_day - cur;
        if rise > max + 1e-9 {
            let steps = (max / step).floor().max(1.0);
            let next = daily(cur + steps * step);
            next_step = Some(next);
            warnings.push(Warning::new(
                Code::LargeDoseStep,
                format!(
                    "the dose for the target ({} mg/day) is {} mg/day above the current {} mg/day; \
                     at a level of {} mg/L common practice raises a daily dose by at most {} mg \
                     at a time, because the level rises more than in proportion: a first step to \
                     {} mg/day{} — then recheck the level at steady state",
                    num(d.written_mg_per_day),
                    num(rise),
                    num(cur),
                    num(decision.decision_mg_l),
                    num(max),
                    num(next.written_mg_per_day),
                    next.level_ss_mg_l.map_or(
                        " has no steady state".to_string(),
                        |l| format!(" aims at about {} mg/L", num(l))
                    )
                ),
            ));
        }
    }
    if let Some(pl) = case.plan.as_ref() {
        // A plan interval of 5e-324 h makes the daily dose infinite: refuse it rather than
        // write "— mg/day" in the plan and its warnings.
        if !(pl.dose_mg * HOURS_PER_DAY / pl.interval_h).is_finite() {
            return Err(Error::invalid(
                "plan",
                format!(
                    "{} mg every {} h gives no finite daily dose; check plan.dose_mg and plan.interval_h",
                    crate::core::format::written(pl.dose_mg),
                    crate::core::format::written(pl.interval_h)
                ),
            ));
        }
    }
    let plan = case.plan.as_ref().map(|pl| {
        let written = pl.dose_mg * HOURS_PER_DAY / pl.interval_h;
        daily(written)
    });
    if let Some(pl) = &plan {
        if pl.level_ss_mg_l.is_none() {
            warnings.push(Warning::new(
                Code::AboveVmax,
                format!(
                    "no steady state: the plan's {} mg/day gives {} mg/day of {} reaching the \
                     circulation, at or above this patient's Vmax of {} mg/day, so the level \
                     would keep rising",
                    num(pl.written_mg_per_day),
                    num(pl.written_mg_per_day * per_written),
                    p.drug.to_lowercase(),
                    num(vmax)
                ),
            ));
        }
        if let (Some(l), Some(r)) = (pl.level_ss_mg_l, range) {
            if l < r[0] || l > r[1] {
                warnings.push(Warning::new(
                    Code::OutsideRange,
                    format!(
                        "the plan's steady state of {} {u} is {} the range {}–{} {u}",
                        num(case.drug.scale.to_level(l)),
                        if l > r[1] { "above" } else { "below" },
                        num(case.drug.scale.to_level(r[0])),
                        num(case.drug.scale.to_level(r[1])),
                        u = case.drug.scale.unit.as_str()
                    ),
                ));
            }
        }
        if let (Some(cur), Some(max)) = (current, max_increase) {
            let rise = pl.written_mg_per_day - cur;
            if rise > max + 1e-9 {
                warnings.push(Warning::new(
                    Code::LargeDoseStep,
                    format!(
                        "the plan raises the daily dose by {} mg (from {} to {} mg/day); at a \
                         level of {} mg/L common practice raises it by at most {} mg at a time",
                        num(rise),
                        num(cur),
                        num(pl.written_mg_per_day),
                        num(decision.decision_mg_l),
                        num(max)
                    ),
                ));
            }
        }
    }

    let ranges = cov.map(|(source, c)| Ranges {
        source,
        cov_log: c,
        vmax: saturable::range95(vmax, km, &c, &|v, _| v),
        km: saturable::range95(vmax, km, &c, &|_, k| k),
        dose_for_target_mg_per_day: target.map(|t| {
            saturable::range95(vmax, km, &c, &|v, k| {
                saturable::rate_for_level(v, k, t) / per_written
            })
        }),
    });
    // Near Vmax a small error in Vmax or Km is a large error in the steady state.
    if let Some(rg) = &ranges {
        let doses = [
            ("the plan", plan),
            ("the dose for the target", dose_for_target),
        ];
        for (what, d) in doses {
            let Some((d, [lo, hi])) = d.and_then(|d| d.level_ss_ci95.map(|c| (d, c))) else {
                continue;
            };
            if d.level_ss_mg_l.is_none() || (hi.is_finite() && hi <= 2.0 * lo) {
                continue;
            }
            let span = if hi.is_finite() {
                format!(
                    "{}–{} {u}",
                    num(case.drug.scale.to_level(lo)),
                    num(case.drug.scale.to_level(hi)),
                    u = case.drug.scale.unit.as_str()
                )
            } else {
                format!(
                    "from {} {} to no steady state at all",
                    num(case.drug.scale.to_level(lo)),
                    case.drug.scale.unit.as_str()
                )
            };
            warnings.push(Warning::new(
                Code::NearVmax,
                format!(
                    "{what} ({} mg/day) gives {} mg/day reaching the circulation, near this \
                     patient's Vmax (95 % range {}–{} mg/day): there a small error in Vmax or Km \
                     makes a large error in the level, and its steady state could be {span}; \
                     treat the projected level as uncertain and confirm it with levels",
                    num(d.written_mg_per_day),
                    num(d.written_mg_per_day * per_written),
                    num(rg.vmax[0]),
                    num(rg.vmax[1])
                ),
            ));
        }
    }

    // The fall after the doses stop.
    let mut fall = Vec::new();
    let mut fall_from = None;
    let mut threshold = None;
    if let (Some(k), Some(last_dose)) = (kin, case.doses.iter().map(|d| d.end()).reduce(f64::max)) {
        'fall: {
            let last_level = case.levels.last().map_or(last_dose, |l| l.t);
            let t0 = last_dose.max(last_level);
            let first = inputs.iter().map(|i| i.t).fold(f64::INFINITY, f64::min) - 1e-9;
            let c0 = saturable::course(&k, &inputs, 0.0, first, &[t0])[0];
            // The level just after the last instant dose, when the fall starts at it.
            let c0 = c0
                + inputs
                    .iter()
                    .filter(|i| i.hours == 0.0 && i.t == t0)
                    .map(|i| i.amount_mg / k.volume_l)
                    .sum::<f64>();
            if !c0.is_finite() {
                warnings.push(Warning::new(
                    Code::SaturableEstimate,
                    "the course of the level could not be integrated (the volume or Km is far too \
                 small for any patient): check the weight; the fall after stopping is not given",
                ));
                break 'fall;
            }
            fall_from = Some((stamp(case, t0, "the fall after the last dose")?, c0));
            let below = case
                .threshold
                .as_ref()
                .map(|th| case.drug.scale.to_mg_l(th.below));
            let half = |c: f64| {
                std::f64::consts::LN_2 * k.volume_l * (k.km_mg_l + c)
                    / (k.vmax_mg_per_day / HOURS_PER_DAY)
            };
            let mut hours = 0.0;
            let mut c = c0;
            for n in 1..=14 {
                let dt = if n == 1 { 12.0 } else { HOURS_PER_DAY };
                c = saturable::course(&k, &[], c, 0.0, &[dt])[0];
                if !c.is_finite() {
                    break;
                }
                hours += dt;
                fall.push(FallRow {
                    at: stamp(case, t0 + hours, "the fall after the last dose")?,
                    hours,
                    level_mg_l: c,
                    half_life_here_h: half(c),
                });
                // Until the threshold is passed, or a tenth of the range's low end (8 rows
                // without a range); at least 3 rows, at most 14.
                let floor = below.or(range.map(|r| r[0] / 10.0));
                let done = match floor {
                    None => n >= 8,
                    Some(b) => c <= b && n >= 3,
                };
                if done {
                    break;
                }
            }
            if let (Some(th), Some(b)) = (&case.threshold, below) {
                let h = saturable::hours_to_fall(&k, c0, b);
                let reached_at = case.clock.at_minute_up(t0 + h).ok_or_else(|| {
                    Error::invalid(
                        "threshold.below",
                        "the time the level falls below it lies too far away for any calendar",
                    )
                })?;
                let level_at_procedure_mg_l = th
                    .procedure_t
                    .map(|pt| saturable::course(&k, &[], c0, t0, &[pt.max(t0)])[0]);
                threshold = Some(FallThreshold {
                    below_mg_l: b,
                    reached_at,
                    level_at_procedure_mg_l,
                });
            }
        }
    }

    // A deciding level above the range: when holding the doses brings it back into range.
    if let (Some(r), Some(k), Some((_, c0))) = (range, kin, &fall_from) {
        if decision.decision_mg_l > r[1] && *c0 > r[1] {
            let h = saturable::hours_to_fall(&k, *c0, r[1]);
            warnings.push(Warning::new(
                Code::OutsideRange,
                format!(
                    "the deciding level of {} {u} is above the range: with no further dose it \
                     falls to {} {u} in about {} (nearly the same fall in mg/L each day at first, \
                     because elimination is saturated)",
                    num(case.drug.scale.to_level(decision.decision_mg_l)),
                    num(case.drug.scale.to_level(r[1])),
                    span_words(h),
                    u = case.drug.scale.unit.as_str()
                ),
            ));
        }
    }
    Ok(SaturableReport {
        method,
        vmax_mg_per_day: vmax,
        km_mg_l: km,
        volume_l: volume,
        algebraic: (alg_method, alg_vmax, alg_km),
        record,
        bayesian,
        prior,
        ranges,
        algebra_rows,
        salt,
        bioavailability: f_route,
        readings,
        decision,
        adjusted,
        free: latest_free.map(|l| (l.row, l.mg_l)),
        current_mg_per_day: current,
        target_mg_l: target,
        dose_for_target,
        next_step,
        max_increase_mg_per_day: max_increase,
        plan,
        fall_from,
        fall,
        threshold,
        warnings,
    })
}

impl Basis {
    /// In words.
    pub fn words(self) -> &'static str {
        match self {
            Basis::Total => "measured total",
            Basis::Adjusted => "total adjusted for albumin",
            Basis::Free => "measured free level over the normal free fraction (preferred)",
        }
    }
}

impl AlbuminForm {
    /// The formula in words.
    pub fn words(self, rule: &AlbuminRule) -> String {
        match self {
            AlbuminForm::Usual => format!(
                "C/({} x albumin + {}), Sheiner-Tozer",
                num(rule.slope),
                num(rule.intercept)
            ),
            AlbuminForm::RenalFailure => format!(
                "C/({} x albumin + {}), the Sheiner-Tozer form for renal failure",
                num(rule.slope_renal_failure),
                num(rule.intercept)
            ),
        }
    }
}

/// The caution shown first in every saturable report, note and screen.
pub const CAUTION: &str = "Decision support only. Figures assume one-compartment saturable \
(Michaelis-Menten) elimination. Check them against local protocols, with pharmacist or \
prescriber review, before acting.";

/// The line that says the first-order figures are absent, for every surface.
pub const NO_FIRST_ORDER: &str = "Saturable (Michaelis-Menten) elimination: no first-order k, \
half-life, AUC or washout by half-lives is given, because they do not hold for this drug.";

/// A daily dose in words: `300 mg/day: steady state 14.9 mg/L, 90 % in about 14 d`.
pub fn daily_words(d: &DailyDose, to_level: &dyn Fn(f64) -> f64, u: &str) -> String {
    match d.level_ss_mg_l {
        None => format!(
            "{} mg/day: no steady state, the dose exceeds Vmax",
            num(d.written_mg_per_day)
        ),
        Some(l) => format!(
            "{} mg/day: steady state {} {u}{}{}",
            num(d.written_mg_per_day),
            num(to_level(l)),
            d.level_ss_ci95
                .map(|r| format!(" ({})", range_words(r, to_level, u)))
                .unwrap_or_default(),
            d.time_to_90pct_h
                .map(|h| format!(
                    ", 90 % of it about {} after starting from none",
                    span_words(h)
                ))
                .unwrap_or_default()
        ),
    }
}

/// A 95 % range of a steady-state level in words: `95 % range 11.6–31.9 mg/L`, or
/// `95 % range from 20.8 mg/L to no steady state` when Vmax may be at or below the dose.
pub fn range_words(r: [f64; 2], to_level: &dyn Fn(f64) -> f64, u: &str) -> String {
    if r[1].is_finite() {
        format!(
            "95 % range {}–{} {u}",
            num(to_level(r[0])),
            num(to_level(r[1]))
        )
    } else {
        format!(
            "95 % range from {} {u} to no steady state",
            num(to_level(r[0]))
        )
    }
}

/// Write the readable saturable report (the caution first).
///
/// # Errors
/// Only the writer's errors.
pub fn write_text(
    w: &mut dyn Write,
    case: &Case,
    r: &SaturableReport,
    p: &Params,
) -> io::Result<()> {
    let u = case.drug.scale.unit.as_str();
    writeln!(w, "CAUTION: {CAUTION}")?;
    writeln!(w)?;
    let title = match (&case.patient.label, case.drug.name.as_str()) {
        (Some(l), "") => format!("{l} — {}", p.drug),
        (Some(l), d) => format!("{l} — {d}"),
        (None, "") => p.drug.clone(),
        (None, d) => d.to_string(),
    };
    writeln!(w, "ebb report: {title} (levels in {u})")?;
    writeln!(w)?;
    write_body(w, case, r, p)
}

/// The report without the caution and title: for the report and the record note.
///
/// # Errors
/// Only the writer's errors.
pub fn write_body(
    w: &mut dyn Write,
    case: &Case,
    r: &SaturableReport,
    p: &Params,
) -> io::Result<()> {
    let u = case.drug.scale.unit.as_str();
    let lv = |x: f64| case.drug.scale.to_level(x);
    writeln!(w, "{NO_FIRST_ORDER}")?;
    writeln!(w)?;
    writeln!(w, "Levels in use:")?;
    for x in &r.readings {
        let kind = if x.basis == Basis::Free {
            "free"
        } else {
            "total"
        };
        writeln!(
            w,
            "  level {:<3} {}  {kind} {} {u}  on {} mg/day of {} reaching the circulation, for {}",
            x.row,
            x.time.readable(false),
            num(lv(x.measured_mg_l)),
            num(x.rate_mg_per_day),
            p.drug.to_lowercase(),
            span_words(x.hours_on_rate)
        )?;
    }
    let d = &r.decision;
    writeln!(
        w,
        "Deciding level: {} {u} (level {}: {})",
        num(lv(d.decision_mg_l)),
        d.row,
        d.basis.words()
    )?;
    if let Some(a) = &r.adjusted {
        writeln!(
            w,
            "  albumin {} g/dL: total {} {u} adjusted to {} {u} by {}",
            num(a.albumin_g_dl),
            num(lv(a.total_mg_l)),
            num(lv(a.adjusted_mg_l)),
            a.form.words(&p.albumin)
        )?;
    }
    if let Some((row, f)) = r.free {
        writeln!(
            w,
            "  free level {} {u} (level {row}) = {} {u} as a total with normal binding (free fraction {})",
            num(lv(f)),
            num(lv(f / p.free_fraction)),
            num(p.free_fraction)
        )?;
    }
    writeln!(w)?;
    writeln!(w, "Vmax and Km:")?;
    writeln!(
        w,
        "  used: {}: Vmax {} mg/day, Km {} mg/L{}",
        r.method.words(),
        num(r.vmax_mg_per_day),
        num(r.km_mg_l),
        r.volume_l
            .map(|v| format!(", volume {} L ({} L/kg)", num(v), num(p.volume_l_per_kg)))
            .unwrap_or_else(|| ", volume not known (no weight)".into())
    )?;
    if let Some(rg) = &r.ranges {
        writeln!(
            w,
            "  95 % range ({}): Vmax {}–{} mg/day, Km {}–{} mg/L",
            rg.source.words(),
            num(rg.vmax[0]),
            num(rg.vmax[1]),
            num(rg.km[0]),
            num(rg.km[1])
        )?;
    }
    if let (Some(b), false) = (&r.bayesian, r.method == Method::Bayesian) {
        writeln!(
            w,
            "  {}: Vmax {} mg/day, Km {} mg/L",
            Method::Bayesian.words(),
            num(b.kinetics.vmax_mg_per_day),
            num(b.kinetics.km_mg_l)
        )?;
    }
    if let Some(f) = r
        .record
        .filter(|_| !matches!(r.method, Method::Record { .. }))
    {
        writeln!(
            w,
            "  {}: Vmax {} mg/day, Km {} mg/L",
            Method::Record {
                km_fitted: f.km_fitted
            }
            .words(),
            num(f.kinetics.vmax_mg_per_day),
            num(f.kinetics.km_mg_l)
        )?;
    }
    let (am, av, ak) = r.algebraic;
    let rows: Vec<String> = r.algebra_rows.iter().map(|x| x.to_string()).collect();
    writeln!(
        w,
        "  steady-state algebra ({}; level {}): Vmax {} mg/day, Km {} mg/L",
        am.words(),
        rows.join(" and "),
        num(av),
        num(ak)
    )?;
    if let (Some(pr), Some(sp), Some(_)) = (&r.prior, &p.spread, &r.bayesian) {
        writeln!(
            w,
            "  priors (population values): Vmax {} mg/day (CV {} % between patients), Km {} mg/L \
             (CV {} %); residual error {} % of a level (on the log scale)",
            num(pr.vmax_mg_per_day),
            num(100.0 * sp.vmax_cv),
            num(pr.km_mg_l),
            num(100.0 * sp.km_cv),
            num(100.0 * sp.residual_cv)
        )?;
    }
    writeln!(
        w,
        "  doses as {} (x {} for mg of {}){}; Vmax in mg of {} reaching the circulation per day",
        r.salt.0,
        num(r.salt.1),
        p.drug.to_lowercase(),
        if r.bioavailability < 1.0 {
            format!(", by mouth x {} (bioavailability)", num(r.bioavailability))
        } else {
            String::new()
        },
        p.drug.to_lowercase()
    )?;
    writeln!(w)?;
    writeln!(w, "Daily dose (as {}):", r.salt.0)?;
    if let Some(c) = r.current_mg_per_day {
        writeln!(w, "  current: {} mg/day", num(c))?;
    }
    if let (Some(t), Some(dt)) = (r.target_mg_l, &r.dose_for_target) {
        writeln!(
            w,
            "  for the target {} {u}: {}{}{}",
            num(lv(t)),
            daily_words(dt, &lv, u),
            r.ranges
                .and_then(|rg| rg.dose_for_target_mg_per_day)
                .map(|d| format!(
                    "; the exact dose for it lies in {}–{} mg/day (95 % range)",
                    num(d[0]),
                    num(d[1])
                ))
                .unwrap_or_default(),
            if r.next_step.is_some() {
                " — not in one step (below)"
            } else {
                ""
            }
        )?;
    }
    if let Some(s) = &r.next_step {
        writeln!(
            w,
            "  first step (at most {} mg/day more at this level, common practice): {}",
            num(r.max_increase_mg_per_day.unwrap_or(0.0)),
            daily_words(s, &lv, u)
        )?;
    }
    if let Some(pl) = &r.plan {
        writeln!(w, "  plan: {}", daily_words(pl, &lv, u))?;
    }
    if let Some((from, c0)) = &r.fall_from {
        writeln!(w)?;
        writeln!(
            w,
            "If the doses stop (from {}: {} {u}); the half-life depends on the level, so it is given at each:",
            from.readable(false),
            num(lv(*c0))
        )?;
        if r.decision.basis != Basis::Total {
            writeln!(
                w,
                "  (levels here are totals with normal binding, the deciding level's scale, not \
                 the total the laboratory will measure)"
            )?;
        }
        for row in &r.fall {
            writeln!(
                w,
                "  +{:<9} {}  {} {u}  half-life here {}",
                span_words(row.hours),
                row.at.readable(false),
                num(lv(row.level_mg_l)),
                span_words(row.half_life_here_h)
            )?;
        }
        if let Some(th) = &r.threshold {
            writeln!(
                w,
                "  at or below {} {u} from {} (no further dose){}",
                num(lv(th.below_mg_l)),
                th.reached_at.readable(false),
                th.level_at_procedure_mg_l
                    .map(|l| format!("; at the procedure {} {u}", num(lv(l))))
                    .unwrap_or_default()
            )?;
        }
    }
    if !r.warnings.is_empty() {
        writeln!(w)?;
        writeln!(w, "Warnings:")?;
        for x in &r.warnings {
            writeln!(w, "  - {x}")?;
        }
    }
    Ok(())
}
