//! Saturable (Michaelis-Menten) elimination, as for phenytoin: the steady-state algebra, the
//! albumin adjustment of a total level, the time course by numerical integration and the
//! fit of Vmax and Km to a dose record. Pure functions in mg, mg/L, L, hours and days.
//!
//! The model: dC/dt = input(t)/V − Vmax·C/(V·(Km + C)); at steady state on a daily dose
//! rate R (mg/day of the drug itself, after the salt factor and bioavailability)
//! R = Vmax·Css/(Km + Css), so Css = Km·R/(Vmax − R) while R < Vmax and there is no steady
//! state at or above Vmax.

/// Hours in a day: Vmax is per day, the time axis is in hours.
pub const HOURS_PER_DAY: f64 = 24.0;

/// The steady-state level (mg/L) on `r` mg/day, or `None` when `r` is at or above Vmax
/// (the level rises without limit).
pub fn ss_level(vmax_mg_per_day: f64, km_mg_l: f64, r_mg_per_day: f64) -> Option<f64> {
    (r_mg_per_day >= 0.0 && r_mg_per_day < vmax_mg_per_day)
        .then(|| km_mg_l * r_mg_per_day / (vmax_mg_per_day - r_mg_per_day))
}

/// The daily dose rate (mg/day) whose steady state is `c_mg_l`: R = Vmax·C/(Km + C).
pub fn rate_for_level(vmax_mg_per_day: f64, km_mg_l: f64, c_mg_l: f64) -> f64 {
    vmax_mg_per_day * c_mg_l / (km_mg_l + c_mg_l)
}

/// Vmax (mg/day) from one steady-state pair (R, C) with Km taken as known:
/// Vmax = R·(Km + C)/C.
pub fn vmax_from_one_level(r_mg_per_day: f64, c_mg_l: f64, km_mg_l: f64) -> f64 {
    r_mg_per_day * (km_mg_l + c_mg_l) / c_mg_l
}

/// Vmax and Km (mg/day, mg/L) from two steady-state pairs at two dose rates, by the algebra
/// of the Michaelis-Menten equation written as R = Vmax − Km·(R/C):
/// Km = (R2 − R1)/(R1/C1 − R2/C2), Vmax = R1 + Km·R1/C1.
/// `None` when the pairs cannot give a positive Km with Vmax above both rates (equal rates,
/// or a level that did not rise more than in proportion to the dose).
pub fn from_two_levels(r1: f64, c1: f64, r2: f64, c2: f64) -> Option<(f64, f64)> {
    let den = r1 / c1 - r2 / c2;
    let km = (r2 - r1) / den;
    let vmax = r1 + km * r1 / c1;
    (km.is_finite() && km > 0.0 && vmax.is_finite() && vmax > r1.max(r2)).then_some((vmax, km))
}

/// Days to reach 90 % of the steady state on `r` mg/day from a level of zero, by integrating
/// the Michaelis-Menten equation with a constant input: t = Km·V·(ln 10·Vmax − 0.9·R)/(Vmax − R)².
/// The bedside form rounds ln 10 to 2.3. `None` at or above Vmax.
pub fn days_to_90pct(vmax_mg_per_day: f64, km_mg_l: f64, volume_l: f64, r: f64) -> Option<f64> {
    (r >= 0.0 && r < vmax_mg_per_day).then(|| {
        km_mg_l * volume_l * (std::f64::consts::LN_10 * vmax_mg_per_day - 0.9 * r)
            / (vmax_mg_per_day - r).powi(2)
    })
}

/// Which albumin formula adjusts a total level.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AlbuminForm {
    /// C / (0.2·albumin + 0.1): normal renal function.
    Usual,
    /// C / (0.1·albumin + 0.1): renal failure.
    RenalFailure,
}

/// The coefficients of the Sheiner-Tozer (Winter-Tozer) adjustment: C_adj = C/(a·alb + b),
/// albumin in g/dL.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AlbuminRule {
    /// a with normal renal function (0.2).
    pub slope: f64,
    /// a in renal failure (0.1).
    pub slope_renal_failure: f64,
    /// b (0.1).
    pub intercept: f64,
}

impl AlbuminRule {
    /// The total level a patient with normal albumin binding would have (mg/L).
    pub fn adjust(&self, total_mg_l: f64, albumin_g_dl: f64, form: AlbuminForm) -> f64 {
        let a = match form {
            AlbuminForm::Usual => self.slope,
            AlbuminForm::RenalFailure => self.slope_renal_failure,
        };
        total_mg_l / (a * albumin_g_dl + self.intercept)
    }
}

/// One input into the body: an effective amount (mg of the drug itself reaching the
/// circulation) at `t`, entering at once (`hours` = 0) or at a constant rate over `hours`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Input {
    /// Start, hours on the case's axis.
    pub t: f64,
    /// mg of the drug itself reaching the circulation.
    pub amount_mg: f64,
    /// 0 for a bolus or an oral dose (absorption not modelled), else the infusion time.
    pub hours: f64,
}

/// The parameters of one patient's saturable elimination.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Kinetics {
    /// Maximum elimination rate, mg/day.
    pub vmax_mg_per_day: f64,
    /// Level at half the maximum rate, mg/L.
    pub km_mg_l: f64,
    /// Volume of distribution, L.
    pub volume_l: f64,
}

impl Kinetics {
    fn rhs(&self, c: f64, rate_mg_per_h: f64) -> f64 {
        let c = c.max(0.0);
        (rate_mg_per_h - self.vmax_mg_per_day / HOURS_PER_DAY * c / (self.km_mg_l + c))
            / self.volume_l
    }
}

