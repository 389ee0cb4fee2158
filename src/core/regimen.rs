//! Regimen design: practical regimens that meet the targets, a loading dose, and the
//! proportional adjustment linear kinetics allows when no volume is known.
//!
//! Concentrations here are in mg/L (AUC in mg·h/L), times in hours, doses in mg; the report
//! converts to the case's level unit.

use crate::core::auc;
pub use crate::core::case::LoadingRule;
pub use crate::core::case::RegimenOptions;
use crate::core::case::{Case, Targets};
use crate::core::fit::Fit;
use crate::core::model::{self, Disposition, Route, SteadyState};
use crate::core::projection::Patient;
use crate::core::warning::{Code, Warning};

/// The step a dose of about `need_mg` is rounded on: the profile's `step` while it is at most
/// a quarter of the dose, else the largest of 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5 … mg that is at
/// most a tenth of it, so rounding moves it by at most about 5 % (a 6.25 mg need is rounded
/// on 0.5 mg to 6.5 mg, not on 10 mg).
pub fn fitting_step(need_mg: f64, step: f64) -> f64 {
    const STEPS: [f64; 13] = [
        0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 25.0, 50.0, 100.0, 250.0, 500.0,
    ];
    if !(need_mg.is_finite() && need_mg > 0.0) || step / need_mg <= 0.25 {
        return step;
    }
    STEPS
        .iter()
        .rev()
        .copied()
        .find(|s| *s <= step && *s <= need_mg / 10.0)
        .unwrap_or(STEPS[0].min(step))
}

/// The step doses of tablet strengths `forms` are made on: the smallest strength when every
/// other is a multiple of it (200 and 400 mg: 200 mg), else their greatest common divisor.
pub fn forms_step(forms: &[f64]) -> Option<f64> {
    let mut ok: Vec<f64> = forms
        .iter()
        .copied()
        .filter(|f| f.is_finite() && *f > 0.0)
        .collect();
    ok.sort_by(f64::total_cmp);
    let first = *ok.first()?;
    let gcd = |mut a: f64, mut b: f64| {
        while b > 1e-6 {
            let r = a % b;
            a = b;
            b = r;
        }
        a
    };
    Some(ok.iter().fold(first, |g, &f| gcd(f, g)))
}

/// The most suggestions given.
pub const MAX_SUGGESTIONS: usize = 5;

/// A regimen that meets every target at steady state.
#[derive(Debug, Clone, PartialEq)]
pub struct Suggestion {
    /// Dose in mg, a multiple of the dose step.
    pub dose_mg: f64,
    /// Interval in hours.
    pub interval_h: f64,
    /// Route (with its infusion time).
    pub route: Route,
    /// Steady-state figures in mg/L.
    pub steady: SteadyState,
    /// Distance from the middle of the target ranges: the mean of the squared distances,
    /// each in half-widths of its range (0 in the middle, 1 at an edge).
    pub score: f64,
    /// The peak at the time the peak target is defined on (`peak_sampled_after_h` after the
    /// end of the infusion), mg/L.
    pub peak_sampled_mg_l: f64,
    /// Whether this is the regimen the patient is on (listed first when it meets every target).
    pub current: bool,
    /// Hours per steady-state interval at or below the trough ceiling (strategies that care).
    pub drug_free_h: Option<f64>,
    /// Whether the infusion was lengthened to keep to the maximum rate.
    pub lengthened: bool,
}

/// What the loading dose aims at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LoadingBasis {
    /// The middle of the peak target range.
    PeakTarget,
    /// The steady-state peak of the best suggestion (no peak target).
    BestSuggestion,
    /// The steady-state peak of the case's plan (no target, no suggestion).
    Plan,
    /// The profile's mg/kg range (its middle) on the recorded body weight, capped.
    WeightBased,
}

impl LoadingBasis {
    /// A few words for reports.
    pub fn words(self) -> &'static str {
        match self {
            LoadingBasis::PeakTarget => "the middle of the peak target",
            LoadingBasis::BestSuggestion => "the steady-state peak of the first suggestion",
            LoadingBasis::Plan => "the steady-state peak of the plan",
            LoadingBasis::WeightBased => {
                "the middle of the profile's mg/kg range on the recorded weight"
            }
        }
    }
}

/// A single dose that reaches the aimed peak at once in a patient with no drug on board.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadingDose {
    /// Dose in mg, rounded to the nearest dose step.
    pub dose_mg: f64,
    /// Route (with its infusion time).
    pub route: Route,
    /// The peak aimed at, mg/L.
    pub target_peak_mg_l: f64,
    /// The peak the rounded dose gives, mg/L.
    pub peak_mg_l: f64,
    /// What the aim was.
    pub basis: LoadingBasis,
}

/// The proportional adjustment: with linear kinetics and the same interval, levels scale with
/// the dose, so new dose = dose × target / measured. Used when no volume is known.
///
/// Concentrations are in mg/L (AUC in mg·h/L) as the search makes it; the report holds the
/// same figures in the case's level unit (`in_level_unit`).
#[derive(Debug, Clone, PartialEq)]
pub struct Proportional {
    /// The interval the levels were measured over, hours.
    pub interval_h: f64,
    /// "peak" or "AUC24".
    pub basis: &'static str,
    /// The measured figure (from the fitted line).
    pub measured: f64,
    /// For a peak: the hours after the end of the dose at which the line is read (the
    /// strategy's `peak_sampled_after_h`; 0 at the end of the dose).
    pub peak_after_h: f64,
    /// The figure aimed at (the middle of its target range), same unit.
    pub target: f64,
    /// target / measured.
    pub factor: f64,
    /// The dose that gave the measured levels, when known.
    pub dose_given_mg: Option<f64>,
    /// That dose × factor, rounded to the dose step, when the dose is known.
    pub new_dose_mg: Option<f64>,
    /// The trough the factor gives (measured trough × factor).
    pub trough_after: f64,
    /// Whether that trough meets the trough target (None without one).
    pub trough_ok: Option<bool>,
}

