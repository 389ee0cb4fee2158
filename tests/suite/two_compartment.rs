//! The two-compartment closed forms (macro-constants α, β) against a numerical integration of
//! the two-compartment ODE, over 30-dose records of every route.
//!
//! dA1/dt = R(t) + Σ ka·G − (k10 + k12)·A1 + k21·A2, dA2/dt = k12·A1 − k21·A2, C = A1/V1,
//! with a jump of F·D into A1 at each bolus or instant oral dose and a gut store per
//! absorption rate (dG/dt = −ka·G) filled at the end of each absorbed dose's lag: the
//! fixed-step classic Runge-Kutta (RK4) of `super::ode`, written in the tests.
//! Self-consistency checks: no outside source needed.

use super::ode::{close, regimen};
use ebb::core::model::{Administration, Disposition, Route, Schedule, TwoCompartment};

/// Level (mg/L) and its running area (mg·h/L) at each of the `at` times (any order), from the
/// shared RK4 integration (`super::ode`) of the two-compartment model.
fn integrate(doses: &[Administration], p: TwoCompartment, at: &[f64]) -> Vec<(f64, f64)> {
    super::ode::integrate(doses, &super::ode::Two(p), at)
}

/// The typical adult of a vancomycin-like and a gentamicin-like disposition (invented values
/// of the usual size; the check is of the algebra).
fn dispositions() -> [TwoCompartment; 3] {
    [
        TwoCompartment {
            cl: 3.2,
            v1: 58.0,
            q: 6.5,
            v2: 38.0,
        },
        TwoCompartment {
            cl: 3.4,
            v1: 17.6,
            q: 1.45,
            v2: 10.9,
        },
        // A fast distribution into a large peripheral volume.
        TwoCompartment {
            cl: 1.1,
            v1: 9.0,
            q: 14.0,
            v2: 120.0,
        },
    ]
}

#[test]
fn two_compartment_courses_match_the_ode_over_thirty_doses_of_every_route() {
    let routes = [
        ("infusion", Route::Infusion { hours: 1.0 }, 12.0),
        ("bolus", Route::Bolus, 8.0),
        ("oral instant", Route::oral(0.8), 12.0),
        ("oral absorbed", Route::oral_absorbed(0.9, 1.3, 0.5), 12.0),
    ];
    for p in dispositions() {
        let d = Disposition::Two(p);
        for (name, route, tau) in routes {
            let mut doses = regimen(30, 500.0, route, tau);
            // An irregular record: one late dose, one skipped, one extra infusion overlapping.
            doses[7].t += 2.75;
            doses.remove(15);
            doses.push(Administration {
                t: 100.3,
                amount_mg: 250.0,
                route: Route::Infusion { hours: 3.0 },
            });
            let until = 30.0 * tau + 48.0;
            let mut ts: Vec<f64> = (1..)
                .map(|j| j as f64 * 0.913)
                .take_while(|&t| t < until)
                .collect();
            ts.extend(doses.iter().flat_map(|x| [x.t, x.end(), x.t + 0.25]));
            ts.sort_by(f64::total_cmp);
            ts.dedup();
            let ode = integrate(&doses, p, &ts);
            let pass = d.levels(&Schedule::new(&doses), &ts);
            for ((t, (c, _)), fwd) in ts.iter().zip(&ode).zip(&pass) {
                let what = format!("{p:?} {name} at {t}");
                close(d.superpose(&doses, *t), *c, &what);
                close(*fwd, *c, &format!("{what} (forward pass)"));
            }
        }
    }
}

#[test]
fn two_compartment_steady_state_matches_the_ode() {
    for p in dispositions() {
        let d = Disposition::Two(p);
        let beta = d.terminal_k();
        for (route, tau) in [
            (Route::Infusion { hours: 1.0 }, 12.0),
            (Route::Infusion { hours: 2.0 }, 24.0),
            (Route::Bolus, 8.0),
            (Route::oral_absorbed(0.9, 1.3, 0.5), 12.0),
        ] {
            // Enough doses for steady state far below the tolerance.
            let n = (25.0 / (beta * tau)).ceil() as usize + 2;
            let doses = regimen(n + 1, 500.0, route, tau);
            let last = doses[n - 1].t;
            let ss = d.steady_state(500.0, route, tau);
            let at_peak = last
                + ss.peak_after_h
                + if route.infusion_h() == 0.0 && route.absorption().is_none() {
                    1e-9
                } else {
                    0.0
                };
            let within = [0.3, 1.7, 0.5 * tau, tau - 0.2];
            let mut ts = vec![last, at_peak, last + tau];
            ts.extend(within.iter().map(|s| last + s));
            let ode = integrate(&doses, p, &ts);
            let what = format!("{p:?} {route:?} q{tau}h");
            close(
                ss.trough_mg_l,
                ode[0].0,
                &format!("{what}: pre-dose trough"),
            );
            close(ss.trough_mg_l, ode[2].0, &format!("{what}: trough"));
            // The bolus peak is the limit just after the dose (the ODE 1 ns later).
            close(ss.peak_mg_l, ode[1].0, &format!("{what}: peak"));
            close(
                ss.auc24_mg_h_l,
                (ode[2].1 - ode[0].1) * 24.0 / tau,
                &format!("{what}: AUC24"),
            );
            // The level at any moment of the interval.
            for (s, o) in within.iter().zip(&ode[3..]) {
                close(
                    d.steady_level(500.0, route, tau, *s),
                    o.0,
                    &format!("{what}: at {s} h"),
                );
            }
            if route.absorption().is_some() {
                // The peak is the highest point of the interval.
                let mut x = 0.0;
                while x < tau {
                    assert!(d.steady_level(500.0, route, tau, x) <= ss.peak_mg_l * (1.0 + 1e-12));
                    x += 0.01;
                }
            }
        }
    }
}

