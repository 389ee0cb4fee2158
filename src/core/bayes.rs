//! Bayesian (maximum a posteriori) estimate of a patient's disposition — k (or CL) and V of a
//! one-compartment model, CL, V1, Q and V2 of a two-compartment one, by one path for both —
//! from a published population model and any number of levels; none gives the population
//! values for this patient (the a-priori estimate).
//!
//! The objective (η: the patient's log-deviations from the model's typical values of
//! (elimination, V) or of (CL, V1, Q, V2), one for each parameter with a between-patient
//! variability, the others staying at their typical values; Ω: their between-patient
//! covariance; y: the levels; ŷ(η): the model's levels at their times over the whole dose
//! record, `Disposition::levels`, so a level drawn in a distribution phase counts as drawn;
//! Var = additive² + (proportional·ŷ^b)², b the model's exponent, 1 unless it says):
//!
//!   OBJ(η) = Σ_j [ (y_j − ŷ_j)² / Var_j + ln Var_j ] + ηᵀ Ω⁻¹ η
//!
//! minimised by `minimise`. A level reported below the assay's limit L enters as a bound
//! (the likelihood that the level lies below L): − 2 ln Φ((L − ŷ)/√Var) instead of its
//! squared residual. The posterior covariance of η is the inverse of half the Hessian of OBJ
//! at the minimum (the Laplace approximation), and the intervals are 95 % (normal quantile
//! 1.96); with no level the covariance is Ω itself and the intervals are the population's
//! 90 % range (1.645). One compartment carries it to (ln k, ln V); for two it is that of
//! ln(CL, V1, Q, V2) (zero for a fixed parameter), from which the intervals of β (the terminal
//! k), V1 and CL follow by the delta method.

use statrs::distribution::{ContinuousCDF, Normal};

use crate::core::case::Case;
use crate::core::error::{Error, Result};
use crate::core::fitted::{Fit, Method};
use crate::core::history::{self, Solution};
use crate::core::minimise;
use crate::core::model::{self, Administration, Disposition, Route, Schedule, TwoCompartment};
pub use crate::core::population::{Population, Summary};
use crate::core::spread::{ParamSpread, Spread};
use crate::core::warning::{Code, Warning};

/// The two-sided normal quantile for a central range holding `p`.
pub fn normal_quantile(p: f64) -> f64 {
    Normal::new(0.0, 1.0)
        .map(|n| n.inverse_cdf(0.5 + p / 2.0))
        .unwrap_or(f64::NAN)
}

/// The η a population model lets the levels move, as indices into (elimination, V) of one
/// compartment or (CL, V1, Q, V2) of two — those with a between-patient variability (the
/// elimination always has one) — and how their prior term is reckoned.
struct Etas {
    free: Vec<usize>,
    prior: Prior,
}

/// How ηᵀ Ω⁻¹ η is reckoned over the free η. The two forms are the same quantity; each model
/// keeps the arithmetic its estimates have always had, since the minimum of a flat objective
/// moves with the last bits of its value.
enum Prior {
    /// One compartment: the SDs of the free η of (elimination, V) and their correlation r,
    /// written out as (a² − 2rab + b²)/(1 − r²), a and b the η over their SDs (a² alone when V
    /// is fixed).
    Pair { sd: Vec<f64>, r: f64 },
    /// Two compartments: Ω⁻¹ over the free η (None when Ω is singular).
    Inverse(Option<Vec<Vec<f64>>>),
}

impl Etas {
    fn of(pop: &Population) -> Etas {
        let w = pop.omega_two();
        let free: Vec<usize> = (0..4).filter(|&i| w[i].is_some()).collect();
        let prior = if pop.two.is_some() {
            let full = pop.omega_two_matrix();
            let omega: Vec<Vec<f64>> = free
                .iter()
                .map(|&i| free.iter().map(|&j| full[i][j]).collect())
                .collect();
            Prior::Inverse(minimise::inverse(&omega))
        } else {
            Prior::Pair {
                sd: free.iter().filter_map(|&i| w[i]).collect(),
                r: pop.correlation,
            }
        };
        Etas { free, prior }
    }

