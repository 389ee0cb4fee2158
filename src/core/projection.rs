//! Projections from a fit: the plan at steady state, the threshold and the washout table.
//!
//! Times here are hours on the case's axis and concentrations mg/L unless a name says
//! otherwise; the report converts to the case's unit and to clock times.

use crate::core::case::{Case, Plan};
use crate::core::fit::Fit;
use crate::core::model::{self, Administration, Disposition, Schedule, SteadyState};

/// The fitted patient as a model that can be evaluated at any time.
#[derive(Debug, Clone)]
pub struct Patient<'a> {
    /// The case.
    pub case: &'a Case,
    /// The fit.
    pub fit: &'a Fit,
    /// The recorded doses, when every amount is known and V was found.
    pub given: Option<Vec<Administration>>,
}

impl<'a> Patient<'a> {
    /// Build from a case and its fit.
    pub fn new(case: &'a Case, fit: &'a Fit) -> Self {
        let given = match (fit.volume_l, case.given()) {
            (Some(_), Ok(g)) => Some(g),
            _ => None,
        };
        Patient { case, fit, given }
    }

    /// Volume, when known (the central volume of two compartments).
    pub fn v(&self) -> Option<f64> {
        self.given.as_ref().and(self.fit.volume_l)
    }

    /// The fit's disposition, when the record's doses are known and V was found.
    pub fn disposition(&self) -> Option<Disposition> {
        self.given.as_ref().and(self.fit.disposition())
    }

    /// Whether the fit is of two compartments.
    pub fn two(&self) -> bool {
        self.fit.two.is_some()
    }

    /// The model's concentration (mg/L) at `t` with the recorded doses only (the fitted
    /// line without V).
    pub fn level_mg_l(&self, t: f64) -> f64 {
        match (&self.given, self.fit.two) {
            (Some(g), Some(two)) => Disposition::Two(two).superpose(g, t),
            _ => self.level_with_k(t, self.fit.k),
        }
    }

    /// As `level_mg_l`, with another k (for the intervals of a one-compartment fit without a
    /// joint spread; a two-compartment fit always has one, and is evaluated as fitted).
    pub fn level_with_k(&self, t: f64, k: f64) -> f64 {
        if let (Some(g), Some(two)) = (&self.given, self.fit.two) {
            return Disposition::Two(two).superpose(g, t);
        }
        match (&self.given, self.fit.volume_l) {
            (Some(g), Some(v)) => model::superpose(g, k, v, t),
            _ => self.fit.line_mg_l(t),
        }
    }

    /// The model's concentration (mg/L) at `t` with the recorded doses and the plan doses
    /// given up to and including the plan dose numbered `last` (0-based). `None` without V.
    pub fn level_with_plan(&self, t: f64, plan: &Plan, last: Option<usize>) -> Option<f64> {
        let g = self.given.as_ref()?;
        let d = self.fit.disposition()?;
        // Each mode of the disposition is a one-compartment response of its own.
        let from_plan = last.map_or(0.0, |last| {
            d.modes()
                .iter()
                .map(|m| plan_level(plan, last, m.rate, 1.0 / m.per_l, t))
                .sum()
        });
        Some(d.superpose(g, t) + from_plan)
    }

    /// When the record has absorbed oral doses (and V): the last time one of them starts
    /// absorbing (dose time + lag) and the slowest absorption rate. `None` otherwise: every
    /// level then only falls once the last dose has entered.
    pub fn absorbing(&self) -> Option<Absorbing> {
        self.given.as_ref()?;
        Absorbing::of(self.case.doses.iter().map(|d| (d.t, d.route)))
    }

    /// The time (hours) from which the level, with the recorded doses only and rate constant
    /// `k`, is at or below `below_mg_l` for good, searching from `t0` (at or after the last
    /// dose). Without absorbed doses: t0 + ln(c(t0)/below)/k, as contract v1 has it. With
    /// them the level may still rise after t0: the search starts from the highest level after
    /// t0 and follows the model down.
    pub fn settles_below(&self, t0: f64, below_mg_l: f64, k: f64) -> f64 {
        let level = |t: f64| self.level_with_k(t, k);
        match (self.absorbing(), self.two()) {
            (None, false) => t0 + hours_to_fall(level(t0), below_mg_l, k),
            // Two compartments: after the last dose has entered the level is a sum of
            // falling exponentials (each mode carries a positive amount), so it falls
            // through the threshold once; found by bisection.
            (None, true) => first_below(&level, t0, below_mg_l, k),
            (Some(a), _) => a.settles_below(&level, t0, below_mg_l, k),
        }
    }

