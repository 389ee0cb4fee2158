//! The linear one-compartment model: single-dose responses and their superposition.
//!
//! Concentrations here are in mg/L, times in hours, volumes in litres, doses in mg.

/// First-order absorption from the gut: the rate constant ka and an optional lag time. The
/// gut holds F x dose from the end of the lag and empties into the blood at ka x what it holds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Absorption {
    /// Absorption rate constant, 1/h (> 0).
    pub ka_per_h: f64,
    /// Hours from the dose to the start of absorption (>= 0).
    pub lag_h: f64,
}

/// How a dose enters the body.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Route {
    /// Intravenous push: all at once.
    Bolus,
    /// Constant-rate infusion over `hours`.
    Infusion {
        /// Duration of the infusion in hours (> 0).
        hours: f64,
    },
    /// By mouth: F x dose absorbed first-order with `absorption`, or, when no ka is known,
    /// treated as a bolus of F x dose at the dose time (the documented fallback).
    Oral {
        /// Bioavailability F, in (0, 1].
        f: f64,
        /// First-order absorption, when ka is known (the drug profile's formulation).
        absorption: Option<Absorption>,
    },
}

impl Route {
    /// An oral dose with bioavailability `f` and no known absorption (the instant fallback).
    pub fn oral(f: f64) -> Route {
        Route::Oral {
            f,
            absorption: None,
        }
    }

    /// An oral dose with bioavailability `f` absorbed first-order at `ka_per_h` after `lag_h`.
    pub fn oral_absorbed(f: f64, ka_per_h: f64, lag_h: f64) -> Route {
        Route::Oral {
            f,
            absorption: Some(Absorption { ka_per_h, lag_h }),
        }
    }

    /// Infusion duration in hours (0 for bolus and oral).
    pub fn infusion_h(&self) -> f64 {
        match self {
            Route::Infusion { hours } => *hours,
            _ => 0.0,
        }
    }

    /// Fraction of the dose that reaches the circulation.
    pub fn bioavailability(&self) -> f64 {
        match self {
            Route::Oral { f, .. } => *f,
            _ => 1.0,
        }
    }

    /// The first-order absorption of an oral dose, when ka is known.
    pub fn absorption(&self) -> Option<Absorption> {
        match self {
            Route::Oral { absorption, .. } => *absorption,
            _ => None,
        }
    }

    /// Whether this is an oral dose whose absorption is not known (modelled as instant).
    pub fn is_instant_oral(&self) -> bool {
        matches!(
            self,
            Route::Oral {
                absorption: None,
                ..
            }
        )
    }

    /// The case-file spelling of the route.
    pub fn name(&self) -> &'static str {
        match self {
            Route::Bolus => "bolus",
            Route::Infusion { .. } => "infusion",
            Route::Oral { .. } => "oral",
        }
    }
}

/// One dose on the model's time axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Administration {
    /// Start time in hours on the case's axis.
    pub t: f64,
    /// Amount in mg.
    pub amount_mg: f64,
    /// Route.
    pub route: Route,
}

impl Administration {
    /// When the dose has fully entered (end of infusion; the dose time otherwise). For an
    /// absorbed oral dose this is the dose time too: dosing windows and washout count from it.
    pub fn end(&self) -> f64 {
        self.t + self.route.infusion_h()
    }
}

/// 1 - e^(-x), accurate for small x.
pub fn one_minus_exp_neg(x: f64) -> f64 {
    -(-x).exp_m1()
}

/// The rise of a unit-rate infusion after `s` hours, (1 − e^(−k·s))/k, and its derivative in
/// k; near k·s = 0 a series (whose limit is s), so a very long half-life loses no digits.
/// This is the one small-k rule of the model.
pub fn rise(k: f64, s: f64) -> (f64, f64) {
    let x = k * s;
    if x.abs() < 1e-5 {
        (
            s * (1.0 - x / 2.0 + x * x / 6.0 - x * x * x / 24.0),
            s * s * (-0.5 + x / 3.0 - x * x / 8.0),
        )
    } else {
        let g = one_minus_exp_neg(x) / k;
        (g, (s * (-x).exp() - g) / k)
    }
}

/// The Bateman kernel (e^(−k·u) − e^(−ka·u))/(ka − k) for `u` hours of absorption, and its
/// derivative in k (ka held). It is symmetric in k and ka, so it is computed as
/// e^(−m·u)·(1 − e^(−d·u))/d with m the smaller rate and d = |ka − k| ≥ 0, the second factor
/// by `rise` (the small-k rule): no difference of nearly equal numbers when ka ≈ k (the limit
/// is u·e^(−k·u)), and nothing overflows in flip-flop (ka < k).
pub fn bateman(k: f64, ka: f64, u: f64) -> (f64, f64) {
    if u <= 0.0 {
        return (0.0, 0.0);
    }
    if ka >= k {
        let (g, dg) = rise(ka - k, u);
        let e = (-k * u).exp();
        (e * g, -e * (u * g + dg))
    } else {
        let (g, dg) = rise(k - ka, u);
        let e = (-ka * u).exp();
        (e * g, e * dg)
    }
}

