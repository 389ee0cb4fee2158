//! Carry a fit's joint uncertainty of k and V into projections by the delta method: ranges of
//! the steady-state figures, the threshold time range, and the model band over time.
//!
//! Only dose-history and Bayesian fits have a joint covariance of θ = (ln k, ln V) (`Spread`);
//! for them a positive quantity q(k, V) gets the 95 % range q·e^(∓c·SE(ln q)), with
//! SE(ln q)² = ∇ln qᵀ·Cov(θ)·∇ln q (the gradient by central differences in θ, or exact where
//! the model gives it) and c the fit's quantile. The model band at a time is the same range of
//! the model's level. The threshold range is where that band crosses the threshold: the lower
//! edge first (earliest), the upper edge last (latest). No sampling, so every run gives the
//! same figures.

use crate::core::case::{Case, Plan};
use crate::core::fit::Fit;
use crate::core::history;
use crate::core::model::{self, Administration, Disposition, Schedule};
use crate::core::spread::{ParamSpread, Spread};

/// Step in ln k and ln V for numerical gradients.
const STEP: f64 = 1e-6;

/// The gradient of ln q(k, V) in (ln k, ln V) by central differences; None if q is not
/// positive and finite near (k, v).
pub fn ln_gradient(q: impl Fn(f64, f64) -> f64, k: f64, v: f64) -> Option<[f64; 2]> {
    let (up, dn) = (STEP.exp(), (-STEP).exp());
    let ln = |x: f64| (x.is_finite() && x > 0.0).then(|| x.ln());
    let gk = (ln(q(k * up, v))? - ln(q(k * dn, v))?) / (2.0 * STEP);
    let gv = (ln(q(k, v * up))? - ln(q(k, v * dn))?) / (2.0 * STEP);
    (gk.is_finite() && gv.is_finite()).then_some([gk, gv])
}

/// The 95 % range of a positive quantity q(k, V) at the fit's k and V.
pub fn range(spread: &Spread, k: f64, v: f64, q: impl Fn(f64, f64) -> f64) -> Option<[f64; 2]> {
    let value = q(k, v);
    let g = ln_gradient(&q, k, v)?;
    let r = spread.interval(value, g);
    (r[0].is_finite() && r[1].is_finite()).then_some(r)
}

/// 95 % ranges of the steady-state figures, mg/L (AUC mg·h/L).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SteadyRanges {
    /// Peak range.
    pub peak: [f64; 2],
    /// Trough range.
    pub trough: [f64; 2],
    /// AUC24 range.
    pub auc24: [f64; 2],
}

/// The gradient of ln q(d) in the logs of the parameters of `d` (`Disposition::params`) that
/// vary in `spread`, by central differences (zero for a fixed one); None if q is not positive
/// and finite near `d`.
pub fn ln_gradient_of(
    q: impl Fn(&Disposition) -> f64,
    d: &Disposition,
    spread: &ParamSpread,
) -> Option<Vec<f64>> {
    let ln = |x: f64| (x.is_finite() && x > 0.0).then(|| x.ln());
    let p = d.params();
    let mut g = vec![0.0; p.len()];
    for (i, gi) in g.iter_mut().enumerate() {
        let var = spread
            .cov
            .get(i)
            .and_then(|r| r.get(i))
            .copied()
            .unwrap_or(0.0);
        if var <= 0.0 {
            continue;
        }
        let at = |step: f64| {
            let mut x = p.clone();
            x[i] *= step.exp();
            ln(q(&d.with_params(&x)))
        };
        *gi = (at(STEP)? - at(-STEP)?) / (2.0 * STEP);
    }
    g.iter().all(|x| x.is_finite()).then_some(g)
}

/// The range of a positive quantity q of a two-compartment fit's disposition.
pub fn range_of(fit: &Fit, q: impl Fn(&Disposition) -> f64) -> Option<[f64; 2]> {
    let spread = fit.param_spread.as_ref()?;
    let d = fit.disposition()?;
    let g = ln_gradient_of(&q, &d, spread)?;
    let r = spread.interval(q(&d), &g);
    (r[0].is_finite() && r[1].is_finite()).then_some(r)
}