    /// The end of the last recorded dose.
    pub fn last_dose_end(&self) -> f64 {
        self.case
            .doses
            .iter()
            .map(|d| d.end())
            .fold(f64::NEG_INFINITY, f64::max)
    }
}

/// The level (mg/L) at `t` from the plan doses numbered 0..=`last`, summed as a geometric
/// series: every dose that has fully entered by `t` left the same amount, decaying by
/// e^(−k·interval) from one to the next, so their sum is closed-form; only a dose still
/// running (an infusion) is added on its own. The same figure as adding the doses one by one.
fn plan_level(plan: &Plan, last: usize, k: f64, v: f64, t: f64) -> f64 {
    if let Some(a) = plan.route.absorption() {
        return absorbed_plan_level(plan, last, a, k, v, t);
    }
    let started = plan_doses_before(plan, t).min(last.saturating_add(1));
    let Some(newest) = started.checked_sub(1) else {
        return 0.0;
    };
    let at = |j: usize| plan.start_t + j as f64 * plan.interval_h;
    let t_inf = plan.route.infusion_h();
    // The newest dose started may still be running; every earlier one has fully entered
    // (an infusion is never longer than the interval).
    let running = t_inf > 0.0 && t <= at(newest) + t_inf;
    let (entered, mut c) = if running {
        (
            newest,
            model::single_dose(plan.dose_mg, plan.route, k, v, t - at(newest)),
        )
    } else {
        (started, 0.0)
    };
    if let Some(latest) = entered.checked_sub(1) {
        // What one dose leaves per litre when it has fully entered, decayed to `t` from the
        // latest entered dose, times 1 + q + q² + … over the `entered` doses, q = e^(−k·τ).
        let left = model::single_peak(plan.dose_mg, plan.route, k, v);
        let decay = (-k * (t - at(latest) - t_inf)).exp();
        let series = model::one_minus_exp_neg(k * plan.interval_h * entered as f64)
            / model::one_minus_exp_neg(k * plan.interval_h);
        c += left * decay * series;
    }
    c
}

/// `plan_level` for an absorbed oral plan. The newest dose absorbing is the Bateman kernel on
/// its own; the older ones sum, as two geometric series (one per exponential), to
/// F·D·ka·[e^(−k·x)·S_k − e^(−ka·x)·S_ka]/(ka − k), x the hours of absorption of the newest
/// older dose and S_λ = (1 − e^(−λ·n·τ))/(1 − e^(−λ·τ)) over its n doses. That difference
/// loses no more than a bit while |ka − k|·τ ≥ 0.7 (each pair of terms differs by at least
/// half of the larger); closer rates add the doses one by one with the Bateman kernel.
fn absorbed_plan_level(
    plan: &Plan,
    last: usize,
    a: model::Absorption,
    k: f64,
    v: f64,
    t: f64,
) -> f64 {
    let tau = plan.interval_h;
    let ka = a.ka_per_h;
    // Doses whose lag has ended by t: a plan dose at j absorbs from start + j·τ + lag.
    let entered = if t - a.lag_h <= plan.start_t {
        0
    } else {
        plan_doses_before(plan, t - a.lag_h).min(last.saturating_add(1))
    };
    let Some(newest) = entered.checked_sub(1) else {
        return 0.0;
    };
    let scale = plan.route.bioavailability() * plan.dose_mg * ka / v;
    let u = t - (plan.start_t + newest as f64 * tau) - a.lag_h;
    let mut sum = model::bateman(k, ka, u).0;
    let older = newest;
    if older > 0 {
        let x = u + tau;
        if (ka - k).abs() * tau >= 0.7 {
            let series = |rate: f64| {
                (-rate * x).exp() * model::one_minus_exp_neg(rate * tau * older as f64)
                    / model::one_minus_exp_neg(rate * tau)
            };
            sum += (series(k) - series(ka)) / (ka - k);
        } else {
            sum += (0..older)
                .map(|i| model::bateman(k, ka, x + i as f64 * tau).0)
                .sum::<f64>();
        }
    }
    scale * sum
}