/// The single-dose response: concentration (mg/L) with a volume of 1 L, `s` hours after the
/// start of a dose of `amount_mg` by `route`, and its derivative in k. Zero for `s <= 0`: a
/// level drawn at a dose time is a pre-dose level. Every concentration of the model, and of
/// the fits, is built from this one function.
///
/// The one-compartment disposition is one exponential mode, e^(−k·t) per litre; each route is
/// an input into it: at once (bolus), at a constant rate (infusion), or from the gut at
/// ka x what it holds (oral with absorption: F·D·ka·(e^(−k·u) − e^(−ka·u))/(ka − k), u the
/// hours since the lag ended). A disposition of several modes (two compartments) adds one
/// such term per mode.
pub fn unit_response(amount_mg: f64, route: Route, k: f64, s: f64) -> (f64, f64) {
    if s <= 0.0 {
        return (0.0, 0.0);
    }
    match route {
        Route::Oral {
            f,
            absorption: Some(a),
        } => {
            let (b, db) = bateman(k, a.ka_per_h, s - a.lag_h);
            let scale = f * amount_mg * a.ka_per_h;
            (scale * b, scale * db)
        }
        Route::Bolus | Route::Oral { .. } => {
            let c = route.bioavailability() * amount_mg * (-k * s).exp();
            (c, -s * c)
        }
        Route::Infusion { hours } => {
            let r0 = amount_mg / hours;
            if s <= hours {
                let (g, dg) = rise(k, s);
                (r0 * g, r0 * dg)
            } else {
                let (g, dg) = rise(k, hours);
                let after = s - hours;
                let e = (-k * after).exp();
                (r0 * g * e, r0 * e * (dg - after * g))
            }
        }
    }
}

/// Concentration (mg/L) `s` hours after the start of one dose, for rate constant `k` (1/h)
/// and volume `v` (L). Zero for `s <= 0`: a level drawn at a dose time is a pre-dose level.
pub fn single_dose(amount_mg: f64, route: Route, k: f64, v: f64, s: f64) -> f64 {
    unit_response(amount_mg, route, k, s).0 / v
}

/// Hours from the end of the lag to the peak of one absorbed dose with nothing else on
/// board: ln(ka/k)/(ka − k), whose limit when ka = k is 1/k (computed as
/// ln(1 + (ka − k)/k)/(ka − k), which loses no digits near the limit).
pub fn single_peak_after_lag(k: f64, ka: f64) -> f64 {
    let d = ka - k;
    if d == 0.0 {
        1.0 / k
    } else {
        (d / k).ln_1p() / d
    }
}

/// Hours after the start of one dose at which its peak falls with no drug on board: the end
/// of the infusion; the dose time for a bolus and an instant oral dose; the lag plus
/// `single_peak_after_lag` for an absorbed oral dose.
pub fn single_peak_time(route: Route, k: f64) -> f64 {
    match route.absorption() {
        Some(a) => a.lag_h + single_peak_after_lag(k, a.ka_per_h),
        None => route.infusion_h(),
    }
}

/// The peak (mg/L) one dose gives with no drug on board: at the end of the infusion, just
/// after a bolus or an instant oral dose, at `single_peak_time` for an absorbed oral dose.
pub fn single_peak(amount_mg: f64, route: Route, k: f64, v: f64) -> f64 {
    match route {
        Route::Infusion { hours } => amount_mg / hours * rise(k, hours).0 / v,
        Route::Oral {
            f,
            absorption: Some(a),
        } => {
            let u = single_peak_after_lag(k, a.ka_per_h);
            f * amount_mg * a.ka_per_h * bateman(k, a.ka_per_h, u).0 / v
        }
        r => r.bioavailability() * amount_mg / v,
    }
}

/// The accumulation factor of a regimen repeated every `tau` hours: 1/(1 − e^(−k·tau)).
pub fn accumulation_factor(k: f64, tau: f64) -> f64 {
    1.0 / one_minus_exp_neg(k * tau)
}

/// Concentration (mg/L) at time `t` from every dose given before it.
pub fn superpose<'a>(
    doses: impl IntoIterator<Item = &'a Administration>,
    k: f64,
    v: f64,
    t: f64,
) -> f64 {
    doses
        .into_iter()
        .map(|d| single_dose(d.amount_mg, d.route, k, v, t - d.t))
        .sum()
}

/// When a dose joins the running sums of the forward pass: the end of an infusion, the end
/// of the lag of an absorbed oral dose (it joins the gut), the dose time otherwise.
fn joins_at(d: &Administration) -> f64 {
    match d.route.absorption() {
        Some(a) => d.t + a.lag_h,
        None => d.end(),
    }
}

/// A dose record laid out for evaluating the model at many times in one forward pass.
///
/// The state is a sum of exponentials: the amount per litre in the disposition's one mode
/// (with its derivative in k), which decays with k, and one gut store per absorption rate,
/// which decays with its ka and feeds the mode. Doses join the state once they have fully
/// entered (an infusion at its end, an absorbed oral dose at the end of its lag, into its
/// gut store); only infusions still running are added one by one. Stepping the state over
/// Δt is exact: the mode keeps e^(−k·Δt) of itself and receives ka·G·bateman(k, ka, Δt)
/// from a gut store G. Cost O(doses + times) per pass once the times are in order, instead
/// of O(doses x times) for `superpose` at each time.
#[derive(Debug, Clone)]
pub struct Schedule<'a> {
    doses: &'a [Administration],
    /// Doses by the time they join the running sums (`joins_at`).
    by_entry: Vec<usize>,
    /// Infusions by start time.
    infusions: Vec<usize>,
}

/// A gut store of the forward pass: its absorption rate and the amount per litre it holds.
#[derive(Debug, Clone, Copy)]
struct Gut {
    ka: f64,
    held: f64,
}