impl Proportional {
    /// The same adjustment with its concentrations converted by `to` (mg/L to the level
    /// unit); the factor and the doses do not change.
    pub fn in_level_unit(&self, to: impl Fn(f64) -> f64) -> Proportional {
        Proportional {
            measured: to(self.measured),
            target: to(self.target),
            trough_after: to(self.trough_after),
            ..self.clone()
        }
    }
}

/// Everything regimen design has to say about a case.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Advice {
    /// Regimens that meet every target, best first, at most `MAX_SUGGESTIONS`.
    pub suggestions: Vec<Suggestion>,
    /// The loading dose (None without a volume).
    pub loading: Option<LoadingDose>,
    /// The proportional adjustment (only without a volume).
    pub proportional: Option<Proportional>,
    /// Things to tell the user (why there is no suggestion, what an adjustment assumes).
    pub notes: Vec<Warning>,
}

/// Targets converted to mg/L (AUC to mg·h/L) with `per_mg_l` level units per mg/L.
pub fn targets_mg_l(t: &Targets, per_mg_l: f64) -> Targets {
    let f = |x: f64| x / per_mg_l;
    Targets {
        peak: t.peak.map(|[a, b]| [f(a), f(b)]),
        trough_max: t.trough_max.map(f),
        auc24: t.auc24.map(|[a, b]| [f(a), f(b)]),
    }
}

/// Whether steady-state figures meet every target given (bounds inclusive).
pub fn meets(s: &SteadyState, t: &Targets) -> bool {
    let inside = |x: f64, r: Option<[f64; 2]>| r.is_none_or(|[lo, hi]| x >= lo && x <= hi);
    inside(s.peak_mg_l, t.peak)
        && t.trough_max.is_none_or(|m| s.trough_mg_l <= m)
        && inside(s.auc24_mg_h_l, t.auc24)
}

/// The target ranges as (middle, half-width, which figure) triples.
/// A target range as (middle, half-width, the figure it bounds).
type Range = (f64, f64, fn(&SteadyState) -> f64);

fn ranges(t: &Targets) -> Vec<Range> {
    let mut out: Vec<Range> = Vec::new();
    if let Some([lo, hi]) = t.peak {
        out.push(((lo + hi) / 2.0, (hi - lo) / 2.0, |s| s.peak_mg_l));
    }
    if let Some([lo, hi]) = t.auc24 {
        out.push(((lo + hi) / 2.0, (hi - lo) / 2.0, |s| s.auc24_mg_h_l));
    }
    // A range of one value still has a middle; give it a tiny width so it can be scored.
    out.iter_mut()
        .for_each(|r| r.1 = r.1.max(r.0 * 1e-9).max(f64::MIN_POSITIVE));
    out
}

/// How far steady state `s` lies from the middle of the target ranges (see `Suggestion`).
pub fn score(s: &SteadyState, t: &Targets) -> f64 {
    let r = ranges(t);
    if r.is_empty() {
        return 0.0;
    }
    r.iter()
        .map(|(mid, half, get)| ((get(s) - mid) / half).powi(2))
        .sum::<f64>()
        / r.len() as f64
}

/// The steady state with its peak moved to the time the peak target is defined on:
/// `after_h` hours after the end of the infusion (kept within the interval). For an absorbed
/// oral dose that is the steady-state level `after_h` hours after the dose (the course still
/// rises after the dose), and with `after_h` = 0 the absorbed peak itself.
pub fn for_targets(
    s: SteadyState,
    route: Route,
    tau: f64,
    d: &Disposition,
    after_h: f64,
) -> SteadyState {
    let after = after_h.clamp(0.0, (tau - route.infusion_h()).max(0.0));
    let k = match d {
        Disposition::One { k, .. } => *k,
        Disposition::Two(_) => {
            if after <= 0.0 {
                return s;
            }
            // Figures are proportional to the dose: scale the unit course to this one.
            let unit = d.steady_state(1.0, route, tau);
            // After the end of the infusion; for an absorbed oral dose, after the dose.
            let from = if route.absorption().is_some() {
                0.0
            } else {
                route.infusion_h()
            };
            let at = d.steady_level(1.0, route, tau, from + after);
            return SteadyState {
                peak_mg_l: s.peak_mg_l * at / unit.peak_mg_l,
                ..s
            };
        }
    };
    if route.absorption().is_some() {
        if after <= 0.0 {
            return s;
        }
        // Figures are proportional to the dose and 1/V: scale the unit course to this one.
        let unit = model::steady_state(1.0, route, tau, k, 1.0);
        let at = model::steady_level(1.0, route, tau, k, 1.0, after);
        return SteadyState {
            peak_mg_l: s.peak_mg_l * at / unit.peak_mg_l,
            ..s
        };
    }
    SteadyState {
        peak_mg_l: s.peak_mg_l * (-k * after).exp(),
        ..s
    }
}