    /// The η of every parameter for the free values `x` (in the order of `free`); 0 for a
    /// fixed parameter.
    fn all(&self, x: &[f64]) -> [f64; 4] {
        let mut eta = [0.0; 4];
        for (&i, &xi) in self.free.iter().zip(x) {
            eta[i] = xi;
        }
        eta
    }

    /// The covariance of every η from that of the free ones; zero for a fixed parameter.
    fn all_cov(&self, cov: &[Vec<f64>]) -> [[f64; 4]; 4] {
        let mut out = [[0.0; 4]; 4];
        for (a, &i) in self.free.iter().enumerate() {
            for (b, &j) in self.free.iter().enumerate() {
                out[i][j] = cov[a][b];
            }
        }
        out
    }

    /// ηᵀ Ω⁻¹ η over the free η `x` (NaN when Ω is singular).
    fn prior_term(&self, x: &[f64]) -> f64 {
        match &self.prior {
            Prior::Pair { sd, r } => match (x, &sd[..]) {
                ([x0, x1], [w0, w1]) => {
                    let (a, b) = (x0 / w0, x1 / w1);
                    (a * a - 2.0 * r * a * b + b * b) / (1.0 - r * r)
                }
                ([x0], [w0]) => {
                    let a = x0 / w0;
                    a * a
                }
                _ => 0.0,
            },
            Prior::Inverse(None) => f64::NAN,
            Prior::Inverse(Some(inv)) => {
                let mut prior = 0.0;
                for (i, xi) in x.iter().enumerate() {
                    for (j, xj) in x.iter().enumerate() {
                        prior += xi * inv[i][j] * xj;
                    }
                }
                prior
            }
        }
    }

    /// OBJ at the free η `x`.
    fn objective(
        &self,
        pop: &Population,
        schedule: &Schedule,
        points: &[(f64, f64)],
        below: &[(f64, f64)],
        x: &[f64],
    ) -> f64 {
        let d = pop.disposition(&self.all(x));
        let ts: Vec<f64> = points.iter().chain(below).map(|p| p.0).collect();
        let predicted = d.levels(schedule, &ts);
        data_term(pop, points, below, &predicted) + self.prior_term(x)
    }
}

/// OBJ(η) as documented above, for `points` `(t, mg/L)` after `schedule` and levels
/// `below` `(t, limit mg/L)` reported below the assay's limit; `x` holds the free η: the
/// elimination's, then the volume's when it varies (one compartment), or those of (CL, V1, Q,
/// V2) that vary, in that order (two).
pub fn objective(
    pop: &Population,
    schedule: &Schedule,
    points: &[(f64, f64)],
    below: &[(f64, f64)],
    x: &[f64],
) -> f64 {
    Etas::of(pop).objective(pop, schedule, points, below, x)
}

/// The levels' part of OBJ: Σ [(y − ŷ)²/Var + ln Var] over `points`, − 2 ln Φ((L − ŷ)/√Var)
/// over the levels `below` the assay's limit; `predicted` holds ŷ at the points, then at
/// the bounds.
fn data_term(
    pop: &Population,
    points: &[(f64, f64)],
    below: &[(f64, f64)],
    predicted: &[f64],
) -> f64 {
    let mut total = 0.0;
    for ((_, y), yhat) in points.iter().zip(predicted) {
        let var = pop.residual.variance(*yhat);
        total += (y - yhat).powi(2) / var + var.ln();
    }
    let normal = Normal::new(0.0, 1.0).ok();
    for ((_, limit), yhat) in below.iter().zip(&predicted[points.len()..]) {
        let z = (limit - yhat) / pop.residual.variance(*yhat).sqrt();
        let p = normal.as_ref().map_or(f64::NAN, |n| n.cdf(z));
        total -= 2.0 * p.max(1e-300).ln();
    }
    total
}

