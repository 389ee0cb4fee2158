//! Properties of the core that must hold for any input (proptest).

use chrono::{Duration, NaiveDate, NaiveDateTime};
use proptest::prelude::*;
use proptest::test_runner::{FileFailurePersistence, TestCaseError};

use ebb::core::casefile::CaseFile;
use ebb::core::fit;
use ebb::core::model::{self, Route};
use ebb::core::projection::{self, Patient};
use ebb::core::report::{self, Report};
use ebb::core::{json, Error};

/// Proptest settings: failures are kept in proptest-regressions/ at the package root.
fn config() -> ProptestConfig {
    ProptestConfig {
        failure_persistence: Some(Box::new(FileFailurePersistence::Direct(
            "proptest-regressions/core_props.txt",
        ))),
        ..ProptestConfig::default()
    }
}

fn base() -> NaiveDateTime {
    NaiveDate::from_ymd_opt(2027, 3, 2)
        .unwrap()
        .and_hms_opt(8, 0, 0)
        .unwrap()
}

/// A TOML date-time `secs` seconds after the base time.
fn at(secs: i64) -> String {
    (base() + Duration::seconds(secs))
        .format("%Y-%m-%dT%H:%M:%S")
        .to_string()
}

/// A float as TOML writes it (nan and inf included).
fn toml_f(x: f64) -> String {
    if x.is_nan() {
        "nan".into()
    } else if x.is_infinite() {
        if x > 0.0 { "inf" } else { "-inf" }.into()
    } else {
        format!("{x:?}")
    }
}

fn route_strategy() -> impl Strategy<Value = Route> {
    prop_oneof![
        Just(Route::Bolus),
        (0.05f64..4.0).prop_map(|hours| Route::Infusion { hours }),
        (0.05f64..=1.0).prop_map(Route::oral),
    ]
}

fn route_lines(r: Route) -> String {
    match r {
        Route::Bolus => "route = \"bolus\"\n".into(),
        Route::Infusion { hours } => {
            format!("route = \"infusion\"\ninfusion_h = {}\n", toml_f(hours))
        }
        Route::Oral { f, .. } => format!("route = \"oral\"\nbioavailability = {}\n", toml_f(f)),
    }
}

// Noise-free exponential data after one dose recovers k to 1e-9 relative, whatever k, the
// times and the dose.
proptest! {
    #![proptest_config(config())]

    #[test]
    fn exact_exponential_levels_recover_k(
        k in 0.001f64..3.0,
        c_end in 0.01f64..5000.0,
        amount in 1.0f64..5000.0,
        route in route_strategy(),
        // Level times as whole minutes after the end of the dose, distinct after sorting.
        gaps in prop::collection::vec(1i64..600, 2..8),
    ) {
        let mut text = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
        text += &format!("[[dose]]\ntime = {}\namount_mg = {}\n{}", at(0), toml_f(amount), route_lines(route));
        // The end of the infusion on the clock, to the second, then levels after it.
        let end_secs = (route.infusion_h() * 3600.0).ceil() as i64;
        let mut secs = end_secs;
        let mut want = Vec::new();
        for g in &gaps {
            secs += g * 60;
            let h = (secs - end_secs) as f64 / 3600.0;
            let c = c_end * (-k * h).exp();
            // Skip levels too small to write as a positive float.
            prop_assume!(c > 1e-300);
            text += &format!("[[level]]\ntime = {}\nvalue = {}\n", at(secs), toml_f(c));
            want.push(c);
        }
        let case = CaseFile::parse(&text).unwrap().validate().unwrap();
        let f = fit::fit(&case).unwrap();
        prop_assert_eq!(f.used.len(), gaps.len());
        prop_assert!(((f.k - k) / k).abs() < 1e-9, "k {} fitted {}", k, f.k);
        if gaps.len() >= 3 {
            prop_assert!(f.r_squared.unwrap() > 1.0 - 1e-9);
        }
    }

    // Steady state: the trough never exceeds the peak, the accumulation factor is at least 1,
    // and every figure is finite and positive for sane regimens.
    #[test]
    fn trough_is_at_most_peak_and_accumulation_at_least_one(
        amount in 0.1f64..1e4,
        route in route_strategy(),
        extra in 0.0f64..72.0,
        k in 1e-4f64..5.0,
        v in 0.5f64..500.0,
    ) {
        let tau = route.infusion_h() + extra.max(1e-3);
        let ss = model::steady_state(amount, route, tau, k, v);
        prop_assert!(ss.trough_mg_l <= ss.peak_mg_l, "{:?}", ss);
        prop_assert!(ss.accumulation_factor >= 1.0, "{:?}", ss);
        for x in [ss.peak_mg_l, ss.trough_mg_l, ss.auc24_mg_h_l, ss.accumulation_factor] {
            prop_assert!(x.is_finite() && x > 0.0, "{:?}", ss);
        }
    }
}