/// The steady-state ranges of `plan` for a fit with a joint spread and a volume.
pub fn steady_ranges(fit: &Fit, plan: &Plan) -> Option<SteadyRanges> {
    if fit.two.is_some() {
        let ss = |d: &Disposition| d.steady_state(plan.dose_mg, plan.route, plan.interval_h);
        return Some(SteadyRanges {
            peak: range_of(fit, |d| ss(d).peak_mg_l)?,
            trough: range_of(fit, |d| ss(d).trough_mg_l)?,
            auc24: range_of(fit, |d| ss(d).auc24_mg_h_l)?,
        });
    }
    let spread = fit.spread.as_ref()?;
    let v = fit.volume_l?;
    let ss = |k: f64, v: f64| model::steady_state(plan.dose_mg, plan.route, plan.interval_h, k, v);
    Some(SteadyRanges {
        peak: range(spread, fit.k, v, |k, v| ss(k, v).peak_mg_l)?,
        trough: range(spread, fit.k, v, |k, v| ss(k, v).trough_mg_l)?,
        auc24: range(spread, fit.k, v, |k, v| ss(k, v).auc24_mg_h_l)?,
    })
}

/// The model at one time, with its 95 % band when the fit has one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandPoint {
    /// Hours on the case's axis.
    pub t: f64,
    /// The model's level, mg/L (0 before the first dose).
    pub mg_l: f64,
    /// Lower and upper edge of the 95 % band, mg/L.
    pub band: Option<[f64; 2]>,
}

/// The model's level (ln mg/L) at `t` and its gradient in (ln k, ln V); None before any dose.
fn ln_level(given: &[Administration], k: f64, v: f64, t: f64) -> Option<(f64, [f64; 2])> {
    let (ls, dls) = history::ln_unit_level(given, k, t)?;
    Some((ls - v.ln(), [dls, -1.0]))
}

/// The model curve with the recorded doses at each time in `ts`, with its 95 % band (the
/// delta-method range of the level) for dose-history and Bayesian fits. Without V (no dose
/// amounts) the fitted line is given, without a band. For a chart of the fit screen.
pub fn band(case: &Case, fit: &Fit, ts: &[f64]) -> Vec<BandPoint> {
    let given = case.given().ok();
    if let (Some(g), Some(d), true) = (&given, fit.disposition(), fit.two.is_some()) {
        return two_band(g, &d, fit.param_spread.as_ref(), ts);
    }
    match (&given, fit.volume_l) {
        (Some(g), Some(v)) => {
            // One forward pass over the record for every time at once.
            let k = fit.k;
            let levels = Schedule::new(g).unit_levels(k, ts);
            ts.iter()
                .zip(levels)
                .map(|(&t, (s, ds))| {
                    if !(s > 0.0 && s.is_finite()) {
                        return BandPoint {
                            t,
                            mg_l: 0.0,
                            band: None,
                        };
                    }
                    let c = s / v;
                    let grad = [k * ds / s, -1.0];
                    BandPoint {
                        t,
                        mg_l: c,
                        band: fit.spread.map(|sp| sp.interval(c, grad)),
                    }
                })
                .collect()
        }
        _ => ts
            .iter()
            .map(|&t| BandPoint {
                t,
                mg_l: fit.line_mg_l(t),
                band: None,
            })
            .collect(),
    }
}

/// `band` for a two-compartment fit: the level by one forward pass per mode, its gradient in
/// the log parameters that vary by central differences (two more passes each).
fn two_band(
    given: &[Administration],
    d: &Disposition,
    spread: Option<&ParamSpread>,
    ts: &[f64],
) -> Vec<BandPoint> {
    let schedule = Schedule::new(given);
    let levels = d.levels(&schedule, ts);
    let p = d.params();
    // Per varying parameter: the levels a step up and a step down.
    let steps: Vec<(usize, Vec<f64>, Vec<f64>)> = spread
        .map(|sp| {
            (0..p.len())
                .filter(|&i| {
                    sp.cov
                        .get(i)
                        .and_then(|r| r.get(i))
                        .is_some_and(|v| *v > 0.0)
                })
                .map(|i| {
                    let at = |step: f64| {
                        let mut x = p.clone();
                        x[i] *= step.exp();
                        d.with_params(&x).levels(&schedule, ts)
                    };
                    (i, at(STEP), at(-STEP))
                })
                .collect()
        })
        .unwrap_or_default();
    ts.iter()
        .enumerate()
        .map(|(j, &t)| {
            let c = levels[j];
            if !(c > 0.0 && c.is_finite()) {
                return BandPoint {
                    t,
                    mg_l: 0.0,
                    band: None,
                };
            }
            let band = spread.and_then(|sp| {
                let mut g = vec![0.0; p.len()];
                for (i, up, dn) in &steps {
                    if !(up[j] > 0.0 && dn[j] > 0.0) {
                        return None;
                    }
                    g[*i] = (up[j].ln() - dn[j].ln()) / (2.0 * STEP);
                }
                Some(sp.interval(c, &g))
            });
            BandPoint { t, mg_l: c, band }
        })
        .collect()
}