/// Hours per steady-state interval with the level at or below `below` mg/L: the part of the
/// infusion before the level climbs past it and the tail after it falls below it again.
pub fn drug_free_h(dose: f64, route: Route, tau: f64, d: &Disposition, below: f64) -> f64 {
    let s = d.steady_state(dose, route, tau);
    let (k, v) = match d {
        Disposition::One { k, v } => (*k, *v),
        // Two compartments: the level rises to the peak and falls after it (see
        // `crossings_free_h`).
        Disposition::Two(_) => {
            let start = route.absorption().map_or(0.0, |a| a.lag_h);
            let level = |u: f64| d.steady_level(dose, route, tau, (u + start).rem_euclid(tau));
            return crossings_free_h(
                &level,
                (s.peak_after_h - start).rem_euclid(tau),
                tau,
                below,
                &s,
            );
        }
    };
    if let Some(a) = route.absorption() {
        let level = |u: f64| model::steady_level(dose, route, tau, k, v, u + a.lag_h);
        return crossings_free_h(
            &level,
            (s.peak_after_h - a.lag_h).rem_euclid(tau),
            tau,
            below,
            &s,
        );
    }
    let t_inf = route.infusion_h();
    if s.peak_mg_l <= below {
        return tau;
    }
    let tail = (tau - t_inf - (s.peak_mg_l / below).ln() / k).max(0.0);
    let rise = match route {
        Route::Infusion { hours } if s.trough_mg_l < below => {
            // During the infusion c(t) = c_inf + (trough - c_inf)·e^(-k·t), c_inf = R0/(k·V).
            let c_inf = dose / hours / (k * v);
            ((c_inf - s.trough_mg_l) / (c_inf - below)).ln() / k
        }
        _ => 0.0,
    };
    (rise.clamp(0.0, t_inf) + tail).min(tau)
}

/// `drug_free_h` for an absorbed oral dose: in the hours u since the lag ended (mod τ) the
/// steady-state level rises to its peak and falls after it, so it is at or below `below`
/// before the crossing on the way up and after the crossing on the way down (each found by
/// bisection).
///
/// The same holds for a two-compartment course from the start of the dose: `level(u)` is the
/// steady-state level `u` hours after the start of the input (the end of the lag), rising to
/// the peak at `peak_u` and falling after it.
fn crossings_free_h(
    level: &dyn Fn(f64) -> f64,
    peak_u: f64,
    tau: f64,
    below: f64,
    s: &SteadyState,
) -> f64 {
    if s.peak_mg_l <= below {
        return tau;
    }
    if s.trough_mg_l.max(level(0.0)) > below {
        return 0.0;
    }
    let cross = |mut lo: f64, mut hi: f64, rising: bool| {
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if mid <= lo || mid >= hi {
                break;
            }
            if (level(mid) > below) == rising {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        0.5 * (lo + hi)
    };
    let up = cross(0.0, peak_u, true);
    let down = cross(peak_u, tau, false);
    (up + (tau - down)).clamp(0.0, tau)
}

/// The route with its infusion lengthened, when needed, so `dose` runs no faster than
/// `max_rate` mg/min (rounded up to a quarter hour); and whether it was.
pub fn keep_to_rate(route: Route, dose: f64, max_rate: Option<f64>) -> (Route, bool) {
    match (route, max_rate) {
        (Route::Infusion { hours }, Some(r)) if r > 0.0 && dose / (hours * 60.0) > r + 1e-9 => {
            let need = (dose / (r * 60.0) * 4.0 - 1e-9).ceil() / 4.0;
            (Route::Infusion { hours: need }, true)
        }
        _ => (route, false),
    }
}

/// The routes to try: the given one, or each usual infusion time for an infusion.
fn routes(route: Route, opts: &RegimenOptions) -> Vec<Route> {
    match route {
        Route::Infusion { .. } if !opts.infusion_h.is_empty() => opts
            .infusion_h
            .iter()
            .filter(|h| h.is_finite() && **h > 0.0)
            .map(|&hours| Route::Infusion { hours })
            .collect(),
        r => vec![r],
    }
}

/// The level per mg of one dose with nothing on board, where a loading dose is judged: the
/// model's peak with one compartment; `after_h` hours after the end of the input (or after
/// the absorbed peak) with two.
pub fn single_peak_for_targets(d: &Disposition, route: Route, after_h: f64) -> f64 {
    match d {
        Disposition::One { k, v } => model::single_peak(1.0, route, *k, *v),
        Disposition::Two(_) => {
            let (peak, at) = d.single_peak(1.0, route);
            if after_h > 0.0 {
                d.single_dose(1.0, route, at + after_h)
            } else {
                peak
            }
        }
    }
}

/// The regimen the patient is on: dose, interval and route.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Current {
    /// Dose, mg.
    pub dose_mg: f64,
    /// Interval, hours.
    pub interval_h: f64,
    /// Route.
    pub route: Route,
}

/// Whether a dose breaks one of the limits: the single or daily maximum, or the rate.
fn within_limits(d: f64, route: Route, tau: f64, opts: &RegimenOptions) -> bool {
    let rate_ok = match (route, opts.max_rate_mg_per_min) {
        (Route::Infusion { hours }, Some(r)) => d / (hours * 60.0) <= r + 1e-9,
        _ => true,
    };
    rate_ok
        && opts.max_single_dose_mg.is_none_or(|m| d <= m)
        && opts
            .max_daily_dose_mg
            .is_none_or(|m| d * 24.0 / tau <= m * (1.0 + 1e-9))
}

/// A suggestion for dose `d` by `route` every `tau`, when it meets every target.
fn candidate(
    d: f64,
    route: Route,
    tau: f64,
    disp: &Disposition,
    t: &Targets,
    opts: &RegimenOptions,
) -> Option<Suggestion> {
    let (r, lengthened) = keep_to_rate(route, d, opts.max_rate_mg_per_min);
    if d <= 0.0 || !d.is_finite() || r.infusion_h() >= tau || !within_limits(d, r, tau, opts) {
        return None;
    }
    let steady = disp.steady_state(d, r, tau);
    let checked = for_targets(steady, r, tau, disp, opts.peak_sampled_after_h);
    if !meets(&checked, t) {
        return None;
    }
    Some(Suggestion {
        dose_mg: d,
        interval_h: tau,
        route: r,
        steady,
        score: score(&checked, t),
        peak_sampled_mg_l: checked.peak_mg_l,
        current: false,
        drug_free_h: match (opts.drug_free_time, t.trough_max) {
            (true, Some(m)) => Some(drug_free_h(d, r, tau, disp, m)),
            _ => None,
        },
        lengthened,
    })
}