impl<'a> Schedule<'a> {
    /// Lay out `doses` (in any order).
    pub fn new(doses: &'a [Administration]) -> Self {
        let mut by_entry: Vec<usize> = (0..doses.len()).collect();
        by_entry.sort_by(|&a, &b| joins_at(&doses[a]).total_cmp(&joins_at(&doses[b])));
        let mut infusions: Vec<usize> = (0..doses.len())
            .filter(|&i| matches!(doses[i].route, Route::Infusion { .. }))
            .collect();
        infusions.sort_by(|&a, &b| doses[a].t.total_cmp(&doses[b].t));
        Schedule {
            doses,
            by_entry,
            infusions,
        }
    }

    /// The doses, as given.
    pub fn doses(&self) -> &'a [Administration] {
        self.doses
    }

    /// The summed single-dose responses with a volume of 1 L at each time of `ts` (any order),
    /// each with its derivative in k: the same figures as `unit_response` summed over every
    /// dose, in one pass forward in time.
    pub fn unit_levels(&self, k: f64, ts: &[f64]) -> Vec<(f64, f64)> {
        let mut order: Vec<usize> = (0..ts.len()).collect();
        if !ts.windows(2).all(|w| w[0] <= w[1]) {
            order.sort_by(|&a, &b| ts[a].total_cmp(&ts[b]));
        }
        let mut out = vec![(0.0, 0.0); ts.len()];
        // The mode: m per litre and dm = ∂m/∂k; the gut stores (ka held, so ∂G/∂k = 0).
        let (mut m, mut dm) = (0.0, 0.0);
        let mut guts: Vec<Gut> = Vec::new();
        let mut now = f64::NEG_INFINITY;
        let mut advance = |m: &mut f64, dm: &mut f64, guts: &mut [Gut], to: f64| {
            if to > now {
                if now.is_finite() {
                    let dt = to - now;
                    let e = (-k * dt).exp();
                    *dm = (*dm - dt * *m) * e;
                    *m *= e;
                    for g in guts.iter_mut().filter(|g| g.held != 0.0) {
                        let (b, db) = bateman(k, g.ka, dt);
                        *m += g.ka * g.held * b;
                        *dm += g.ka * g.held * db;
                        g.held *= (-g.ka * dt).exp();
                    }
                }
                now = to;
            }
        };
        let (mut next_entry, mut next_infusion) = (0, 0);
        let mut running: Vec<usize> = Vec::new();
        for &j in &order {
            let t = ts[j];
            // Doses that joined before t (a bolus at t itself is not yet given; an infusion
            // ending at t is still counted as running, with the same value; an absorbed dose
            // whose lag ends at t has given nothing yet).
            while let Some(&i) = self.by_entry.get(next_entry) {
                let d = &self.doses[i];
                let at = joins_at(d);
                if at >= t {
                    break;
                }
                advance(&mut m, &mut dm, &mut guts, at);
                match d.route {
                    Route::Infusion { hours } => {
                        let (g, dg) = rise(k, hours);
                        m += d.amount_mg / hours * g;
                        dm += d.amount_mg / hours * dg;
                    }
                    Route::Oral {
                        f,
                        absorption: Some(a),
                    } => {
                        let amount = f * d.amount_mg;
                        match guts.iter_mut().find(|g| g.ka == a.ka_per_h) {
                            Some(g) => g.held += amount,
                            None => guts.push(Gut {
                                ka: a.ka_per_h,
                                held: amount,
                            }),
                        }
                    }
                    r => m += r.bioavailability() * d.amount_mg,
                }
                next_entry += 1;
            }
            advance(&mut m, &mut dm, &mut guts, t);
            while let Some(&i) = self.infusions.get(next_infusion) {
                if self.doses[i].t >= t {
                    break;
                }
                running.push(i);
                next_infusion += 1;
            }
            running.retain(|&i| self.doses[i].end() >= t);
            let (mut c, mut dc) = (m, dm);
            for &i in &running {
                let d = &self.doses[i];
                let (x, dx) = unit_response(d.amount_mg, d.route, k, t - d.t);
                c += x;
                dc += dx;
            }
            out[j] = (c, dc);
        }
        out
    }

    /// Concentrations (mg/L) at each time of `ts` for rate constant `k` and volume `v`.
    pub fn levels(&self, k: f64, v: f64, ts: &[f64]) -> Vec<f64> {
        self.unit_levels(k, ts)
            .into_iter()
            .map(|(c, _)| c / v)
            .collect()
    }
}

/// Steady-state figures of a regimen repeated every `tau` hours.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SteadyState {
    /// 1/(1 - e^(-k·tau)).
    pub accumulation_factor: f64,
    /// The highest level of the interval, mg/L: at the end of the infusion, just after a
    /// bolus or an instant oral dose, at `peak_after_h` for an absorbed oral dose.
    pub peak_mg_l: f64,
    /// Hours after the start of a dose at which `peak_mg_l` falls.
    pub peak_after_h: f64,
    /// Trough just before the next dose, mg/L.
    pub trough_mg_l: f64,
    /// Area under the curve over 24 h at steady state, mg·h/L.
    pub auc24_mg_h_l: f64,
}

/// The steady-state sum of the Bateman kernel over every earlier dose,
/// Σₙ (e^(−k·(u+nτ)) − e^(−ka·(u+nτ)))/(ka − k) for n ≥ 0 and 0 ≤ u < τ, written with m the
/// smaller of k and ka, M the larger and d = M − m as
/// e^(−m·u)·[g(u)/(1 − e^(−M·τ)) + e^(−m·τ)·g(τ)/((1 − e^(−m·τ))·(1 − e^(−M·τ)))],
/// g(x) = (1 − e^(−d·x))/d by `rise`: a sum of positive terms, exact as ka → k.
pub fn steady_bateman(k: f64, ka: f64, tau: f64, u: f64) -> f64 {
    let (lo, hi) = if ka >= k { (k, ka) } else { (ka, k) };
    let d = hi - lo;
    let (gu, _) = rise(d, u);
    let (gt, _) = rise(d, tau);
    let one_hi = one_minus_exp_neg(hi * tau);
    let one_lo = one_minus_exp_neg(lo * tau);
    (-lo * u).exp() * (gu / one_hi + (-lo * tau).exp() * gt / (one_lo * one_hi))
}