/// A maximum a posteriori estimate of either disposition.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// The disposition at the estimate.
    pub disposition: Disposition,
    /// The terminal k and the central volume, the log residuals and, for one compartment, the
    /// spread of (ln k, ln V), as every fit carries them.
    pub solution: Solution,
    /// η of (elimination, V, —, —) or of (CL, V1, Q, V2) at the minimum (0 for a fixed one).
    pub eta: [f64; 4],
    /// Posterior covariance of η (zero rows and columns for a fixed one); Ω itself with no
    /// level. For two compartments it is that of ln(CL, V1, Q, V2).
    pub cov_eta: [[f64; 4]; 4],
    /// Two-sided quantile of the intervals: 1.959964 (95 %) after levels, 1.644854 (the
    /// population's 90 % range) with none.
    pub quantile: f64,
    /// The model's level at each point, mg/L.
    pub predicted: Vec<f64>,
}

impl Estimate {
    /// The joint uncertainty of ln(CL, V1, Q, V2) (two compartments).
    pub fn param_spread(&self) -> ParamSpread {
        ParamSpread {
            cov: self.cov_eta.iter().map(|r| r.to_vec()).collect(),
            quantile: self.quantile,
        }
    }
}

/// The gradient of ln β (the terminal rate constant) in ln(CL, V1, Q, V2), by central
/// differences (step 1e-6 in each log).
pub fn terminal_gradient(two: &TwoCompartment) -> [f64; 4] {
    let d = Disposition::Two(*two);
    let p = d.params();
    let h = 1e-6;
    let mut g = [0.0; 4];
    for (i, gi) in g.iter_mut().enumerate() {
        let at = |s: f64| {
            let mut q = p.clone();
            q[i] *= s.exp();
            d.with_params(&q).terminal_k().ln()
        };
        *gi = (at(h) - at(-h)) / (2.0 * h);
    }
    g
}

/// The estimate from points `(t, mg/L)` after `doses` and levels `below` `(t, limit mg/L)`
/// reported below the assay's limit entering as bounds (none of either: the population values
/// with Ω).
///
/// # Errors
/// None found (the objective is not finite at the population values, or does not settle),
/// or a terminal half-life outside what the levels can have determined.
pub fn estimate_with_bounds(
    doses: &[Administration],
    points: &[(f64, f64)],
    below: &[(f64, f64)],
    pop: &Population,
) -> std::result::Result<Estimate, history::Failure> {
    let schedule = Schedule::new(doses);
    let etas = Etas::of(pop);
    if matches!(etas.prior, Prior::Inverse(None)) {
        return Err(history::Failure::NotSeparable);
    }
    let none = points.is_empty() && below.is_empty();
    let (eta, cov_eta) = if none {
        ([0.0; 4], pop.omega_two_matrix())
    } else {
        let f = |x: &[f64]| etas.objective(pop, &schedule, points, below, x);
        let m = minimise::minimise(&f, &vec![0.0; etas.free.len()])
            .ok_or(history::Failure::NoElimination)?;
        let cov = minimise::laplace_covariance(&m.hessian).ok_or(history::Failure::NotSeparable)?;
        if (0..cov.len()).any(|i| cov[i][i].is_nan() || cov[i][i] <= 0.0) {
            return Err(history::Failure::NotSeparable);
        }
        (etas.all(&m.x), etas.all_cov(&cov))
    };
    let disposition = pop.disposition(&eta);
    let k = disposition.terminal_k();
    history::check_plausible(k.ln())?;
    let ts: Vec<f64> = points.iter().map(|p| p.0).collect();
    let predicted = disposition.levels(&schedule, &ts);
    let residuals: Vec<f64> = points
        .iter()
        .zip(&predicted)
        .map(|((_, y), yhat)| y.ln() - yhat.ln())
        .collect();
    // A model level of zero at a measured level (doses too small to reach it) leaves the
    // levels unexplained: no estimate, rather than an infinite residual.
    if residuals.iter().any(|r| !r.is_finite()) {
        return Err(history::Failure::NotSeparable);
    }
    let quantile = normal_quantile(if none { 0.90 } else { 0.95 });
    // A one-compartment fit carries the spread of (ln k, ln V); a two-compartment one that of
    // ln(CL, V1, Q, V2) (`param_spread`).
    let spread = match disposition {
        Disposition::One { .. } => Some(Spread {
            cov: ln_k_v_cov(pop, &cov_eta),
            quantile,
        }),
        Disposition::Two(_) => None,
    };
    Ok(Estimate {
        disposition,
        solution: Solution {
            k,
            v: disposition.central_volume(),
            spread,
            residuals,
            iterations: 0,
        },
        eta,
        cov_eta,
        quantile,
        predicted,
    })
}