/// A case: `n` doses of 100 mg every 12 h, two levels after the last, a plan, a threshold
/// below `below` and a procedure `proc_h` hours after the last dose.
fn plan_case(
    k: f64,
    plan_dose: f64,
    tau: f64,
    route: Route,
    below: f64,
    proc_h: f64,
) -> ebb::core::case::Case {
    let mut text = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
    for j in 0..3 {
        text += &format!(
            "[[dose]]\ntime = {}\namount_mg = 100.0\nroute = \"bolus\"\n",
            at(j * 12 * 3600)
        );
    }
    let last = 24 * 3600;
    for h in [1i64, 6] {
        let c = 8.0 * (-k * (h as f64 - 1.0)).exp();
        text += &format!(
            "[[level]]\ntime = {}\nvalue = {}\n",
            at(last + h * 3600),
            toml_f(c)
        );
    }
    text += &format!(
        "[plan]\ndose_mg = {}\ninterval_h = {}\n{}",
        toml_f(plan_dose),
        toml_f(tau),
        route_lines(route)
    );
    text += &format!(
        "[threshold]\nbelow = {}\nprocedure = {}\n",
        toml_f(below),
        at(last + (proc_h * 3600.0) as i64)
    );
    CaseFile::parse(&text).unwrap().validate().unwrap()
}

proptest! {
    #![proptest_config(config())]

    // Giving more of the plan's doses never lowers the level at the procedure, and the
    // latest plan dose found is the last one that keeps it at or below the threshold.
    #[test]
    fn more_plan_doses_never_lower_the_level_at_the_procedure(
        k in 0.01f64..1.0,
        plan_dose in 1.0f64..1000.0,
        tau in 4.0f64..48.0,
        route in route_strategy(),
        below in 0.01f64..10.0,
        proc_h in 1.0f64..200.0,
    ) {
        prop_assume!(route.infusion_h() <= tau);
        let case = plan_case(k, plan_dose, tau, route, below, proc_h);
        let f = fit::fit(&case).unwrap();
        let p = Patient::new(&case, &f);
        let plan = case.plan.as_ref().unwrap();
        let th = case.threshold.as_ref().unwrap();
        let tp = th.procedure_t.unwrap();
        let count = projection::plan_doses_before(plan, tp);
        let mut prev = p.level_with_plan(tp, plan, None).unwrap();
        let mut levels = Vec::new();
        for j in 0..count {
            let c = p.level_with_plan(tp, plan, Some(j)).unwrap();
            prop_assert!(c >= prev, "dose {}: {} < {}", j, c, prev);
            prev = c;
            levels.push(c);
            // Every counted plan dose falls strictly before the procedure.
            prop_assert!(plan.start_t + j as f64 * plan.interval_h < tp);
        }
        let proj = projection::threshold(&p, below, Some(tp));
        // Only doses that have fully entered by the procedure may be given (no infusion
        // running at the procedure; docs/methods-regimen.md, the procedure window rule).
        let done = proj.plan_doses_done_before.unwrap();
        prop_assert!(done <= count);
        if done > 0 {
            let end = plan.start_t + (done - 1) as f64 * plan.interval_h + route.infusion_h();
            prop_assert!(end <= tp);
        }
        match proj.latest_plan_dose {
            Some((j, t)) => {
                prop_assert!(t < tp && j < done);
                prop_assert!(t + route.infusion_h() <= tp);
                prop_assert!(levels[j] <= below);
                prop_assert_eq!(proj.level_at_procedure_mg_l, Some(levels[j]));
                if j + 1 < done {
                    prop_assert!(levels[j + 1] > below);
                }
            }
            None => {
                let none = p.level_with_plan(tp, plan, None).unwrap();
                prop_assert_eq!(proj.level_at_procedure_mg_l, Some(none));
                prop_assert!(done == 0 || levels[0] > below);
            }
        }
    }
}

/// Awkward floats: NaN, infinities, zeros, the extremes, negative and ordinary values.
fn any_number() -> impl Strategy<Value = f64> {
    prop_oneof![
        40 => 0.01f64..1000.0,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(f64::NEG_INFINITY),
        1 => Just(0.0),
        1 => Just(-0.0),
        1 => Just(f64::MAX),
        1 => Just(f64::MIN_POSITIVE),
        1 => Just(5e-324),
        1 => Just(1e300),
        1 => Just(1e-300),
        1 => -1000.0f64..0.0,
        1 => any::<f64>(),
    ]
}

