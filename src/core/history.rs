//! Dose-history fit: k and V together from every used level, against the superposition of the
//! whole dose record, by Levenberg-Marquardt least squares on log concentrations.
//!
//! The parameters are θ = (ln k, ln V). With proportional error the residuals are
//! ln(measured) − ln(model), all of equal weight. The model is C(t) = S(t; k)/V, S being the
//! summed single-dose responses with V = 1 L, so ∂ln C/∂ln V = −1 and
//! ∂ln C/∂ln k = k·S'(t; k)/S(t; k) (S' analytic). The search starts from the best point of a
//! grid over ln k (V profiled out in closed form), then Levenberg-Marquardt polishes it. The
//! covariance of θ is s²·(JᵀJ)⁻¹ with s² = RSS/(n − 2), and 95 % intervals are
//! θ ± t(0.975, n − 2)·SE, taken back through exp: asymmetric on the natural scale.
//!
//! The same solver serves the Bayesian estimate (`bayes`): a Gaussian prior on θ adds its
//! precision to JᵀJ, and the residuals are scaled by a known residual SD.

use crate::core::warning::{Code, Warning};
use std::f64::consts::LN_2;

use crate::core::case::Case;
use crate::core::error::{Error, Result};
use crate::core::fitted::{
    after_dose, in_distribution_phase, t975, Fit, Method, VolumeMethod, DISTRIBUTION_PHASE_H,
};
use crate::core::model::{self, Administration, Schedule};
pub use crate::core::spread::{Gaussian, Spread};

/// The result of a dose-history or Bayesian solve on plain numbers.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    /// Elimination rate constant, 1/h.
    pub k: f64,
    /// Volume, L.
    pub v: f64,
    /// Joint uncertainty (None when two levels fit two parameters exactly).
    pub spread: Option<Spread>,
    /// ln(measured) − ln(model) per point, in the order given.
    pub residuals: Vec<f64>,
    /// Levenberg-Marquardt iterations taken.
    pub iterations: usize,
}

/// ln S(t; k) and ∂ln S/∂ln k for the summed unit responses; None when no dose precedes t.
pub fn ln_unit_level(doses: &[Administration], k: f64, t: f64) -> Option<(f64, f64)> {
    let (mut s, mut ds) = (0.0, 0.0);
    for d in doses {
        let (c, dc) = model::unit_response(d.amount_mg, d.route, k, t - d.t);
        s += c;
        ds += dc;
    }
    (s > 0.0 && s.is_finite()).then(|| (s.ln(), k * ds / s))
}

/// The grid of ln k the search starts from: half-lives from 3 minutes to 5000 hours.
const GRID_HALF_LIFE_H: [f64; 2] = [0.05, 5000.0];
/// Points in that grid.
const GRID_POINTS: usize = 97;
/// Half-lives beyond these (hours) mean the levels did not determine k.
const PLAUSIBLE_HALF_LIFE_H: [f64; 2] = [0.01, 5000.0];

/// A least-squares problem in θ = (ln k, ln V).
pub(crate) struct Problem<'a> {
    /// The dose record, laid out for one forward pass per evaluation.
    pub schedule: Schedule<'a>,
    /// Times of the points, hours.
    pub ts: Vec<f64>,
    /// ln of the measured levels, ln(mg/L).
    pub ln_y: Vec<f64>,
    /// Residual SD on the log scale (1 for the unweighted fit).
    pub sigma: f64,
    /// Optional Gaussian prior on θ.
    pub prior: Option<Gaussian>,
}

/// The normal equations at θ: information matrix, right-hand side, and the residuals.
type Normal = ([[f64; 2]; 2], [f64; 2], Vec<f64>);

/// A converged solve: θ, the information matrix JᵀJ/σ² (+ prior precision) at θ, residuals.
pub(crate) struct Solved {
    pub theta: [f64; 2],
    pub info: [[f64; 2]; 2],
    pub residuals: Vec<f64>,
    pub iterations: usize,
}