/// The covariance of (ln k, ln V) of a one-compartment model from that of its η.
fn ln_k_v_cov(pop: &Population, cov_eta: &[[f64; 4]; 4]) -> [[f64; 2]; 2] {
    let a = pop.jacobian();
    let mut cov = [[0.0; 2]; 2];
    for i in 0..2 {
        for j in 0..2 {
            cov[i][j] = (0..2)
                .flat_map(|p| (0..2).map(move |q| (p, q)))
                .map(|(p, q)| a[i][p] * cov_eta[p][q] * a[j][q])
                .sum();
        }
    }
    cov
}

/// How far an estimate lies from the population values, and how much of it the levels
/// decided: for two compartments CL stands for the elimination and V1 for the volume, and Q
/// and V2 have their own shift and share.
pub fn summarise(pop: &Population, est: &Estimate, sources: &[String]) -> Summary {
    let w = pop.omega_two();
    let shift = |i: usize| w[i].map(|w| est.eta[i] / w);
    // Posterior over prior variance: at most 1 (the levels cannot add uncertainty; a
    // numerically flat objective can make it come out a little above).
    let share = |i: usize| w[i].map(|w| (est.cov_eta[i][i] / (w * w)).clamp(0.0, 1.0));
    Summary {
        population: pop.clone(),
        elimination_shift_sd: shift(0).unwrap_or(0.0),
        volume_shift_sd: shift(1).unwrap_or(0.0),
        prior_share: [share(0), share(1)],
        peripheral_shift_sd: [shift(2), shift(3)],
        peripheral_prior_share: [share(2), share(3)],
        sources: sources.to_vec(),
    }
}

/// The daily dose the levels were drawn under, mg/day: the last recorded dose over the gap
/// before it; without two recorded doses, the plan's.
pub fn daily_dose_mg(case: &Case) -> Option<f64> {
    recorded_daily_dose_mg(case).or_else(|| planned_daily_dose_mg(case))
}

fn recorded_daily_dose_mg(case: &Case) -> Option<f64> {
    let n = case.doses.len();
    if n < 2 {
        return None;
    }
    let (a, b) = (&case.doses[n - 2], &case.doses[n - 1]);
    let gap = b.t - a.t;
    b.amount_mg
        .filter(|_| gap > 0.0)
        .map(|amount| amount * 24.0 / gap)
}

fn planned_daily_dose_mg(case: &Case) -> Option<f64> {
    case.plan.as_ref().map(|p| p.dose_mg * 24.0 / p.interval_h)
}

/// For a model whose clearance follows the daily dose: when the plan's daily dose differs
/// from the one the levels were drawn under, how much the model's clearance would change —
/// the projections keep the clearance of the recorded dose.
fn dose_dependence(case: &Case, pop: &Population) -> Option<Warning> {
    let model = case.prior.as_ref()?;
    let (rec, plan) = (recorded_daily_dose_mg(case)?, planned_daily_dose_mg(case)?);
    if (plan / rec - 1.0).abs() <= 0.1 {
        return None;
    }
    let f = oral_f(case);
    let at_plan = crate::core::population::evaluate(model, &case.patient, Some(plan), f).ok()?;
    let change = at_plan.clearance_l_per_h / pop.clearance_l_per_h - 1.0;
    if change.abs() < 0.02 {
        return None;
    }
    Some(Warning::new(
        Code::ModelAssumes,
        format!(
            "the population model {}'s clearance follows the daily dose: at the plan's {} mg/day it is {:+.0} % against the recorded {} mg/day; the projections keep this patient's clearance at the recorded dose, so the plan's levels may be {} than shown",
            pop.model,
            crate::core::format::num(plan),
            change * 100.0,
            crate::core::format::num(rec),
            if change > 0.0 { "lower" } else { "higher" }
        ),
    ))
}

