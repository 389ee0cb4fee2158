//! Choosing the fit method for a case, and the fit within one dosing interval: ordinary least
//! squares, the two-point and log-linear k, and the volume by Sawchuk-Zaske or the dose record.

use crate::core::bayes;
use crate::core::case::{Case, FitChoice};
use crate::core::error::{Error, Result};
pub use crate::core::fitted::{t975, window_of, Fit, Method, VolumeMethod};
use crate::core::history;
use crate::core::model::{self, one_minus_exp_neg};
use crate::core::warning::{Code, Warning};

/// A straight line y = intercept + slope·x fitted by ordinary least squares.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Line {
    /// Number of points.
    pub n: usize,
    /// Slope.
    pub slope: f64,
    /// Intercept at x = 0.
    pub intercept: f64,
    /// Standard error of the slope (NaN-free: 0 when n = 2).
    pub se_slope: f64,
    /// Standard error of the intercept.
    pub se_intercept: f64,
    /// Residual standard deviation sqrt(RSS/(n-2)) (0 when n = 2).
    pub residual_sd: f64,
    /// Coefficient of determination.
    pub r_squared: f64,
}

/// Ordinary least squares of `ys` on `xs` (two-pass, centred for accuracy).
/// `None` when there are fewer than two points or every x is the same.
pub fn ols(xs: &[f64], ys: &[f64]) -> Option<Line> {
    let n = xs.len();
    if n < 2 || ys.len() != n {
        return None;
    }
    let nf = n as f64;
    let mx = xs.iter().sum::<f64>() / nf;
    let my = ys.iter().sum::<f64>() / nf;
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for (x, y) in xs.iter().zip(ys) {
        let (dx, dy) = (x - mx, y - my);
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    if sxx <= 0.0 || !sxx.is_finite() {
        return None;
    }
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    let rss: f64 = xs
        .iter()
        .zip(ys)
        .map(|(x, y)| {
            let r = y - (intercept + slope * x);
            r * r
        })
        .sum();
    let (residual_sd, se_slope, se_intercept) = if n > 2 {
        let s2 = rss / (nf - 2.0);
        (
            s2.sqrt(),
            (s2 / sxx).sqrt(),
            (s2 * (1.0 / nf + mx * mx / sxx)).sqrt(),
        )
    } else {
        (0.0, 0.0, 0.0)
    };
    let r_squared = if syy > 0.0 { 1.0 - rss / syy } else { 1.0 };
    Some(Line {
        n,
        slope,
        intercept,
        se_slope,
        se_intercept,
        residual_sd,
        r_squared,
    })
}

/// The methods a case can ask for in `[fit] method`, in the order offered to users.
pub const CHOICES: [FitChoice; 4] = [
    FitChoice::LogLinear,
    FitChoice::DoseHistory,
    FitChoice::Bayesian,
    FitChoice::Population,
];

/// Fit the case by the method it asks for (`[fit] method`), or, when it names none: log-linear
/// when one dosing interval holds two used levels, else dose-history when two or more used
/// levels exist, else Bayesian when population priors are known, else the log-linear error.
///
/// # Errors
/// The chosen method's errors (each names the levels, rows or fields at fault).
pub fn fit(case: &Case) -> Result<Fit> {
    match case.fit_method {
        Some(FitChoice::LogLinear) => fit_log_linear(case),
        Some(FitChoice::DoseHistory) => history::fit(case),
        Some(FitChoice::Bayesian) => bayes::fit(case),
        Some(FitChoice::Population) => {
            let mut without = case.clone();
            for l in &mut without.levels {
                l.use_in_fit = false;
            }
            bayes::fit(&without)
        }
        None => {
            // Levels are in time order, so a window's levels are neighbours.
            let windows: Vec<usize> = case
                .levels
                .iter()
                .filter(|l| l.use_in_fit)
                .filter_map(|l| window_of(case, l.t))
                .collect();
            let usable = history::usable_levels(case).0.len();
            let doses_known = !case.doses.is_empty() && case.given().is_ok();
            if windows.windows(2).any(|w| w[0] == w[1]) {
                fit_log_linear(case)
            } else if usable >= 2 && doses_known {
                history::fit(case)
            } else if usable < 2 && (doses_known || usable == 0) && case.prior.is_some() {
                bayes::fit(case)
            } else if usable < 2 {
                let which = too_few_levels(case);
                Err(Error::invalid(
                    "level",
                    format!(
                        "{which}; a fit needs two levels (after one dose, or anywhere when every dose amount is known), or one level with a drug profile that has a population model"
                    ),
                ))
            } else {
                fit_log_linear(case)
            }
        }
    }
}

/// Which levels there are, in words, when fewer than two are marked for use; levels reported
/// below the assay's limit are named, since they are out of these fits without being unticked.
fn too_few_levels(case: &Case) -> String {
    let which = match case.levels.iter().position(|l| l.use_in_fit) {
        Some(i) => format!("only {} is marked for use", case.level_name(i)),
        None if case.levels.is_empty() => "the case has no levels yet".to_string(),
        None => "no level is marked for use".to_string(),
    };
    let below: Vec<String> = (0..case.levels.len())
        .filter(|&i| case.levels[i].below_limit)
        .map(|i| case.level_name(i))
        .collect();
    match below.len() {
        0 => which,
        n => format!(
            "{which} ({} {} reported below the assay's limit: only a Bayesian estimate, with a drug profile's population model, can use such a level)",
            below.join(", "),
            if n == 1 { "was" } else { "were" }
        ),
    }
}

/// Fit k (and V when the dose amounts are known) from the case's used levels, by the
/// two-point or log-linear fit of contract v1 within one dosing interval.
///
/// # Errors
/// Fewer than two used levels in any one window, or levels that do not fall.
pub fn fit_log_linear(case: &Case) -> Result<Fit> {
    let mut warnings = Vec::new();
    let used: Vec<usize> = (0..case.levels.len())
        .filter(|&i| case.levels[i].use_in_fit)
        .collect();
    if used.len() < 2 {
        let which = too_few_levels(case);
        return Err(Error::invalid(
            "level",
            format!("{which}; the fit needs at least two levels drawn after the same dose"),
        ));
    }
    // Group the used levels by window; take the latest window holding two or more.
    let mut windows: Vec<(usize, Vec<usize>)> = Vec::new();
    for &i in &used {
        match window_of(case, case.levels[i].t) {
            Some(w) => match windows.last_mut() {
                Some((lw, v)) if *lw == w => v.push(i),
                _ => windows.push((w, vec![i])),
            },
            None => warnings.push(Warning::about_level(Code::OutsideWindow, case.levels[i].row, format!(
                "{} was drawn during an infusion or at the first dose, so it is in no dosing window and is left out of the fit",
                case.level_name(i)
            ))),
        }
    }
    let Some((window, in_fit)) = windows.iter().rev().find(|(_, v)| v.len() >= 2).cloned() else {
        let names: Vec<String> = used.iter().map(|&i| case.level_name(i)).collect();
        return Err(Error::invalid(
            "level",
            format!(
                "no two used levels were drawn after the same dose ({}); the fit needs two in one dosing interval",
                names.join(", ")
            ),
        ));
    };

    let xs: Vec<f64> = in_fit.iter().map(|&i| case.levels[i].t).collect();
    let ys: Vec<f64> = in_fit.iter().map(|&i| case.levels[i].mg_l.ln()).collect();
    let line =
        ols(&xs, &ys).ok_or_else(|| Error::Fit("the fitted levels share one time".into()))?;
    let k = -line.slope;
    let names = in_fit
        .iter()
        .map(|&i| case.level_name(i))
        .collect::<Vec<_>>()
        .join(", ");
    if !(k.is_finite() && k > 0.0) {
        let values = in_fit
            .iter()
            .map(|&i| crate::core::format::written(case.levels[i].value))
            .collect::<Vec<_>>()
            .join(" then ");
        return Err(Error::invalid(
            "level",
            format!(
                "{names} do not fall ({values} {}): no elimination rate can be found; check the times and values, or untick a level",
                case.drug.scale.unit.as_str()
            ),
        ));
    }
    // Any rise between consecutive fitted levels is worth a word even when the slope falls.
    for w in in_fit.windows(2) {
        let (a, b) = (&case.levels[w[0]], &case.levels[w[1]]);
        if b.value >= a.value {
            warnings.push(Warning::about_level(Code::RisingLevels, b.row, format!(
                "level {} ({}) is not below level {} ({}) though drawn later: check the times, or a dose missing from the record",
                b.row, b.value, a.row, a.value
            )));
        }
    }
    let n = in_fit.len();
    let (method, r_squared, se_k, k_ci95, half_life_ci95) = if n == 2 {
        warnings.push(Warning::new(Code::NoInterval,
            "k comes from two levels: no interval can be given; a third level in the same interval would show how sure it is",
        ));
        (Method::TwoPoint, None, None, None, None)
    } else {
        let half = t975(n - 2) * line.se_slope;
        let (lo, hi) = (k - half, k + half);
        let hl = if lo > 0.0 {
            Some([model::half_life(hi), model::half_life(lo)])
        } else {
            warnings.push(Warning::new(Code::IntervalReachesZero, format!(
                "the 95 % interval of k reaches zero or below ({lo:.4} to {hi:.4} /h): the levels are too scattered to bound the half-life; times from the interval are not given"
            )));
            None
        };
        if line.r_squared < 0.9 {
            warnings.push(Warning::new(Code::Scatter, format!(
                "r² is {:.3}: the levels scatter about the fitted line; look for a timing or assay error",
                line.r_squared
            )));
        }
        (
            Method::LogLinear,
            Some(line.r_squared),
            Some(line.se_slope),
            Some([lo, hi]),
            hl,
        )
    };
    let residuals = xs
        .iter()
        .zip(&ys)
        .map(|(x, y)| y - (line.intercept + line.slope * x))
        .collect();

    let mut fit = Fit {
        method,
        used: in_fit,
        window_dose: window,
        k,
        half_life_h: model::half_life(k),
        r_squared,
        se_k,
        k_ci95,
        half_life_ci95,
        ln_intercept: line.intercept,
        residuals,
        volume_l: None,
        volume_method: None,
        pre_dose_level: None,
        clearance_l_per_h: None,
        warnings,
        spread: None,
        volume_ci95: None,
        clearance_ci95: None,
        population: None,
        two: None,
        param_spread: None,
    };
    volume(case, &mut fit);
    for (w, v) in &windows {
        if *w != window {
            for &i in v.iter().filter(|&&i| Some(i) != fit.pre_dose_level) {
                fit.warnings.push(Warning::about_level(Code::OtherDose, case.levels[i].row, format!(
                    "{} follows a different dose (dose {}) from the fitted levels and is not in the fit",
                    case.level_name(i),
                    case.doses[*w].row
                )));
            }
        }
    }
    Ok(fit)
}

/// Find V (and CL) by a pre-dose level or by the dose record, per contract v1.
fn volume(case: &Case, fit: &mut Fit) {
    let given = match case.given() {
        Ok(g) => g,
        Err(rows) => {
            let rows: Vec<String> = rows.iter().map(|r| format!("dose {r}")).collect();
            fit.warnings.push(Warning::new(Code::NoAmount, format!(
                "{} has no amount_mg: no volume, so peak, trough and AUC are not projected and the threshold runs from the fitted line",
                rows.join(", ")
            )));
            return;
        }
    };
    let w = fit.window_dose;
    let dose = &given[w];
    let k = fit.k;
    // A pre-dose level: drawn at or before the window's dose and after the previous dose's
    // window began (at or after its end of infusion). The latest one.
    let earliest = if w == 0 {
        dose.t
    } else {
        case.doses[w - 1].end()
    };
    let pre = (0..case.levels.len())
        .rev()
        .find(|&i| case.levels[i].t <= dose.t && case.levels[i].t >= earliest);
    let mut v = None;
    if let Some(i) = pre {
        let l = &case.levels[i];
        let c_pre = l.mg_l * (-k * (dose.t - l.t)).exp();
        let t_inf = dose.route.infusion_h();
        let (num, den) = if dose.route.absorption().is_some() {
            // Still absorbing: no level at the dose time to extrapolate to. At the first
            // fitted level the dose's own part of the fitted line is its Bateman response
            // over V, the pre-dose level decayed to then being the rest.
            let t1 = case.levels[fit.used[0]].t;
            (
                model::unit_response(dose.amount_mg, dose.route, k, t1 - dose.t).0,
                fit.line_mg_l(t1) - c_pre * (-k * (t1 - dose.t)).exp(),
            )
        } else if t_inf > 0.0 {
            let c_end = fit.line_mg_l(dose.end());
            (
                dose.amount_mg / t_inf * one_minus_exp_neg(k * t_inf),
                k * (c_end - c_pre * (-k * t_inf).exp()),
            )
        } else {
            let c0 = fit.line_mg_l(dose.t);
            (dose.route.bioavailability() * dose.amount_mg, c0 - c_pre)
        };
        let vol = num / den;
        if den > 0.0 && vol.is_finite() && vol > 0.0 {
            v = Some(vol);
            fit.volume_method = Some(VolumeMethod::PreDoseLevel);
            fit.pre_dose_level = Some(i);
            if !l.use_in_fit {
                // Contract v1 takes a pre-dose level for the volume whether used or not; say
                // so, since "use = false" reads as "left out of everything".
                fit.warnings.push(Warning::about_level(Code::UnusedLevelSetsVolume, l.row, format!(
                    "{} is marked use = false and is not in the fit of k, but as the pre-dose level of dose {} it still sets the volume (Sawchuk-Zaske), and with it the peak, trough and AUC; delete the row if it should not count at all",
                    case.level_name(i),
                    case.doses[w].row
                )));
            }
        } else {
            fit.warnings.push(Warning::about_level(Code::PreDoseLevel, case.levels[i].row, format!(
                "{} (pre-dose) is not below the fitted level after dose {}: the volume comes from the dose record instead",
                case.level_name(i),
                case.doses[w].row
            )));
        }
    }
    if v.is_none() {
        let t1 = case.levels[fit.used[0]].t;
        let s = model::superpose(&given, k, 1.0, t1);
        let vol = s / fit.line_mg_l(t1);
        if vol.is_finite() && vol > 0.0 {
            v = Some(vol);
            fit.volume_method = Some(VolumeMethod::DoseRecord);
        } else {
            fit.warnings.push(Warning::new(
                Code::NoVolume,
                "the volume could not be found from the dose record",
            ));
        }
    }
    fit.volume_l = v;
    fit.clearance_l_per_h = v.map(|v| v * k);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn t_quantile_matches_tables() {
        // Student t 0.975 quantiles: df 1 -> 12.706, df 10 -> 2.228 (any statistics table,
        // e.g. NIST/SEMATECH e-Handbook of Statistical Methods, table 1.4.7.2).
        assert!((t975(1) - 12.706).abs() < 1e-3);
        assert!((t975(10) - 2.228).abs() < 1e-3);
    }

    #[test]
    fn ols_exact_line() {
        let l = ols(&[0.0, 1.0, 2.0], &[1.0, 3.0, 5.0]).unwrap();
        assert!((l.slope - 2.0).abs() < 1e-12 && (l.intercept - 1.0).abs() < 1e-12);
        assert!(ols(&[1.0, 1.0], &[1.0, 2.0]).is_none());
    }
}
