//! The linear one-compartment model: single-dose responses and their superposition.
//!
//! Concentrations here are in mg/L, times in hours, volumes in litres, doses in mg.

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
    /// By mouth, treated as a bolus of F x dose (absorption is not modelled).
    Oral {
        /// Bioavailability F, in (0, 1].
        f: f64,
    },
}

impl Route {
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
            Route::Oral { f } => *f,
            _ => 1.0,
        }
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
    /// When the dose has fully entered (end of infusion; the dose time otherwise).
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

/// The single-dose response: concentration (mg/L) with a volume of 1 L, `s` hours after the
/// start of a dose of `amount_mg` by `route`, and its derivative in k. Zero for `s <= 0`: a
/// level drawn at a dose time is a pre-dose level. Every concentration of the model, and of
/// the fits, is built from this one function.
pub fn unit_response(amount_mg: f64, route: Route, k: f64, s: f64) -> (f64, f64) {
    if s <= 0.0 {
        return (0.0, 0.0);
    }
    match route {
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

/// The peak (mg/L) one dose gives with no drug on board: at the end of the infusion, or just
/// after a bolus or oral dose.
pub fn single_peak(amount_mg: f64, route: Route, k: f64, v: f64) -> f64 {
    match route {
        Route::Infusion { hours } => amount_mg / hours * rise(k, hours).0 / v,
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

/// A dose record laid out for evaluating the model at many times in one forward pass: the
/// doses that have fully entered decay together (three running sums), and only infusions still
/// running are added one by one. Cost O(doses + times) per pass once the times are in order,
/// instead of O(doses x times) for `superpose` at each time.
#[derive(Debug, Clone)]
pub struct Schedule<'a> {
    doses: &'a [Administration],
    /// Doses by the time they have fully entered (bolus and oral: their time; infusion: its end).
    by_entry: Vec<usize>,
    /// Infusions by start time.
    infusions: Vec<usize>,
}

impl<'a> Schedule<'a> {
    /// Lay out `doses` (in any order).
    pub fn new(doses: &'a [Administration]) -> Self {
        let mut by_entry: Vec<usize> = (0..doses.len()).collect();
        by_entry.sort_by(|&a, &b| doses[a].end().total_cmp(&doses[b].end()));
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
        // Over the doses that have fully entered, at time `now`: s = Σ A·e^(−k·(now−τ)),
        // p = Σ A'·e^(−k·(now−τ)) and q = Σ (now−τ)·A·e^(−k·(now−τ)), where τ is the time a
        // dose fully entered, A what it left then (per litre) and A' = ∂A/∂k; so the level is
        // s and its derivative in k is p − q.
        let (mut s, mut p, mut q) = (0.0, 0.0, 0.0);
        let mut now = f64::NEG_INFINITY;
        let mut advance = |s: &mut f64, p: &mut f64, q: &mut f64, to: f64| {
            if to > now {
                if now.is_finite() {
                    let dt = to - now;
                    let e = (-k * dt).exp();
                    *q = (*q + dt * *s) * e;
                    *s *= e;
                    *p *= e;
                }
                now = to;
            }
        };
        let (mut next_entry, mut next_infusion) = (0, 0);
        let mut running: Vec<usize> = Vec::new();
        for &j in &order {
            let t = ts[j];
            // Doses fully entered before t (a bolus at t itself is not yet given; an infusion
            // ending at t is still counted as running, with the same value).
            while let Some(&i) = self.by_entry.get(next_entry) {
                let d = &self.doses[i];
                if d.end() >= t {
                    break;
                }
                advance(&mut s, &mut p, &mut q, d.end());
                let (a, da) = match d.route {
                    Route::Infusion { hours } => {
                        let (g, dg) = rise(k, hours);
                        (d.amount_mg / hours * g, d.amount_mg / hours * dg)
                    }
                    r => (r.bioavailability() * d.amount_mg, 0.0),
                };
                s += a;
                p += da;
                next_entry += 1;
            }
            advance(&mut s, &mut p, &mut q, t);
            while let Some(&i) = self.infusions.get(next_infusion) {
                if self.doses[i].t >= t {
                    break;
                }
                running.push(i);
                next_infusion += 1;
            }
            running.retain(|&i| self.doses[i].end() >= t);
            let (mut c, mut dc) = (s, p - q);
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
    /// Peak at the end of the infusion (bolus, oral: just after the dose), mg/L.
    pub peak_mg_l: f64,
    /// Trough just before the next dose, mg/L.
    pub trough_mg_l: f64,
    /// Area under the curve over 24 h at steady state, mg·h/L.
    pub auc24_mg_h_l: f64,
}

/// Steady state of `amount_mg` by `route` every `tau` hours, for `k` and `v`.
pub fn steady_state(amount_mg: f64, route: Route, tau: f64, k: f64, v: f64) -> SteadyState {
    let acc = accumulation_factor(k, tau);
    let t_inf = route.infusion_h();
    let f = route.bioavailability();
    let peak = single_peak(amount_mg, route, k, v) * acc;
    let trough = peak * (-k * (tau - t_inf)).exp();
    let auc24 = f * amount_mg / (k * v) * 24.0 / tau;
    SteadyState {
        accumulation_factor: acc,
        peak_mg_l: peak,
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
                route: Route::Oral { f: 0.6 },
            },
        ];
        for k in [1e-7, 0.03, 0.2, 1.5] {
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
                route: Route::Oral { f: 0.7 },
            },
            Administration {
                t: 24.0,
                amount_mg: 500.0,
                route: Route::Infusion { hours: 1.0 },
            },
        ];
        // Times out of order, on dose times and infusion ends, during overlapping infusions.
        let ts = [
            30.0, 0.0, 0.5, 1.0, 1.2, 1.75, 2.0, 3.0, 12.0, 12.5, 24.0, 24.5, 25.0, 100.0,
        ];
        let schedule = Schedule::new(&doses);
        for k in [1e-9, 0.05, 0.3, 2.0] {
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
}