impl Problem<'_> {
    fn prior_cost(&self, th: [f64; 2]) -> f64 {
        match &self.prior {
            None => 0.0,
            Some(g) => {
                let d = [th[0] - g.mean[0], th[1] - g.mean[1]];
                let p = &g.precision;
                d[0] * d[0] * p[0][0] + 2.0 * d[0] * d[1] * p[0][1] + d[1] * d[1] * p[1][1]
            }
        }
    }

    /// ln S and ∂ln S/∂ln k at every point for this k (one forward pass over the record),
    /// or None if a point has no model value.
    fn ln_levels(&self, k: f64) -> Option<Vec<(f64, f64)>> {
        self.schedule
            .unit_levels(k, &self.ts)
            .into_iter()
            .map(|(s, ds)| (s > 0.0 && s.is_finite()).then(|| (s.ln(), k * ds / s)))
            .collect()
    }

    /// Residuals ln(measured) − ln(model) at θ.
    fn residuals(&self, th: [f64; 2]) -> Option<Vec<f64>> {
        let levels = self.ln_levels(th[0].exp())?;
        Some(
            self.ln_y
                .iter()
                .zip(levels)
                .map(|(ly, (ls, _))| ly - (ls - th[1]))
                .collect(),
        )
    }

    /// Residuals and Jacobian rows of ln(model), or None if a point has no model value.
    fn eval(&self, th: [f64; 2]) -> Option<(Vec<f64>, Vec<[f64; 2]>)> {
        let levels = self.ln_levels(th[0].exp())?;
        let r = self
            .ln_y
            .iter()
            .zip(&levels)
            .map(|(ly, (ls, _))| ly - (ls - th[1]))
            .collect();
        let j = levels.iter().map(|&(_, dls)| [dls, -1.0]).collect();
        Some((r, j))
    }

    fn cost(&self, th: [f64; 2]) -> Option<f64> {
        let r = self.residuals(th)?;
        let s2 = self.sigma * self.sigma;
        let c = r.iter().map(|x| x * x).sum::<f64>() / s2 + self.prior_cost(th);
        c.is_finite().then_some(c)
    }

    /// The best ln V for a given ln k (closed form: the cost is quadratic in ln V).
    fn profile_ln_v(&self, ln_k: f64) -> Option<f64> {
        let k = ln_k.exp();
        let s2 = self.sigma * self.sigma;
        let sum_a: f64 = self
            .ln_levels(k)?
            .iter()
            .zip(&self.ln_y)
            .map(|((ls, _), ly)| ls - ly)
            .sum();
        let n = self.ts.len() as f64;
        let (num, den) = match &self.prior {
            None => (sum_a / s2, n / s2),
            Some(g) => {
                let dx = ln_k - g.mean[0];
                let p = &g.precision;
                (
                    sum_a / s2 - p[0][1] * dx + p[1][1] * g.mean[1],
                    n / s2 + p[1][1],
                )
            }
        };
        let w = num / den;
        (den > 0.0 && w.is_finite()).then_some(w)
    }

    /// The information matrix and the right-hand side of the normal equations at θ.
    fn normal(&self, th: [f64; 2]) -> Option<Normal> {
        let (r, j) = self.eval(th)?;
        let s2 = self.sigma * self.sigma;
        let mut h = [[0.0; 2]; 2];
        let mut g = [0.0; 2];
        for (ri, ji) in r.iter().zip(&j) {
            for a in 0..2 {
                g[a] += ji[a] * ri / s2;
                for b in 0..2 {
                    h[a][b] += ji[a] * ji[b] / s2;
                }
            }
        }
        if let Some(pr) = &self.prior {
            let d = [th[0] - pr.mean[0], th[1] - pr.mean[1]];
            for a in 0..2 {
                for b in 0..2 {
                    h[a][b] += pr.precision[a][b];
                    g[a] -= pr.precision[a][b] * d[b];
                }
            }
        }
        Some((h, g, r))
    }

    /// Minimise the cost: a grid over ln k with ln V profiled, then Levenberg-Marquardt.
    pub fn solve(&self) -> Option<Solved> {
        let lo = (LN_2 / GRID_HALF_LIFE_H[1]).ln();
        let hi = (LN_2 / GRID_HALF_LIFE_H[0]).ln();
        let mut best: Option<([f64; 2], f64)> = None;
        for i in 0..GRID_POINTS {
            let x = lo + (hi - lo) * i as f64 / (GRID_POINTS - 1) as f64;
            let Some(w) = self.profile_ln_v(x) else {
                continue;
            };
            let th = [x, w];
            if let Some(c) = self.cost(th) {
                if best.is_none_or(|(_, bc)| c < bc) {
                    best = Some((th, c));
                }
            }
        }
        let (mut th, mut cost) = best?;
        let mut lambda = 1e-3;
        let mut iterations = 0;
        for _ in 0..200 {
            iterations += 1;
            let (h, g, _) = self.normal(th)?;
            let mut step = None;
            for _ in 0..40 {
                let a = [
                    [h[0][0] * (1.0 + lambda), h[0][1]],
                    [h[1][0], h[1][1] * (1.0 + lambda)],
                ];
                if let Some(d) = solve2(a, g) {
                    let next = [th[0] + d[0], th[1] + d[1]];
                    if let Some(c) = self.cost(next) {
                        if c <= cost {
                            step = Some((next, c, d));
                            lambda = (lambda / 3.0).max(1e-12);
                            break;
                        }
                    }
                }
                lambda *= 4.0;
            }
            let Some((next, c, d)) = step else {
                break;
            };
            let small = d[0].abs().max(d[1].abs()) < 1e-12;
            let flat = cost - c <= 1e-15 * cost.max(1e-300);
            th = next;
            cost = c;
            if small || (flat && d[0].abs().max(d[1].abs()) < 1e-9) {
                break;
            }
        }
        let (info, _, residuals) = self.normal(th)?;
        Some(Solved {
            theta: th,
            info,
            residuals,
            iterations,
        })
    }
}

