//! The closed forms of the model against a numerical integration of the one-compartment ODE.
//!
//! dC/dt = -k·C + R(t)/V, with R(t) the sum of the running infusions' rates and a jump of
//! F·D/V at each bolus or oral dose. The integrator is a fixed-step classic Runge-Kutta
//! (RK4) written here, stepping exactly to every infusion start and stop so the forcing is
//! constant within each step. These are self-consistency checks: no outside source needed.

use ebb::core::casefile::CaseFile;
use ebb::core::fit;
use ebb::core::model::{self, Administration, Route};
use ebb::core::projection::{self, Patient};

/// The largest RK4 step, in hours.
const H_MAX: f64 = 0.005;
/// Relative agreement asked of every closed form.
const REL: f64 = 1e-6;

/// Concentration (mg/L) and its running area (mg·h/L) at each of the `at` times (any
/// order), integrating the ODE from before the first dose. A value at a dose time is the one
/// just before that dose (the pre-dose level).
fn integrate(doses: &[Administration], k: f64, v: f64, at: &[f64]) -> Vec<(f64, f64)> {
    let start = doses.iter().map(|d| d.t).fold(f64::INFINITY, f64::min);
    let mut marks: Vec<f64> = doses.iter().flat_map(|d| [d.t, d.end()]).collect();
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
    let mut values: Vec<(f64, (f64, f64))> = Vec::new();
    let (mut c, mut auc) = (0.0f64, 0.0f64);
    let mut t = start;
    for &mark in &marks {
        // Integrate from t to mark with the forcing constant on (t, mark).
        if mark > t {
            let r = rate(0.5 * (t + mark)) / v;
            let steps = ((mark - t) / H_MAX).ceil().max(1.0) as usize;
            let h = (mark - t) / steps as f64;
            let f = |c: f64| -k * c + r;
            for _ in 0..steps {
                let k1 = f(c);
                let k2 = f(c + 0.5 * h * k1);
                let k3 = f(c + 0.5 * h * k2);
                let k4 = f(c + h * k3);
                // The area integrates the same stages (dA/dt = C).
                let a1 = c;
                let a2 = c + 0.5 * h * k1;
                let a3 = c + 0.5 * h * k2;
                let a4 = c + h * k3;
                auc += h / 6.0 * (a1 + 2.0 * a2 + 2.0 * a3 + a4);
                c += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
            }
            t = mark;
        }
        // Record before applying the jumps at this mark (a level at a dose time is pre-dose).
        values.push((mark, (c, auc)));
        for d in doses.iter().filter(|d| d.t == mark) {
            if let Route::Bolus | Route::Oral { .. } = d.route {
                c += d.route.bioavailability() * d.amount_mg / v;
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
                    .find(|(m, _)| *m == x)
                    .map(|(_, cv)| *cv)
                    .expect("every asked time is a mark")
            }
        })
        .collect()
}

fn close(got: f64, want: f64, what: &str) {
    let tol = REL * want.abs().max(1e-12);
    assert!(
        (got - want).abs() <= tol,
        "{what}: closed form {got:.12e}, ODE {want:.12e}, rel {:.2e}",
        ((got - want) / want).abs()
    );
}

/// `n` doses of `amount` by `route` every `tau` hours from t = 0.
fn regimen(n: usize, amount: f64, route: Route, tau: f64) -> Vec<Administration> {
    (0..n)
        .map(|j| Administration {
            t: j as f64 * tau,
            amount_mg: amount,
            route,
        })
        .collect()
}

/// A spread of times over the record, including dose times, infusion ends and odd moments.
fn probe_times(doses: &[Administration], until: f64) -> Vec<f64> {
    let mut ts: Vec<f64> = doses
        .iter()
        .flat_map(|d| {
            [
                d.t,
                d.end(),
                d.t + 0.01,
                d.end() + 0.77,
                d.t + 0.5 * d.route.infusion_h(),
            ]
        })
        .collect();
    let mut x = 0.123;
    while x < until {
        ts.push(x);
        x += 1.37;
    }
    ts.retain(|&t| t <= until);
    ts
}