/// Absorbed oral doses still to reckon with after a time: the last time one starts absorbing
/// and the slowest absorption rate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Absorbing {
    /// The latest dose time + lag among the absorbed doses, hours on the axis.
    pub last_entry: f64,
    /// The smallest ka among them, 1/h.
    pub slowest_ka: f64,
}

impl Absorbing {
    /// From doses as (time, route); `None` when none is absorbed.
    pub fn of(doses: impl Iterator<Item = (f64, model::Route)>) -> Option<Absorbing> {
        let mut out: Option<Absorbing> = None;
        for (t, r) in doses {
            if let Some(a) = r.absorption() {
                let entry = t + a.lag_h;
                out = Some(match out {
                    None => Absorbing {
                        last_entry: entry,
                        slowest_ka: a.ka_per_h,
                    },
                    Some(o) => Absorbing {
                        last_entry: o.last_entry.max(entry),
                        slowest_ka: o.slowest_ka.min(a.ka_per_h),
                    },
                });
            }
        }
        out
    }

    /// The time of the highest level on [t0, ∞) when no dose is given after t0 other than
    /// those absorbing: before the last entry, and after it (where the level is a sum of
    /// decaying exponentials with one turn at most for one absorption rate), each part by a
    /// golden-section search; t0 itself when the level only falls.
    pub fn peak_after(&self, level: &dyn Fn(f64) -> f64, t0: f64, k: f64) -> f64 {
        let mut best = (t0, level(t0));
        let entered = self.last_entry.max(t0);
        if entered > t0 {
            let m = golden_max(level, t0, entered);
            if m.1 > best.1 {
                best = m;
            }
        }
        let span = 5.0 / k.min(self.slowest_ka);
        let m = golden_max(level, entered, entered + span);
        if m.1 > best.1 {
            best = m;
        }
        best.0
    }

    /// See `Patient::settles_below`.
    pub fn settles_below(&self, level: &dyn Fn(f64) -> f64, t0: f64, below: f64, k: f64) -> f64 {
        let from = self.peak_after(level, t0, k);
        if level(from) <= below {
            return t0;
        }
        first_below(level, from, below, k.min(self.slowest_ka))
    }
}

/// The first time from `from` at which a `level` that only falls from there is at or below
/// `below` (`from` itself when it already is): a bracket grown by doubling from one half-life
/// of the `slowest` rate, then bisection to the last bit.
pub fn first_below(level: &dyn Fn(f64) -> f64, from: f64, below: f64, slowest: f64) -> f64 {
    if level(from) <= below {
        return from;
    }
    let mut step = (std::f64::consts::LN_2 / slowest).clamp(0.01, 1e4);
    let (mut lo, mut hi) = (from, from + step);
    while level(hi) > below {
        lo = hi;
        step *= 2.0;
        hi = from + step;
        if !hi.is_finite() || step > 1e9 {
            return hi;
        }
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if level(mid) > below {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    hi
}

pub use crate::core::model::golden_max;

/// The plan at steady state.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanProjection {
    /// 1/(1 - e^(-k·tau)).
    pub accumulation_factor: f64,
    /// Steady-state figures in mg/L (None without V).
    pub steady: Option<SteadyState>,
    /// Hours to 90 %, 95 % and 97 % of steady state.
    pub time_to_ss_h: [f64; 3],
}

/// Project the plan to steady state.
pub fn plan(p: &Patient, plan: &Plan) -> PlanProjection {
    let k = p.fit.k;
    let d = p.disposition();
    let steady = d.map(|d| d.steady_state(plan.dose_mg, plan.route, plan.interval_h));
    let to_ss = |f: f64| match p.fit.disposition() {
        Some(d) => d.time_to_fraction_of_ss(f),
        None => model::time_to_fraction_of_ss(f, k),
    };
    PlanProjection {
        accumulation_factor: model::accumulation_factor(k, plan.interval_h),
        steady,
        time_to_ss_h: [0.90, 0.95, 0.97].map(to_ss),
    }
}

/// When the level falls below the threshold, and the latest plan dose before a procedure.
#[derive(Debug, Clone, PartialEq)]
pub struct ThresholdProjection {
    /// The threshold in mg/L.
    pub below_mg_l: f64,
    /// The time the projection starts from.
    pub t0: f64,
    /// The model's value then, mg/L.
    pub c0_mg_l: f64,
    /// When the level is at or below the threshold with no further dose.
    pub reached_t: f64,
    /// The same with k_hi and k_lo (earlier, later).
    pub reached_ci95_t: Option<[f64; 2]>,
    /// The latest plan dose (0-based number and its time) that still lets the level be
    /// below the threshold at the procedure.
    pub latest_plan_dose: Option<(usize, f64)>,
    /// The level at the procedure (mg/L), with the plan doses up to the latest one: the
    /// highest level over the procedure window.
    pub level_at_procedure_mg_l: Option<f64>,
    /// Plan doses that start strictly before the procedure (with a plan and a procedure).
    pub plan_doses_before: Option<usize>,
    /// Of those, the ones whose infusion has ended by the procedure (the only candidates: no
    /// infusion may be running at the procedure).
    pub plan_doses_done_before: Option<usize>,
}

/// Hours for a first-order fall from `c0` to `below` at rate `k` (0 when already below).
pub fn hours_to_fall(c0: f64, below: f64, k: f64) -> f64 {
    if c0 <= below {
        0.0
    } else {
        (c0 / below).ln() / k
    }
}

/// The largest number of plan doses considered before a procedure.
const MAX_PLAN_DOSES: usize = 100_000;

/// Why a projection after the record starts where it does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Start {
    /// The end of the last recorded dose.
    LastDoseEnd,
    /// The last level drawn (it is later than the end of the last dose).
    LastLevel,
    /// The last level in the fit (no volume: the fitted line is used).
    LastFittedLevel,
}