/// Solve the 2 × 2 system a·x = b; None when singular.
fn solve2(a: [[f64; 2]; 2], b: [f64; 2]) -> Option<[f64; 2]> {
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    let scale = (a[0][0] * a[1][1]).abs().max((a[0][1] * a[1][0]).abs());
    if !(det.is_finite() && det.abs() > 1e-14 * scale && scale > 0.0) {
        return None;
    }
    let x = [
        (b[0] * a[1][1] - b[1] * a[0][1]) / det,
        (a[0][0] * b[1] - a[1][0] * b[0]) / det,
    ];
    (x[0].is_finite() && x[1].is_finite()).then_some(x)
}

/// The inverse of a symmetric positive-definite 2 × 2 matrix; None when (nearly) singular.
pub(crate) fn inverse2(a: [[f64; 2]; 2]) -> Option<[[f64; 2]; 2]> {
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    let scale = (a[0][0] * a[1][1]).abs();
    if !(det.is_finite() && det > 1e-12 * scale && scale > 0.0) {
        return None;
    }
    Some([
        [a[1][1] / det, -a[0][1] / det],
        [-a[1][0] / det, a[0][0] / det],
    ])
}

/// Why a solve on plain numbers failed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Failure {
    /// Fewer than two points.
    TooFew,
    /// A point has no dose before it.
    BeforeFirstDose,
    /// The levels cannot separate k from V (for example, drawn at one time).
    NotSeparable,
    /// The best fit lies at an implausible half-life: the levels do not determine k.
    NoElimination,
}

/// Fit k and V to points `(t, mg/L)` after `doses` (the unweighted dose-history fit).
///
/// # Errors
/// A `Failure` saying why no estimate could be made.
pub fn fit_points(
    doses: &[Administration],
    points: &[(f64, f64)],
) -> std::result::Result<Solution, Failure> {
    if points.len() < 2 {
        return Err(Failure::TooFew);
    }
    if points.iter().all(|p| p.0 == points[0].0) {
        return Err(Failure::NotSeparable);
    }
    let problem = problem(doses, points, 1.0, None)?;
    let solved = problem.solve().ok_or(Failure::NoElimination)?;
    let n = points.len();
    check_plausible(solved.theta[0])?;
    let inv = inverse2(solved.info).ok_or(Failure::NotSeparable)?;
    let spread = (n > 2).then(|| {
        let rss: f64 = solved.residuals.iter().map(|r| r * r).sum();
        let s2 = rss / (n - 2) as f64;
        Spread {
            cov: [
                [s2 * inv[0][0], s2 * inv[0][1]],
                [s2 * inv[1][0], s2 * inv[1][1]],
            ],
            quantile: t975(n - 2),
        }
    });
    Ok(Solution {
        k: solved.theta[0].exp(),
        v: solved.theta[1].exp(),
        spread,
        residuals: solved.residuals,
        iterations: solved.iterations,
    })
}

/// Build a problem on plain numbers, refusing points with no dose before them.
pub(crate) fn problem<'a>(
    doses: &'a [Administration],
    points: &[(f64, f64)],
    sigma: f64,
    prior: Option<Gaussian>,
) -> std::result::Result<Problem<'a>, Failure> {
    let mut ts = Vec::with_capacity(points.len());
    let mut ln_y = Vec::with_capacity(points.len());
    let first_dose = doses.iter().map(|d| d.t).fold(f64::INFINITY, f64::min);
    for &(t, y) in points {
        if t <= first_dose {
            return Err(Failure::BeforeFirstDose);
        }
        ts.push(t);
        ln_y.push(y.ln());
    }
    Ok(Problem {
        schedule: Schedule::new(doses),
        ts,
        ln_y,
        sigma,
        prior,
    })
}

