//! The closed forms of the model against a numerical integration of the one-compartment ODE.
//!
//! dA/dt = −k·A + R(t), C = A/V, with R(t) the sum of the running infusions' rates and a jump
//! of F·D at each bolus or instant oral dose; an absorbed oral dose fills a gut store that
//! empties first-order into the blood (dG/dt = −ka·G, dA/dt += ka·G). The integrator is the
//! fixed-step classic Runge-Kutta (RK4) of `super::ode`, written in the tests. These are
//! self-consistency checks: no outside source needed.

use super::ode::{close, regimen, REL};
use ebb::core::casefile::CaseFile;
use ebb::core::fit;
use ebb::core::model::{self, Administration, Route};
use ebb::core::projection::{self, Patient};

/// Concentration (mg/L) and its running area (mg·h/L) at each of the `at` times (any
/// order), from the shared RK4 integration (`super::ode`) of the one-compartment model.
fn integrate(doses: &[Administration], k: f64, v: f64, at: &[f64]) -> Vec<(f64, f64)> {
    super::ode::integrate(doses, &super::ode::One { k, v }, at)
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
        ("oral", regimen(10, 250.0, Route::oral(0.7), 12.0)),
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
                    route: Route::oral(0.55),
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
        (0.05, 40.0, 250.0, Route::oral(0.8), 12.0),
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
        (0.08, 35.0, 600.0, Route::oral(0.9), 12.0),
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

/// A 30-dose oral record of two formulations with lags, irregular times and a missed dose;
/// `ka_ir` for the immediate-release doses.
fn oral_record(ka_ir: f64) -> Vec<Administration> {
    let ir = Route::oral_absorbed(0.9, ka_ir, 0.25);
    let sr = Route::oral_absorbed(0.85, 0.0773, 0.0);
    (0..31)
        .filter(|&j| j != 17)
        .map(|j| Administration {
            t: j as f64 * 12.0 + if j % 3 == 0 { 0.75 } else { 0.0 },
            amount_mg: if j % 4 == 0 { 400.0 } else { 300.0 },
            route: if j < 20 { ir } else { sr },
        })
        .collect()
}

#[test]
fn absorbed_oral_superposition_matches_the_ode_over_a_30_dose_record() {
    // Rates apart, ka = k exactly (the limit of the Bateman form), ka a hair from k, and
    // flip-flop (the sustained-release doses: ka 0.0773 < k).
    let v = 30.0;
    for (k, ka) in [
        (0.12, 1.73),
        (0.12, 0.12),
        (0.12, 0.12 + 1e-9),
        (0.35, 0.35),
    ] {
        let doses = oral_record(ka);
        assert_eq!(doses.len(), 30);
        let until = doses.last().unwrap().t + 48.0;
        let mut ts = probe_times(&doses, until);
        ts.extend(
            doses
                .iter()
                .flat_map(|d| [d.t + 0.25, d.t + 0.26, d.t + 2.0]),
        );
        let ode = integrate(&doses, k, v, &ts);
        let swept = model::Schedule::new(&doses).levels(k, v, &ts);
        for ((t, (c, _)), fast) in ts.iter().zip(ode).zip(swept) {
            if c < 1e-9 {
                // Before the first lag has ended: both are zero.
                assert!(fast.abs() < 1e-12, "k {k} ka {ka} at {t}: {fast}");
                continue;
            }
            let closed = model::superpose(&doses, k, v, *t);
            close(closed, c, &format!("k {k} ka {ka} at t = {t}"));
            close(fast, c, &format!("forward pass, k {k} ka {ka} at t = {t}"));
        }
    }
}

#[test]
fn absorbed_steady_state_matches_the_ode_and_a_scan_of_the_course() {
    // (k /h, V L, dose mg, F, ka /h, lag h, tau h)
    for (k, v, dose, f, ka, lag, tau) in [
        (0.0289f64, 50.0, 800.0, 0.9, 0.293f64, 0.0, 24.0),
        (0.0289, 50.0, 400.0, 0.9, 0.293, 0.0, 12.0),
        (0.1, 30.0, 300.0, 1.0, 1.73, 0.09, 12.0),
        (0.1, 30.0, 600.0, 1.0, 0.0773, 0.0, 24.0),
        (0.2, 20.0, 250.0, 0.8, 0.2, 0.5, 8.0),
        (0.1, 25.0, 100.0, 1.0, 2.0, 3.0, 2.5),
    ] {
        let route = Route::oral_absorbed(f, ka, lag);
        // e^(−20) of the first dose is left: far below the tolerance.
        let n = (20.0 / (k.min(ka) * tau)).ceil() as usize + 2;
        let doses = regimen(n + 1, dose, route, tau);
        let last = doses[n - 1];
        let ss = model::steady_state(dose, route, tau, k, v);
        let what = format!("{dose} mg ka {ka} lag {lag} q{tau}h k={k}");
        // A brute-force scan of the superposed course over the last full interval.
        let steps = 20_000;
        let (mut best_t, mut best) = (0.0, f64::NEG_INFINITY);
        let ts: Vec<f64> = (0..=steps)
            .map(|i| last.t + tau * i as f64 / steps as f64)
            .collect();
        let course = model::Schedule::new(&doses).levels(k, v, &ts);
        for (t, c) in ts.iter().zip(&course) {
            if *c > best {
                best = *c;
                best_t = t - last.t;
            }
        }
        assert!(
            (ss.peak_after_h - best_t).abs() <= 2.0 * tau / steps as f64,
            "{what}: peak at {} h, scan {best_t} h",
            ss.peak_after_h
        );
        close(
            ss.peak_mg_l,
            best,
            &format!("{what}: peak against the scan"),
        );
        let t_peak = last.t + ss.peak_after_h;
        let within = [0.3, 0.5 * tau];
        let mut asked = vec![last.t, t_peak, last.t + tau];
        asked.extend(within.iter().map(|s| last.t + s));
        let ode = integrate(&doses, k, v, &asked);
        close(ss.peak_mg_l, ode[1].0, &format!("{what}: peak"));
        close(ss.trough_mg_l, ode[2].0, &format!("{what}: trough"));
        close(ss.trough_mg_l, ode[0].0, &format!("{what}: pre-dose"));
        close(
            ss.auc24_mg_h_l,
            (ode[2].1 - ode[0].1) * 24.0 / tau,
            &format!("{what}: AUC24"),
        );
        // The level at other times of the interval.
        for (s, at) in within.iter().zip(&ode[3..]) {
            close(
                model::steady_level(dose, route, tau, k, v, *s),
                at.0,
                &format!("{what}: level {s} h after the dose"),
            );
        }
    }
}

/// A case of `n` oral doses every 12 h of a drug whose profile gives no absorption, written
/// with two levels after the last dose (they are replaced by the test's own k and V).
fn oral_case_text(n: usize, threshold: &str) -> String {
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
            "[[dose]]\ntime = {}\namount_mg = 300.0\nroute = \"oral\"\n",
            at(j as f64 * 12.0)
        );
    }
    let last = (n - 1) as f64 * 12.0;
    for (dt, value) in [(0.5, 7.0), (1.0, 3.0)] {
        s += &format!("[[level]]\ntime = {}\nvalue = {value}\n", at(last + dt));
    }
    s + threshold
}

