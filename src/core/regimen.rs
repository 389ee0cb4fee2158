//! Regimen design: practical regimens that meet the targets, a loading dose, and the
//! proportional adjustment linear kinetics allows when no volume is known.
//!
//! Concentrations here are in mg/L (AUC in mg·h/L), times in hours, doses in mg; the report
//! converts to the case's level unit.

use crate::core::auc;
pub use crate::core::case::RegimenOptions;
use crate::core::case::{Case, Targets};
use crate::core::fit::Fit;
use crate::core::model::{self, Route, SteadyState};
use crate::core::project::Patient;
use crate::core::warning::{Code, Warning};

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
}

impl LoadingBasis {
    /// A few words for reports.
    pub fn words(self) -> &'static str {
        match self {
            LoadingBasis::PeakTarget => "the middle of the peak target",
            LoadingBasis::BestSuggestion => "the steady-state peak of the first suggestion",
            LoadingBasis::Plan => "the steady-state peak of the plan",
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
#[derive(Debug, Clone, PartialEq)]
pub struct Proportional {
    /// The interval the levels were measured over, hours.
    pub interval_h: f64,
    /// "peak" or "AUC24".
    pub basis: &'static str,
    /// The measured figure (from the fitted line), mg/L or mg·h/L.
    pub measured: f64,
    /// The figure aimed at (the middle of its target range), same unit.
    pub target: f64,
    /// target / measured.
    pub factor: f64,
    /// The dose that gave the measured levels, when known.
    pub dose_given_mg: Option<f64>,
    /// That dose × factor, rounded to the dose step, when the dose is known.
    pub new_dose_mg: Option<f64>,
    /// The trough the factor gives (measured trough × factor), mg/L.
    pub trough_after_mg_l: f64,
    /// Whether that trough meets the trough target (None without one).
    pub trough_ok: Option<bool>,
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

/// Whether an interval keeps doses at the same clock times every day.
fn fits_the_day(tau: f64) -> bool {
    let r = |a: f64, b: f64| (a / b - (a / b).round()).abs() < 1e-9;
    r(24.0, tau) || r(tau, 24.0)
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

/// Search the practical regimens for `k` (1/h) and `v` (L) that meet every target (in mg/L),
/// best first: closest to the middle of the target ranges (scores equal to two decimals tie);
/// on ties, the interval nearest `current_interval_h` (the least change to the ward's
/// routine), then intervals that keep the same clock times each day, then longer intervals.
/// One regimen per interval (its best dose and infusion time). Empty when no peak or AUC24
/// range is given: a trough ceiling alone does not pick a dose.
pub fn suggest(
    k: f64,
    v: f64,
    route: Route,
    t: &Targets,
    opts: &RegimenOptions,
    current_interval_h: Option<f64>,
) -> Vec<Suggestion> {
    let step = opts.dose_step_mg;
    let rs = ranges(t);
    if rs.is_empty() || !(step.is_finite() && step > 0.0 && k > 0.0 && v > 0.0) {
        return Vec::new();
    }
    let mut out: Vec<Suggestion> = Vec::new();
    for &tau in opts
        .intervals_h
        .iter()
        .filter(|x| x.is_finite() && **x > 0.0)
    {
        let mut best: Option<Suggestion> = None;
        for r in routes(route, opts) {
            if r.infusion_h() >= tau {
                continue;
            }
            // Every figure is proportional to the dose: value = a·D.
            let unit = model::steady_state(1.0, r, tau, k, v);
            let (mut lo, mut hi) = (step, f64::INFINITY);
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
                continue;
            }
            // The dose nearest the middles (least squares in D), kept inside [lo, hi].
            let (mut num, mut den) = (0.0, 0.0);
            for (mid, half, get) in &rs {
                let a = get(&unit);
                num += a * mid / (half * half);
                den += a * a / (half * half);
            }
            // hi may sit a rounding error below lo (allowed above); clamp panics if lo > hi.
            let d_star = (num / den).clamp(lo, hi.max(lo));
            let n = (d_star / step).floor();
            for d in [n * step, (n + 1.0) * step] {
                if d <= 0.0 || !d.is_finite() {
                    continue;
                }
                let s = model::steady_state(d, r, tau, k, v);
                if !meets(&s, t) {
                    continue;
                }
                let sc = score(&s, t);
                if best.as_ref().is_none_or(|b| sc < b.score) {
                    best = Some(Suggestion {
                        dose_mg: d,
                        interval_h: tau,
                        route: r,
                        steady: s,
                        score: sc,
                    });
                }
            }
        }
        out.extend(best);
    }
    let key = |s: &Suggestion| {
        let change = current_interval_h
            .filter(|c| c.is_finite() && *c > 0.0)
            .map_or(0, |c| ((s.interval_h / c).ln().abs() * 1e6).round() as i64);
        (
            (s.score * 100.0).round() as i64,
            change,
            !fits_the_day(s.interval_h),
            std::cmp::Reverse((s.interval_h * 1000.0).round() as i64),
        )
    };
    out.sort_by_key(key);
    out.truncate(MAX_SUGGESTIONS);
    out
}

/// The dose that reaches `target_peak_mg_l` at once in a patient with no drug on board,
/// rounded to the nearest `step` mg. `None` when that rounds to nothing or the inputs are
/// not usable.
pub fn loading_dose(
    k: f64,
    v: f64,
    route: Route,
    target_peak_mg_l: f64,
    step: f64,
    basis: LoadingBasis,
) -> Option<LoadingDose> {
    let per = model::single_peak(1.0, route, k, v);
    let exact = target_peak_mg_l / per;
    if !(exact.is_finite() && exact > 0.0 && step > 0.0) {
        return None;
    }
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
    let peak = fit.line_mg_l(end);
    let trough = fit.line_mg_l(start + tau);
    let (basis, measured, target) = if let Some([lo, hi]) = t.peak {
        ("peak", peak, (lo + hi) / 2.0)
    } else if let Some([lo, hi]) = t.auc24 {
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
        target,
        factor,
        dose_given_mg: given,
        new_dose_mg: new_dose,
        trough_after_mg_l: trough_after,
        trough_ok: t.trough_max.map(|m| trough_after <= m),
    })
}

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
    match p.v() {
        Some(v) => {
            let k = p.fit.k;
            if has_range {
                let current = observed_interval(case, p.fit);
                advice.suggestions = suggest(k, v, route, &t, opts, current);
                if advice.suggestions.is_empty() {
                    advice.notes.push(Warning::new(Code::NoSuggestion,
                        "no regimen among the usual intervals and dose steps meets every target; review the targets or consider other intervals",
                    ));
                }
            } else if t.trough_max.is_some() {
                advice.notes.push(Warning::new(Code::NoSuggestion,
                    "no regimen suggested: a trough ceiling alone does not pick a dose; give a peak or AUC24 range",
                ));
            }
            let aim = match (t.peak, advice.suggestions.first(), plan_peak_mg_l) {
                (Some([lo, hi]), _, _) => Some(((lo + hi) / 2.0, LoadingBasis::PeakTarget)),
                (None, Some(s), _) => Some((s.steady.peak_mg_l, LoadingBasis::BestSuggestion)),
                (None, None, Some(pk)) => Some((pk, LoadingBasis::Plan)),
                _ => None,
            };
            let load_route = advice.suggestions.first().map_or(route, |s| s.route);
            advice.loading = aim.and_then(|(peak, basis)| {
                loading_dose(k, v, load_route, peak, opts.dose_step_mg, basis)
            });
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
            infusion_h: vec![],
        };
        let s = suggest(k, v, r, &t, &opts, None);
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
            0.2,
            20.0,
            Route::Bolus,
            &t,
            &RegimenOptions::default(),
            None,
        );
        assert!(s.is_empty());
    }