// Dormand-Prince 5(4) coefficients (Dormand JR, Prince PJ, J Comput Appl Math 1980;6:19-26).
const A: [[f64; 6]; 7] = [
    [0.0; 6],
    [1.0 / 5.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
    [
        19372.0 / 6561.0,
        -25360.0 / 2187.0,
        64448.0 / 6561.0,
        -212.0 / 729.0,
        0.0,
        0.0,
    ],
    [
        9017.0 / 3168.0,
        -355.0 / 33.0,
        46732.0 / 5247.0,
        49.0 / 176.0,
        -5103.0 / 18656.0,
        0.0,
    ],
    [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
    ],
];
const B5: [f64; 7] = [
    35.0 / 384.0,
    0.0,
    500.0 / 1113.0,
    125.0 / 192.0,
    -2187.0 / 6784.0,
    11.0 / 84.0,
    0.0,
];
const B4: [f64; 7] = [
    5179.0 / 57600.0,
    0.0,
    7571.0 / 16695.0,
    393.0 / 640.0,
    -92097.0 / 339200.0,
    187.0 / 2100.0,
    1.0 / 40.0,
];

/// The most steps one call of [`course`] may take: a stiff course (a volume or Km so small
/// that the level changes in microseconds) gives NaN rather than running on.
pub const STEP_BUDGET: u32 = 100_000;

/// Integrate from `c` at `t0` to `t1` with a constant input rate (mg/h) by the adaptive
/// Dormand-Prince 5(4) pair, relative tolerance 1e-10; NaN when `budget` runs out.
fn step_span(k: &Kinetics, mut c: f64, t0: f64, t1: f64, rate: f64, budget: &mut u32) -> f64 {
    let mut t = t0;
    let mut h = ((t1 - t0) / 16.0).max(1e-9);
    while t < t1 {
        if *budget == 0 || !c.is_finite() {
            return f64::NAN;
        }
        *budget -= 1;
        if t + h > t1 {
            h = t1 - t;
        }
        let mut kk = [0.0; 7];
        for i in 0..7 {
            let ci = c + h * (0..i).map(|j| A[i][j] * kk[j]).sum::<f64>();
            kk[i] = k.rhs(ci, rate);
        }
        let c5 = c + h * (0..7).map(|i| B5[i] * kk[i]).sum::<f64>();
        let c4 = c + h * (0..7).map(|i| B4[i] * kk[i]).sum::<f64>();
        let scale = 1e-12 + 1e-10 * c.abs().max(c5.abs());
        let err = ((c5 - c4).abs() / scale).max(1e-300);
        if err <= 1.0 || h < 1e-9 {
            t += h;
            c = c5.max(0.0);
        }
        h *= (0.9 * err.powf(-0.2)).clamp(0.2, 5.0);
    }
    c
}

/// The level (mg/L) at each of `times` (any order) from the inputs, starting drug-free
/// before the first input (or from `c0` at `t0`, inputs before `t0` ignored). NaN from where
/// the course needs more than [`STEP_BUDGET`] steps (a stiff, implausible case).
///
/// One sweep over the sorted breakpoints: instant inputs by a pointer, the infusion rate by
/// a running sum of start and end events, so a long record costs O((inputs + times) log).
pub fn course(k: &Kinetics, inputs: &[Input], c0: f64, t0: f64, times: &[f64]) -> Vec<f64> {
    // Breakpoints: every input start and infusion end after t0, and every asked time.
    let mut marks: Vec<f64> = inputs
        .iter()
        .flat_map(|d| [d.t, d.t + d.hours])
        .chain(times.iter().copied())
        .filter(|&x| x > t0 && x.is_finite())
        .collect();
    marks.sort_by(f64::total_cmp);
    marks.dedup();
    // Instant inputs in time order; infusion rate changes (time, change in mg/h) in order.
    let mut instant: Vec<(f64, f64)> = inputs
        .iter()
        .filter(|d| d.hours == 0.0)
        .map(|d| (d.t, d.amount_mg))
        .collect();
    instant.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut events: Vec<(f64, f64)> = inputs
        .iter()
        .filter(|d| d.hours > 0.0)
        .flat_map(|d| {
            let rate = d.amount_mg / d.hours;
            [(d.t, rate), (d.t + d.hours, -rate)]
        })
        .collect();
    events.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut at: Vec<(f64, f64)> = Vec::with_capacity(marks.len());
    let (mut t, mut c) = (t0, c0);
    let mut budget = STEP_BUDGET;
    // Instant inputs at t0 itself count as given at t0.
    let mut next_instant = instant.partition_point(|d| d.0 < t0);
    while let Some(d) = instant.get(next_instant).filter(|d| d.0 == t0) {
        c += d.1 / k.volume_l;
        next_instant += 1;
    }
    let (mut next_event, mut rate, mut running) = (0, 0.0, 0usize);
    for &m in &marks {
        // The rate over [t, m): every infusion with start <= t < end.
        while let Some(e) = events.get(next_event).filter(|e| e.0 <= t) {
            rate += e.1;
            running = if e.1 > 0.0 {
                running + 1
            } else {
                running.saturating_sub(1)
            };
            next_event += 1;
        }
        if running == 0 {
            rate = 0.0; // no rounding left over once every infusion has ended
        }
        c = step_span(k, c, t, m, rate.max(0.0), &mut budget);
        t = m;
        // The level asked at an input's time is the level just before it.
        at.push((t, c));
        while let Some(d) = instant.get(next_instant).filter(|d| d.0 <= t) {
            if d.0 == t {
                c += d.1 / k.volume_l;
            }
            next_instant += 1;
        }
    }
    times
        .iter()
        .map(|&x| {
            if x <= t0 {
                return c0;
            }
            let i = at.partition_point(|p| p.0 < x);
            at.get(i).map_or(c, |p| p.1)
        })
        .collect()
}

/// Hours from `t0` (level `c0`, no further input) until the level is at or below `below`:
/// the fall under saturable elimination, found from the integrated equation
/// t = V·(Km·ln(C0/C) + C0 − C)/Vmax·24 (exact for no input).
pub fn hours_to_fall(k: &Kinetics, c0: f64, below: f64) -> f64 {
    if c0 <= below {
        return 0.0;
    }
    k.volume_l * (k.km_mg_l * (c0 / below).ln() + c0 - below) / k.vmax_mg_per_day * HOURS_PER_DAY
}

/// The result of fitting Vmax (and perhaps Km) to the levels of a dose record.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RecordFit {
    /// Fitted kinetics.
    pub kinetics: Kinetics,
    /// Whether Km was fitted (else held at the value given).
    pub km_fitted: bool,
    /// Root mean square of ln(measured/fitted).
    pub rms_log: f64,
}

fn first_t(inputs: &[Input]) -> f64 {
    inputs.iter().map(|d| d.t).fold(f64::INFINITY, f64::min) - 1e-9
}