/// The profile's oral bioavailability as the case's doses carry it (1 when none is oral).
fn oral_f(case: &Case) -> f64 {
    case.doses
        .iter()
        .map(|d| d.route)
        .chain(case.plan.as_ref().map(|p| p.route))
        .find_map(|r| match r {
            Route::Oral { f, .. } => Some(f),
            _ => None,
        })
        .unwrap_or(1.0)
}

/// The case's population values (its model evaluated for this patient).
///
/// # Errors
/// No model (naming `fit.method`), or a patient field the model needs.
pub fn population_of(case: &Case) -> Result<Population> {
    let model = case.prior.as_ref().ok_or_else(|| {
        let profile = match &case.drug.profile {
            Some(p) => format!("the drug profile \"{p}\" gives none"),
            None => "the case names no drug profile".into(),
        };
        Error::invalid(
            "fit.method",
            format!("\"bayesian\" and \"population\" need a population model, and {profile}; use \"log-linear\" or \"dose-history\""),
        )
    })?;
    crate::core::population::evaluate(model, &case.patient, daily_dose_mg(case), oral_f(case))
}

/// The Bayesian estimate for a case from its population model and every usable level; with
/// no usable level, the population values (method "population").
///
/// # Errors
/// No model, a dose without an amount, a patient field the model needs, or no estimate.
pub fn fit(case: &Case) -> Result<Fit> {
    let model = case.prior.as_ref();
    let pop = population_of(case)?;
    let (used, mut warnings) = history::usable_levels(case);
    let given = if used.is_empty() && case.doses.is_empty() {
        Vec::new()
    } else {
        history::given_or_error(case, "Bayesian")?
    };
    let points: Vec<(f64, f64)> = used
        .iter()
        .map(|&i| (case.levels[i].t, case.levels[i].mg_l))
        .collect();
    // Levels below the assay's limit after the first dose bound the estimate (none before it,
    // and none when the population values alone were asked for).
    let first_dose = case.doses.iter().map(|d| d.t).fold(f64::INFINITY, f64::min);
    let below: Vec<(f64, f64)> =
        if case.fit_method == Some(crate::core::case::FitChoice::Population) || given.is_empty() {
            Vec::new()
        } else {
            case.levels
                .iter()
                .filter(|l| l.below_limit && l.t > first_dose)
                .map(|l| (l.t, l.mg_l))
                .collect()
        };
    let no_estimate = |_| {
        // The levels the estimate read: those in use, then those below the assay's limit.
        let names: Vec<String> = used
            .iter()
            .copied()
            .chain(
                case.levels
                    .iter()
                    .enumerate()
                    .filter(|(_, l)| !below.is_empty() && l.below_limit && l.t > first_dose)
                    .map(|(i, _)| i),
            )
            .map(|i| case.level_name(i))
            .collect();
        let (place, these) = match names.as_slice() {
            [] => ("dose".to_string(), "the dose record"),
            [one] => (one.clone(), "this level"),
            _ => (names.join(", "), "these levels"),
        };
        Error::invalid(
            place,
            format!(
                "no Bayesian estimate can be found from {these} and the population model {}; check the times, the values and the dose record",
                pop.model
            ),
        )
    };
    let sources = model.map_or(&[][..], |m| &m.sources);
    let est = estimate_with_bounds(&given, &points, &below, &pop).map_err(no_estimate)?;
    let summary = summarise(&pop, &est, sources);
    warnings.extend(pop.warnings.iter().cloned());
    if used.is_empty() && below.is_empty() && !model.is_none_or(|m| m.a_priori) {
        return Err(Error::invalid(
            "level",
            format!(
                "the population model {} serves only as a wide prior for an estimate from levels, not for a dose before the first level (its typical half-life for this patient is {} h); draw a level, or dose by the local protocol",
                pop.model,
                crate::core::format::num(std::f64::consts::LN_2 / pop.k_per_h)
            ),
        ));
    }
    // The words that differ with the compartments: the parameters, the kind of model, and
    // which parameters the levels move (all of them with one compartment).
    let (params, kind, varied, compartments) = if pop.two.is_some() {
        (
            "CL, V1, Q and V2",
            "two-compartment ",
            format!(
                " ({} from the levels, the rest at the model's typical values)",
                varied_words(&pop)
            ),
            "two compartments",
        )
    } else {
        ("k and V", "", String::new(), "one compartment")
    };
    let method = if used.is_empty() && below.is_empty() {
        warnings.push(Warning::new(
            Code::PriorWeighs,
            format!(
                "no level is in the fit: {params} are the typical values of the {kind}population model {} for this patient, not measured ones; the ranges are the population's 90 % range",
                pop.model
            ),
        ));
        Method::Population
    } else {
        let mut levels = match used.len() {
            0 => "no measured level".to_string(),
            1 => "one level".to_string(),
            n => format!("{n} levels"),
        };
        if !below.is_empty() {
            levels.push_str(&format!(
                " and {} below the assay's limit (as an upper bound)",
                below.len()
            ));
        }
        let share = summary.prior_share[0].unwrap_or(1.0);
        let what = if pop.on_clearance { "clearance" } else { "k" };
        if share > 0.5 {
            warnings.push(Warning::new(
                Code::PriorWeighs,
                format!(
                    "the estimate rests mostly on the population model {}: {levels} {} only {:.0} % of what is known of this patient's {what}",
                    pop.model,
                    if used.len() == 1 && below.is_empty() { "carries" } else { "carry" },
                    (1.0 - share) * 100.0
                ),
            ));
        } else {
            warnings.push(Warning::new(
                Code::PriorWeighs,
                format!(
                    "{params} are a Bayesian estimate from {levels} and the {kind}population model {}{varied}; the levels carry {:.0} % of what is known of this patient's {what}, the model the rest",
                    pop.model,
                    (1.0 - share) * 100.0
                ),
            ));
        }
        warnings.extend(unexpected_levels(case, &used, &given, &points, &pop));
        Method::Bayesian
    };
    warnings.extend(dose_dependence(case, &pop));
    warnings.push(Warning::new(
        Code::PopulationCovariates,
        covariate_words(&pop),
    ));
    if let Some(reason) = &case.prior_reason {
        warnings.push(Warning::new(
            Code::ModelChoice,
            format!("population model {} ({compartments}): {reason}", pop.model),
        ));
    }
    Ok(to_fit(case, method, used, &given, &est, warnings, summary))
}