/// Where the threshold countdown starts: the later of the end of the last recorded dose and
/// the last level on record (used or not), with the model's value then; without V, the last
/// fitted level and the fitted line's value there (contract v1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StartPoint {
    /// Hours on the axis.
    pub t: f64,
    /// The model's value then, mg/L.
    pub c_mg_l: f64,
    /// Why there.
    pub from: Start,
}

/// The last fitted level's time (the start of everything without V).
fn last_fitted_level(p: &Patient) -> f64 {
    p.fit
        .used
        .iter()
        .map(|&i| p.case.levels[i].t)
        .fold(f64::NEG_INFINITY, f64::max)
}

/// Where the threshold countdown starts (see `StartPoint`).
pub fn threshold_start(p: &Patient) -> StartPoint {
    if p.v().is_none() {
        let t = last_fitted_level(p);
        return StartPoint {
            t,
            c_mg_l: p.fit.line_mg_l(t),
            from: Start::LastFittedLevel,
        };
    }
    let last_level = p
        .case
        .levels
        .iter()
        .map(|l| l.t)
        .fold(f64::NEG_INFINITY, f64::max);
    let end = p.last_dose_end();
    let (t, from) = if last_level >= end {
        (last_level, Start::LastLevel)
    } else {
        (end, Start::LastDoseEnd)
    };
    StartPoint {
        t,
        c_mg_l: p.level_mg_l(t),
        from,
    }
}

/// Where the washout table and a switch by half-lives count from: the end of the last
/// recorded dose, or without V the last fitted level.
pub fn washout_start(p: &Patient) -> f64 {
    if p.v().is_some() {
        p.last_dose_end()
    } else {
        last_fitted_level(p)
    }
}

/// Project the threshold of `below_mg_l`, with a procedure time if given (a procedure of no
/// length; see `threshold_window`).
pub fn threshold(p: &Patient, below_mg_l: f64, procedure_t: Option<f64>) -> ThresholdProjection {
    threshold_window(p, below_mg_l, procedure_t, 0.0)
}