/// Hours from the end of the lag to the steady-state peak of an absorbed oral regimen:
/// ln(ka·(1 − e^(−k·τ))/(k·(1 − e^(−ka·τ))))/(ka − k), computed as
/// [ln(1 + (ka − k)/k) − ln(1 + (e^(−k·τ) − e^(−ka·τ))/(1 − e^(−k·τ)))]/(ka − k), whose limit
/// at ka = k is 1/k − τ/(e^(k·τ) − 1). It always lies inside (0, τ).
pub fn steady_peak_after_lag(k: f64, ka: f64, tau: f64) -> f64 {
    let d = ka - k;
    if d == 0.0 {
        return 1.0 / k - tau / (k * tau).exp_m1();
    }
    let mut x = (-k * tau).exp() * one_minus_exp_neg(d * tau) / one_minus_exp_neg(k * tau);
    if !x.is_finite() {
        // ka far below k: e^(−(ka − k)·τ) overflows. The same x as the difference
        // (e^(−k·τ) − e^(−ka·τ))/(1 − e^(−k·τ)), where e^(−k·τ) only underflows to 0.
        x = ((-k * tau).exp() - (-ka * tau).exp()) / one_minus_exp_neg(k * tau);
    }
    ((d / k).ln_1p() - x.ln_1p()) / d
}

/// The steady-state level (mg/L) `s` hours after the start of a dose (0 ≤ s ≤ tau) of
/// `amount_mg` by `route` every `tau` hours. At s = 0 a bolus or an instant oral dose counts
/// as just given (its peak); s = tau is the trough before the next dose.
pub fn steady_level(amount_mg: f64, route: Route, tau: f64, k: f64, v: f64, s: f64) -> f64 {
    let acc = accumulation_factor(k, tau);
    match route {
        Route::Oral {
            f,
            absorption: Some(a),
        } => {
            let u = (s - a.lag_h).rem_euclid(tau);
            f * amount_mg * a.ka_per_h * steady_bateman(k, a.ka_per_h, tau, u) / v
        }
        Route::Infusion { hours } => {
            let peak = single_peak(amount_mg, route, k, v) * acc;
            if s <= hours {
                let trough = peak * (-k * (tau - hours)).exp();
                trough * (-k * s).exp() + amount_mg / hours * rise(k, s).0 / v
            } else {
                peak * (-k * (s - hours)).exp()
            }
        }
        r => r.bioavailability() * amount_mg / v * acc * (-k * s).exp(),
    }
}

/// Steady state of `amount_mg` by `route` every `tau` hours, for `k` and `v`.
pub fn steady_state(amount_mg: f64, route: Route, tau: f64, k: f64, v: f64) -> SteadyState {
    let acc = accumulation_factor(k, tau);
    let t_inf = route.infusion_h();
    let f = route.bioavailability();
    let auc24 = f * amount_mg / (k * v) * 24.0 / tau;
    let (peak, peak_after, trough) = match route.absorption() {
        Some(a) => {
            let after = (a.lag_h + steady_peak_after_lag(k, a.ka_per_h, tau)).rem_euclid(tau);
            (
                steady_level(amount_mg, route, tau, k, v, after),
                after,
                steady_level(amount_mg, route, tau, k, v, tau),
            )
        }
        None => {
            let peak = single_peak(amount_mg, route, k, v) * acc;
            (peak, t_inf, peak * (-k * (tau - t_inf)).exp())
        }
    };
    SteadyState {
        accumulation_factor: acc,
        peak_mg_l: peak,
        peak_after_h: peak_after,
        trough_mg_l: trough,
        auc24_mg_h_l: auc24,
    }
}

/// Hours to reach `fraction` (0..1) of steady state: -ln(1 - f)/k.
pub fn time_to_fraction_of_ss(fraction: f64, k: f64) -> f64 {
    -(1.0 - fraction).ln() / k
}

/// Half-life in hours from k: ln 2 / k.
pub fn half_life(k: f64) -> f64 {
    std::f64::consts::LN_2 / k
}

/// The highest value of `f` on [a, b] and where, by golden-section search (exact for a
/// function with one turn at most there), the ends included.
pub fn golden_max(f: &dyn Fn(f64) -> f64, a: f64, b: f64) -> (f64, f64) {
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let (mut lo, mut hi) = (a, b);
    let mut x1 = hi - r * (hi - lo);
    let mut x2 = lo + r * (hi - lo);
    let (mut f1, mut f2) = (f(x1), f(x2));
    for _ in 0..200 {
        if hi - lo <= 1e-12 * (1.0 + lo.abs()) {
            break;
        }
        if f1 < f2 {
            lo = x1;
            x1 = x2;
            f1 = f2;
            x2 = lo + r * (hi - lo);
            f2 = f(x2);
        } else {
            hi = x2;
            x2 = x1;
            f2 = f1;
            x1 = hi - r * (hi - lo);
            f1 = f(x1);
        }
    }
    [(a, f(a)), (b, f(b)), (x1, f1), (x2, f2)]
        .into_iter()
        .fold((a, f64::NEG_INFINITY), |m, x| if x.1 > m.1 { x } else { m })
}