#[test]
fn threshold_crossing_after_absorbed_doses_matches_the_ode() {
    // The last level is drawn before the last dose has peaked: the level still rises after
    // t0, so the fall starts from the peak (the contract's exponential from t0 would be early).
    let (k, v, ka, lag) = (0.1, 30.0, 0.3, 0.5);
    let route = Route::oral_absorbed(1.0, ka, lag);
    for below in [12.0, 3.0, 0.2] {
        let text = oral_case_text(8, &format!("[threshold]\nbelow = {below}\n"));
        let mut case = CaseFile::parse(&text).unwrap().validate().unwrap();
        for d in &mut case.doses {
            d.route = route;
        }
        // The last level is 1 h after the last dose: t0 is then before the peak.
        let last_dose = case.doses.last().unwrap().t;
        let mut f = fit::fit(&case).unwrap();
        f.k = k;
        f.volume_l = Some(v);
        f.k_ci95 = None;
        let p = Patient::new(&case, &f);
        let tp = projection::threshold(&p, below, None);
        let given = case.given().unwrap();
        let t0 = last_dose + 1.0;
        assert_eq!(tp.t0, t0);
        // Scan the ODE for the last time the level is above the threshold, then bisect.
        let scan: Vec<f64> = (0..4000).map(|i| t0 + i as f64 * 0.05).collect();
        let ode = integrate(&given, k, v, &scan);
        let Some(i) = ode.iter().rposition(|(c, _)| *c > below) else {
            assert_eq!(tp.reached_t, t0, "below {below}");
            continue;
        };
        // Between two scan points the fall is smooth: take the ODE on a fine grid there and
        // interpolate its logarithm.
        let fine: Vec<f64> = (0..=1000)
            .map(|j| scan[i] + 0.05 * j as f64 / 1000.0)
            .collect();
        let on = integrate(&given, k, v, &fine);
        let j = on.iter().rposition(|(c, _)| *c > below).unwrap();
        let (c1, c2) = (on[j].0, on[j + 1].0);
        let crossing = fine[j] + (fine[j + 1] - fine[j]) * (c1 / below).ln() / (c1 / c2).ln();
        assert!(
            (tp.reached_t - crossing).abs() <= 1e-6 * (crossing - t0),
            "below {below}: projection {} h, ODE {crossing} h",
            tp.reached_t - t0
        );
    }
}