/// The 95 % range of the time the level falls from `c0` at `t0` to `below_mg_l` with no
/// further dose, by k_hi (earlier) and k_lo (later). `None` when k has no interval above
/// zero. Fits with a joint spread of k and V get theirs from `uncertainty::crossing_range`,
/// the one range the threshold and the switch share.
pub fn k_crossing_range(p: &Patient, t0: f64, c0: f64, below_mg_l: f64) -> Option<[f64; 2]> {
    match (p.fit.k_ci95, p.absorbing()) {
        (Some([lo, hi]), None) if lo > 0.0 => Some([
            t0 + hours_to_fall(c0, below_mg_l, hi),
            t0 + hours_to_fall(c0, below_mg_l, lo),
        ]),
        // With absorbed doses the level may still rise after t0: the model with each k.
        (Some([lo, hi]), Some(_)) if lo > 0.0 => Some([
            p.settles_below(t0, below_mg_l, hi),
            p.settles_below(t0, below_mg_l, lo),
        ]),
        _ => None,
    }
}

/// The highest model level over `[from, from + hours]` with the recorded doses and the plan
/// doses `0..=last` (`None`: no plan dose). Between the start or end of one dose and the next
/// the level is c + d·e^(-k·t), so it is monotonic there: the highest value is at the window's
/// edges or at a dose start or end inside it. With absorbed oral doses the level may turn once
/// between those edges (and the ends of the lags): each piece is searched as well.
pub fn window_max(
    p: &Patient,
    plan: Option<&Plan>,
    last: Option<usize>,
    from: f64,
    hours: f64,
) -> f64 {
    let to = from + hours.max(0.0);
    let at = |t: f64| match plan {
        Some(pl) => p
            .level_with_plan(t, pl, last)
            .unwrap_or_else(|| p.level_mg_l(t)),
        None => p.level_mg_l(t),
    };
    let mut edges: Vec<f64> = vec![from, to];
    for d in &p.case.doses {
        edges.extend([d.t, d.end()]);
    }
    if let (Some(pl), Some(last)) = (plan, last) {
        for j in 0..=last {
            let td = pl.start_t + j as f64 * pl.interval_h;
            edges.extend([td, td + pl.route.infusion_h()]);
        }
    }
    // An absorbed oral dose starts absorbing after its lag and peaks later: between those
    // edges the level may turn once, so each such piece is searched for its highest value.
    let mut absorbed = Absorbing::of(p.case.doses.iter().map(|d| (d.t, d.route)));
    if let (Some(pl), Some(last)) = (plan, last) {
        let plan_doses = (0..=last).map(|j| (pl.start_t + j as f64 * pl.interval_h, pl.route));
        if let Some(a) = pl.route.absorption() {
            for (td, _) in plan_doses.clone() {
                edges.push(td + a.lag_h);
            }
        }
        absorbed = match (absorbed, Absorbing::of(plan_doses)) {
            (Some(x), Some(y)) => Some(Absorbing {
                last_entry: x.last_entry.max(y.last_entry),
                slowest_ka: x.slowest_ka.min(y.slowest_ka),
            }),
            (x, y) => x.or(y),
        };
    }
    if absorbed.is_some() {
        for d in &p.case.doses {
            if let Some(a) = d.route.absorption() {
                edges.push(d.t + a.lag_h);
            }
        }
    }
    let mut inside: Vec<f64> = edges
        .into_iter()
        .filter(|t| *t >= from && *t <= to)
        .collect();
    inside.sort_by(f64::total_cmp);
    inside.dedup();
    let mut best = inside
        .iter()
        .map(|&t| at(t))
        .fold(f64::NEG_INFINITY, f64::max);
    // Two compartments: during an infusion the fast mode may still rise while the slow one
    // falls, so a piece may turn once too.
    if absorbed.is_some() || p.two() {
        for w in inside.windows(2) {
            best = best.max(golden_max(&at, w[0], w[1]).1);
        }
    }
    best
}