/// The parameters of a two-compartment disposition: a central compartment (volume V1, where
/// the levels are drawn and the drug is cleared) exchanging with a peripheral one (V2) at the
/// intercompartmental clearance Q.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoCompartment {
    /// Clearance from the central compartment, L/h (> 0).
    pub cl: f64,
    /// Central volume, L (> 0).
    pub v1: f64,
    /// Intercompartmental clearance, L/h (> 0).
    pub q: f64,
    /// Peripheral volume, L (> 0).
    pub v2: f64,
}

impl TwoCompartment {
    /// The micro-constants (k10, k12, k21), 1/h: CL/V1, Q/V1, Q/V2.
    pub fn micro(&self) -> (f64, f64, f64) {
        (self.cl / self.v1, self.q / self.v1, self.q / self.v2)
    }

    /// The macro-constants (α, β), 1/h, α > β > 0: the roots of
    /// λ² − (k10 + k12 + k21)·λ + k10·k21 = 0. β is found as k10·k21/α, which keeps its
    /// digits when β is much smaller than α.
    pub fn rates(&self) -> (f64, f64) {
        let (k10, k12, k21) = self.micro();
        let sum = k10 + k12 + k21;
        // sum² − 4·k10·k21 written as a sum of squares, never negative.
        let disc = (k10 + k12 - k21).powi(2) + 4.0 * k12 * k21;
        let alpha = (sum + disc.sqrt()) / 2.0;
        (alpha, k10 * k21 / alpha)
    }

    /// The two exponential modes of the level after a unit bolus (mg/L per mg):
    /// A·e^(−α·t) + B·e^(−β·t), A = (α − k21)/(V1·(α − β)), B = (k21 − β)/(V1·(α − β)).
    pub fn modes(&self) -> [Mode; 2] {
        let (_, _, k21) = self.micro();
        let (alpha, beta) = self.rates();
        let d = self.v1 * (alpha - beta);
        [
            Mode {
                rate: alpha,
                per_l: (alpha - k21) / d,
            },
            Mode {
                rate: beta,
                per_l: (k21 - beta) / d,
            },
        ]
    }
}

/// One exponential mode of a disposition: a unit bolus gives `per_l`·e^(−`rate`·t) mg/L per mg.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mode {
    /// Rate constant of the mode, 1/h.
    pub rate: f64,
    /// Level per mg of a bolus at t = 0 carried by this mode, 1/L.
    pub per_l: f64,
}

/// The one or two modes of a disposition, without a heap allocation (used as a slice).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Modes {
    m: [Mode; 2],
    n: usize,
}

impl std::ops::Deref for Modes {
    type Target = [Mode];
    fn deref(&self) -> &[Mode] {
        &self.m[..self.n]
    }
}

/// How the body handles the drug once it is in the blood: the linear one-compartment model
/// (rate constant k, volume V) or a two-compartment one. Both are sums of exponential modes,
/// so every single-dose response is the one-compartment response of each mode, weighted by
/// the mode's share, and superposition, steady state and the forward pass carry over.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Disposition {
    /// One compartment: rate constant k (1/h) and volume V (L).
    One {
        /// Elimination rate constant, 1/h.
        k: f64,
        /// Volume of distribution, L.
        v: f64,
    },
    /// Two compartments.
    Two(TwoCompartment),
}

impl Disposition {
    /// The exponential modes (one or two) of the unit bolus response.
    pub fn modes(&self) -> Modes {
        match self {
            Disposition::One { k, v } => {
                let m = Mode {
                    rate: *k,
                    per_l: 1.0 / v,
                };
                Modes { m: [m, m], n: 1 }
            }
            Disposition::Two(t) => Modes { m: t.modes(), n: 2 },
        }
    }

    /// 1 or 2.
    pub fn compartments(&self) -> u8 {
        match self {
            Disposition::One { .. } => 1,
            Disposition::Two(_) => 2,
        }
    }

    /// The terminal rate constant, 1/h: k, or β of two compartments.
    pub fn terminal_k(&self) -> f64 {
        match self {
            Disposition::One { k, .. } => *k,
            Disposition::Two(t) => t.rates().1,
        }
    }

    /// The distribution rate constant α, 1/h (two compartments only).
    pub fn distribution_k(&self) -> Option<f64> {
        match self {
            Disposition::One { .. } => None,
            Disposition::Two(t) => Some(t.rates().0),
        }
    }

    /// Clearance, L/h: k·V, or CL.
    pub fn clearance(&self) -> f64 {
        match self {
            Disposition::One { k, v } => k * v,
            Disposition::Two(t) => t.cl,
        }
    }

    /// The volume the levels are drawn from, L: V, or V1.
    pub fn central_volume(&self) -> f64 {
        match self {
            Disposition::One { v, .. } => *v,
            Disposition::Two(t) => t.v1,
        }
    }

    /// The volume at steady state, L: V, or V1 + V2.
    pub fn steady_volume(&self) -> f64 {
        match self {
            Disposition::One { v, .. } => *v,
            Disposition::Two(t) => t.v1 + t.v2,
        }
    }

    /// The parameters, in the order of `with_params`: (k, V) or (CL, V1, Q, V2).
    pub fn params(&self) -> Vec<f64> {
        match self {
            Disposition::One { k, v } => vec![*k, *v],
            Disposition::Two(t) => vec![t.cl, t.v1, t.q, t.v2],
        }
    }