#[test]
fn superposition_matches_the_ode_for_every_route_and_a_mixed_record() {
    let k = 0.21;
    let v = 23.0;
    let records: Vec<(&str, Vec<Administration>)> = vec![
        (
            "infusion",
            regimen(12, 150.0, Route::Infusion { hours: 0.5 }, 8.0),
        ),
        (
            "long infusion",
            regimen(8, 900.0, Route::Infusion { hours: 2.0 }, 6.0),
        ),
        ("bolus", regimen(10, 80.0, Route::Bolus, 12.0)),
        ("oral", regimen(10, 250.0, Route::Oral { f: 0.7 }, 12.0)),
        (
            "mixed, irregular",
            vec![
                Administration {
                    t: 0.0,
                    amount_mg: 200.0,
                    route: Route::Infusion { hours: 1.0 },
                },
                Administration {
                    t: 5.5,
                    amount_mg: 60.0,
                    route: Route::Bolus,
                },
                // Overlaps the next infusion: two infusions run at once for a while.
                Administration {
                    t: 9.25,
                    amount_mg: 300.0,
                    route: Route::Infusion { hours: 3.0 },
                },
                Administration {
                    t: 10.0,
                    amount_mg: 120.0,
                    route: Route::Infusion { hours: 0.75 },
                },
                Administration {
                    t: 20.0,
                    amount_mg: 400.0,
                    route: Route::Oral { f: 0.55 },
                },
                Administration {
                    t: 31.4,
                    amount_mg: 90.0,
                    route: Route::Bolus,
                },
            ],
        ),
    ];
    for (name, doses) in records {
        let until = doses.last().unwrap().end() + 30.0;
        let ts = probe_times(&doses, until);
        let ode = integrate(&doses, k, v, &ts);
        for (t, (c, _)) in ts.iter().zip(ode) {
            let closed = model::superpose(&doses, k, v, *t);
            close(closed, c, &format!("{name} at t = {t}"));
        }
    }
}

/// Enough doses for the regimen to be at steady state to far below the tolerance.
fn doses_to_steady_state(k: f64, tau: f64) -> usize {
    (40.0 / (k * tau)).ceil() as usize + 2
}

#[test]
fn steady_state_peak_trough_and_auc_match_the_ode_after_many_doses() {
    // (k /h, V L, dose mg, route, tau h)
    let regimens = [
        (0.27566, 18.29, 120.0, Route::Infusion { hours: 0.5 }, 8.0),
        (0.0965, 50.0, 1000.0, Route::Infusion { hours: 1.0 }, 12.0),
        (0.2, 10.0, 100.0, Route::Infusion { hours: 6.0 }, 6.0),
        (0.1, 20.0, 500.0, Route::Bolus, 24.0),
        (0.05, 40.0, 250.0, Route::Oral { f: 0.8 }, 12.0),
        (0.35, 15.0, 80.0, Route::Bolus, 4.0),
        (0.03, 60.0, 300.0, Route::Infusion { hours: 2.0 }, 36.0),
    ];
    for (k, v, dose, route, tau) in regimens {
        let n = doses_to_steady_state(k, tau);
        let doses = regimen(n + 1, dose, route, tau);
        let last = doses[n - 1];
        // Peak at the end of the infusion (bolus, oral: just after the dose), trough just
        // before the next dose, and the area over one interval.
        let t_peak = last.end() + if route.infusion_h() == 0.0 { 1e-9 } else { 0.0 };
        let t_trough = last.t + tau;
        let ode = integrate(&doses, k, v, &[last.t, t_peak, t_trough]);
        let ss = model::steady_state(dose, route, tau, k, v);
        let what = format!("{route:?} {dose} mg q{tau}h k={k}");
        close(ss.peak_mg_l, ode[1].0, &format!("{what}: peak"));
        close(ss.trough_mg_l, ode[2].0, &format!("{what}: trough"));
        // The level before the dose equals the trough at steady state.
        close(ss.trough_mg_l, ode[0].0, &format!("{what}: pre-dose"));
        let auc_tau = ode[2].1 - ode[0].1;
        close(
            ss.auc24_mg_h_l,
            auc_tau * 24.0 / tau,
            &format!("{what}: AUC24"),
        );
        close(
            ss.accumulation_factor,
            ode[1].0 / model::single_dose(dose, route, k, v, t_peak - last.t),
            &format!("{what}: accumulation"),
        );
    }
}