    #[test]
    fn ranking_prefers_the_middle_and_breaks_ties_by_convenience() {
        let s = suggest(
            0.25,
            18.0,
            Route::Infusion { hours: 0.5 },
            &gent_targets(),
            &RegimenOptions {
                dose_step_mg: 1.0,
                ..RegimenOptions::default()
            },
            Some(8.0),
        );
        assert!(!s.is_empty() && s.len() <= MAX_SUGGESTIONS);
        // A peak range and a trough ceiling, 1 mg steps: every interval gets within 0.05 of the
        // middle of the peak (scores tie at two decimals), so the tie goes to the current
        // interval, then its nearest neighbours.
        assert_eq!(s[0].interval_h, 8.0);
        assert_eq!(s[1].interval_h, 6.0);
        for w in s.windows(2) {
            assert!((w[0].score * 100.0).round() <= (w[1].score * 100.0).round());
        }
        assert!(fits_the_day(8.0) && fits_the_day(48.0) && !fits_the_day(36.0));
    }

    #[test]
    fn loading_dose_rounds_to_the_step() {
        let l = loading_dose(0.1, 20.0, Route::Bolus, 8.0, 10.0, LoadingBasis::PeakTarget).unwrap();
        assert_eq!(l.dose_mg, 160.0);
        assert!((l.peak_mg_l - 8.0).abs() < 1e-12);
        assert!(loading_dose(0.1, 20.0, Route::Bolus, 0.1, 10.0, LoadingBasis::Plan).is_none());
    }
}