/// Times: mostly hours apart, sometimes equal, reversed, far away, or with an offset.
fn any_time() -> impl Strategy<Value = String> {
    prop_oneof![
        40 => (0i64..200).prop_map(|h| at(h * 1800)),
        1 => Just(at(0)),
        1 => (-1000i64..0).prop_map(|m| at(m * 60)),
        1 => (0i64..3_000_000).prop_map(|m| at(m * 60)),
        1 => Just("9999-12-31T23:59:59".to_string()),
        1 => Just("0001-01-01T00:00:00".to_string()),
        1 => (0i64..400).prop_map(|h| format!("{}+01:00", at(h * 1800))),
        1 => Just("2027-03-02".to_string()),
    ]
}

fn any_route() -> impl Strategy<Value = String> {
    prop_oneof![
        10 => Just("bolus"),
        10 => Just("infusion"),
        10 => Just("oral"),
        1 => Just("iv"),
    ]
    .prop_map(|s| s.to_string())
}

/// One table's body from optional fields (None leaves a field out).
fn fields(pairs: &[(&str, Option<String>)]) -> String {
    pairs
        .iter()
        .filter_map(|(k, v)| v.as_ref().map(|v| format!("{k} = {v}\n")))
        .collect()
}

fn opt_num() -> impl Strategy<Value = Option<String>> {
    prop::option::weighted(0.9, any_number().prop_map(toml_f))
}

fn dose_table() -> impl Strategy<Value = String> {
    (
        any_time(),
        opt_num(),
        any_route(),
        opt_num(),
        prop::option::weighted(0.05, any_number().prop_map(toml_f)),
    )
        .prop_map(|(time, amount, route, inf, f)| {
            let inf = if route == "infusion" {
                inf.or(Some("0.5".into()))
            } else {
                inf.filter(|_| false)
            };
            format!(
                "[[dose]]\n{}",
                fields(&[
                    ("time", Some(time)),
                    ("amount_mg", amount),
                    ("route", Some(format!("\"{route}\""))),
                    ("infusion_h", inf),
                    ("bioavailability", f),
                ])
            )
        })
}

fn level_table() -> impl Strategy<Value = String> {
    (any_time(), any_number(), prop::option::of(any::<bool>())).prop_map(|(time, v, used)| {
        format!(
            "[[level]]\n{}",
            fields(&[
                ("time", Some(time)),
                ("value", Some(toml_f(v))),
                ("use", used.map(|b| b.to_string())),
            ])
        )
    })
}

fn case_text() -> impl Strategy<Value = String> {
    (
        prop_oneof![
            8 => Just("mg/L"),
            2 => Just("ng/mL"),
            2 => Just("mmol/L"),
            1 => Just("umol/L"),
            1 => Just("g/L")
        ],
        prop::option::weighted(0.7, any_number()),
        prop::collection::vec(dose_table(), 0..6),
        prop::collection::vec(level_table(), 0..9),
        prop::option::of((
            any_number(),
            any_number(),
            any_route(),
            any_number(),
            prop::option::of(any_time()),
        )),
        prop::option::of((
            any_number(),
            any_number(),
            any_number(),
            any_number(),
            any_number(),
        )),
        prop::option::of((any_number(), prop::option::of(any_time()))),
    )
        .prop_map(|(unit, molar, doses, levels, plan, targets, threshold)| {
            let mut s = format!("[drug]\nlevel_unit = \"{unit}\"\n");
            if let Some(m) = molar {
                s += &format!("molar_mass_g_mol = {}\n", toml_f(m));
            }
            for d in doses {
                s += &d;
            }
            for l in levels {
                s += &l;
            }
            if let Some((dose, tau, route, inf, start)) = plan {
                s += &format!(
                    "[plan]\ndose_mg = {}\ninterval_h = {}\nroute = \"{route}\"\n",
                    toml_f(dose),
                    toml_f(tau)
                );
                if route == "infusion" {
                    s += &format!("infusion_h = {}\n", toml_f(inf));
                }
                if let Some(t) = start {
                    s += &format!("start = {t}\n");
                }
            }
            if let Some((a, b, c, d, e)) = targets {
                s += &format!(
                    "[targets]\npeak = [{}, {}]\ntrough_max = {}\nauc24 = [{}, {}]\n",
                    toml_f(a),
                    toml_f(b),
                    toml_f(c),
                    toml_f(d),
                    toml_f(e)
                );
            }
            if let Some((below, procedure)) = threshold {
                s += &format!("[threshold]\nbelow = {}\n", toml_f(below));
                if let Some(p) = procedure {
                    s += &format!("procedure = {p}\n");
                }
            }
            s
        })
}