/// Whether ln k lies at a half-life the levels can have determined.
pub(crate) fn check_plausible(ln_k: f64) -> std::result::Result<(), Failure> {
    let half_life = LN_2 / ln_k.exp();
    if (PLAUSIBLE_HALF_LIFE_H[0]..=PLAUSIBLE_HALF_LIFE_H[1]).contains(&half_life) {
        Ok(())
    } else {
        Err(Failure::NoElimination)
    }
}

/// The levels a dose-history or Bayesian fit can use: marked for use and drawn after the first
/// dose began. Returns their indices, and warnings for the ones left out or drawn early.
pub(crate) fn usable_levels(case: &Case) -> (Vec<usize>, Vec<Warning>) {
    let mut warnings = Vec::new();
    let mut used = Vec::new();
    for (i, l) in case.levels.iter().enumerate() {
        if !l.use_in_fit {
            continue;
        }
        let Some((di, after)) = after_dose(case, l.t) else {
            warnings.push(Warning::about_level(Code::OutsideWindow, case.levels[i].row, format!(
                "{} was drawn before any recorded dose (or at the first): the model has no level then, so it is left out of the fit",
                case.level_name(i)
            )));
            continue;
        };
        used.push(i);
        let d = &case.doses[di];
        if after < 0.0 {
            warnings.push(Warning::about_level(Code::DistributionPhase, case.levels[i].row, format!(
                "{} was drawn during the infusion of dose {}: it may be in the distribution phase, which would bias k and V",
                case.level_name(i),
                d.row
            )));
        } else if in_distribution_phase(after, DISTRIBUTION_PHASE_H) {
            warnings.push(Warning::about_level(Code::DistributionPhase, case.levels[i].row, format!(
                "{} was drawn {} after the end of dose {}: it may be in the distribution phase, which would bias k and V",
                case.level_name(i),
                crate::core::clock::span_words(after),
                d.row
            )));
        }
    }
    (used, warnings)
}

/// The case's doses as the model sees them, or an error naming the rows without an amount.
pub(crate) fn given_or_error(case: &Case, method: &str) -> Result<Vec<Administration>> {
    if case.doses.is_empty() {
        return Err(Error::invalid(
            "dose",
            format!("no dose is on record; the {method} fit needs the doses given"),
        ));
    }
    case.given().map_err(|rows| {
        let rows: Vec<String> = rows.iter().map(|r| format!("dose {r}")).collect();
        Error::invalid(
            rows.join(", "),
            format!("has no amount_mg; the {method} fit needs every dose amount"),
        )
    })
}