/// Search the practical regimens for the disposition `d` that meet every target (in mg/L).
/// See `suggest_for`; here with no current regimen.
pub fn suggest(
    d: &Disposition,
    route: Route,
    t: &Targets,
    opts: &RegimenOptions,
    _current_interval_h: Option<f64>,
) -> Vec<Suggestion> {
    suggest_for(d, route, t, opts, None)
}

/// Search the practical regimens for the disposition `disp` that meet every target (in mg/L),
/// ranked by this rule: only the strategy's usual intervals (`opts.intervals_h`); the
/// regimen the patient is on first when it meets every target; then closest to the middle of
/// the target ranges (scores equal to two decimals tie); then the shorter interval. One
/// regimen per interval (its best dose and infusion time) besides the current one; doses on
/// the dose step (finer for small doses, tablet strengths when the profile lists them);
/// infusions lengthened to keep to the maximum rate; no dose above a single or daily
/// maximum. Empty when no peak or AUC24 range is given: a trough ceiling alone does not pick
/// a dose. The order depends on the record, the targets and the options only (not on the
/// plan), so taking a suggestion into the plan does not re-sort the list.
pub fn suggest_for(
    disp: &Disposition,
    route: Route,
    t: &Targets,
    opts: &RegimenOptions,
    current: Option<Current>,
) -> Vec<Suggestion> {
    let base_step = forms_step(&opts.dose_forms_mg).unwrap_or(opts.dose_step_mg);
    let rs = ranges(t);
    let usable = disp.params().iter().all(|x| x.is_finite() && *x > 0.0);
    if rs.is_empty() || !(base_step.is_finite() && base_step > 0.0 && usable) {
        return Vec::new();
    }
    let mut out: Vec<Suggestion> = Vec::new();
    for &tau in opts
        .intervals_h
        .iter()
        .filter(|x| x.is_finite() && **x > 0.0)
    {
        let mut best: Option<Suggestion> = None;
        for r0 in routes(route, opts) {
            // Twice: the second time with the infusion the first best dose needs for the rate.
            let mut r = r0;
            for _ in 0..2 {
                if r.infusion_h() >= tau {
                    break;
                }
                // Every figure is proportional to the dose: value = a·D.
                let unit = for_targets(
                    disp.steady_state(1.0, r, tau),
                    r,
                    tau,
                    disp,
                    opts.peak_sampled_after_h,
                );
                let (mut lo, mut hi) = (0.0f64, f64::INFINITY);
                if let Some([a, b]) = t.peak {
                    lo = lo.max(a / unit.peak_mg_l);
                    hi = hi.min(b / unit.peak_mg_l);
                }
                if let Some(m) = t.trough_max {
                    hi = hi.min(m / unit.trough_mg_l);
                }
                if let Some([a, b]) = t.auc24 {
                    lo = lo.max(a / unit.auc24_mg_h_l);
                    hi = hi.min(b / unit.auc24_mg_h_l);
                }
                if !(hi.is_finite() && lo <= hi * (1.0 + 1e-12)) {
                    break;
                }
                // The dose nearest the middles (least squares in D), kept inside [lo, hi].
                let (mut num, mut den) = (0.0, 0.0);
                for (mid, half, get) in &rs {
                    let a = get(&unit);
                    num += a * mid / (half * half);
                    den += a * a / (half * half);
                }
                let d_star = (num / den).clamp(lo, hi.max(lo));
                let step = if opts.dose_forms_mg.is_empty() {
                    fitting_step(d_star, base_step)
                } else {
                    base_step
                };
                let n = (d_star / step).floor();
                for d in [n * step, (n + 1.0) * step] {
                    if let Some(c) = candidate(d, r, tau, disp, t, opts) {
                        if best.as_ref().is_none_or(|b| c.score < b.score) {
                            best = Some(c);
                        }
                    }
                }
                let (longer, changed) = keep_to_rate(r, d_star, opts.max_rate_mg_per_min);
                if !changed {
                    break;
                }
                r = longer;
            }
        }
        out.extend(best);
    }
    let key = |s: &Suggestion| {
        (
            (s.score * 100.0).round() as i64,
            (s.interval_h * 1000.0).round() as i64,
        )
    };
    out.sort_by_key(key);
    // The current regimen is listed only on one of the strategy's intervals: a q8h regimen is
    // no suggestion under extended-interval dosing, even when it meets the targets.
    let on_strategy = |c: &Current| {
        opts.intervals_h
            .iter()
            .any(|x| (x - c.interval_h).abs() < 1e-9)
    };
    if let Some(c) = current.filter(on_strategy) {
        if let Some(mut now) =
            candidate(c.dose_mg, c.route, c.interval_h, disp, t, opts).filter(|s| !s.lengthened)
        {
            now.current = true;
            out.retain(|s| {
                !(s.dose_mg == now.dose_mg
                    && s.interval_h == now.interval_h
                    && s.route == now.route)
            });
            out.insert(0, now);
        }
    }
    out.truncate(MAX_SUGGESTIONS);
    out
}

/// The dose that reaches `target_peak_mg_l` at once in a patient with no drug on board,
/// rounded to the nearest `step` mg. `None` when that rounds to nothing or the inputs are
/// not usable. With two compartments the peak is the level `after_h` hours after the end of
/// the input (where the peak target is drawn), since the level falls fast while the drug
/// distributes; with one it is the peak of the model, as the targets are compared.
pub fn loading_dose(
    d: &Disposition,
    route: Route,
    target_peak_mg_l: f64,
    step: f64,
    basis: LoadingBasis,
    after_h: f64,
) -> Option<LoadingDose> {
    let per = single_peak_for_targets(d, route, after_h);
    let exact = target_peak_mg_l / per;
    if !(exact.is_finite() && exact > 0.0 && step > 0.0) {
        return None;
    }
    let step = fitting_step(exact, step);
    let dose = (exact / step).round() * step;
    (dose > 0.0 && dose.is_finite()).then_some(LoadingDose {
        dose_mg: dose,
        route,
        target_peak_mg_l,
        peak_mg_l: dose * per,
        basis,
    })
}