/// Fit Vmax (and Km when `fit_km`) to the observed levels `obs` (hours, mg/L) of a dose
/// record by least squares on ln(level), starting from `start`. Levelberg-Marquardt with a
/// central-difference Jacobian in (ln Vmax, ln Km). `None` when the fit does not settle or
/// the levels cannot tell the parameters apart.
pub fn fit_record(
    start: &Kinetics,
    inputs: &[Input],
    obs: &[(f64, f64)],
    fit_km: bool,
) -> Option<RecordFit> {
    let np = if fit_km { 2 } else { 1 };
    if obs.len() < np || inputs.is_empty() {
        return None;
    }
    let make = |p: &[f64; 2]| Kinetics {
        vmax_mg_per_day: p[0].exp(),
        km_mg_l: if fit_km { p[1].exp() } else { start.km_mg_l },
        volume_l: start.volume_l,
    };
    let times: Vec<f64> = obs.iter().map(|o| o.0).collect();
    let t0 = first_t(inputs);
    let resid = |p: &[f64; 2]| -> Vec<f64> {
        let pred = course(&make(p), inputs, 0.0, t0, &times);
        obs.iter()
            .zip(pred)
            .map(|(o, c)| o.1.ln() - c.max(1e-12).ln())
            .collect()
    };
    let cost = |r: &[f64]| r.iter().map(|x| x * x).sum::<f64>();
    let mut p = [start.vmax_mg_per_day.ln(), start.km_mg_l.ln()];
    let mut r = resid(&p);
    let mut f = cost(&r);
    if !f.is_finite() {
        return None;
    }
    let mut lambda = 1e-3;
    let mut jtj_last = [[0.0; 2]; 2];
    for _ in 0..200 {
        // Jacobian of the residuals.
        let mut jac = vec![[0.0; 2]; obs.len()];
        for j in 0..np {
            let h = 1e-6;
            let (mut up, mut dn) = (p, p);
            up[j] += h;
            dn[j] -= h;
            let (ru, rd) = (resid(&up), resid(&dn));
            for i in 0..obs.len() {
                jac[i][j] = (ru[i] - rd[i]) / (2.0 * h);
            }
        }
        let mut jtj = [[0.0; 2]; 2];
        let mut jtr = [0.0; 2];
        for i in 0..obs.len() {
            for a in 0..np {
                jtr[a] += jac[i][a] * r[i];
                for b in 0..np {
                    jtj[a][b] += jac[i][a] * jac[i][b];
                }
            }
        }
        jtj_last = jtj;
        let mut improved = false;
        for _ in 0..30 {
            let mut m = jtj;
            for (a, row) in m.iter_mut().enumerate().take(np) {
                row[a] *= 1.0 + lambda;
                row[a] += 1e-12;
            }
            let delta = solve(&m, &jtr, np)?;
            let mut q = p;
            for a in 0..np {
                q[a] -= delta[a];
            }
            let rq = resid(&q);
            let fq = cost(&rq);
            if fq.is_finite() && fq < f {
                let small = (0..np).all(|a| delta[a].abs() < 1e-10);
                p = q;
                r = rq;
                let gain = f - fq;
                f = fq;
                lambda = (lambda / 3.0).max(1e-12);
                improved = true;
                if small || gain < 1e-16 {
                    return finish(&make(&p), fit_km, f, obs.len(), &jtj_last, np);
                }
                break;
            }
            lambda *= 4.0;
        }
        if !improved {
            break;
        }
    }
    finish(&make(&p), fit_km, f, obs.len(), &jtj_last, np)
}

fn finish(
    k: &Kinetics,
    fit_km: bool,
    f: f64,
    n: usize,
    jtj: &[[f64; 2]; 2],
    np: usize,
) -> Option<RecordFit> {
    // The levels must tell the parameters apart: a nearly singular normal matrix means
    // they cannot (two levels at one dose rate, both at steady state, fix only Vmax/Km).
    if np == 2 {
        let det = jtj[0][0] * jtj[1][1] - jtj[0][1] * jtj[1][0];
        let tr = jtj[0][0] + jtj[1][1];
        if det.is_nan() || det <= 1e-8 * tr * tr {
            return None;
        }
    } else if jtj[0][0].is_nan() || jtj[0][0] <= 1e-12 {
        return None;
    }
    let ok = f.is_finite()
        && k.vmax_mg_per_day.is_finite()
        && k.km_mg_l.is_finite()
        && (0.01..=1000.0).contains(&k.km_mg_l)
        && (1.0..=1e5).contains(&k.vmax_mg_per_day);
    ok.then(|| RecordFit {
        kinetics: *k,
        km_fitted: fit_km,
        rms_log: (f / n as f64).sqrt(),
    })
}

fn solve(m: &[[f64; 2]; 2], b: &[f64; 2], np: usize) -> Option<[f64; 2]> {
    if np == 1 {
        return (m[0][0] > 0.0).then(|| [b[0] / m[0][0], 0.0]);
    }
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    if det.abs() < 1e-300 || !det.is_finite() {
        return None;
    }
    Some([
        (b[0] * m[1][1] - m[0][1] * b[1]) / det,
        (m[0][0] * b[1] - m[1][0] * b[0]) / det,
    ])
}

/// The population values and spreads of a Bayesian (maximum a posteriori) estimate of Vmax
/// and Km: ln Vmax and ln Km are normal about the typical values with SDs `omega_*`
/// (uncorrelated), and ln(level) about ln(model level) with SD `sigma_log`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Prior {
    /// Typical Vmax for this patient (weight-scaled), mg/day.
    pub vmax_mg_per_day: f64,
    /// Typical Km, mg/L.
    pub km_mg_l: f64,
    /// Between-patient SD of ln Vmax (ω).
    pub omega_vmax: f64,
    /// Between-patient SD of ln Km (ω).
    pub omega_km: f64,
    /// Residual SD of ln(level) (an exponential error model).
    pub sigma_log: f64,
}

/// The SD on the log scale of a log-normal spread given as a coefficient of variation:
/// ω = √ln(1 + CV²).
pub fn log_sd_of_cv(cv: f64) -> f64 {
    (1.0 + cv * cv).ln().sqrt()
}

/// A Bayesian estimate: the kinetics at the minimum of the objective and the covariance of
/// (ln Vmax, ln Km) there (the Laplace approximation: the inverse of half the Hessian).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Posterior {
    /// Vmax and Km at the minimum (the volume as given).
    pub kinetics: Kinetics,
    /// Covariance of (ln Vmax, ln Km).
    pub cov_log: [[f64; 2]; 2],
    /// The objective at the minimum.
    pub objective: f64,
}

/// ln of each model level at the observed times, for x = (ln Vmax, ln Km) (tiny or missing
/// levels count as 1e-12 mg/L, a heavy penalty rather than a NaN).
fn log_predictions(x: &[f64], volume_l: f64, inputs: &[Input], times: &[f64]) -> Vec<f64> {
    let k = Kinetics {
        vmax_mg_per_day: x[0].exp(),
        km_mg_l: x[1].exp(),
        volume_l,
    };
    course(&k, inputs, 0.0, first_t(inputs), times)
        .into_iter()
        .map(|c| {
            if c.is_nan() {
                f64::NAN
            } else {
                c.max(1e-12).ln()
            }
        })
        .collect()
}

/// The Bayesian objective at x = (ln Vmax, ln Km) for levels `obs` (hours, mg/L) after
/// `inputs`, integrating the model over the whole record from no drug:
///
///   OBJ = Σ_j (ln y_j − ln ŷ_j)² / σ² + ((ln Vmax − ln Vmax_pop)/ω_Vmax)²
///         + ((ln Km − ln Km_pop)/ω_Km)²
///
/// (the documented form Σ[(y − ŷ)²/Var + ln Var] + ηᵀΩ⁻¹η with the residual on the log scale,
/// where Var is the constant σ² and its ln term drops out).
pub fn map_objective(
    prior: &Prior,
    volume_l: f64,
    inputs: &[Input],
    obs: &[(f64, f64)],
    x: &[f64],
) -> f64 {
    let times: Vec<f64> = obs.iter().map(|o| o.0).collect();
    let pred = log_predictions(x, volume_l, inputs, &times);
    let data: f64 = obs
        .iter()
        .zip(pred)
        .map(|(o, p)| ((o.1.ln() - p) / prior.sigma_log).powi(2))
        .sum();
    data + ((x[0] - prior.vmax_mg_per_day.ln()) / prior.omega_vmax).powi(2)
        + ((x[1] - prior.km_mg_l.ln()) / prior.omega_km).powi(2)
}