#[test]
fn time_to_a_fraction_of_steady_state_matches_a_long_infusion_in_the_ode() {
    for p in dispositions() {
        let d = Disposition::Two(p);
        // A constant infusion running for far longer than any of the times.
        let doses = [Administration {
            t: 0.0,
            amount_mg: 1.0e5,
            route: Route::Infusion { hours: 1.0e4 },
        }];
        let css = 1.0e5 / 1.0e4 / p.cl;
        for f in [0.5, 0.9, 0.95, 0.97] {
            let t = d.time_to_fraction_of_ss(f);
            let c = integrate(&doses, p, &[t])[0].0;
            close(c, f * css, &format!("{p:?} {f}"));
        }
        // Faster than the terminal half-life alone would say, and never faster than the
        // distribution rate.
        let by_beta = -(0.1f64).ln() / d.terminal_k();
        assert!(d.time_to_fraction_of_ss(0.9) < by_beta);
    }
}

#[test]
fn macro_constants_satisfy_their_defining_relations() {
    for p in dispositions() {
        let (k10, k12, k21) = p.micro();
        let (a, b) = p.rates();
        close(a + b, k10 + k12 + k21, "α + β");
        close(a * b, k10 * k21, "α·β");
        let [ma, mb] = p.modes();
        // A unit bolus: C(0) = 1/V1 and the area 1/CL.
        close(ma.per_l + mb.per_l, 1.0 / p.v1, "A + B");
        close(ma.per_l / a + mb.per_l / b, 1.0 / p.cl, "A/α + B/β");
        assert!(ma.per_l > 0.0 && mb.per_l > 0.0 && a > b && b > 0.0);
    }
}

/// A case of `n` doses of 1000 mg over 1 h every 12 h, two levels after the last, a plan and a
/// threshold; its fit replaced by the two-compartment disposition `p` (the check is of the
/// projections, not of the fit).
fn case_with(
    p: TwoCompartment,
) -> (
    ebb::core::case::Case,
    ebb::core::fit::Fit,
    Vec<Administration>,
) {
    let mut s = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
    let base = chrono::NaiveDate::from_ymd_opt(2027, 1, 30)
        .unwrap()
        .and_hms_opt(6, 0, 0)
        .unwrap();
    let at = |h: f64| {
        let t = base + chrono::Duration::seconds((h * 3600.0).round() as i64);
        t.format("%Y-%m-%dT%H:%M:%S").to_string()
    };
    for j in 0..8 {
        s += &format!(
            "[[dose]]\ntime = {}\namount_mg = 1000.0\nroute = \"infusion\"\ninfusion_h = 1.0\n",
            at(j as f64 * 12.0)
        );
    }
    for (dt, value) in [(86.0, 30.0), (95.0, 15.0)] {
        s += &format!("[[level]]\ntime = {}\nvalue = {value}\n", at(dt));
    }
    s += &format!(
        "[plan]\ndose_mg = 1250.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 1.5\nstart = {}\n[threshold]\nbelow = 5.0\nprocedure = {}\n",
        at(96.0),
        at(150.0)
    );
    let case = ebb::core::casefile::CaseFile::parse(&s)
        .unwrap()
        .validate()
        .unwrap();
    let mut f = ebb::core::fit::fit(&case).unwrap();
    let d = Disposition::Two(p);
    f.two = Some(p);
    f.k = d.terminal_k();
    f.half_life_h = std::f64::consts::LN_2 / f.k;
    f.volume_l = Some(p.v1);
    f.clearance_l_per_h = Some(p.cl);
    f.k_ci95 = None;
    f.half_life_ci95 = None;
    f.spread = None;
    f.param_spread = Some(ebb::core::spread::ParamSpread {
        cov: vec![
            vec![0.04, 0.0, 0.0, 0.0],
            vec![0.0, 0.09, 0.0, 0.0],
            vec![0.0, 0.0, 0.0, 0.0],
            vec![0.0, 0.0, 0.0, 0.05],
        ],
        quantile: 1.959964,
    });
    let given = case.given().unwrap();
    (case, f, given)
}