/// The interval actually given around the fitted dose, from the record alone: from the
/// fitted dose to the next recorded one; when it is the last dose, the interval before it.
/// `None` with a single recorded dose.
pub fn recorded_interval(case: &Case, fit: &Fit) -> Option<f64> {
    let w = fit.window_dose;
    let here = case.doses.get(w)?;
    if let Some(next) = case.doses.get(w + 1) {
        return Some(next.t - here.t);
    }
    w.checked_sub(1)
        .and_then(|i| case.doses.get(i))
        .map(|prev| here.t - prev.t)
}

/// The interval the fitted levels were measured over: the recorded one
/// (`recorded_interval`), else, after a single dose, the plan's interval.
pub fn observed_interval(case: &Case, fit: &Fit) -> Option<f64> {
    recorded_interval(case, fit).or_else(|| case.plan.as_ref().map(|p| p.interval_h))
}

/// The route regimens are designed for: the plan's, else the last recorded dose's.
pub fn design_route(case: &Case) -> Option<Route> {
    case.plan
        .as_ref()
        .map(|p| p.route)
        .or_else(|| case.doses.last().map(|d| d.route))
}

/// The proportional adjustment from the fitted line, for a case without a volume.
pub fn proportional(case: &Case, fit: &Fit, t: &Targets, step: f64) -> Option<Proportional> {
    let tau = observed_interval(case, fit)?;
    let dose = case.doses.get(fit.window_dose)?;
    let (start, end) = (dose.t, dose.end());
    // The peak target is for a level drawn `peak_sampled_after_h` after the end of the dose
    // (lithium: 12 h): the fitted line is read there, not at the end of the dose.
    let after = case
        .regimen
        .peak_sampled_after_h
        .clamp(0.0, (tau - (end - start)).max(0.0));
    let absorbed = dose.route.absorption().is_some();
    let peak = fit.line_mg_l(end);
    let trough = fit.line_mg_l(start + tau);
    let (basis, measured, target) = if let Some([lo, hi]) = t.peak {
        // An absorbed oral dose is still rising at the dose time: the falling line read there
        // would overstate the peak.
        if absorbed && after <= 0.0 {
            return None;
        }
        ("peak", fit.line_mg_l(end + after), (lo + hi) / 2.0)
    } else if let Some([lo, hi]) = t.auc24 {
        if absorbed {
            return None;
        }
        let a = auc::auc24_from_two_levels(end - start, peak, tau, trough, end - start, tau)?;
        ("AUC24", a.auc24, (lo + hi) / 2.0)
    } else {
        return None;
    };
    let factor = target / measured;
    if !(factor.is_finite() && factor > 0.0) {
        return None;
    }
    let given = dose.amount_mg;
    let new_dose = given
        .map(|d| (d * factor / step).round() * step)
        .filter(|d| d.is_finite() && *d > 0.0);
    let trough_after = trough * factor;
    Some(Proportional {
        interval_h: tau,
        basis,
        measured,
        peak_after_h: if basis == "peak" { after } else { 0.0 },
        target,
        factor,
        dose_given_mg: given,
        new_dose_mg: new_dose,
        trough_after,
        trough_ok: t.trough_max.map(|m| trough_after <= m),
    })
}

/// The regimen the patient is on, from the record: the last recorded dose and the interval
/// before it (`None` with one dose or an unknown amount).
pub fn current_regimen(case: &Case) -> Option<Current> {
    let n = case.doses.len();
    let (prev, last) = (case.doses.get(n.checked_sub(2)?)?, case.doses.get(n - 1)?);
    Some(Current {
        dose_mg: last.amount_mg?,
        interval_h: last.t - prev.t,
        route: last.route,
    })
}

/// The dose a trough-only strategy keeps: the plan's, else the last recorded one, with
/// whose it is in words.
fn kept_dose(case: &Case) -> Option<(f64, &'static str)> {
    match &case.plan {
        Some(p) => Some((p.dose_mg, "the plan's")),
        None => case
            .doses
            .last()
            .and_then(|d| d.amount_mg)
            .map(|d| (d, "the last recorded dose")),
    }
    .filter(|(d, _)| d.is_finite() && *d > 0.0)
}

/// The regimens that keep `dose` on each of the strategy's usual intervals and meet every
/// target (a trough ceiling), shortest interval first: how extended-interval dosing adjusts
/// (the dose fixed, the interval lengthened until the trough is low enough). The regimen the
/// patient is on is marked when it is one of them.
pub fn same_dose(
    disp: &Disposition,
    route: Route,
    dose: f64,
    t: &Targets,
    opts: &RegimenOptions,
    current: Option<Current>,
) -> Vec<Suggestion> {
    if !disp.params().iter().all(|x| x.is_finite() && *x > 0.0) {
        return Vec::new();
    }
    let mut taus: Vec<f64> = opts
        .intervals_h
        .iter()
        .copied()
        .filter(|x| x.is_finite() && *x > 0.0)
        .collect();
    taus.sort_by(f64::total_cmp);
    taus.dedup();
    let mut out: Vec<Suggestion> = taus
        .into_iter()
        .filter_map(|tau| candidate(dose, route, tau, disp, t, opts))
        .collect();
    if let Some(c) = current {
        for s in &mut out {
            s.current = s.dose_mg == c.dose_mg
                && (s.interval_h - c.interval_h).abs() < 1e-9
                && s.route == c.route;
        }
    }
    out.truncate(MAX_SUGGESTIONS);
    out
}

/// A level above this fraction of the aimed peak at the time a loading dose would be given
/// counts as drug on board (our rule: a loading dose is for starting with none).
pub const ON_BOARD_FRACTION: f64 = 0.05;