/// Which of CL, V1, Q and V2 the levels can move, in words ("CL, V1 and V2").
fn varied_words(pop: &Population) -> String {
    let names = ["CL", "V1", "Q", "V2"];
    let free: Vec<&str> = Etas::of(pop).free.iter().map(|&i| names[i]).collect();
    match free.split_last() {
        None => "none".to_string(),
        Some((last, [])) => (*last).to_string(),
        Some((last, rest)) => format!("{} and {last}", rest.join(", ")),
    }
}

/// A `Fit` from an estimate. A two-compartment one adds the disposition itself, k = β (the
/// terminal rate constant) and its half-life, V1 as the volume, CL, the joint spread of ln(CL,
/// V1, Q, V2) and the intervals of β, its half-life, V1 and CL by the delta method on it.
fn to_fit(
    case: &Case,
    method: Method,
    used: Vec<usize>,
    given: &[Administration],
    est: &Estimate,
    warnings: Vec<Warning>,
    summary: Summary,
) -> Fit {
    let mut fit = history::to_fit(case, method, used, &est.solution, warnings, Some(summary));
    let Disposition::Two(two) = est.disposition else {
        // A volume the model holds at its typical value has no interval (not one of zero
        // width).
        if est.cov_eta[1][1] <= 0.0 {
            fit.volume_ci95 = None;
        }
        return fit;
    };
    let beta = est.solution.k;
    let d = est.disposition;
    // The terminal line through the model's level at the last fitted level (else the end of
    // the last dose), as the one-compartment fits leave it.
    let t_ref = fit
        .used
        .last()
        .map(|&i| case.levels[i].t)
        .unwrap_or_else(|| given.iter().map(|g| g.end()).fold(0.0, f64::max));
    let c_ref = Some(d.superpose(given, t_ref))
        .filter(|c| *c > 0.0)
        .unwrap_or(1.0);
    fit.ln_intercept = c_ref.ln() + beta * t_ref;
    fit.half_life_h = model::half_life(beta);
    fit.clearance_l_per_h = Some(two.cl);
    fit.two = Some(two);
    let spread = est.param_spread();
    let g_beta = terminal_gradient(&two);
    let k_ci = spread.interval(beta, &g_beta);
    let v_ci = spread.interval(two.v1, &[0.0, 1.0, 0.0, 0.0]);
    let cl_ci = spread.interval(two.cl, &[1.0, 0.0, 0.0, 0.0]);
    let finite = [k_ci, v_ci, cl_ci]
        .iter()
        .flatten()
        .all(|x| x.is_finite() && *x > 0.0);
    if finite {
        fit.se_k = Some(beta * spread.se_ln(&g_beta));
        fit.k_ci95 = Some(k_ci);
        fit.half_life_ci95 = Some([model::half_life(k_ci[1]), model::half_life(k_ci[0])]);
        // A central volume the model holds at its typical value has no interval.
        fit.volume_ci95 = (est.cov_eta[1][1] > 0.0).then_some(v_ci);
        fit.clearance_ci95 = Some(cl_ci);
        fit.param_spread = Some(spread);
    } else {
        fit.warnings.push(Warning::new(
            Code::WideIntervals,
            "the levels barely bound the clearance and volumes: their 95 % intervals are too wide to give",
        ));
    }
    fit
}