/// The 95 % range of the time a two-compartment fit's level falls to `below_mg_l` from `t0`:
/// where each edge of its band reaches the threshold, by bisection to the reported minute.
fn two_threshold_range(case: &Case, fit: &Fit, t0: f64, below_mg_l: f64) -> Option<[f64; 2]> {
    let spread = fit.param_spread.as_ref()?;
    let d = fit.disposition()?;
    let given = case.given().ok()?;
    if !(below_mg_l > 0.0 && below_mg_l.is_finite()) {
        return None;
    }
    let ln_x = below_mg_l.ln();
    let level = |x: &Disposition, t: f64| x.superpose(&given, t);
    let edge = |t: f64, sign: f64| -> Option<f64> {
        let c = level(&d, t);
        let g = ln_gradient_of(|x| level(x, t), &d, spread)?;
        Some(c.ln() + sign * spread.quantile * spread.se_ln(&g))
    };
    let start = match crate::core::projection::Absorbing::of(given.iter().map(|x| (x.t, x.route))) {
        None => t0,
        Some(a) => a.peak_after(&|t| level(&d, t), t0, fit.k),
    };
    let cross = |sign: f64| -> Option<f64> {
        if edge(start, sign)? <= ln_x {
            return Some(t0);
        }
        bisect_crossing(|t| edge(t, sign), start, fit.half_life_h, ln_x)
    };
    Some([cross(-1.0)?, cross(1.0)?])
}

/// The 95 % range of the time (hours on the axis) the level falls to `below_mg_l`, from `t0`
/// (at or after the end of the last recorded dose, no dose after): the earliest is where the
/// band's lower edge reaches the threshold, the latest where its upper edge does. None
/// without a spread or V, or when the band's upper edge need not fall (the spread of k is as
/// wide as k itself: c·SE(ln k) >= 1).
///
/// After the last dose has entered, the level is one exponential, so each edge's crossing has
/// a closed form (`closed_crossing`, one pass over the record for the level at `t0`); it is
/// checked against the model at the time found, and only where the model is not one
/// exponential there is the crossing bisected, to the minute it is reported to.
pub fn threshold_range(case: &Case, fit: &Fit, t0: f64, below_mg_l: f64) -> Option<[f64; 2]> {
    if fit.two.is_some() {
        return two_threshold_range(case, fit, t0, below_mg_l);
    }
    let spread = fit.spread.as_ref()?;
    let v = fit.volume_l?;
    let given = case.given().ok()?;
    if !(below_mg_l > 0.0 && below_mg_l.is_finite()) {
        return None;
    }
    // Past the last dose both edges fall monotonically only while c·SE(ln k) < 1.
    if spread.quantile * spread.se_ln_k() >= 1.0 {
        return None;
    }
    let ln_x = below_mg_l.ln();
    let edge = |t: f64, sign: f64| -> Option<f64> {
        let (lc, g) = ln_level(&given, fit.k, v, t)?;
        Some(lc + sign * spread.quantile * spread.se_ln(g))
    };
    // With absorbed oral doses the level may still rise after t0: the edges are followed
    // down from the model's highest level after t0.
    let start = match crate::core::projection::Absorbing::of(given.iter().map(|d| (d.t, d.route))) {
        None => t0,
        Some(a) => {
            let level = |t: f64| model::superpose(&given, fit.k, v, t);
            a.peak_after(&level, t0, fit.k)
        }
    };
    let (l0, g0) = ln_level(&given, fit.k, v, start)?;
    let cross = |sign: f64| -> Option<f64> {
        if l0 + sign * spread.quantile * spread.se_ln(g0) <= ln_x {
            return Some(t0);
        }
        if let Some(s) = closed_crossing(l0, g0[0], fit.k, spread, sign, ln_x) {
            let t = start + s;
            // The closed form holds where the model is one exponential past the start; check it.
            if edge(t, sign).is_some_and(|e| (e - ln_x).abs() <= 1e-9 * (1.0 + ln_x.abs())) {
                return (s <= MAX_CROSSING_H).then_some(t);
            }
        }
        bisect_crossing(|t| edge(t, sign), start, fit.half_life_h, ln_x)
    };
    Some([cross(-1.0)?, cross(1.0)?])
}