    /// The same kind of disposition with parameters `p` (in the order of `params`); values
    /// missing from `p` are kept.
    pub fn with_params(&self, p: &[f64]) -> Disposition {
        let at = |i: usize, x: f64| p.get(i).copied().unwrap_or(x);
        match self {
            Disposition::One { k, v } => Disposition::One {
                k: at(0, *k),
                v: at(1, *v),
            },
            Disposition::Two(t) => Disposition::Two(TwoCompartment {
                cl: at(0, t.cl),
                v1: at(1, t.v1),
                q: at(2, t.q),
                v2: at(3, t.v2),
            }),
        }
    }

    /// Concentration (mg/L) `s` hours after the start of one dose (0 for `s <= 0`).
    pub fn single_dose(&self, amount_mg: f64, route: Route, s: f64) -> f64 {
        match self {
            Disposition::One { k, v } => single_dose(amount_mg, route, *k, *v, s),
            Disposition::Two(_) => self
                .modes()
                .iter()
                .map(|m| m.per_l * unit_response(amount_mg, route, m.rate, s).0)
                .sum(),
        }
    }

    /// Concentration (mg/L) at time `t` from every dose given before it.
    pub fn superpose<'a>(
        &self,
        doses: impl IntoIterator<Item = &'a Administration>,
        t: f64,
    ) -> f64 {
        doses
            .into_iter()
            .map(|d| self.single_dose(d.amount_mg, d.route, t - d.t))
            .sum()
    }

    /// Concentrations (mg/L) of `schedule` at each time of `ts`, in one forward pass per mode.
    pub fn levels(&self, schedule: &Schedule, ts: &[f64]) -> Vec<f64> {
        match self {
            Disposition::One { k, v } => schedule.levels(*k, *v, ts),
            Disposition::Two(_) => {
                let mut out = vec![0.0; ts.len()];
                for m in self.modes().iter() {
                    for (o, (c, _)) in out.iter_mut().zip(schedule.unit_levels(m.rate, ts)) {
                        *o += m.per_l * c;
                    }
                }
                out
            }
        }
    }

    /// The peak (mg/L) of one dose with nothing on board, and the hours after its start at
    /// which it falls.
    pub fn single_peak(&self, amount_mg: f64, route: Route) -> (f64, f64) {
        match self {
            Disposition::One { k, v } => (
                single_peak(amount_mg, route, *k, *v),
                single_peak_time(route, *k),
            ),
            Disposition::Two(_) => match route.absorption() {
                // Both modes carry positive weight, so the level falls from the end of the
                // input: the peak is there unless the dose is absorbed.
                None => {
                    let t = route.infusion_h();
                    let c = match route {
                        Route::Infusion { .. } => self.single_dose(amount_mg, route, t),
                        r => r.bioavailability() * amount_mg / self.central_volume(),
                    };
                    (c, t)
                }
                Some(a) => {
                    let k = self.terminal_k();
                    // The peak comes no later than the one-compartment peak at β.
                    let end = a.lag_h + 2.0 * single_peak_after_lag(k, a.ka_per_h);
                    let (t, c) =
                        golden_max(&|s| self.single_dose(amount_mg, route, s), a.lag_h, end);
                    (c, t)
                }
            },
        }
    }

    /// The steady-state level (mg/L) `s` hours after the start of a dose (0 ≤ s ≤ tau) of
    /// `amount_mg` by `route` every `tau` hours: the sum of each mode's steady state.
    pub fn steady_level(&self, amount_mg: f64, route: Route, tau: f64, s: f64) -> f64 {
        match self {
            Disposition::One { k, v } => steady_level(amount_mg, route, tau, *k, *v, s),
            Disposition::Two(_) => self
                .modes()
                .iter()
                .map(|m| steady_level(amount_mg, route, tau, m.rate, 1.0 / m.per_l, s))
                .sum(),
        }
    }

    /// Steady state of `amount_mg` by `route` every `tau` hours.
    pub fn steady_state(&self, amount_mg: f64, route: Route, tau: f64) -> SteadyState {
        match self {
            Disposition::One { k, v } => steady_state(amount_mg, route, tau, *k, *v),
            Disposition::Two(t) => {
                let f = route.bioavailability();
                let level = |s: f64| self.steady_level(amount_mg, route, tau, s);
                let (peak_after, peak) = match route.absorption() {
                    None => {
                        let after = route.infusion_h();
                        (after, level(after))
                    }
                    Some(a) => {
                        // The level rises from the lag to one turn and falls after it;
                        // search the interval after the lag.
                        let lag = a.lag_h.rem_euclid(tau);
                        let (x, c) = golden_max(&|u| level((lag + u).rem_euclid(tau)), 0.0, tau);
                        ((lag + x).rem_euclid(tau), c)
                    }
                };
                SteadyState {
                    accumulation_factor: accumulation_factor(self.terminal_k(), tau),
                    peak_mg_l: peak,
                    peak_after_h: peak_after,
                    trough_mg_l: level(tau),
                    auc24_mg_h_l: f * amount_mg / t.cl * 24.0 / tau,
                }
            }
        }
    }

    /// Hours of a constant input to reach `fraction` (0..1) of its steady-state level:
    /// −ln(1 − f)/k with one compartment; with two, the root of
    /// Σ wᵢ·e^(−λᵢ·t) = 1 − f, wᵢ the share of mode i in the steady-state level
    /// ((Aᵢ/λᵢ)/Σ(Aⱼ/λⱼ)), found by bisection (the sum falls monotonically).
    pub fn time_to_fraction_of_ss(&self, fraction: f64) -> f64 {
        match self {
            Disposition::One { k, .. } => time_to_fraction_of_ss(fraction, *k),
            Disposition::Two(_) => {
                let modes = self.modes();
                let total: f64 = modes.iter().map(|m| m.per_l / m.rate).sum();
                let left = |t: f64| -> f64 {
                    modes
                        .iter()
                        .map(|m| m.per_l / m.rate / total * (-m.rate * t).exp())
                        .sum()
                };
                let target = 1.0 - fraction;
                // The terminal mode alone reaches it no later than this.
                let mut hi = time_to_fraction_of_ss(fraction, self.terminal_k());
                let mut lo = 0.0;
                for _ in 0..200 {
                    let mid = 0.5 * (lo + hi);
                    if left(mid) > target {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                    if hi - lo <= 1e-12 * hi {
                        break;
                    }
                }
                0.5 * (lo + hi)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn half_life_facts() {
        // k = 0.1 /h -> t1/2 = 6.9315 h; t1/2 = 24 h -> k = 0.028881 /h
        // (drug-facts.md "Facts of the trade", [Bourne-Ch6]).
        assert!((half_life(0.1) - 6.9315).abs() < 5e-5);
        assert!((half_life(std::f64::consts::LN_2 / 24.0) - 24.0).abs() < 1e-12);
        assert!((std::f64::consts::LN_2 / 24.0 - 0.028881).abs() < 5e-7);
    }

    #[test]
    fn steady_state_fractions_are_the_known_half_life_multiples() {
        // 90 %, 95 %, 97 % of steady state at 3.32, 4.32, 5.06 half-lives (common practice).
        let k = 0.2;
        let th = half_life(k);
        for (f, n) in [(0.90, 3.32), (0.95, 4.32), (0.97, 5.06)] {
            let h = time_to_fraction_of_ss(f, k) / th;
            assert!((h - n).abs() < 0.005, "{f}: {h}");
        }
    }

    #[test]
    fn bolus_at_its_own_time_is_not_yet_given() {
        assert_eq!(single_dose(100.0, Route::Bolus, 0.1, 10.0, 0.0), 0.0);
        assert!((single_dose(100.0, Route::Bolus, 0.1, 10.0, 1e-9) - 10.0).abs() < 1e-6);
    }

    #[test]
    fn infusion_is_continuous_at_its_end() {
        let r = Route::Infusion { hours: 0.5 };
        let a = single_dose(120.0, r, 0.3, 18.0, 0.5);
        let b = single_dose(120.0, r, 0.3, 18.0, 0.5 + 1e-9);
        assert!((a - b).abs() < 1e-7);
    }

    #[test]
    fn unit_response_matches_the_model_and_its_derivative() {
        let doses = [
            Administration {
                t: 0.0,
                amount_mg: 500.0,
                route: Route::Infusion { hours: 1.0 },
            },
            Administration {
                t: 3.0,
                amount_mg: 200.0,
                route: Route::Bolus,
            },
            Administration {
                t: 5.0,
                amount_mg: 100.0,
                route: Route::oral(0.6),
            },
            Administration {
                t: 6.0,
                amount_mg: 100.0,
                route: Route::oral_absorbed(0.8, 0.2, 0.5),
            },
        ];
        for k in [1e-7, 0.03, 0.2, 0.2 + 1e-9, 1.5] {
            for t in [0.3, 1.0, 2.5, 4.0, 7.0, 30.0] {
                let c: f64 = doses
                    .iter()
                    .map(|d| unit_response(d.amount_mg, d.route, k, t - d.t).0)
                    .sum();
                let want = superpose(&doses, k, 1.0, t);
                assert!((c - want).abs() <= 1e-12 * want, "{k} {t}: {c} vs {want}");
                // Derivative against a central difference.
                let h = 1e-4 * k.max(1e-3);
                let up: f64 = doses
                    .iter()
                    .map(|d| unit_response(d.amount_mg, d.route, k + h, t - d.t).0)
                    .sum();
                let dn: f64 = doses
                    .iter()
                    .map(|d| unit_response(d.amount_mg, d.route, k - h, t - d.t).0)
                    .sum();
                let numeric = (up - dn) / (2.0 * h);
                let dc: f64 = doses
                    .iter()
                    .map(|d| unit_response(d.amount_mg, d.route, k, t - d.t).1)
                    .sum();
                assert!(
                    (dc - numeric).abs() <= 1e-6 * numeric.abs().max(1.0),
                    "{k} {t}: {dc} vs {numeric}"
                );
            }
        }
    }

    #[test]
    fn the_forward_pass_matches_the_sum_at_every_time() {
        let doses = [
            Administration {
                t: 0.0,
                amount_mg: 500.0,
                route: Route::Infusion { hours: 2.0 },
            },
            Administration {
                t: 1.0,
                amount_mg: 80.0,
                route: Route::Bolus,
            },
            Administration {
                t: 1.5,
                amount_mg: 300.0,
                route: Route::Infusion { hours: 0.25 },
            },
            Administration {
                t: 12.0,
                amount_mg: 250.0,
                route: Route::oral(0.7),
            },
            Administration {
                t: 13.0,
                amount_mg: 300.0,
                route: Route::oral_absorbed(0.9, 0.8, 0.25),
            },
            Administration {
                t: 14.0,
                amount_mg: 150.0,
                route: Route::oral_absorbed(1.0, 0.05, 0.0),
            },
            Administration {
                t: 20.0,
                amount_mg: 200.0,
                route: Route::oral_absorbed(0.9, 0.8, 0.25),
            },
            Administration {
                t: 24.0,
                amount_mg: 500.0,
                route: Route::Infusion { hours: 1.0 },
            },
        ];
        // Times out of order, on dose times and infusion ends, during overlapping infusions.
        let ts = [
            30.0, 0.0, 0.5, 1.0, 1.2, 1.75, 2.0, 3.0, 12.0, 12.5, 13.0, 13.25, 13.3, 14.0, 16.0,
            20.25, 24.0, 24.5, 25.0, 100.0,
        ];
        let schedule = Schedule::new(&doses);
        for k in [1e-9, 0.05, 0.3, 0.8, 2.0] {
            let fast = schedule.unit_levels(k, &ts);
            for (j, &t) in ts.iter().enumerate() {
                let (c, dc) = doses
                    .iter()
                    .map(|d| unit_response(d.amount_mg, d.route, k, t - d.t))
                    .fold((0.0, 0.0), |a, b| (a.0 + b.0, a.1 + b.1));
                assert!((fast[j].0 - c).abs() <= 1e-12 * c.abs().max(1.0), "{k} {t}");
                assert!(
                    (fast[j].1 - dc).abs() <= 1e-9 * dc.abs().max(1.0),
                    "{k} {t}"
                );
            }
        }
    }

    #[test]
    fn the_bateman_kernel_matches_its_formula_and_its_limit() {
        // Away from ka = k: the textbook difference of exponentials.
        for (k, ka, u) in [
            (0.1f64, 1.0f64, 3.0f64),
            (1.0, 0.1, 3.0),
            (0.05, 0.0773, 40.0),
        ] {
            let want = ((-k * u).exp() - (-ka * u).exp()) / (ka - k);
            let (b, db) = bateman(k, ka, u);
            assert!((b - want).abs() <= 1e-14 * want, "{k} {ka}: {b} vs {want}");
            let h = 1e-6 * k;
            let num = (bateman(k + h, ka, u).0 - bateman(k - h, ka, u).0) / (2.0 * h);
            assert!((db - num).abs() <= 1e-6 * num.abs(), "{db} vs {num}");
        }
        // At and near ka = k the limit u·e^(−k·u), with no lost digits; and its derivative
        // in k, −u²/2·e^(−k·u) (differentiate the limit series in d = ka − k).
        for d in [0.0, 1e-15, -1e-15, 1e-9, -1e-9] {
            let (k, u) = (0.3, 5.0);
            let (b, db) = bateman(k, k + d, u);
            let want = u * (-k * u).exp() * (1.0 - d * u / 2.0);
            assert!((b - want).abs() <= 4e-16 * want, "{d}: {b} vs {want}");
            let dwant = -u * u / 2.0 * (-k * u).exp();
            assert!(
                (db - dwant).abs() <= 1e-8 * dwant.abs(),
                "{d}: {db} vs {dwant}"
            );
        }
        // Flip-flop far out: no overflow.
        let (b, _) = bateman(5.0, 0.01, 2000.0);
        assert!(b.is_finite() && b > 0.0);
        assert_eq!(bateman(0.1, 1.0, 0.0), (0.0, 0.0));
    }

    #[test]
    fn an_absorbed_dose_waits_for_its_lag() {
        let r = Route::oral_absorbed(0.9, 1.73, 0.09);
        assert_eq!(single_dose(300.0, r, 0.1, 30.0, 0.05), 0.0);
        assert_eq!(single_dose(300.0, r, 0.1, 30.0, 0.09), 0.0);
        assert!(single_dose(300.0, r, 0.1, 30.0, 0.1) > 0.0);
    }

    #[test]
    fn the_single_peak_is_where_the_course_turns() {
        for (k, ka, lag) in [(0.1, 1.73, 0.09), (0.5, 0.0773, 0.0), (0.2, 0.2, 1.0)] {
            let r = Route::oral_absorbed(1.0, ka, lag);
            let t = single_peak_time(r, k);
            let p = single_peak(100.0, r, k, 10.0);
            assert!((single_dose(100.0, r, k, 10.0, t) - p).abs() <= 1e-13 * p);
            for dt in [-1e-3, 1e-3] {
                assert!(single_dose(100.0, r, k, 10.0, t + dt) < p, "{k} {ka} {dt}");
            }
        }
        // ka = k: the peak is 1/k after the lag, at F·D/(V·e) (the limit of the formula).
        let r = Route::oral_absorbed(1.0, 0.25, 0.0);
        assert!((single_peak_time(r, 0.25) - 4.0).abs() < 1e-14);
        let want = 100.0 / 10.0 * (-1.0f64).exp();
        assert!((single_peak(100.0, r, 0.25, 10.0) - want).abs() < 1e-14 * want);
    }

    #[test]
    fn the_steady_state_sum_matches_adding_the_doses() {
        for (k, ka, tau) in [
            (0.03, 0.293, 24.0),
            (0.3, 0.0773, 24.0),
            (0.1, 0.1, 12.0),
            (0.1, 0.1 + 1e-12, 12.0),
        ] {
            for u in [0.0, 0.5, 3.0, 11.9] {
                let direct: f64 = (0..20_000)
                    .map(|n| bateman(k, ka, u + n as f64 * tau).0)
                    .sum::<f64>();
                let ss = steady_bateman(k, ka, tau, u);
                assert!(
                    (ss - direct).abs() <= 1e-12 * direct,
                    "{k} {ka} {u}: {ss} vs {direct}"
                );
            }
        }
    }

    #[test]
    fn the_steady_state_peak_time_has_its_limit_at_ka_equal_k() {
        let (k, tau) = (0.1, 12.0);
        let at = steady_peak_after_lag(k, k, tau);
        for d in [1e-7, -1e-7] {
            let near = steady_peak_after_lag(k, k + d, tau);
            assert!((near - at).abs() < 1e-5, "{near} vs {at}");
        }
        assert!(at > 0.0 && at < tau);
    }
}