/// Levels far from the population model's prediction for this patient: more than 3 SDs on
/// the log scale, counting the between-patient spread of every free η carried to each level's
/// log (delta method, by forward differences) and the residual error.
fn unexpected_levels(
    case: &Case,
    used: &[usize],
    given: &[Administration],
    points: &[(f64, f64)],
    pop: &Population,
) -> Vec<Warning> {
    let schedule = Schedule::new(given);
    let ts: Vec<f64> = points.iter().map(|p| p.0).collect();
    let at = |eta: [f64; 4]| pop.disposition(&eta).levels(&schedule, &ts);
    let base = at([0.0; 4]);
    let h = 1e-5;
    let free = Etas::of(pop).free;
    let moved: Vec<Vec<f64>> = free
        .iter()
        .map(|&i| {
            let mut eta = [0.0; 4];
            eta[i] = h;
            at(eta)
        })
        .collect();
    let om = pop.omega_two_matrix();
    let mut out = Vec::new();
    for (j, &i) in used.iter().enumerate() {
        let (y, yhat) = (points[j].1, base[j]);
        if yhat.is_nan() || yhat <= 0.0 {
            continue;
        }
        let g: Vec<f64> = moved.iter().map(|m| (m[j].ln() - yhat.ln()) / h).collect();
        // gᵀ Ω g over the free η, each pair once (the cross terms doubled).
        let mut between = 0.0;
        for (a, &p) in free.iter().enumerate() {
            for (b, &q) in free.iter().enumerate().skip(a) {
                between += if a == b {
                    g[a] * g[a] * om[p][p]
                } else {
                    2.0 * g[a] * g[b] * om[p][q]
                };
            }
        }
        let var = between + pop.residual.variance(yhat) / (yhat * yhat);
        let z = (y.ln() - yhat.ln()) / var.sqrt();
        if z.abs() > 3.0 {
            out.push(far_level(case, i, y, yhat, z, &pop.model));
        }
    }
    out
}