/// Project the threshold of `below_mg_l`, with a procedure at `procedure_t` lasting
/// `window_h` hours. The latest plan dose allowed is the latest one that has fully entered by
/// the procedure (no infusion may still be running then) and that, with every plan dose
/// before it given, leaves the level at or below the threshold for the whole window.
pub fn threshold_window(
    p: &Patient,
    below_mg_l: f64,
    procedure_t: Option<f64>,
    window_h: f64,
) -> ThresholdProjection {
    let case = p.case;
    let fit = p.fit;
    let StartPoint {
        t: t0, c_mg_l: c0, ..
    } = threshold_start(p);
    let reached_t = match (p.absorbing(), p.two()) {
        (None, false) => t0 + hours_to_fall(c0, below_mg_l, fit.k),
        _ => p.settles_below(t0, below_mg_l, fit.k),
    };
    let reached_ci95_t = k_crossing_range(p, t0, c0, below_mg_l);
    let (mut latest_plan_dose, mut level_at_procedure) = (None, None);
    let (mut before, mut done) = (None, None);
    if let Some(tp) = procedure_t {
        let plan = case.plan.as_ref();
        match (plan, p.v()) {
            (Some(plan), Some(_)) => {
                let started = plan_doses_before(plan, tp);
                // Plan doses are in time order, so those ended by the procedure are a prefix.
                let mut count = started;
                while count > 0
                    && plan.start_t + (count - 1) as f64 * plan.interval_h + plan.route.infusion_h()
                        > tp
                {
                    count -= 1;
                }
                before = Some(started);
                done = Some(count);
                let at = |last: Option<usize>| window_max(p, Some(plan), last, tp, window_h);
                let none = at(None);
                // Each plan dose adds to the level over the window, so the doses that keep it
                // at or below the threshold are a prefix: search its end.
                if count == 0 || at(Some(0)) > below_mg_l {
                    level_at_procedure = Some(none);
                } else {
                    let (mut ok, mut bad) = (0usize, count);
                    while bad - ok > 1 {
                        let mid = ok + (bad - ok) / 2;
                        if at(Some(mid)) <= below_mg_l {
                            ok = mid;
                        } else {
                            bad = mid;
                        }
                    }
                    latest_plan_dose = Some((ok, plan.start_t + ok as f64 * plan.interval_h));
                    level_at_procedure = Some(at(Some(ok)));
                }
            }
            _ => level_at_procedure = Some(window_max(p, None, None, tp, window_h)),
        }
    }
    ThresholdProjection {
        below_mg_l,
        t0,
        c0_mg_l: c0,
        reached_t,
        reached_ci95_t,
        latest_plan_dose,
        level_at_procedure_mg_l: level_at_procedure,
        plan_doses_before: before,
        plan_doses_done_before: done,
    }
}

/// How many plan doses fall strictly before `t` (at most `MAX_PLAN_DOSES`).
pub fn plan_doses_before(plan: &Plan, t: f64) -> usize {
    if t <= plan.start_t {
        return 0;
    }
    // Strictly before t: a dose falling on t itself (allowing for float noise) is not counted.
    let n = ((t - plan.start_t) / plan.interval_h - 1e-9).ceil();
    if n.is_finite() {
        (n as usize).min(MAX_PLAN_DOSES)
    } else {
        MAX_PLAN_DOSES
    }
}

/// The model's course for a chart: `(hours, mg/L)` pairs from `from` to `to`, `n` evenly
/// spaced samples plus the start and end of every dose in between (so no peak is cut off),
/// in time order. With `plan = Some((plan, last))` the plan doses numbered 0..=`last` are
/// added (only when V is known). Without V the fitted line is used. Empty when the span is
/// not finite or not increasing, or `n < 2`.
pub fn course_mg_l(
    p: &Patient,
    plan: Option<(&Plan, usize)>,
    from: f64,
    to: f64,
    n: usize,
) -> Vec<(f64, f64)> {
    if !(from.is_finite() && to.is_finite() && to > from) || n < 2 {
        return Vec::new();
    }
    let plan = plan.filter(|_| p.v().is_some());
    // Every dose of the course: the record, then the plan doses up to `last` before `to`.
    let mut doses: Vec<Administration> = p.given.clone().unwrap_or_default();
    if let Some((pl, last)) = plan {
        let count = plan_doses_before(pl, to).min(last.saturating_add(1));
        doses.extend((0..count).map(|j| Administration {
            t: pl.start_t + j as f64 * pl.interval_h,
            amount_mg: pl.dose_mg,
            route: pl.route,
        }));
    }
    let step = (to - from) / (n - 1) as f64;
    let mut times: Vec<f64> = (0..n).map(|i| from + i as f64 * step).collect();
    // The start and end of each dose inside the span, so no peak is cut off — while there are
    // no more of them than samples: past that the doses are closer than the chart can show
    // and the even samples draw the course.
    let inside: Vec<&Administration> = doses
        .iter()
        .filter(|d| d.end() > from && d.t < to)
        .collect();
    let by_record = p.case.doses.iter().filter(|d| d.end() > from && d.t < to);
    if inside.len() <= n {
        for (start, end) in inside.iter().map(|d| (d.t, d.end())).chain(
            by_record
                .filter(|_| p.given.is_none())
                .map(|d| (d.t, d.end())),
        ) {
            // A bolus enters at once: sample just after it to catch the peak.
            let end = if end > start { end } else { start + 1e-6 };
            times.extend([start, end].into_iter().filter(|t| *t > from && *t < to));
        }
        // An absorbed oral dose starts after its lag and peaks later: sample both.
        for d in inside.iter().filter(|d| d.route.absorption().is_some()) {
            let lag = d.route.absorption().map_or(0.0, |a| a.lag_h);
            let peak = d.t
                + match p.fit.disposition() {
                    Some(disp) => disp.single_peak(d.amount_mg, d.route).1,
                    None => model::single_peak_time(d.route, p.fit.k),
                };
            times.extend(
                [d.t + lag, peak]
                    .into_iter()
                    .filter(|t| *t > from && *t < to),
            );
        }
    }
    times.sort_by(f64::total_cmp);
    times.dedup();
    match (p.given.is_some(), p.fit.disposition()) {
        (true, Some(d)) => {
            let levels = d.levels(&Schedule::new(&doses), &times);
            times.into_iter().zip(levels).collect()
        }
        _ => times.into_iter().map(|t| (t, p.level_mg_l(t))).collect(),
    }
}