#[test]
fn every_projection_of_a_two_compartment_fit_follows_the_ode() {
    use ebb::core::projection::{self, Patient};
    let p = dispositions()[0];
    let (case, f, given) = case_with(p);
    let pt = Patient::new(&case, &f);
    // The course with the record.
    let ts = [90.0, 97.5, 110.0];
    let ode = integrate(&given, p, &ts);
    for (t, o) in ts.iter().zip(&ode) {
        close(pt.level_mg_l(*t), o.0, &format!("record at {t}"));
    }
    // With plan doses 0..=3 given.
    let pl = case.plan.as_ref().unwrap();
    let mut all = given.clone();
    for j in 0..4 {
        all.push(Administration {
            t: pl.start_t + j as f64 * 12.0,
            amount_mg: 1250.0,
            route: Route::Infusion { hours: 1.5 },
        });
    }
    let at = pl.start_t + 3.0 * 12.0 + 7.3;
    close(
        pt.level_with_plan(at, pl, Some(3)).unwrap(),
        integrate(&all, p, &[at])[0].0,
        "record and plan",
    );
    // The threshold crossing with no further dose, against a bisection of the ODE.
    let th = projection::threshold(&pt, 5.0, None);
    let (mut lo, mut hi) = (th.t0, th.t0 + 400.0);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if integrate(&given, p, &[mid])[0].0 > 5.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    assert!(
        (th.reached_t - 0.5 * (lo + hi)).abs() < 1e-6 * (hi - th.t0),
        "{} vs {}",
        th.reached_t,
        0.5 * (lo + hi)
    );
    // Steady state and time to steady state through the disposition.
    let pp = projection::plan(&pt, pl);
    let d = Disposition::Two(p);
    let ss = pp.steady.unwrap();
    assert_eq!(
        ss,
        d.steady_state(1250.0, Route::Infusion { hours: 1.5 }, 12.0)
    );
    assert_eq!(pp.time_to_ss_h[0], d.time_to_fraction_of_ss(0.9));
    // The washout counts terminal half-lives.
    let rows = projection::washout(&pt, None);
    close(
        rows[0].t - pt.last_dose_end(),
        std::f64::consts::LN_2 / d.terminal_k(),
        "washout step",
    );
    // The band holds the level and widens with the spread.
    let band = ebb::core::uncertainty::band(&case, &f, &ts);
    for (b, o) in band.iter().zip(&ode) {
        let [lo, hi] = b.band.unwrap();
        close(b.mg_l, o.0, "band centre");
        assert!(lo < b.mg_l && b.mg_l < hi, "{b:?}");
    }
    let r = ebb::core::uncertainty::steady_ranges(&f, pl).unwrap();
    assert!(r.auc24[0] < ss.auc24_mg_h_l && ss.auc24_mg_h_l < r.auc24[1]);
    // AUC24 = dose/CL: its log moves with ln CL only, so its range is e^(±1.96·0.2).
    close(
        r.auc24[1] / ss.auc24_mg_h_l,
        (1.959964f64 * 0.2).exp(),
        "AUC range",
    );
}

#[test]
fn the_report_of_a_two_compartment_fit_says_so() {
    let p = dispositions()[1];
    let (case, f, _) = case_with(p);
    let r = ebb::core::report::build_from_fit(&case, &f).unwrap();
    assert_eq!(r.fit.compartments, 2);
    let pe = r.fit.peripheral.unwrap();
    close(
        pe.distribution_half_life_h,
        std::f64::consts::LN_2 / p.rates().0,
        "distribution half-life",
    );
    let json: serde_json::Value = serde_json::from_str(&ebb::core::json::to_json(&r)).unwrap();
    assert_eq!(json["fit"]["compartments"], 2);
    assert_eq!(json["fit"]["peripheral_volume_l"], p.v2);
    assert_eq!(json["fit"]["intercompartmental_clearance_l_per_h"], p.q);
    let mut text = Vec::new();
    ebb::core::report::write_text(&mut text, &case, &r).unwrap();
    let text = String::from_utf8(text).unwrap();
    assert!(
        text.contains("two compartments: distribution half-life"),
        "{text}"
    );
    assert!(text.contains("(terminal)"), "{text}");
    // The caution names the model the figures assume.
    assert!(text.contains("Figures assume linear two-compartment kinetics"));
    assert!(json["caution"]
        .as_str()
        .unwrap()
        .contains("two-compartment kinetics"));
    let svg = ebb::cli::plot::plot_svg_from(&case, &f, &r).unwrap();
    assert!(svg.contains("two-compartment kinetics"));
    // The record note's method says which model.
    let meta = ebb::core::note::NoteMeta {
        made_at: "2027-02-05 07:15".into(),
        version: "9.9.9".into(),
        source: "case.toml".into(),
    };
    let note = ebb::core::note::note_text(&case, &r, &meta, ebb::core::note::NoteFormat::Text);
    assert!(note.contains("Linear two-compartment model"), "{note}");
    assert!(!note.contains("Linear one-compartment model"), "{note}");
    // The one-compartment report of the same case says nothing of it.
    let one = ebb::core::report::build(&case).unwrap();
    assert_eq!(one.fit.compartments, 1);
    let json: serde_json::Value = serde_json::from_str(&ebb::core::json::to_json(&one)).unwrap();
    assert_eq!(json["fit"]["compartments"], 1);
    assert!(json["fit"]["distribution_half_life_h"].is_null());
}