/// The warning for level `i` (`y` mg/L) lying `z` SDs from the model's `yhat`.
fn far_level(case: &Case, i: usize, y: f64, yhat: f64, z: f64, model: &str) -> Warning {
    let scale = case.drug.scale;
    Warning::about_level(
        Code::LevelUnexpected,
        case.levels[i].row,
        format!(
            "{} ({} {}) is far from what the population model {model} predicts for this patient ({} {}, {:.1} SDs {}): check the sample time, the dose times and where the sample was drawn",
            case.level_name(i),
            crate::core::format::num(scale.to_level(y)),
            scale.unit.as_str(),
            crate::core::format::num(scale.to_level(yhat)),
            scale.unit.as_str(),
            z.abs(),
            if z > 0.0 { "above" } else { "below" }
        ),
    )
}

/// Which covariates the population values used, in words.
fn covariate_words(pop: &Population) -> String {
    let num = crate::core::format::num;
    let mut parts = Vec::new();
    if let Some(w) = pop.weight_kg {
        parts.push(format!("weight {} kg", num(w)));
    }
    if let Some(c) = &pop.creatinine_clearance {
        let weight = match c.weight {
            crate::core::prior::CrclWeight::Total => "total",
            crate::core::prior::CrclWeight::Ideal => "ideal",
            crate::core::prior::CrclWeight::Adjusted => "adjusted",
        };
        parts.push(format!(
            "creatinine clearance {:.0} mL/min by Cockcroft-Gault on {weight} body weight ({} kg){}",
            c.ml_min,
            num(c.weight_kg),
            if c.adjusted {
                ", with the model's floor on creatinine or cap on clearance"
            } else {
                ""
            }
        ));
    }
    if let Some(d) = pop.daily_dose_mg {
        parts.push(format!("daily dose {} mg", num(d)));
    }
    parts.extend(pop.other_covariates.iter().cloned());
    format!(
        "the population model {} used {}",
        pop.model,
        if parts.is_empty() {
            "no covariate".to_string()
        } else {
            parts.join(", ")
        }
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_two_forms_of_the_prior_term_are_the_same_quantity() {
        // Ω of (elimination, V) with SDs 0.4 and 0.3 and correlation −0.5: the pair written
        // out and ηᵀ Ω⁻¹ η through the matrix inverse.
        let (w0, w1, r) = (0.4, 0.3, -0.5);
        let omega = vec![vec![w0 * w0, r * w0 * w1], vec![r * w0 * w1, w1 * w1]];
        let pair = Etas {
            free: vec![0, 1],
            prior: Prior::Pair {
                sd: vec![w0, w1],
                r,
            },
        };
        let inverse = Etas {
            free: vec![0, 1],
            prior: Prior::Inverse(minimise::inverse(&omega)),
        };
        for x in [[0.1, -0.2], [0.5, 0.5], [-0.3, 0.0]] {
            let (a, b) = (pair.prior_term(&x), inverse.prior_term(&x));
            assert!((a / b - 1.0).abs() < 1e-12, "{x:?}: {a} vs {b}");
        }
        // Hand-worked from the bivariate normal's quadratic form: η = (0.4, 0) gives a = 1,
        // b = 0, so 1 / (1 − 0.25) = 4/3; with V fixed, (0.4 / 0.4)² = 1.
        assert!((pair.prior_term(&[0.4, 0.0]) - 4.0 / 3.0).abs() < 1e-12);
        let alone = Etas {
            free: vec![0],
            prior: Prior::Pair { sd: vec![w0], r },
        };
        assert!((alone.prior_term(&[0.4]) - 1.0).abs() < 1e-12);
    }
}