/// One row of the washout table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WashoutRow {
    /// Whole half-lives since the start.
    pub half_lives: u32,
    /// Hours on the axis.
    pub t: f64,
    /// The model's level then, mg/L.
    pub level_mg_l: f64,
    /// 0.5^n.
    pub fraction_remaining: f64,
}

/// The washout table: from the end of the last recorded dose (without V, the last fitted
/// level), one row per half-life for five, then on until at or below the threshold (at most
/// ten rows). With two compartments the half-life is the terminal one, and the fraction
/// remaining is that of the terminal phase (the level itself is the model's).
pub fn washout(p: &Patient, below_mg_l: Option<f64>) -> Vec<WashoutRow> {
    let start = washout_start(p);
    let th = p.fit.half_life_h;
    let mut rows: Vec<WashoutRow> = Vec::new();
    for n in 1..=10u32 {
        let more = match (n <= 5, below_mg_l, rows.last()) {
            (true, _, _) => true,
            (false, Some(b), Some(prev)) => prev.level_mg_l > b,
            _ => false,
        };
        if !more {
            break;
        }
        let t = start + f64::from(n) * th;
        rows.push(WashoutRow {
            half_lives: n,
            t,
            level_mg_l: p.level_mg_l(t),
            fraction_remaining: 0.5f64.powi(n as i32),
        });
    }
    rows
}

#[cfg(test)]
mod plan_series_tests {
    use super::*;
    use crate::core::model::Route;

    #[test]
    fn the_geometric_sum_matches_adding_the_plan_doses_one_by_one() {
        for route in [
            Route::Bolus,
            Route::oral(0.8),
            Route::oral_absorbed(0.8, 0.7, 0.3),
            Route::oral_absorbed(0.8, 0.11, 0.0),
            Route::Infusion { hours: 1.0 },
            Route::Infusion { hours: 12.0 },
        ] {
            let plan = Plan {
                dose_mg: 500.0,
                interval_h: 12.0,
                route,
                start_t: 10.0,
                start_given: true,
            };
            for last in [0usize, 1, 4, 40] {
                for t in [
                    5.0, 10.0, 10.5, 11.0, 22.0, 22.5, 23.0, 34.0, 70.3, 100.0, 1000.0,
                ] {
                    let (k, v) = (0.11, 35.0);
                    let one_by_one: f64 = (0..=last)
                        .map(|j| {
                            let td = plan.start_t + j as f64 * plan.interval_h;
                            model::single_dose(plan.dose_mg, route, k, v, t - td)
                        })
                        .sum();
                    let series = plan_level(&plan, last, k, v, t);
                    assert!(
                        (series - one_by_one).abs() <= 1e-12 * one_by_one.max(1.0),
                        "{route:?} last {last} t {t}: {series} vs {one_by_one}"
                    );
                }
            }
        }
    }
}