#[test]
fn auc_over_a_clock_day_at_steady_state_matches_the_ode() {
    // When tau divides 24 h the area over any whole 24 h at steady state is auc24_ss.
    for (k, v, dose, route, tau) in [
        (0.27566, 18.29, 120.0, Route::Infusion { hours: 0.5 }, 8.0),
        (0.12, 30.0, 400.0, Route::Bolus, 6.0),
        (0.08, 35.0, 600.0, Route::Oral { f: 0.9 }, 12.0),
        (0.04, 70.0, 1500.0, Route::Infusion { hours: 1.5 }, 24.0),
    ] {
        let n = doses_to_steady_state(k, tau);
        let per_day = (24.0 / tau) as usize;
        let doses = regimen(n + per_day + 1, dose, route, tau);
        let from = doses[n].t + 1.3; // any start inside the day, not only a dose time
        let ode = integrate(&doses, k, v, &[from, from + 24.0]);
        let ss = model::steady_state(dose, route, tau, k, v);
        close(
            ss.auc24_mg_h_l,
            ode[1].1 - ode[0].1,
            &format!("{route:?} q{tau}h"),
        );
    }
}

/// A case of `n` recorded doses every `tau` h by infusion, two falling levels after the
/// last, an optional plan, and a threshold.
fn case_text(n: usize, tau: f64, plan: &str, threshold: &str) -> String {
    let mut s = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
    let base = chrono::NaiveDate::from_ymd_opt(2027, 1, 30)
        .unwrap()
        .and_hms_opt(6, 0, 0)
        .unwrap();
    let at = |h: f64| {
        let t = base + chrono::Duration::seconds((h * 3600.0).round() as i64);
        t.format("%Y-%m-%dT%H:%M:%S").to_string()
    };
    for j in 0..n {
        s += &format!(
            "[[dose]]\ntime = {}\namount_mg = 150.0\nroute = \"infusion\"\ninfusion_h = 0.5\n",
            at(j as f64 * tau)
        );
    }
    let last = (n - 1) as f64 * tau;
    for (dt, value) in [(1.5, 7.0), (5.0, 3.0)] {
        s += &format!("[[level]]\ntime = {}\nvalue = {value}\n", at(last + dt));
    }
    s + plan + threshold
}

#[test]
fn threshold_crossing_time_matches_the_ode() {
    let (k, v, tau) = (0.23, 19.0, 8.0);
    for below in [2.0, 0.5, 0.01] {
        let text = case_text(20, tau, "", &format!("[threshold]\nbelow = {below}\n"));
        let case = CaseFile::parse(&text).unwrap().validate().unwrap();
        let mut f = fit::fit(&case).unwrap();
        // Put the test's own k and V in: the check is of the projection, not the fit.
        f.k = k;
        f.volume_l = Some(v);
        f.k_ci95 = None;
        let p = Patient::new(&case, &f);
        let tp = projection::threshold(&p, below, None);
        let given = case.given().unwrap();
        // The start is the later of the last dose's end and the last level.
        let t0 = case.levels.last().unwrap().t;
        assert_eq!(tp.t0, t0);
        close(tp.c0_mg_l, integrate(&given, k, v, &[t0])[0].0, "C0");
        // Find the crossing in the ODE by bisection.
        let (mut lo, mut hi) = (t0, t0 + 60.0 / k);
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if integrate(&given, k, v, &[mid])[0].0 > below {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let crossing = 0.5 * (lo + hi);
        let tol = REL * (crossing - t0);
        assert!(
            (tp.reached_t - crossing).abs() <= tol,
            "below {below}: closed form {} h, ODE {crossing} h",
            tp.reached_t
        );
    }
}

#[test]
fn levels_with_plan_doses_before_a_procedure_match_the_ode() {
    let (k, v, tau) = (0.15, 25.0, 12.0);
    let plan =
        "[plan]\ndose_mg = 200.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 1.0\n";
    let text = case_text(10, tau, plan, "[threshold]\nbelow = 1.0\n");
    let case = CaseFile::parse(&text).unwrap().validate().unwrap();
    let mut f = fit::fit(&case).unwrap();
    f.k = k;
    f.volume_l = Some(v);
    let p = Patient::new(&case, &f);
    let pl = case.plan.as_ref().unwrap();
    let procedure = pl.start_t + 5.0 * tau + 7.25;
    let mut all = case.given().unwrap();
    for last in 0..6 {
        all.push(Administration {
            t: pl.start_t + last as f64 * tau,
            amount_mg: 200.0,
            route: Route::Infusion { hours: 1.0 },
        });
        let closed = p.level_with_plan(procedure, pl, Some(last)).unwrap();
        let ode = integrate(&all, k, v, &[procedure])[0].0;
        close(closed, ode, &format!("plan doses 0..={last}"));
    }
}