/// Regimen advice for a fitted case: suggestions and a loading dose with a volume, the
/// proportional adjustment without one. `plan_peak_mg_l` is the plan's steady-state peak, when
/// projected (the loading dose's last resort).
pub fn advise(p: &Patient, plan_peak_mg_l: Option<f64>, opts: &RegimenOptions) -> Advice {
    let case = p.case;
    let t = targets_mg_l(&case.targets, case.drug.scale.per_mg_l);
    let mut advice = Advice::default();
    let Some(route) = design_route(case) else {
        return advice;
    };
    let has_range = t.peak.is_some() || t.auc24.is_some();
    match p.disposition() {
        Some(disp) => {
            if has_range {
                advice.suggestions = suggest_for(&disp, route, &t, opts, current_regimen(case));
                if advice.suggestions.is_empty() {
                    advice.notes.push(Warning::new(Code::NoSuggestion,
                        "no regimen among the usual intervals and dose steps meets every target; review the targets or consider other intervals",
                    ));
                } else if advice.suggestions.iter().any(|s| s.lengthened) {
                    if let Some(r) = opts.max_rate_mg_per_min {
                        advice.notes.push(Warning::new(Code::RateLimit, format!(
                            "some suggested infusions are longer than the plan's to keep to the maximum rate of {} mg/min",
                            crate::core::format::num(r)
                        )));
                    }
                }
            } else if let Some(ceiling) = t.trough_max {
                match kept_dose(case).filter(|_| opts.drug_free_time) {
                    Some((dose, whose)) => {
                        let unit = case.drug.scale.unit.as_str();
                        let per = case.drug.scale.per_mg_l;
                        advice.suggestions =
                            same_dose(&disp, route, dose, &t, opts, current_regimen(case));
                        let hours: Vec<String> = opts
                            .intervals_h
                            .iter()
                            .map(|x| crate::core::format::num(*x))
                            .collect();
                        if advice.suggestions.is_empty() {
                            advice.notes.push(Warning::new(Code::NoSuggestion, format!(
                                "no usual interval ({} h) keeps the steady-state trough at or below {} {unit} with the dose of {} mg ({whose}): review the dose and the interval",
                                hours.join(", "),
                                crate::core::format::num(ceiling * per),
                                crate::core::format::num(dose)
                            )));
                        } else {
                            advice.notes.push(Warning::new(Code::DoseKept, format!(
                                "the strategy sets only a trough ceiling, which does not pick a dose: the suggestions keep the dose of {} mg ({whose}) and take the usual intervals ({} h), shortest first, whose steady-state trough is at or below {} {unit}, as extended-interval dosing adjusts the interval (common practice)",
                                crate::core::format::num(dose),
                                hours.join(", "),
                                crate::core::format::num(ceiling * per)
                            )));
                        }
                    }
                    None => advice.notes.push(Warning::new(Code::NoSuggestion,
                        "no regimen suggested: a trough ceiling alone does not pick a dose; give a peak or AUC24 range",
                    )),
                }
            }
            let aim = match (t.peak, advice.suggestions.first(), plan_peak_mg_l) {
                (Some([lo, hi]), _, _) => Some(((lo + hi) / 2.0, LoadingBasis::PeakTarget)),
                (None, Some(s), _) => Some((s.steady.peak_mg_l, LoadingBasis::BestSuggestion)),
                (None, None, Some(pk)) => Some((pk, LoadingBasis::Plan)),
                _ => None,
            };
            let load_route = advice.suggestions.first().map_or(route, |s| s.route);
            let given_at = case.plan.as_ref().map_or_else(
                || crate::core::projection::threshold_start(p).t,
                |pl| pl.start_t,
            );
            let on_board = p.level_mg_l(given_at);
            let scale = case.drug.scale;
            let words = |x: f64| {
                format!(
                    "{} {}",
                    crate::core::format::num(scale.to_level(x)),
                    scale.unit.as_str()
                )
            };
            match (&opts.loading, aim) {
                (LoadingRule::Never, _) => {}
                (_, Some((peak, _))) if on_board > ON_BOARD_FRACTION * peak => {
                    advice.notes.push(Warning::new(Code::NoLoadingDose, format!(
                        "no loading dose: the drug is on board (model level {} when the next dose is due); a loading dose is for starting with none, so adjust the maintenance dose instead",
                        words(on_board)
                    )));
                }
                (LoadingRule::Kinetic, Some((peak, basis))) => {
                    // A peak target is drawn `peak_sampled_after_h` after the input; a
                    // suggestion's or the plan's peak is the model's own.
                    let after = match basis {
                        LoadingBasis::PeakTarget => opts.peak_sampled_after_h,
                        _ => 0.0,
                    };
                    advice.loading =
                        loading_dose(&disp, load_route, peak, opts.dose_step_mg, basis, after);
                }
                (LoadingRule::PerKg { mg_per_kg, max_mg }, _) => {
                    match case.patient.weight_kg {
                        None => advice.notes.push(
                            Warning::new(Code::NoLoadingDose, "no loading dose: the profile doses it by body weight, and the case gives no patient.weight_kg"),
                        ),
                        Some(w) => {
                            let mut need = (mg_per_kg[0] + mg_per_kg[1]) / 2.0 * w;
                            if let Some(m) = max_mg {
                                need = need.min(*m);
                            }
                            let step = fitting_step(need, opts.dose_step_mg);
                            let mut dose = (need / step).round() * step;
                            if let Some(m) = max_mg {
                                if dose > *m {
                                    dose -= step;
                                }
                            }
                            let (r, _) = keep_to_rate(load_route, dose, opts.max_rate_mg_per_min);
                            let per =
                                single_peak_for_targets(&disp, r, opts.peak_sampled_after_h);
                            if dose > 0.0 && per.is_finite() {
                                advice.loading = Some(LoadingDose {
                                    dose_mg: dose,
                                    route: r,
                                    target_peak_mg_l: need * per,
                                    peak_mg_l: dose * per,
                                    basis: LoadingBasis::WeightBased,
                                });
                            }
                        }
                    }
                }
                (LoadingRule::Kinetic, None) => {}
            }
        }
        None => {
            if has_range {
                advice.proportional = proportional(case, p.fit, &t, opts.dose_step_mg);
                if advice.proportional.is_some() {
                    advice.notes.push(Warning::new(Code::Proportional,
                        "no volume: the dose adjustment is proportional (new dose = dose × target / measured, same interval), which holds for linear kinetics at steady state only",
                    ));
                }
            }
        }
    }
    advice
}

