//! A numerical solution of a linear disposition driven by a dose record, shared by the checks
//! of the closed forms (one and two compartments): fixed-step classic Runge-Kutta (RK4)
//! written here, stepping exactly to every infusion start and stop and every absorption lag's
//! end, so the forcing is constant within each step.
//!
//! The state is the amounts in the disposition's compartments (the first is the central one,
//! where doses enter and levels are drawn), the running area under the level, and one gut store
//! per absorption rate: a bolus or instant oral dose adds F·D to the central amount at once, an
//! infusion adds its rate while it runs, an absorbed oral dose puts F·D into its gut store at
//! the end of its lag, and the store empties into the central compartment at ka times what it
//! holds (dG/dt = −ka·G).

use ebb::core::model::{Administration, Route};

/// The largest RK4 step, in hours.
pub const H_MAX: f64 = 0.005;

/// Relative agreement asked of every closed form.
pub const REL: f64 = 1e-6;

/// A closed form `got` against the ODE's `want`, to `REL` relative.
#[track_caller]
pub fn close(got: f64, want: f64, what: &str) {
    let tol = REL * want.abs().max(1e-12);
    assert!(
        (got - want).abs() <= tol,
        "{what}: closed form {got:.12e}, ODE {want:.12e}, rel {:.2e}",
        ((got - want) / want).abs()
    );
}

/// `n` doses of `amount` by `route` every `tau` hours from t = 0.
pub fn regimen(n: usize, amount: f64, route: Route, tau: f64) -> Vec<Administration> {
    (0..n)
        .map(|j| Administration {
            t: j as f64 * tau,
            amount_mg: amount,
            route,
        })
        .collect()
}

/// A disposition to integrate: the derivative of its compartments' amounts given the rate of
/// input into the central one, and the level (mg/L) from the amounts.
pub trait Linear {
    /// Compartments.
    fn size(&self) -> usize;
    /// d(amounts)/dt into `d`, for amounts `x` and an input of `into` mg/h to the centre.
    fn deriv(&self, x: &[f64], into: f64, d: &mut [f64]);
    /// The level, mg/L.
    fn level(&self, x: &[f64]) -> f64;
}

/// Level (mg/L) and its running area (mg·h/L) at each of the `at` times (any order). A value at
/// a dose time is the one just before that dose (the pre-dose level); before the first dose,
/// zero.
pub fn integrate(doses: &[Administration], m: &dyn Linear, at: &[f64]) -> Vec<(f64, f64)> {
    let start = doses.iter().map(|d| d.t).fold(f64::INFINITY, f64::min);
    let entry = |d: &Administration| d.t + d.route.absorption().map_or(0.0, |a| a.lag_h);
    let mut marks: Vec<f64> = doses
        .iter()
        .flat_map(|d| [d.t, d.end(), entry(d)])
        .collect();
    marks.extend(at.iter().copied().filter(|&t| t > start));
    marks.sort_by(f64::total_cmp);
    marks.dedup();
    let rate = |t: f64| -> f64 {
        doses
            .iter()
            .filter_map(|d| match d.route {
                Route::Infusion { hours } if d.t <= t && t < d.t + hours => {
                    Some(d.amount_mg / hours)
                }
                _ => None,
            })
            .sum()
    };
    // One gut store per absorption rate: dose j empties into store `store[j]`.
    let mut kas: Vec<f64> = Vec::new();
    let store: Vec<Option<usize>> = doses
        .iter()
        .map(|d| {
            d.route.absorption().map(|a| {
                kas.iter()
                    .position(|r| *r == a.ka_per_h)
                    .unwrap_or_else(|| {
                        kas.push(a.ka_per_h);
                        kas.len() - 1
                    })
            })
        })
        .collect();
    let c = m.size();
    // State: [amounts…, AUC, G_1 … G_n].
    let n = c + 1 + kas.len();
    let mut y = vec![0.0f64; n];
    let deriv = |y: &[f64], r: f64, d: &mut [f64]| {
        let mut into = r;
        for (j, ka) in kas.iter().enumerate() {
            into += ka * y[c + 1 + j];
            d[c + 1 + j] = -ka * y[c + 1 + j];
        }
        m.deriv(&y[..c], into, &mut d[..c]);
        d[c] = m.level(&y[..c]);
    };
    let mut values: Vec<(f64, (f64, f64))> = Vec::new();
    let (mut k1, mut k2, mut k3, mut k4, mut tmp) = (
        vec![0.0; n],
        vec![0.0; n],
        vec![0.0; n],
        vec![0.0; n],
        vec![0.0; n],
    );
    let mut t = start;
    for &mark in &marks {
        if mark > t {
            let r = rate(0.5 * (t + mark));
            let steps = ((mark - t) / H_MAX).ceil().max(1.0) as usize;
            let h = (mark - t) / steps as f64;
            for _ in 0..steps {
                deriv(&y, r, &mut k1);
                for i in 0..n {
                    tmp[i] = y[i] + 0.5 * h * k1[i];
                }
                deriv(&tmp, r, &mut k2);
                for i in 0..n {
                    tmp[i] = y[i] + 0.5 * h * k2[i];
                }
                deriv(&tmp, r, &mut k3);
                for i in 0..n {
                    tmp[i] = y[i] + h * k3[i];
                }
                deriv(&tmp, r, &mut k4);
                for i in 0..n {
                    y[i] += h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
                }
            }
            t = mark;
        }
        // Record before applying the jumps at this mark (a level at a dose time is pre-dose).
        values.push((mark, (m.level(&y[..c]), y[c])));
        for (j, d) in doses.iter().enumerate() {
            match store[j] {
                Some(g) if entry(d) == mark => {
                    y[c + 1 + g] += d.route.bioavailability() * d.amount_mg
                }
                None if d.t == mark => {
                    if let Route::Bolus | Route::Oral { .. } = d.route {
                        y[0] += d.route.bioavailability() * d.amount_mg;
                    }
                }
                _ => {}
            }
        }
    }
    at.iter()
        .map(|&x| {
            if x <= start {
                (0.0, 0.0)
            } else {
                values
                    .iter()
                    .find(|(mk, _)| *mk == x)
                    .map(|(_, cv)| *cv)
                    .expect("every asked time is a mark")
            }
        })
        .collect()
}

/// One compartment: rate constant k (1/h) and volume V (L).
pub struct One {
    pub k: f64,
    pub v: f64,
}

impl Linear for One {
    fn size(&self) -> usize {
        1
    }
    fn deriv(&self, x: &[f64], into: f64, d: &mut [f64]) {
        d[0] = into - self.k * x[0];
    }
    fn level(&self, x: &[f64]) -> f64 {
        x[0] / self.v
    }
}

/// Two compartments: dA1/dt = input − (k10 + k12)·A1 + k21·A2, dA2/dt = k12·A1 − k21·A2,
/// C = A1/V1.
pub struct Two(pub ebb::core::model::TwoCompartment);

impl Linear for Two {
    fn size(&self) -> usize {
        2
    }
    fn deriv(&self, x: &[f64], into: f64, d: &mut [f64]) {
        let (k10, k12, k21) = self.0.micro();
        d[0] = into - (k10 + k12) * x[0] + k21 * x[1];
        d[1] = k12 * x[0] - k21 * x[1];
    }
    fn level(&self, x: &[f64]) -> f64 {
        x[0] / self.0.v1
    }
}