/// An ordinary number most of the time, an awkward one now and then.
fn mostly(x: impl Strategy<Value = f64>) -> impl Strategy<Value = String> {
    prop_oneof![12 => x, 1 => any_number()].prop_map(toml_f)
}

/// A near-valid case: doses in order, levels after them with noise, an optional plan,
/// targets and threshold; any number may turn awkward, and times may repeat or run
/// backwards. Reaches the fit and the projections far more often than `case_text`.
fn near_valid_case() -> impl Strategy<Value = String> {
    let dose = (
        route_strategy(),
        mostly(1.0f64..2000.0),
        prop::option::weighted(0.9, Just(())),
    );
    let level = (
        0i64..1500,
        mostly(0.001f64..500.0),
        prop::option::weighted(0.9, Just(true)),
    );
    (
        prop::collection::vec(dose, 1..6),
        prop_oneof![4 => 60i64..2880, 1 => Just(0i64), 1 => -600i64..0],
        prop::collection::vec(level, 2..7),
        prop::option::of((
            mostly(1.0f64..2000.0),
            mostly(1.0f64..72.0),
            route_strategy(),
            prop::option::of(-100i64..4000),
        )),
        prop::option::of((
            mostly(0.1f64..50.0),
            mostly(0.1f64..50.0),
            mostly(0.1f64..20.0),
        )),
        prop::option::of((mostly(0.001f64..50.0), prop::option::of(-500i64..10_000))),
        prop_oneof![4 => Just("mg/L"), 1 => Just("ng/mL"), 1 => Just("umol/L")],
    )
        .prop_map(|(doses, step, levels, plan, targets, threshold, unit)| {
            let mut s = format!("[drug]\nlevel_unit = \"{unit}\"\nmolar_mass_g_mol = 300.0\n");
            let mut t = 0i64;
            for (route, amount, known) in &doses {
                s += &format!("[[dose]]\ntime = {}\n{}", at(t * 60), route_lines(*route));
                if known.is_some() {
                    s += &format!("amount_mg = {amount}\n");
                }
                t += step;
            }
            let last = t - step;
            let mut lt = last;
            for (gap, value, used) in &levels {
                lt += gap;
                s += &format!("[[level]]\ntime = {}\nvalue = {value}\n", at(lt * 60));
                if used.is_none() {
                    s += "use = false\n";
                }
            }
            if let Some((dose, tau, route, start)) = plan {
                s += &format!(
                    "[plan]\ndose_mg = {dose}\ninterval_h = {tau}\n{}",
                    route_lines(route)
                );
                if let Some(m) = start {
                    s += &format!("start = {}\n", at((last + m) * 60));
                }
            }
            if let Some((lo, hi, trough)) = targets {
                s += &format!(
                    "[targets]\npeak = [{lo}, {hi}]\ntrough_max = {trough}\nauc24 = [{lo}, {hi}]\n"
                );
            }
            if let Some((below, procedure)) = threshold {
                s += &format!("[threshold]\nbelow = {below}\n");
                if let Some(m) = procedure {
                    s += &format!("procedure = {}\n", at((last + m) * 60));
                }
            }
            s
        })
}

/// The one check every generated case must pass: an error with a one-line message, or a
/// report with finite numbers that writes as text and JSON.
fn check_no_panic_no_nan(text: &str) -> Result<(), TestCaseError> {
    let built: Result<Report, Error> = CaseFile::parse(text)
        .and_then(|f| f.validate())
        .and_then(|c| report::build(&c).map(|r| (c, r)))
        .map(|(case, r)| {
            let mut out = Vec::new();
            report::write_text(&mut out, &case, &r).unwrap();
            assert!(String::from_utf8(out).unwrap().starts_with("CAUTION"));
            r
        });
    match built {
        Ok(r) => {
            for x in numbers(&r) {
                prop_assert!(x.is_finite(), "{} in {:?}\n{}", x, r, text);
            }
            let v: serde_json::Value = serde_json::from_str(&json::to_json(&r)).unwrap();
            if let Err(e) = no_stray_nulls(&v) {
                prop_assert!(false, "{}\n{}", e, text);
            }
        }
        Err(e) => {
            let m = e.to_string();
            prop_assert!(!m.is_empty() && !m.contains('\n'), "{:?}", m);
        }
    }
    Ok(())
}