/// Fit k and V from every used level of the case against its whole dose record.
///
/// # Errors
/// Fewer than two usable levels, a dose without an amount, or levels that cannot determine
/// k and V, each naming the levels or rows.
pub fn fit(case: &Case) -> Result<Fit> {
    let given = given_or_error(case, "dose-history")?;
    let (used, mut warnings) = usable_levels(case);
    let names = |idx: &[usize]| {
        idx.iter()
            .map(|&i| case.level_name(i))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if used.len() < 2 {
        let which = match used.first() {
            Some(&i) => format!("only {} can be used", case.level_name(i)),
            None => "no level can be used".into(),
        };
        return Err(Error::invalid(
            "level",
            format!("{which}; the dose-history fit needs at least two levels drawn after a dose"),
        ));
    }
    let points: Vec<(f64, f64)> = used
        .iter()
        .map(|&i| (case.levels[i].t, case.levels[i].mg_l))
        .collect();
    let sol = fit_points(&given, &points).map_err(|f| match f {
        Failure::NotSeparable => Error::invalid(
            "level",
            format!(
                "{} cannot separate k from V (drawn too close together); add a level at another time",
                names(&used)
            ),
        ),
        _ => Error::invalid(
            "level",
            format!(
                "{} do not fall as the dose record predicts for any plausible half-life: check the times, the values and the dose record, or untick a level",
                names(&used)
            ),
        ),
    })?;
    if sol.spread.is_none() {
        warnings.push(Warning::new(Code::NoInterval,
            "k and V come from two levels, which the model fits exactly: no interval can be given; a third level would show how sure they are",
        ));
    }
    Ok(to_fit(
        case,
        Method::DoseHistory,
        used,
        &sol,
        warnings,
        None,
    ))
}

/// Build a `Fit` from a solution (dose-history or Bayesian).
pub(crate) fn to_fit(
    case: &Case,
    method: Method,
    used: Vec<usize>,
    sol: &Solution,
    warnings: Vec<Warning>,
    population: Option<crate::core::population::Summary>,
) -> Fit {
    let (k, v) = (sol.k, sol.v);
    let mut warnings = warnings;
    // An interval that overflows (the levels barely bound k or V) is dropped, not reported.
    let finite = |s: &Spread| {
        [[1.0, 0.0], [0.0, 1.0], [1.0, 1.0]].iter().all(|g| {
            s.interval(1.0, *g)
                .iter()
                .all(|x| x.is_finite() && *x > 0.0)
        })
    };
    let spread = match sol.spread {
        Some(s) if !finite(&s) => {
            warnings.push(Warning::new(
                Code::WideIntervals,
                "the levels barely bound k and V: their 95 % intervals are too wide to give",
            ));
            None
        }
        other => other,
    };
    let t_ref = used
        .last()
        .map(|&i| case.levels[i].t)
        .unwrap_or_else(|| case.doses.iter().map(|d| d.end()).fold(0.0, f64::max));
    let window_dose = case
        .doses
        .iter()
        .rposition(|d| d.t < t_ref)
        .unwrap_or(case.doses.len().saturating_sub(1));
    let c_ref = case
        .given()
        .ok()
        .map(|g| model::superpose(&g, k, v, t_ref))
        .filter(|c| c.is_finite() && *c > 0.0)
        .unwrap_or(1.0);
    let k_ci95 = spread.map(|s| s.interval(k, [1.0, 0.0]));
    let volume_method = match method {
        Method::Bayesian => VolumeMethod::Bayesian,
        Method::Population => VolumeMethod::Population,
        _ => VolumeMethod::DoseHistory,
    };
    Fit {
        method,
        used,
        window_dose,
        k,
        half_life_h: model::half_life(k),
        r_squared: None,
        se_k: spread.map(|s| k * s.se_ln_k()),
        k_ci95,
        half_life_ci95: k_ci95.map(|[lo, hi]| [model::half_life(hi), model::half_life(lo)]),
        ln_intercept: c_ref.ln() + k * t_ref,
        residuals: sol.residuals.clone(),
        volume_l: Some(v),
        volume_method: Some(volume_method),
        pre_dose_level: None,
        clearance_l_per_h: Some(k * v),
        warnings,
        spread,
        volume_ci95: spread.map(|s| s.interval(v, [0.0, 1.0])),
        clearance_ci95: spread.map(|s| s.interval(k * v, [1.0, 1.0])),
        population,
        two: None,
        param_spread: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::model::Route;

    #[test]
    fn exact_points_give_back_k_and_v() {
        let doses = [
            Administration {
                t: 0.0,
                amount_mg: 1000.0,
                route: Route::Infusion { hours: 1.0 },
            },
            Administration {
                t: 11.0,
                amount_mg: 750.0,
                route: Route::Infusion { hours: 1.5 },
            },
        ];
        let (k, v) = (0.09, 48.0);
        let points: Vec<(f64, f64)> = [2.0, 10.5, 14.0, 20.0]
            .iter()
            .map(|&t| (t, model::superpose(&doses, k, v, t)))
            .collect();
        let s = fit_points(&doses, &points).unwrap();
        assert!((s.k / k - 1.0).abs() < 1e-9, "{}", s.k);
        assert!((s.v / v - 1.0).abs() < 1e-9, "{}", s.v);
        let sp = s.spread.unwrap();
        assert!(sp.se_ln_k() < 1e-6 && sp.se_ln_v() < 1e-6);
    }

    #[test]
    fn refusals() {
        let doses = [Administration {
            t: 0.0,
            amount_mg: 100.0,
            route: Route::Bolus,
        }];
        assert_eq!(fit_points(&doses, &[(1.0, 2.0)]), Err(Failure::TooFew));
        assert_eq!(
            fit_points(&doses, &[(0.0, 2.0), (1.0, 1.0)]),
            Err(Failure::BeforeFirstDose)
        );
        assert_eq!(
            fit_points(&doses, &[(2.0, 2.0), (2.0, 1.0)]),
            Err(Failure::NotSeparable)
        );
        // Levels rising after a single bolus: no positive half-life explains them.
        assert_eq!(
            fit_points(&doses, &[(1.0, 1.0), (5.0, 2.0), (9.0, 4.0)]),
            Err(Failure::NoElimination)
        );
    }
}