/// Crossings further than this many hours past the start are not given.
const MAX_CROSSING_H: f64 = 1e7;

/// Hours `s` after t0 at which an edge of the band reaches `ln_x`, when the level falls as one
/// exponential from t0: ln C(s) = l0 − k·s, whose gradient in (ln k, ln V) is (u, −1) with
/// u = g0 − k·s. The edge is ln C + sign·c·SE, SE = √(gᵀ·Cov·g), so with
/// R = ln_x − l0 + g0 the crossing solves u + sign·c·SE(u) = R. The left side rises
/// strictly with u while c·SE(ln k) < 1, so there is one solution; squaring gives
/// (c²·Cov₁₁ − 1)·u² + 2(R − c²·Cov₁₂)·u + c²·Cov₂₂ − R² = 0, and of its two roots the one
/// that solves the unsquared equation is taken. `None` when no root is real and finite.
fn closed_crossing(l0: f64, g0: f64, k: f64, spread: &Spread, sign: f64, ln_x: f64) -> Option<f64> {
    let cov = &spread.cov;
    let q2 = spread.quantile * spread.quantile;
    let r = ln_x - l0 + g0;
    let f = |u: f64| u + sign * spread.quantile * spread.se_ln([u, -1.0]);
    let a = q2 * cov[0][0] - 1.0;
    let b = 2.0 * (r - q2 * cov[0][1]);
    let c = q2 * cov[1][1] - r * r;
    let disc = b * b - 4.0 * a * c;
    if !(a < 0.0 && disc >= 0.0 && disc.is_finite() && k > 0.0) {
        return None;
    }
    let root = disc.sqrt();
    let u = [(-b + root) / (2.0 * a), (-b - root) / (2.0 * a)]
        .into_iter()
        .filter(|u| u.is_finite())
        .min_by(|x, y| (f(*x) - r).abs().total_cmp(&(f(*y) - r).abs()))?;
    let s = (g0 - u) / k;
    (s.is_finite() && s >= 0.0).then_some(s)
}