#[cfg(test)]
mod tests {
    use super::*;

    fn gent_targets() -> Targets {
        Targets {
            peak: Some([5.0, 10.0]),
            trough_max: Some(2.0),
            auc24: None,
        }
    }

    #[test]
    fn sawchuk_zaske_example_dose_is_found_at_eight_hours() {
        // drug-facts.md Sawchuk-Zaske row ([Bourne-Ch6b], [Bauer2e-ch2]): k 0.27566 /h,
        // V 18.29 L, 0.5 h infusion every 8 h, peak 8 mg/L -> 139.4 mg.
        let (k, v) = (0.27566, 18.29);
        let r = Route::Infusion { hours: 0.5 };
        let t = Targets {
            peak: Some([7.9, 8.1]),
            trough_max: Some(2.0),
            auc24: None,
        };
        let opts = RegimenOptions {
            intervals_h: vec![8.0],
            dose_step_mg: 0.1,
            ..RegimenOptions::default()
        };
        let s = suggest(&Disposition::One { k, v }, r, &t, &opts, None);
        assert_eq!(s.len(), 1);
        assert!((s[0].dose_mg - 139.4).abs() < 0.15, "{}", s[0].dose_mg);
    }

    #[test]
    fn trough_ceiling_alone_suggests_nothing() {
        let t = Targets {
            trough_max: Some(1.0),
            ..Targets::default()
        };
        let s = suggest(
            &Disposition::One { k: 0.2, v: 20.0 },
            Route::Bolus,
            &t,
            &RegimenOptions::default(),
            None,
        );
        assert!(s.is_empty());
    }

    #[test]
    fn a_trough_ceiling_alone_keeps_the_dose_and_lengthens_the_interval() {
        // Extended-interval dosing keeps the dose and chooses the interval (24, 36 or 48 h by
        // the level [Nicolau95]). One compartment, k 0.1 /h, V 20 L, a bolus of 400 mg: the
        // steady-state trough is 400/20 x e^(-0.1 tau)/(1 - e^(-0.1 tau)) — hand-worked from
        // the one-compartment bolus accumulation formula — 2.0 mg/L at 24 h, 0.56 at 36 h,
        // 0.17 at 48 h; with a ceiling of 1 mg/L the 36 and 48 h regimens meet it.
        let d = Disposition::One { k: 0.1, v: 20.0 };
        let t = Targets {
            trough_max: Some(1.0),
            ..Targets::default()
        };
        let opts = RegimenOptions {
            intervals_h: vec![48.0, 24.0, 36.0],
            drug_free_time: true,
            ..RegimenOptions::default()
        };
        let trough = |tau: f64| 20.0 * (-0.1 * tau).exp() / (1.0 - (-0.1 * tau).exp());
        assert!(trough(24.0) > 1.0 && trough(36.0) < 1.0);
        let current = Current {
            dose_mg: 400.0,
            interval_h: 48.0,
            route: Route::Bolus,
        };
        let s = same_dose(&d, Route::Bolus, 400.0, &t, &opts, Some(current));
        let taus: Vec<f64> = s.iter().map(|x| x.interval_h).collect();
        assert_eq!(taus, vec![36.0, 48.0]);
        for x in &s {
            assert_eq!(x.dose_mg, 400.0);
            assert!((x.steady.trough_mg_l - trough(x.interval_h)).abs() < 1e-9);
            assert!(x.drug_free_h.is_some_and(|h| h > 0.0));
        }
        assert_eq!(
            s.iter().map(|x| x.current).collect::<Vec<_>>(),
            [false, true]
        );
        // A ceiling no usual interval reaches leaves nothing to suggest.
        let strict = Targets {
            trough_max: Some(0.01),
            ..Targets::default()
        };
        assert!(same_dose(&d, Route::Bolus, 400.0, &strict, &opts, None).is_empty());
    }

    #[test]
    fn ranking_follows_the_stated_rule() {
        // Rule (common practice, docs/methods-regimen.md): the strategy's usual intervals only;
        // the current regimen first when it meets every target; then closest to the middle of
        // the target ranges; then the shorter interval. Conventional gentamicin targets (peak
        // 5-10, trough <= 2 mg/L [UKMi-Gent][MedscapeGent]) with conventional intervals 8 and
        // 12 h never list a 36 or 48 h regimen.
        let (k, v) = (0.25, 18.0);
        let r = Route::Infusion { hours: 0.5 };
        let opts = RegimenOptions {
            intervals_h: vec![8.0, 12.0],
            ..RegimenOptions::default()
        };
        let current = Current {
            dose_mg: 100.0,
            interval_h: 8.0,
            route: r,
        };
        let s = suggest_for(
            &Disposition::One { k, v },
            r,
            &gent_targets(),
            &opts,
            Some(current),
        );
        assert!(s
            .iter()
            .all(|x| x.interval_h == 8.0 || x.interval_h == 12.0));
        assert!(s[0].current && s[0].dose_mg == 100.0, "{:?}", s[0]);
        for w in s[1..].windows(2) {
            let (a, b) = ((w[0].score * 100.0).round(), (w[1].score * 100.0).round());
            assert!(a < b || (a == b && w[0].interval_h <= w[1].interval_h));
        }
        // A current regimen out of range is not listed.
        let high = Current {
            dose_mg: 400.0,
            ..current
        };
        let s2 = suggest_for(
            &Disposition::One { k, v },
            r,
            &gent_targets(),
            &opts,
            Some(high),
        );
        assert!(s2.iter().all(|x| !x.current));
        // Nor one on an interval outside the strategy's (q6h against 8 and 12 h).
        let off = Current {
            interval_h: 6.0,
            ..current
        };
        let s3 = suggest_for(
            &Disposition::One { k, v },
            r,
            &gent_targets(),
            &opts,
            Some(off),
        );
        assert!(s3.iter().all(|x| !x.current && x.interval_h != 6.0));
        // Taking a suggestion changes the plan, not the record: the list is the same.
        assert_eq!(
            s,
            suggest_for(
                &Disposition::One { k, v },
                r,
                &gent_targets(),
                &opts,
                Some(current)
            )
        );
    }