/// Every number a built report holds, for the finiteness check.
fn numbers(r: &Report) -> Vec<f64> {
    let f = &r.fit;
    let mut xs = vec![f.k_per_h, f.half_life_h];
    xs.extend(f.r_squared);
    xs.extend(f.k_ci95_per_h.into_iter().flatten());
    xs.extend(f.half_life_ci95_h.into_iter().flatten());
    xs.extend(f.volume_l);
    xs.extend(f.clearance_l_per_h);
    if let Some(p) = &r.plan {
        xs.push(p.accumulation_factor);
        xs.extend(p.peak_ss);
        xs.extend(p.trough_ss);
        xs.extend(p.auc24_ss);
        xs.extend(p.time_to_ss_h);
        xs.extend(p.checks.iter().map(|c| c.value));
    }
    if let Some(t) = &r.threshold {
        xs.extend([t.below, t.c0, t.hours_from_t0]);
        xs.extend(t.level_at_procedure);
    }
    for w in &r.washout {
        xs.extend([w.level, w.fraction_remaining]);
    }
    xs
}

/// Every JSON number must be a number: serde_json writes NaN and infinities as null, so a
/// null is allowed only where the contract allows one.
fn no_stray_nulls(v: &serde_json::Value) -> Result<(), String> {
    let fit = &v["fit"];
    for key in ["k_per_h", "half_life_h", "levels_used"] {
        if !fit[key].is_number() {
            return Err(format!("fit.{key} is {}", fit[key]));
        }
    }
    if let Some(p) = v["plan"].as_object() {
        for key in [
            "accumulation_factor",
            "time_to_90pct_ss_h",
            "time_to_95pct_ss_h",
            "time_to_97pct_ss_h",
        ] {
            if !p[key].is_number() {
                return Err(format!("plan.{key} is {}", p[key]));
            }
        }
    }
    for w in v["washout"].as_array().into_iter().flatten() {
        if !w["level"].is_number() || !w["at"].is_string() {
            return Err(format!("washout row {w}"));
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2000, ..config() })]

    // No input panics: a case is either an error with a message, or a report whose every
    // number is finite and whose text and JSON can be written.
    #[test]
    fn no_case_file_panics_or_reports_a_non_finite_number(text in case_text()) {
        check_no_panic_no_nan(&text)?;
    }

    #[test]
    fn no_near_valid_case_panics_or_reports_a_non_finite_number(text in near_valid_case()) {
        check_no_panic_no_nan(&text)?;
    }
}

/// The case text without its `[targets]` table (four lines as `near_valid_case` writes it).
fn without_targets(text: &str) -> String {
    match text.find("[targets]\n") {
        None => text.to_string(),
        Some(at) => {
            let rest = &text[at..];
            let end = rest
                .match_indices('\n')
                .nth(3)
                .map_or(rest.len(), |(i, _)| i + 1);
            format!("{}{}", &text[..at], &rest[end..])
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 500, ..config() })]

    // Targets placed exactly on the projected figures are met (bounds are inclusive) and
    // nothing downstream of them (suggestions, advice) panics on the degenerate ranges.
    #[test]
    fn targets_on_the_projected_figures_are_met(text in near_valid_case()) {
        let text = without_targets(&text);
        let Ok(case) = CaseFile::parse(&text).and_then(|f| f.validate()) else {
            return Ok(());
        };
        let Ok(r) = report::build(&case) else { return Ok(()) };
        let Some((peak, trough, auc)) = r.plan.as_ref().and_then(|p| {
            Some((p.peak_ss?, p.trough_ss?, p.auc24_ss?))
        }) else {
            return Ok(());
        };
        if !(peak > 0.0 && trough > 0.0 && auc > 0.0) {
            return Ok(()); // underflowed figures cannot be targets (they must be above 0)
        }
        let targets = format!(
            "[targets]\npeak = [{}, {}]\ntrough_max = {}\nauc24 = [{}, {}]\n",
            toml_f(peak), toml_f(peak), toml_f(trough), toml_f(auc), toml_f(auc)
        );
        let again = CaseFile::parse(&(text.clone() + &targets)).and_then(|f| f.validate());
        let case = again.map_err(|e| TestCaseError::fail(format!("{e}\n{text}")))?;
        let r = report::build(&case).map_err(|e| TestCaseError::fail(format!("{e}\n{text}")))?;
        prop_assert_eq!(r.plan.as_ref().unwrap().meets_targets, Some(true), "{}", text);
    }
}