/// The covariance of (ln Vmax, ln Km) from the Hessian `h` of an objective that is −2 ln of
/// a density: (h/2)⁻¹. `None` unless it is positive definite.
fn laplace(h: &[Vec<f64>]) -> Option<[[f64; 2]; 2]> {
    let inv = crate::core::minimise::laplace_covariance(h)?;
    let c = [[inv[0][0], inv[0][1]], [inv[1][0], inv[1][1]]];
    let det = c[0][0] * c[1][1] - c[0][1] * c[1][0];
    (c[0][0] > 0.0 && c[1][1] > 0.0 && det > 0.0 && c.iter().flatten().all(|v| v.is_finite()))
        .then_some(c)
}

/// The Bayesian (maximum a posteriori) estimate of Vmax and Km from `obs` (hours, mg/L) after
/// `inputs`, with the volume held: the minimum of [`map_objective`] found by the damped Newton
/// of `minimise`, started at the typical values. With no level it is the prior itself, with
/// covariance diag(ω²). `None` when the objective is not finite or does not settle, or the
/// estimate is beyond any patient (Km outside 0.01–1000 mg/L, Vmax outside 1–100 000 mg/day).
pub fn fit_map(
    prior: &Prior,
    volume_l: f64,
    inputs: &[Input],
    obs: &[(f64, f64)],
) -> Option<Posterior> {
    let x0 = [prior.vmax_mg_per_day.ln(), prior.km_mg_l.ln()];
    if !(x0.iter().all(|v| v.is_finite())
        && prior.omega_vmax > 0.0
        && prior.omega_km > 0.0
        && prior.sigma_log > 0.0
        && volume_l > 0.0)
    {
        return None;
    }
    let kin = |x: &[f64]| Kinetics {
        vmax_mg_per_day: x[0].exp(),
        km_mg_l: x[1].exp(),
        volume_l,
    };
    if obs.is_empty() {
        return Some(Posterior {
            kinetics: kin(&x0),
            cov_log: [
                [prior.omega_vmax.powi(2), 0.0],
                [0.0, prior.omega_km.powi(2)],
            ],
            objective: 0.0,
        });
    }
    let f = |x: &[f64]| map_objective(prior, volume_l, inputs, obs, x);
    let m = crate::core::minimise::minimise(&f, &x0)?;
    let k = kin(&m.x);
    let ok = m.value.is_finite()
        && (0.01..=1000.0).contains(&k.km_mg_l)
        && (1.0..=1e5).contains(&k.vmax_mg_per_day);
    if !ok {
        return None;
    }
    Some(Posterior {
        kinetics: k,
        cov_log: laplace(&m.hessian)?,
        objective: m.value,
    })
}

/// The covariance of (ln Vmax, ln Km) of a fit to the levels alone (no prior), from the
/// curvature of Σ (ln y − ln ŷ)²/σ² at the fitted values: (H/2)⁻¹ = σ²(JᵀJ)⁻¹ near the
/// minimum. `None` when the levels cannot tell the two apart (not positive definite).
pub fn data_covariance(
    k: &Kinetics,
    inputs: &[Input],
    obs: &[(f64, f64)],
    sigma_log: f64,
) -> Option<[[f64; 2]; 2]> {
    let times: Vec<f64> = obs.iter().map(|o| o.0).collect();
    let f = |x: &[f64]| -> f64 {
        obs.iter()
            .zip(log_predictions(x, k.volume_l, inputs, &times))
            .map(|(o, p)| ((o.1.ln() - p) / sigma_log).powi(2))
            .sum()
    };
    let x = [k.vmax_mg_per_day.ln(), k.km_mg_l.ln()];
    laplace(&crate::core::minimise::hessian(&f, &x))
}

/// The two-sided 97.5 % normal quantile: 95 % ranges are ± this many SDs.
pub const Z95: f64 = 1.959_963_984_540_054;

/// The 95 % range of a function of (Vmax, Km) over the approximate posterior: its least and
/// greatest value on the ellipse (ln Vmax, ln Km) = centre + 1.96·L·(cos θ, sin θ), L the
/// Cholesky factor of `cov_log` (720 points, and the centre). For a linear function of the
/// logs this is exactly centre ± 1.96 SD; every function ranged here (Vmax, Km, a steady-state
/// level, the dose for a level) changes one way in each of Vmax and Km, so its extremes lie on
/// the ellipse. `f` may return +∞ (no steady state).
pub fn range95(
    vmax_mg_per_day: f64,
    km_mg_l: f64,
    cov_log: &[[f64; 2]; 2],
    f: &dyn Fn(f64, f64) -> f64,
) -> [f64; 2] {
    let mut lo = f(vmax_mg_per_day, km_mg_l);
    let mut hi = lo;
    for (v, k) in ellipse95(vmax_mg_per_day, km_mg_l, cov_log, 720) {
        let value = f(v, k);
        if value.is_nan() {
            continue;
        }
        lo = lo.min(value);
        hi = hi.max(value);
    }
    [lo, hi]
}

/// `count` (Vmax, Km) pairs evenly around the ellipse (ln Vmax, ln Km) = centre +
/// 1.96·L·(cos θ, sin θ), L the Cholesky factor of `cov_log`, from θ = 0.
pub fn ellipse95(
    vmax_mg_per_day: f64,
    km_mg_l: f64,
    cov_log: &[[f64; 2]; 2],
    count: u32,
) -> Vec<(f64, f64)> {
    let a = cov_log[0][0].max(0.0).sqrt();
    let b = if a > 0.0 { cov_log[0][1] / a } else { 0.0 };
    let c = (cov_log[1][1] - b * b).max(0.0).sqrt();
    let (x0, y0) = (vmax_mg_per_day.ln(), km_mg_l.ln());
    (0..count)
        .map(|i| {
            let th = f64::from(i) * 2.0 * std::f64::consts::PI / f64::from(count.max(1));
            let (u, v) = (Z95 * th.cos(), Z95 * th.sin());
            ((x0 + a * u).exp(), (y0 + b * u + c * v).exp())
        })
        .collect()
}