    #[test]
    fn a_small_need_is_rounded_on_a_step_that_fits_it() {
        // Rule (common practice): rounding must not change a small dose much; a 6.25 mg need
        // must not become 10 mg on a 10 mg step.
        assert_eq!(fitting_step(6.25, 10.0), 0.5);
        assert_eq!(fitting_step(100.0, 10.0), 10.0);
        let l = loading_dose(
            &Disposition::One { k: 0.1, v: 1.0 },
            Route::Bolus,
            6.25,
            10.0,
            LoadingBasis::PeakTarget,
            0.0,
        )
        .unwrap();
        assert_eq!(l.dose_mg, 6.5);
        // Tablet strengths of 200 and 400 mg make doses in 200 mg steps.
        assert_eq!(forms_step(&[400.0, 200.0]), Some(200.0));
        assert_eq!(forms_step(&[250.0, 400.0]), Some(50.0));
    }

    #[test]
    fn infusions_are_lengthened_to_keep_to_the_maximum_rate() {
        // Vancomycin: no faster than 10 mg/min (profile, from memory, unverified): 1500 mg
        // needs 150 min, so 2.5 h.
        let (r, longer) = keep_to_rate(Route::Infusion { hours: 1.0 }, 1500.0, Some(10.0));
        assert!(longer);
        assert_eq!(r, Route::Infusion { hours: 2.5 });
        let t = Targets {
            auc24: Some([400.0, 600.0]),
            ..Targets::default()
        };
        let opts = RegimenOptions {
            intervals_h: vec![8.0, 12.0, 24.0],
            dose_step_mg: 250.0,
            max_rate_mg_per_min: Some(10.0),
            ..RegimenOptions::default()
        };
        let s = suggest_for(
            &Disposition::One { k: 0.08, v: 50.0 },
            Route::Infusion { hours: 1.0 },
            &t,
            &opts,
            None,
        );
        assert!(!s.is_empty());
        for x in &s {
            assert!(
                x.dose_mg / (x.route.infusion_h() * 60.0) <= 10.0 + 1e-9,
                "{x:?}"
            );
        }
        assert!(s.iter().any(|x| x.lengthened));
    }

    #[test]
    fn drug_free_time_is_the_time_below_the_ceiling() {
        // Self-consistency: sample the steady-state course and count the time at or below.
        let (d, r, tau, k, v, below) =
            (500.0, Route::Infusion { hours: 0.5 }, 24.0, 0.3, 20.0, 1.0);
        let h = drug_free_h(d, r, tau, &Disposition::One { k, v }, below);
        let ss = model::steady_state(d, r, tau, k, v);
        let n = 240_000;
        let mut free = 0.0;
        for i in 0..n {
            let s = (i as f64 + 0.5) * tau / n as f64;
            let c = ss.trough_mg_l * (-k * s).exp() + model::single_dose(d, r, k, v, s);
            if c <= below {
                free += tau / n as f64;
            }
        }
        assert!((h - free).abs() < 1e-3, "{h} vs {free}");
    }

    #[test]
    fn a_two_compartment_peak_is_read_where_the_target_is_drawn() {
        // Self-consistency: the peak for the targets is the steady-state level itself, after
        // the end of an infusion, and after the dose for an absorbed oral dose (lithium's
        // 12-hour level).
        let d = Disposition::Two(model::TwoCompartment {
            cl: 3.4,
            v1: 17.6,
            q: 1.45,
            v2: 10.9,
        });
        let inf = Route::Infusion { hours: 1.0 };
        let s = d.steady_state(400.0, inf, 12.0);
        let p = for_targets(s, inf, 12.0, &d, 0.5).peak_mg_l;
        let want = d.steady_level(400.0, inf, 12.0, 1.5);
        assert!((p - want).abs() < 1e-12 * want, "{p} {want}");
        let oral = Route::oral_absorbed(0.9, 0.3, 0.0);
        let s = d.steady_state(800.0, oral, 24.0);
        let p = for_targets(s, oral, 24.0, &d, 12.0).peak_mg_l;
        let want = d.steady_level(800.0, oral, 24.0, 12.0);
        assert!((p - want).abs() < 1e-12 * want, "{p} {want}");
        // No sampling delay: the model's own peak.
        assert_eq!(for_targets(s, oral, 24.0, &d, 0.0), s);
    }

    #[test]
    fn loading_dose_rounds_to_the_step() {
        let l = loading_dose(
            &Disposition::One { k: 0.1, v: 20.0 },
            Route::Bolus,
            8.0,
            10.0,
            LoadingBasis::PeakTarget,
            0.0,
        )
        .unwrap();
        assert_eq!(l.dose_mg, 160.0);
        assert!((l.peak_mg_l - 8.0).abs() < 1e-12);
        assert!(loading_dose(
            &Disposition::One { k: 0.1, v: 20.0 },
            Route::Bolus,
            0.0,
            10.0,
            LoadingBasis::Plan,
            0.0
        )
        .is_none());
    }
}