/// Where `edge` (falling) first reaches `ln_x` after `t0`, by doubling steps from a
/// half-life and then halving the bracket until both its ends give the same clock minute,
/// rounded either way (`ClockTime::at_minute_up` and `at_minute` count minutes from the
/// axis origin): the minute the time is reported to.
fn bisect_crossing(
    edge: impl Fn(f64) -> Option<f64>,
    t0: f64,
    half_life_h: f64,
    ln_x: f64,
) -> Option<f64> {
    let up = |h: f64| ((h * 3600.0 - 1e-3) / 60.0).ceil();
    let near = |h: f64| (h * 60.0).round();
    let mut step = half_life_h.clamp(0.1, 1e4);
    let mut lo = t0;
    let mut hi = t0 + step;
    while edge(hi)? > ln_x {
        lo = hi;
        step *= 2.0;
        hi = t0 + step;
        if step > MAX_CROSSING_H {
            return None;
        }
    }
    for _ in 0..200 {
        if up(lo) == up(hi) && near(lo) == near(hi) {
            break;
        }
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if edge(mid)? > ln_x {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(hi)
}

/// The one 95 % range of the time the level falls to `below_mg_l` from `t0` (level `c0`) with
/// no further dose, shared by the threshold and the switch: for dose-history and Bayesian
/// fits, where the model's 95 % band crosses it (`threshold_range`); otherwise by k_hi and
/// k_lo (`projection::k_crossing_range`).
pub fn crossing_range(
    p: &crate::core::projection::Patient,
    t0: f64,
    c0: f64,
    below_mg_l: f64,
) -> Option<[f64; 2]> {
    if p.fit.spread.is_some() || p.fit.param_spread.is_some() {
        threshold_range(p.case, p.fit, t0, below_mg_l)
    } else {
        crate::core::projection::k_crossing_range(p, t0, c0, below_mg_l)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::model::Route;

    #[test]
    fn gradient_of_auc_is_minus_one_in_both() {
        // AUC = F·D/(k·V): ln AUC has gradient (-1, -1) in (ln k, ln V).
        let g = ln_gradient(|k, v| 1000.0 / (k * v), 0.1, 30.0).unwrap();
        assert!(
            (g[0] + 1.0).abs() < 1e-8 && (g[1] + 1.0).abs() < 1e-8,
            "{g:?}"
        );
    }

    /// A spread with a correlation of ln k and ln V, as a dose-history fit gives.
    fn spread() -> Spread {
        Spread {
            cov: [[0.01, -0.004], [-0.004, 0.02]],
            quantile: 2.2,
        }
    }

    #[test]
    fn the_closed_form_crossing_is_where_the_edge_meets_the_threshold() {
        // Self-consistency: one exponential after t0 (l0, gradient g0 in ln k at t0), each
        // edge's crossing from the quadratic against the edge itself at that time.
        let (k, l0, g0, ln_x) = (0.2, 2.0_f64, -1.3, 0.5_f64.ln());
        let sp = spread();
        for sign in [-1.0, 1.0] {
            let s = closed_crossing(l0, g0, k, &sp, sign, ln_x).unwrap();
            let u = g0 - k * s;
            let edge = l0 - k * s + sign * sp.quantile * sp.se_ln([u, -1.0]);
            assert!((edge - ln_x).abs() < 1e-12, "{sign}: {edge} at {s}");
        }
        let early = closed_crossing(l0, g0, k, &sp, -1.0, ln_x).unwrap();
        let late = closed_crossing(l0, g0, k, &sp, 1.0, ln_x).unwrap();
        let middle = (l0 - ln_x) / k;
        assert!(early < middle && middle < late, "{early} {middle} {late}");
    }

    #[test]
    fn bisection_stops_at_the_reported_minute() {
        // Self-consistency: the bisection (used where the level is not one exponential)
        // gives the same clock minute, rounded up and to the nearest, as the closed form.
        let (k, l0, g0, ln_x) = (0.2, 2.0_f64, -1.3, 0.5_f64.ln());
        let sp = spread();
        for sign in [-1.0, 1.0] {
            let edge = |t: f64| {
                let u = g0 - k * t;
                Some(l0 - k * t + sign * sp.quantile * sp.se_ln([u, -1.0]))
            };
            let exact = closed_crossing(l0, g0, k, &sp, sign, ln_x).unwrap();
            let found = bisect_crossing(edge, 0.0, 3.5, ln_x).unwrap();
            let up = |h: f64| ((h * 3600.0 - 1e-3) / 60.0).ceil();
            assert_eq!(up(found), up(exact), "{found} {exact}");
            assert_eq!((found * 60.0).round(), (exact * 60.0).round());
            assert!(found >= exact && found - exact < 1.0 / 60.0);
        }
    }

    #[test]
    fn band_gradient_matches_numerical() {
        let given = [
            Administration {
                t: 0.0,
                amount_mg: 500.0,
                route: Route::Infusion { hours: 1.0 },
            },
            Administration {
                t: 12.0,
                amount_mg: 500.0,
                route: Route::Infusion { hours: 1.0 },
            },
        ];
        for t in [0.5, 3.0, 12.5, 20.0] {
            let (_, g) = ln_level(&given, 0.1, 40.0, t).unwrap();
            let n = ln_gradient(|k, v| model::superpose(&given, k, v, t), 0.1, 40.0).unwrap();
            assert!((g[0] - n[0]).abs() < 1e-7 && (g[1] - n[1]).abs() < 1e-7);
        }
    }
}