/// The steady-state level (mg/L) on `r` mg/day, +∞ at or above Vmax (for [`range95`]).
pub fn ss_level_or_inf(vmax_mg_per_day: f64, km_mg_l: f64, r_mg_per_day: f64) -> f64 {
    ss_level(vmax_mg_per_day, km_mg_l, r_mg_per_day).unwrap_or(f64::INFINITY)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_steady_state_of_the_reference_patient() {
        // Hand-worked from Css = Km·R/(Vmax − R) with Vm 415 mg/day and Km 5.7 mg/L
        // (Grasela TH et al., Clin Pharmacokinet 1983;8(4):355-364, PMID 6617043):
        // 250 mg/day -> 5.7·250/165 = 8.6364; 300 -> 5.7·300/115 = 14.870;
        // 350 -> 5.7·350/65 = 30.692 mg/L.
        for (r, want) in [
            (250.0, 8.636_363_6),
            (300.0, 14.869_565),
            (350.0, 30.692_308),
        ] {
            let c = ss_level(415.0, 5.7, r).unwrap();
            assert!((c - want).abs() < 1e-5, "{r}: {c}");
        }
        assert_eq!(ss_level(415.0, 5.7, 415.0), None);
        assert_eq!(ss_level(415.0, 5.7, 500.0), None);
    }

    #[test]
    fn two_levels_give_vmax_and_km_by_the_published_algebra() {
        // Hand-worked from Km = (R2 − R1)/(R1/C1 − R2/C2), Vmax = R1 + Km·R1/C1 (the
        // Michaelis-Menten equation written R = Vmax − Km·R/C, as in Ludden TM et al.,
        // Clin Pharmacol Ther 1977;21:287-293 — citation from memory, unverified):
        // R1 = 300 mg/day, C1 = 8 mg/L; R2 = 400 mg/day, C2 = 20 mg/L:
        // Km = 100/(37.5 − 20) = 5.714286 mg/L; Vmax = 300 + 5.714286·37.5 = 514.2857 mg/day.
        let (vmax, km) = from_two_levels(300.0, 8.0, 400.0, 20.0).unwrap();
        assert!((km - 5.714_285_7).abs() < 1e-6, "{km}");
        assert!((vmax - 514.285_714).abs() < 1e-5, "{vmax}");
        // Each pair is then its own steady state.
        assert!((ss_level(vmax, km, 300.0).unwrap() - 8.0).abs() < 1e-9);
        assert!((ss_level(vmax, km, 400.0).unwrap() - 20.0).abs() < 1e-9);
        // Same dose twice, or a level that rose less than in proportion: no answer.
        assert_eq!(from_two_levels(300.0, 8.0, 300.0, 9.0), None);
        assert_eq!(from_two_levels(300.0, 8.0, 400.0, 10.0), None);
    }

    #[test]
    fn one_level_with_a_population_km() {
        // Hand-worked: R 300 mg/day, C 10 mg/L, Km 5.7 -> Vmax = 300·15.7/10 = 471 mg/day.
        assert!((vmax_from_one_level(300.0, 10.0, 5.7) - 471.0).abs() < 1e-9);
        assert!((rate_for_level(471.0, 5.7, 10.0) - 300.0).abs() < 1e-9);
    }

    #[test]
    fn the_albumin_adjustment_by_its_published_formula() {
        // Sheiner-Tozer (Winter-Tozer): C_adj = C/(0.2·alb + 0.1), renal failure
        // C/(0.1·alb + 0.1), albumin in g/dL (the form re-examined in Ann Pharmacother
        // 2016;50(4):311-325, PMID 26825643). Hand-worked: 8 mg/L at 2.5 g/dL -> 8/0.6 =
        // 13.333 mg/L; in renal failure 8/0.35 = 22.857 mg/L.
        let rule = AlbuminRule {
            slope: 0.2,
            slope_renal_failure: 0.1,
            intercept: 0.1,
        };
        assert!((rule.adjust(8.0, 2.5, AlbuminForm::Usual) - 13.333_333).abs() < 1e-5);
        assert!((rule.adjust(8.0, 2.5, AlbuminForm::RenalFailure) - 22.857_143).abs() < 1e-5);
    }

    /// The same equation by fixed-step classical RK4 with a very fine step, written here
    /// apart from the code under test.
    fn rk4(k: &Kinetics, c0: f64, hours: f64, rate: f64) -> f64 {
        let f = |c: f64| (rate - k.vmax_mg_per_day / 24.0 * c / (k.km_mg_l + c)) / k.volume_l;
        let n = 200_000;
        let h = hours / n as f64;
        let mut c = c0;
        for _ in 0..n {
            let k1 = f(c);
            let k2 = f(c + h / 2.0 * k1);
            let k3 = f(c + h / 2.0 * k2);
            let k4 = f(c + h * k3);
            c += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
        }
        c
    }

    const PT: Kinetics = Kinetics {
        vmax_mg_per_day: 415.0,
        km_mg_l: 5.7,
        volume_l: 49.0,
    };

    #[test]
    fn the_integrated_course_matches_an_independent_rk4() {
        // A 1000 mg load over 1 h, then nothing for 47 h.
        let inputs = [Input {
            t: 0.0,
            amount_mg: 1000.0,
            hours: 1.0,
        }];
        let got = course(&PT, &inputs, 0.0, 0.0, &[1.0, 48.0]);
        let at1 = rk4(&PT, 0.0, 1.0, 1000.0);
        let at48 = rk4(&PT, at1, 47.0, 0.0);
        assert!((got[0] - at1).abs() < 1e-6, "{} vs {at1}", got[0]);
        assert!((got[1] - at48).abs() < 1e-6, "{} vs {at48}", got[1]);
        // Oral doses every 24 h for 10 days: jumps of 300/49 mg/L, then the fall.
        let daily: Vec<Input> = (0..10)
            .map(|d| Input {
                t: 24.0 * d as f64,
                amount_mg: 300.0,
                hours: 0.0,
            })
            .collect();
        let got = course(&PT, &daily, 0.0, -1.0, &[240.0, 250.0]);
        let mut c = 0.0;
        for _ in 0..10 {
            c = rk4(&PT, c + 300.0 / 49.0, 24.0, 0.0);
        }
        assert!((got[0] - c).abs() < 1e-6, "{} vs {c}", got[0]);
        assert!((got[1] - rk4(&PT, c, 10.0, 0.0)).abs() < 1e-6);
    }

    #[test]
    fn overlapping_infusions_and_a_bolus_match_rk4_piece_by_piece() {
        // 100 mg over 0-2 h, 200 mg over 1-3 h and 300 mg at once at 2 h: 50 mg/h, then
        // 150, then 100 (after the bolus), then nothing.
        let inputs = [
            Input {
                t: 1.0,
                amount_mg: 200.0,
                hours: 2.0,
            },
            Input {
                t: 2.0,
                amount_mg: 300.0,
                hours: 0.0,
            },
            Input {
                t: 0.0,
                amount_mg: 100.0,
                hours: 2.0,
            },
        ];
        let got = course(&PT, &inputs, 0.0, -1.0, &[2.0, 5.0, 1.5]);
        let c1 = rk4(&PT, 0.0, 1.0, 50.0);
        let c15 = rk4(&PT, c1, 0.5, 150.0);
        let c2 = rk4(&PT, c1, 1.0, 150.0);
        let c3 = rk4(&PT, c2 + 300.0 / 49.0, 1.0, 100.0);
        let c5 = rk4(&PT, c3, 2.0, 0.0);
        assert!((got[0] - c2).abs() < 1e-6, "{} vs {c2}", got[0]);
        assert!((got[1] - c5).abs() < 1e-6, "{} vs {c5}", got[1]);
        assert!((got[2] - c15).abs() < 1e-6, "{} vs {c15}", got[2]);
        // Started from a level at 1.5 h: the infusions still running carry on.
        let from = course(&PT, &inputs, c15, 1.5, &[5.0])[0];
        assert!((from - c5).abs() < 1e-6, "{from} vs {c5}");
    }

    #[test]
    fn a_stiff_course_stops_at_the_step_budget_with_nan() {
        // A volume of 7e-11 L (a weight typed as 1e-10 kg): the level changes in nanoseconds.
        let stiff = Kinetics {
            volume_l: 7e-11,
            ..PT
        };
        let inputs = [Input {
            t: 0.0,
            amount_mg: 1e-12,
            hours: 0.0,
        }];
        let c = course(&stiff, &inputs, 0.0, -1.0, &[1000.0]);
        assert!(c[0].is_nan() || c[0] >= 0.0);
        assert_eq!(fit_record(&stiff, &inputs, &[(1000.0, 1.0)], false), None);
    }

    #[test]
    fn the_fall_after_stopping_matches_the_integral() {
        let hours = hours_to_fall(&PT, 25.0, 10.0);
        let c = course(&PT, &[], 25.0, 0.0, &[hours])[0];
        assert!((c - 10.0).abs() < 1e-6, "{c}");
        assert_eq!(hours_to_fall(&PT, 5.0, 10.0), 0.0);
    }

    #[test]
    fn ninety_percent_of_steady_state_matches_the_integrated_course() {
        let r = 300.0;
        let days = days_to_90pct(415.0, 5.7, 49.0, r).unwrap();
        // Hand-worked: 5.7·49·(2.302585·415 − 270)/115² = 279.3·685.57/13225 = 14.479 days.
        assert!((days - 14.479).abs() < 0.001, "{days}");
        let c = rk4(&PT, 0.0, days * 24.0, r / 24.0);
        let css = ss_level(415.0, 5.7, r).unwrap();
        assert!((c / css - 0.9).abs() < 1e-6, "{}", c / css);
        assert_eq!(days_to_90pct(415.0, 5.7, 49.0, 415.0), None);
    }

    #[test]
    fn the_record_fit_recovers_the_parameters_of_noise_free_levels() {
        // 250 mg/day for 20 days, then 350 mg/day for 30 days; a level at the end of each.
        let mut inputs = Vec::new();
        for d in 0..50 {
            inputs.push(Input {
                t: 24.0 * d as f64,
                amount_mg: if d < 20 { 250.0 } else { 350.0 },
                hours: 0.0,
            });
        }
        let times = [24.0 * 20.0, 24.0 * 50.0, 24.0 * 45.0];
        let truth = PT;
        let obs = observed(&truth, &inputs, &times);
        let start = Kinetics {
            vmax_mg_per_day: 500.0,
            km_mg_l: 3.0,
            volume_l: 49.0,
        };
        let f = fit_record(&start, &inputs, &obs, true).unwrap();
        assert!((f.kinetics.vmax_mg_per_day - 415.0).abs() < 0.01, "{f:?}");
        assert!((f.kinetics.km_mg_l - 5.7).abs() < 0.001, "{f:?}");
        assert!(f.rms_log < 1e-6);
        // With Km held, Vmax alone from one level.
        let start = Kinetics {
            km_mg_l: 5.7,
            ..start
        };
        let f = fit_record(&start, &inputs, &obs[..1], false).unwrap();
        assert!((f.kinetics.vmax_mg_per_day - 415.0).abs() < 0.01, "{f:?}");
    }

    /// The exact levels of `truth` at `times` after `inputs`, from no drug on board.
    fn observed(truth: &Kinetics, inputs: &[Input], times: &[f64]) -> Vec<(f64, f64)> {
        times
            .iter()
            .zip(course(truth, inputs, 0.0, -1.0, times))
            .map(|(t, c)| (*t, c))
            .collect()
    }

    #[test]
    fn two_levels_at_one_steady_dose_cannot_identify_both() {
        let inputs: Vec<Input> = (0..60)
            .map(|d| Input {
                t: 24.0 * d as f64,
                amount_mg: 300.0,
                hours: 0.0,
            })
            .collect();
        let times = [24.0 * 59.0, 24.0 * 60.0];
        let obs = observed(&PT, &inputs, &times);
        let start = Kinetics {
            vmax_mg_per_day: 500.0,
            km_mg_l: 3.0,
            volume_l: 49.0,
        };
        assert_eq!(fit_record(&start, &inputs, &obs, true), None);
    }

    /// 250 mg/day for 20 days, then 350 mg/day for 30 days, oral (instant) doses at 0 h.
    fn two_dose_rates() -> Vec<Input> {
        (0..50)
            .map(|d| Input {
                t: 24.0 * d as f64,
                amount_mg: if d < 20 { 250.0 } else { 350.0 },
                hours: 0.0,
            })
            .collect()
    }

    /// The population of Grasela TH et al., Clin Pharmacokinet 1983;8(4):355-364 (PMID
    /// 6617043): Vm 415 mg/day for 70 kg, Km 5.7 mg/L, CV 20 % (the top of the 10-20 % the
    /// abstract gives) and 50 %; residual 17.1 % (Ku LC et al., Ther Drug Monit
    /// 2016;38(6):728-737, Table 2).
    fn grasela() -> Prior {
        Prior {
            vmax_mg_per_day: 415.0,
            km_mg_l: 5.7,
            omega_vmax: log_sd_of_cv(0.2),
            omega_km: log_sd_of_cv(0.5),
            sigma_log: log_sd_of_cv(0.171),
        }
    }

    /// Nelder-Mead on f from x0, written here apart from the code under test (reflection 1,
    /// expansion 2, contraction 1/2, shrink 1/2), until the simplex is smaller than 1e-11.
    fn nelder_mead(f: &dyn Fn(&[f64]) -> f64, x0: [f64; 2]) -> [f64; 2] {
        let mut s: Vec<([f64; 2], f64)> = [x0, [x0[0] + 0.05, x0[1]], [x0[0], x0[1] + 0.05]]
            .into_iter()
            .map(|x| (x, f(&x)))
            .collect();
        for _ in 0..20_000 {
            s.sort_by(|a, b| a.1.total_cmp(&b.1));
            let size = s
                .iter()
                .map(|p| (p.0[0] - s[0].0[0]).abs().max((p.0[1] - s[0].0[1]).abs()))
                .fold(0.0, f64::max);
            if size < 1e-11 {
                break;
            }
            let c = [(s[0].0[0] + s[1].0[0]) / 2.0, (s[0].0[1] + s[1].0[1]) / 2.0];
            let at = |t: f64| {
                let x = [c[0] + t * (s[2].0[0] - c[0]), c[1] + t * (s[2].0[1] - c[1])];
                (x, f(&x))
            };
            let r = at(-1.0);
            if r.1 < s[0].1 {
                let e = at(-2.0);
                s[2] = if e.1 < r.1 { e } else { r };
            } else if r.1 < s[1].1 {
                s[2] = r;
            } else {
                let k = if r.1 < s[2].1 { at(-0.5) } else { at(0.5) };
                if k.1 < s[2].1.min(r.1) {
                    s[2] = k;
                } else {
                    let best = s[0].0;
                    for p in s.iter_mut().skip(1) {
                        p.0 = [(p.0[0] + best[0]) / 2.0, (p.0[1] + best[1]) / 2.0];
                        p.1 = f(&p.0);
                    }
                }
            }
        }
        s.sort_by(|a, b| a.1.total_cmp(&b.1));
        s[0].0
    }

    #[test]
    fn the_bayesian_estimate_is_the_minimum_of_the_written_out_objective() {
        // One level and two levels on one rate (Vmax and Km not identified by the data) and
        // levels on two rates: the damped Newton agrees with Nelder-Mead on
        // OBJ = Σ (ln y − ln ŷ)²/σ² + ((ln Vmax − ln 415)/ω_V)² + ((ln Km − ln 5.7)/ω_K)²,
        // ŷ the integrated course.
        let inputs = two_dose_rates();
        let pr = grasela();
        let cases: [Vec<(f64, f64)>; 3] = [
            vec![(24.0 * 19.0, 9.5)],
            vec![(24.0 * 18.0, 9.0), (24.0 * 19.0, 9.5)],
            vec![(24.0 * 19.0, 9.5), (24.0 * 49.0, 26.0)],
        ];
        for obs in cases {
            let written = |x: &[f64]| -> f64 {
                let k = Kinetics {
                    vmax_mg_per_day: x[0].exp(),
                    km_mg_l: x[1].exp(),
                    volume_l: 49.0,
                };
                let times: Vec<f64> = obs.iter().map(|o| o.0).collect();
                let pred = course(&k, &inputs, 0.0, -1.0, &times);
                let data: f64 = obs
                    .iter()
                    .zip(pred)
                    .map(|(o, c)| ((o.1.ln() - c.ln()) / pr.sigma_log).powi(2))
                    .sum();
                data + ((x[0] - 415f64.ln()) / pr.omega_vmax).powi(2)
                    + ((x[1] - 5.7f64.ln()) / pr.omega_km).powi(2)
            };
            let nm = nelder_mead(&written, [415f64.ln(), 5.7f64.ln()]);
            let map = fit_map(&pr, 49.0, &inputs, &obs).unwrap();
            let got = [map.kinetics.vmax_mg_per_day.ln(), map.kinetics.km_mg_l.ln()];
            assert!(
                (got[0] - nm[0]).abs() < 1e-5 && (got[1] - nm[1]).abs() < 1e-5,
                "{obs:?}: {got:?} vs {nm:?}"
            );
            assert!((map.objective - written(&nm)).abs() < 1e-8);
        }
    }

    #[test]
    fn one_level_at_steady_state_gives_the_estimate_of_the_steady_state_equation() {
        // 300 mg/day as a constant infusion for 200 days (steady state, no swing) and one
        // level of 12 mg/L: the estimate over the integrated record equals the minimum of the
        // same objective with ŷ = Css = Km·R/(Vmax − R), found by Nelder-Mead here.
        let inputs: Vec<Input> = (0..200)
            .map(|d| Input {
                t: 24.0 * d as f64,
                amount_mg: 300.0,
                hours: 24.0,
            })
            .collect();
        let pr = grasela();
        let obs = [(24.0 * 200.0, 12.0)];
        let ss = |x: &[f64]| -> f64 {
            let (v, k) = (x[0].exp(), x[1].exp());
            let css = if v > 300.0 {
                k * 300.0 / (v - 300.0)
            } else {
                1e12
            };
            ((12f64.ln() - css.ln()) / pr.sigma_log).powi(2)
                + ((x[0] - 415f64.ln()) / pr.omega_vmax).powi(2)
                + ((x[1] - 5.7f64.ln()) / pr.omega_km).powi(2)
        };
        let nm = nelder_mead(&ss, [415f64.ln(), 5.7f64.ln()]);
        let map = fit_map(&pr, 49.0, &inputs, &obs).unwrap();
        assert!(
            (map.kinetics.vmax_mg_per_day.ln() - nm[0]).abs() < 1e-5,
            "{map:?} {nm:?}"
        );
        assert!(
            (map.kinetics.km_mg_l.ln() - nm[1]).abs() < 1e-5,
            "{map:?} {nm:?}"
        );
        // The estimate's own steady state lies between the prior's (14.87 mg/L, hand-worked
        // from 5.7·300/115 with Grasela 1983's values) and the level.
        let c = ss_level(map.kinetics.vmax_mg_per_day, map.kinetics.km_mg_l, 300.0).unwrap();
        assert!(c > 12.0 && c < 14.87, "{c}");
    }

    #[test]
    fn with_many_exact_levels_the_bayesian_estimate_approaches_the_truth() {
        // The truth lies well away from the prior (Vmax 500 mg/day, Km 3.5 mg/L).
        let truth = Kinetics {
            vmax_mg_per_day: 500.0,
            km_mg_l: 3.5,
            volume_l: 49.0,
        };
        let inputs = two_dose_rates();
        let error = |n: usize| {
            let times: Vec<f64> = (0..n)
                .map(|i| 12.0 + 1176.0 * i as f64 / (n - 1) as f64)
                .collect();
            let obs = observed(&truth, &inputs, &times);
            let m = fit_map(&grasela(), 49.0, &inputs, &obs).unwrap();
            (m.kinetics.vmax_mg_per_day / 500.0 - 1.0)
                .abs()
                .max((m.kinetics.km_mg_l / 3.5 - 1.0).abs())
        };
        let (few, many, more) = (error(2), error(20), error(200));
        assert!(many < few && more < many, "{few} {many} {more}");
        assert!(more < 0.005, "{more}");
    }

    #[test]
    fn a_level_that_carries_no_information_leaves_the_prior() {
        // No level: the prior itself. A level one minute after a first instant dose is D/V
        // whatever Vmax and Km are: the estimate and its spread stay those of the population.
        let pr = grasela();
        let dose = [Input {
            t: 0.0,
            amount_mg: 490.0,
            hours: 0.0,
        }];
        let none = fit_map(&pr, 49.0, &dose, &[]).unwrap();
        assert!((none.kinetics.vmax_mg_per_day - 415.0).abs() < 1e-9);
        assert!((none.kinetics.km_mg_l - 5.7).abs() < 1e-12);
        assert_eq!(none.cov_log[0][0], pr.omega_vmax.powi(2));
        let c = course(&PT, &dose, 0.0, -1.0, &[1.0 / 60.0])[0];
        let m = fit_map(&pr, 49.0, &dose, &[(1.0 / 60.0, c)]).unwrap();
        assert!(
            (m.kinetics.vmax_mg_per_day / 415.0 - 1.0).abs() < 1e-3,
            "{m:?}"
        );
        assert!((m.kinetics.km_mg_l / 5.7 - 1.0).abs() < 1e-3, "{m:?}");
        assert!(
            (m.cov_log[0][0] / pr.omega_vmax.powi(2) - 1.0).abs() < 0.01,
            "{m:?}"
        );
        assert!(
            (m.cov_log[1][1] / pr.omega_km.powi(2) - 1.0).abs() < 0.01,
            "{m:?}"
        );
    }

    #[test]
    fn the_range_of_vmax_alone_is_the_normal_range_of_its_log() {
        // For a function of one log parameter the ellipse gives exactly centre ± 1.96 SD.
        let cov: [[f64; 2]; 2] = [[0.04, 0.03], [0.03, 0.2]];
        let r = range95(400.0, 5.0, &cov, &|v, _| v.ln());
        assert!((r[0] - (400f64.ln() - Z95 * 0.2_f64)).abs() < 1e-5, "{r:?}");
        assert!((r[1] - (400f64.ln() + Z95 * 0.2)).abs() < 1e-5, "{r:?}");
        let r = range95(400.0, 5.0, &cov, &|_, k| k.ln());
        assert!(
            (r[1] - (5f64.ln() + Z95 * 0.2f64.sqrt())).abs() < 1e-5,
            "{r:?}"
        );
        // A dose whose range of Vmax reaches it has no upper end.
        let r = range95(400.0, 5.0, &cov, &|v, k| ss_level_or_inf(v, k, 300.0));
        assert!(r[0] > 0.0 && r[1].is_infinite(), "{r:?}");
        let r = range95(400.0, 5.0, &cov, &|v, k| ss_level_or_inf(v, k, 150.0));
        assert!(r[0] < ss_level(400.0, 5.0, 150.0).unwrap() && r[1].is_finite());
    }

    #[test]
    fn the_curvature_of_exact_levels_gives_the_covariance_of_a_linearised_fit() {
        // σ²(JᵀJ)⁻¹ with J the derivatives of ln ŷ by (ln Vmax, ln Km), by differences here.
        let inputs = two_dose_rates();
        let times = [24.0 * 20.0, 24.0 * 50.0];
        let obs = observed(&PT, &inputs, &times);
        let cov = data_covariance(&PT, &inputs, &obs, 0.17).unwrap();
        let h = 1e-5;
        let d = |dv: f64, dk: f64| -> Vec<f64> {
            let k = Kinetics {
                vmax_mg_per_day: 415.0 * dv.exp(),
                km_mg_l: 5.7 * dk.exp(),
                volume_l: 49.0,
            };
            course(&k, &inputs, 0.0, -1.0, &times)
                .iter()
                .map(|c| c.ln())
                .collect()
        };
        let (vu, vd, ku, kd) = (d(h, 0.0), d(-h, 0.0), d(0.0, h), d(0.0, -h));
        let j: Vec<[f64; 2]> = (0..2)
            .map(|i| [(vu[i] - vd[i]) / (2.0 * h), (ku[i] - kd[i]) / (2.0 * h)])
            .collect();
        let a = j.iter().map(|r| r[0] * r[0]).sum::<f64>();
        let b = j.iter().map(|r| r[0] * r[1]).sum::<f64>();
        let c = j.iter().map(|r| r[1] * r[1]).sum::<f64>();
        let det = a * c - b * b;
        let want = [0.17f64.powi(2) * c / det, 0.17f64.powi(2) * a / det];
        assert!((cov[0][0] / want[0] - 1.0).abs() < 1e-3, "{cov:?} {want:?}");
        assert!((cov[1][1] / want[1] - 1.0).abs() < 1e-3, "{cov:?} {want:?}");
    }

    mod properties {
        use super::super::*;
        use proptest::prelude::*;

        proptest! {
            #[test]
            fn the_steady_state_rises_with_the_dose_and_the_dose_for_it_inverts_it(
                vmax in 200.0f64..900.0, km in 1.0f64..20.0, f1 in 0.05f64..0.95, df in 0.001f64..0.04,
            ) {
                let r1 = vmax * f1;
                let r2 = vmax * (f1 + df).min(0.99);
                let c1 = ss_level(vmax, km, r1).unwrap();
                let c2 = ss_level(vmax, km, r2).unwrap();
                prop_assert!(c2 > c1);
                let back = rate_for_level(vmax, km, c1);
                prop_assert!((back - r1).abs() <= 1e-9 * r1.max(1.0));
            }

            #[test]
            fn the_95_percent_ranges_hold_the_estimate_and_widen_with_the_spread(
                vmax in 200.0f64..900.0, km in 1.0f64..20.0, f1 in 0.05f64..0.95,
                sv in 0.01f64..0.5, sk in 0.01f64..1.0, rho in -0.9f64..0.9,
            ) {
                let cov = [[sv * sv, rho * sv * sk], [rho * sv * sk, sk * sk]];
                let r = vmax * f1;
                let css = ss_level(vmax, km, r).unwrap();
                let f = |v: f64, k: f64| ss_level_or_inf(v, k, r);
                let [lo, hi] = range95(vmax, km, &cov, &f);
                prop_assert!(lo < css && css < hi);
                // Twice the spread: a range at least as wide at both ends.
                let wide = [[4.0 * cov[0][0], 4.0 * cov[0][1]], [4.0 * cov[1][0], 4.0 * cov[1][1]]];
                let [lo2, hi2] = range95(vmax, km, &wide, &f);
                prop_assert!(lo2 <= lo * (1.0 + 1e-12) && hi2 >= hi * (1.0 - 1e-12));
                // Vmax alone: exactly exp(ln Vmax ± 1.96 SD), up to the 720-point ellipse.
                let [a, b] = range95(vmax, km, &cov, &|v, _| v);
                prop_assert!((a.ln() - (vmax.ln() - Z95 * sv)).abs() < 1e-4 * sv.max(1e-3));
                prop_assert!((b.ln() - (vmax.ln() + Z95 * sv)).abs() < 1e-4 * sv.max(1e-3));
            }
        }
    }
}
