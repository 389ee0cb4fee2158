//! Hostile input through the whole pipeline: case file, drug profile, validation, fit, then
//! the text report, the JSON and the record note. Complements tests/suite/core_props.rs (which
//! covers doses, levels, plan, targets and threshold numbers): here the patient and profile
//! fields, Bayesian and dose-history fits, switch and resume, years 1900 to 2200, time zones
//! across daylight-saving changes, and 10,000 doses. For every input: no panic; either a
//! rejection whose one-line message names a field, a row or a line, or output in which no
//! number is NaN or infinite.

use std::io::Write;

use chrono::{Datelike, Duration, NaiveDate, NaiveDateTime, Offset, TimeZone};
use chrono_tz::Tz;
use proptest::prelude::*;
use proptest::test_runner::{FileFailurePersistence, TestCaseError};

use ebb::cli;
use ebb::core::note::{self, NoteFormat, NoteMeta};
use ebb::core::{report, Error};

fn config(cases: u32) -> ProptestConfig {
    ProptestConfig {
        cases,
        failure_persistence: Some(Box::new(FileFailurePersistence::Direct(
            "proptest-regressions/core_hostile.txt",
        ))),
        ..ProptestConfig::default()
    }
}

// ---- numbers ---------------------------------------------------------------------------

/// The numbers a careless or broken source might put in a field.
fn hostile() -> impl Strategy<Value = f64> {
    prop_oneof![
        Just(f64::NAN),
        Just(f64::INFINITY),
        Just(f64::NEG_INFINITY),
        Just(0.0),
        Just(-0.0),
        Just(5e-324),                  // the smallest subnormal
        Just(1e-310),                  // a subnormal
        Just(f64::MIN_POSITIVE / 3.0), // a subnormal
        Just(f64::MIN_POSITIVE),
        Just(1e-300),
        Just(1e300),
        Just(-1e300),
        Just(f64::MAX),
        -1e6f64..0.0,
        any::<f64>(),
    ]
}

/// A number from `ordinary` most of the time, a hostile one now and then.
fn mostly(ordinary: impl Strategy<Value = f64>) -> impl Strategy<Value = f64> {
    prop_oneof![12 => ordinary, 1 => hostile()]
}

/// An optional field: absent, ordinary, or hostile.
fn field(ordinary: impl Strategy<Value = f64>) -> impl Strategy<Value = Option<f64>> {
    prop::option::weighted(0.6, mostly(ordinary))
}

/// A float as TOML writes it (nan and inf included).
pub(crate) fn toml_f(x: f64) -> String {
    if x.is_nan() {
        "nan".into()
    } else if x.is_infinite() {
        if x > 0.0 { "inf" } else { "-inf" }.into()
    } else {
        format!("{x:?}")
    }
}

/// `key = value` and a newline, or nothing for no value.
pub(crate) fn line(key: &str, v: Option<f64>) -> String {
    v.map(|x| format!("{key} = {}\n", toml_f(x)))
        .unwrap_or_default()
}

// ---- running a case and checking what comes out -------------------------------------------

/// The case text in a temporary `.toml` file, removed when dropped.
fn scratch_file(text: &str) -> tempfile::NamedTempFile {
    let mut file = tempfile::Builder::new().suffix(".toml").tempfile().unwrap();
    file.write_all(text.as_bytes()).unwrap();
    file
}

/// The places a message may name: a row, a table's field, a line of the file.
pub(crate) fn names_a_place(e: &Error) -> bool {
    const PLACES: [&str; 16] = [
        "dose ",
        "level",
        "plan",
        "patient.",
        "drug.",
        "targets.",
        "threshold",
        "switch",
        "fit.",
        "time_zone",
        "schema",
        "washout",
        "prior.",
        "output",
        "dialysis_session",
        "plot",
    ];
    match e {
        Error::InFile { source, .. } => names_a_place(source),
        Error::Read { .. } => true,
        Error::Syntax { line, .. } => *line >= 1,
        Error::Invalid { place, .. } => PLACES.iter().any(|p| place.starts_with(p)),
        Error::Fit(_) => false,
    }
}

fn check_rejection(e: &Error, text: &str) -> Result<(), TestCaseError> {
    let m = e.to_string();
    prop_assert!(!m.is_empty() && !m.contains('\n'), "{:?}", m);
    prop_assert!(names_a_place(e), "names no field or row: {}\n{}", m, text);
    Ok(())
}

/// Words that would mean a non-finite number reached the output.
pub(crate) fn non_finite_word(out: &str) -> Option<&str> {
    out.split(|c: char| !c.is_ascii_alphanumeric())
        .find(|w| matches!(*w, "NaN" | "nan" | "inf" | "Inf" | "Infinity" | "infinity"))
}

fn check_json(json: &str, text: &str) -> Result<(), TestCaseError> {
    prop_assert!(non_finite_word(json).is_none(), "{}\n{}", json, text);
    let v: serde_json::Value = serde_json::from_str(json).unwrap();
    // A saturable drug (phenytoin): no first-order fit, and its own figures never null.
    if let Some(m) = v["saturable"].as_object() {
        prop_assert!(v["fit"].is_null(), "{}", json);
        for key in ["vmax_mg_per_day", "km_mg_l", "deciding_level"] {
            prop_assert!(
                m[key].is_number(),
                "saturable.{} in {}\n{}",
                key,
                json,
                text
            );
        }
        return Ok(());
    }
    // serde_json writes a NaN or an infinity as null: these must never be null.
    for key in ["k_per_h", "half_life_h", "levels_used"] {
        prop_assert!(
            v["fit"][key].is_number(),
            "fit.{} in {}\n{}",
            key,
            json,
            text
        );
    }
    if let Some(p) = v["plan"].as_object() {
        for key in ["accumulation_factor", "time_to_90pct_ss_h"] {
            prop_assert!(p[key].is_number(), "plan.{} in {}\n{}", key, json, text);
        }
    }
    for w in v["washout"].as_array().into_iter().flatten() {
        prop_assert!(w["level"].is_number(), "washout in {}\n{}", json, text);
    }
    Ok(())
}

/// The one check: load the case as `ebb report FILE` does (drug profile included), then
/// write the text report, the JSON and the note; any failure must be a named rejection.
fn check(text: &str) -> Result<(), TestCaseError> {
    let file = scratch_file(text);
    let outcome = cli::load_case_with(file.path(), None);
    let analysis = cli::analyse_file(file.path(), None);
    drop(file);
    let case = match outcome {
        Ok(c) => c,
        Err(e) => return check_rejection(&e, text),
    };
    let Ok(analysis) = analysis else {
        return Err(TestCaseError::fail("the case loaded, so it must analyse"));
    };
    for as_json in [false, true] {
        let mut out = Vec::new();
        match cli::write_report(&mut out, &analysis, "case.toml", as_json) {
            Err(e) => check_rejection(&e, text)?,
            Ok(()) => {
                let out = String::from_utf8(out).unwrap();
                if as_json {
                    check_json(&out, text)?;
                } else {
                    prop_assert!(out.starts_with("CAUTION"), "{}", out);
                    let bad = non_finite_word(&out);
                    prop_assert!(bad.is_none(), "{:?} in\n{}\n{}", bad, out, text);
                }
            }
        }
    }
    if let Ok(r) = report::build(&case) {
        let meta = NoteMeta {
            made_at: "2027-03-05 09:00".into(),
            version: "test".into(),
            source: "case.toml".into(),
        };
        for format in [NoteFormat::Text, NoteFormat::Markdown] {
            let n = note::note_text(&case, &r, &meta, format);
            prop_assert!(non_finite_word(&n).is_none(), "{}\n{}", n, text);
        }
    }
    Ok(())
}

// ---- patient, profile, fit method, switch and resume --------------------------------------

fn at(base: NaiveDateTime, minutes: i64) -> String {
    (base + Duration::minutes(minutes))
        .format("%Y-%m-%dT%H:%M:%S")
        .to_string()
}

#[derive(Debug, Clone)]
struct Fields {
    profile: Option<&'static str>,
    method: Option<&'static str>,
    patient: [Option<f64>; 4],
    sex: Option<&'static str>,
    molar: Option<f64>,
    k: f64,
    c0: f64,
    noise: Vec<f64>,
    oral_f: Option<f64>,
    plan: Option<(f64, f64, Option<f64>)>,
    threshold: Option<(f64, Option<f64>, Option<f64>)>,
    switch: Option<(Option<f64>, Option<f64>)>,
}

fn fields() -> impl Strategy<Value = Fields> {
    (
        (
            prop::option::of(prop::sample::select(vec![
                "vancomycin",
                "gentamicin",
                "digoxin",
                "lithium",
                "theophylline",
                "phenytoin",
                "nosuch",
            ])),
            prop::option::of(prop::sample::select(vec![
                "log-linear",
                "dose-history",
                "bayesian",
            ])),
            (
                field(30.0f64..150.0), // weight_kg
                field(18.0f64..95.0),  // age_years
                field(0.4f64..4.0),    // creatinine, mg/dL or umol/L (x 88.4)
                prop_oneof![8 => Just(0u8), 8 => Just(1u8), 1 => Just(2u8)],
            )
                .prop_map(|(w, a, c, unit)| match unit {
                    0 => [w, a, c, None],
                    1 => [w, a, None, c.map(|x| x * 88.4)],
                    _ => [w, a, c, c], // both units: refused
                }),
            prop::option::of(prop::sample::select(vec![
                "female", "male", "female", "male", "female", "male", "other",
            ])),
            field(6.0f64..1500.0),
        ),
        (
            mostly(0.01f64..0.6),
            mostly(2.0f64..60.0),
            prop::collection::vec(mostly(0.9f64..1.1), 2..5),
            field(0.2f64..1.0),
        ),
        (
            prop::option::of((
                mostly(50.0f64..3000.0),
                mostly(4.0f64..48.0),
                field(0.2f64..3.0),
            )),
            prop::option::of((
                mostly(0.05f64..10.0),
                field(0.1f64..20.0),
                field(0.0f64..72.0),
            )),
            prop::option::of(prop_oneof![
                4 => mostly(0.1f64..10.0).prop_map(|x| (Some(x), None)),
                4 => mostly(0.5f64..8.0).prop_map(|n| (None, Some(n))),
                1 => (field(0.1f64..10.0), field(0.5f64..8.0)),
            ]),
        ),
    )
        .prop_map(
            |(
                (profile, method, patient, sex, molar),
                (k, c0, noise, oral_f),
                (plan, threshold, switch),
            )| Fields {
                profile,
                method,
                patient,
                sex,
                molar,
                k,
                c0,
                noise,
                oral_f,
                plan,
                threshold,
                switch,
            },
        )
}

fn fields_case(f: &Fields) -> String {
    let base = NaiveDate::from_ymd_opt(2027, 3, 2)
        .unwrap()
        .and_hms_opt(8, 0, 0)
        .unwrap();
    let unit = match f.profile {
        Some("digoxin") => "ng/mL",
        Some("lithium") => "mmol/L",
        _ => "mg/L",
    };
    let mut s = String::from("[patient]\n");
    for (key, v) in [
        "weight_kg",
        "age_years",
        "creatinine_mg_dl",
        "creatinine_umol_l",
    ]
    .iter()
    .zip(f.patient)
    {
        s += &line(key, v);
    }
    if let Some(sex) = f.sex {
        s += &format!("sex = \"{sex}\"\n");
    }
    s += &format!("[drug]\nlevel_unit = \"{unit}\"\n");
    if let Some(p) = f.profile {
        s += &format!("profile = \"{p}\"\n");
    }
    s += &line("molar_mass_g_mol", f.molar);
    // Three doses 12 h apart, the last one oral when a bioavailability is given.
    for i in 0..3 {
        s += &format!(
            "[[dose]]\ntime = {}\namount_mg = 500.0\n",
            at(base, i * 720)
        );
        match (i, f.oral_f) {
            (2, Some(bio)) => {
                s += &format!("route = \"oral\"\nbioavailability = {}\n", toml_f(bio))
            }
            _ => s += "route = \"infusion\"\ninfusion_h = 1.0\n",
        }
    }
    // Levels after the last dose, on an exponential with noise.
    for (j, n) in f.noise.iter().enumerate() {
        let h = 2.0 + 3.0 * j as f64;
        let v = f.c0 * (-f.k * h).exp() * n;
        s += &format!(
            "[[level]]\ntime = {}\nvalue = {}\n",
            at(base, 1440 + (h * 60.0) as i64),
            toml_f(v)
        );
    }
    if let Some((dose, tau, inf)) = f.plan {
        s += &format!(
            "[plan]\ndose_mg = {}\ninterval_h = {}\nroute = \"infusion\"\ninfusion_h = {}\n",
            toml_f(dose),
            toml_f(tau),
            toml_f(inf.unwrap_or(1.0))
        );
    }
    if let Some((below, resume_below, resume_after)) = f.threshold {
        s += &format!(
            "[threshold]\nbelow = {}\nprocedure = {}\n",
            toml_f(below),
            at(base, 1440 + 48 * 60)
        );
        s += &line("resume_below", resume_below);
        s += &line("resume_after_h", resume_after);
    }
    if let Some((start_below, after)) = f.switch {
        s += "[switch]\nto = \"next agent\"\n";
        s += &line("start_below", start_below);
        s += &line("after_half_lives", after);
    }
    if let Some(m) = f.method {
        s += &format!("[fit]\nmethod = \"{m}\"\n");
    }
    s
}

proptest! {
    #![proptest_config(config(400))]

    #[test]
    fn hostile_patient_profile_switch_and_resume_fields_never_leak(f in fields()) {
        check(&fields_case(&f))?;
    }
}

// ---- times: years 1900 to 2200, daylight-saving changes, equal and reversed times ---------

const ZONES: [&str; 7] = [
    "Europe/Paris",
    "America/New_York",
    "Australia/Lord_Howe", // a half-hour change
    "Pacific/Chatham",     // an offset of 12:45 or 13:45
    "America/Sao_Paulo",   // changes in some years, none in others
    "Asia/Kolkata",        // no change
    "UTC",
];

/// Midnight (wall clock) of the first day of `year` on which `zone`'s offset changes, or of
/// a day in March when it never does that year.
fn change_day(zone: Tz, year: i32) -> NaiveDateTime {
    let offset_at = |d: NaiveDate| {
        zone.from_utc_datetime(&d.and_hms_opt(12, 0, 0).unwrap())
            .offset()
            .fix()
    };
    let mut d = NaiveDate::from_ymd_opt(year, 1, 1).unwrap();
    while d.year() == year {
        let next = d.succ_opt().unwrap();
        if offset_at(d) != offset_at(next) {
            return next.and_hms_opt(0, 0, 0).unwrap();
        }
        d = next;
    }
    NaiveDate::from_ymd_opt(year, 3, 15)
        .unwrap()
        .and_hms_opt(0, 0, 0)
        .unwrap()
}

#[derive(Debug, Clone)]
struct Times {
    zone: Option<usize>,
    year: i32,
    dose_min: Vec<i64>,
    level_min: Vec<i64>,
    with_offsets: bool,
}

fn times() -> impl Strategy<Value = Times> {
    // Doses in minutes from the wall-clock midnight before a change: mostly in the hours
    // around it, in 10-minute steps so that gaps and repeats are hit, sometimes equal.
    let dose = prop_oneof![
        6 => (0i64..30).prop_map(|m| m * 10),
        1 => Just(150i64),
        1 => -3000i64..3000,
    ];
    // Levels in minutes after the last dose: mostly after it and across the change,
    // sometimes at the same time as it or before it.
    let level = prop_oneof![
        8 => (1i64..60).prop_map(|m| m * 10),
        1 => Just(0i64),
        1 => -600i64..0,
    ];
    (
        prop::option::weighted(0.85, 0..ZONES.len()),
        prop_oneof![1900i32..=2200, Just(1900), Just(2200), Just(2027)],
        prop::collection::vec(dose, 1..4),
        prop::collection::vec(level, 2..5),
        prop::bool::weighted(0.2),
    )
        .prop_map(|(zone, year, dose_min, level_after, with_offsets)| {
            let last = dose_min.iter().copied().max().unwrap_or(0);
            Times {
                zone,
                year,
                level_min: level_after.iter().map(|m| last + m).collect(),
                dose_min,
                with_offsets,
            }
        })
}

fn times_case(t: &Times) -> (String, Option<Tz>, NaiveDateTime) {
    let zone: Option<Tz> = t.zone.map(|i| ZONES[i].parse().unwrap());
    let midnight = match zone {
        Some(z) => change_day(z, t.year),
        None => NaiveDate::from_ymd_opt(t.year, 3, 28)
            .unwrap()
            .and_hms_opt(0, 0, 0)
            .unwrap(),
    };
    // With offsets: the zone's offset written out (and no time_zone), so each row carries
    // its own offset across the change.
    let stamp = |m: i64| -> String {
        let wall = midnight + Duration::minutes(m);
        match (zone, t.with_offsets) {
            (Some(z), true) => match z.from_local_datetime(&wall).earliest() {
                Some(x) => x.fixed_offset().format("%Y-%m-%dT%H:%M:%S%:z").to_string(),
                None => wall.format("%Y-%m-%dT%H:%M:%S+00:00").to_string(),
            },
            _ => wall.format("%Y-%m-%dT%H:%M:%S").to_string(),
        }
    };
    let mut s = String::new();
    if let (Some(z), false) = (zone, t.with_offsets) {
        s += &format!("time_zone = \"{}\"\n", z.name());
    }
    s += "[drug]\nlevel_unit = \"mg/L\"\n";
    let first = t.dose_min.iter().copied().min().unwrap_or(0);
    for m in &t.dose_min {
        s += &format!(
            "[[dose]]\ntime = {}\namount_mg = 1000.0\nroute = \"bolus\"\n",
            stamp(*m)
        );
    }
    for (j, m) in t.level_min.iter().enumerate() {
        // Exact levels of a 1000 mg bolus into 40 L with k = 0.1 /h after the first dose,
        // on the wall clock's hours (wrong by an hour across a change, which is the point).
        let h = (m - first) as f64 / 60.0;
        let v = 25.0 * (-0.1 * h).exp() * (1.0 + 0.01 * j as f64);
        s += &format!("[[level]]\ntime = {}\nvalue = {}\n", stamp(*m), toml_f(v));
    }
    s += &format!(
        "[threshold]\nbelow = 1.0\nprocedure = {}\n[plan]\ndose_mg = 1000.0\ninterval_h = 12.0\nroute = \"bolus\"\n",
        stamp(2000)
    );
    (s, zone, midnight)
}

proptest! {
    #![proptest_config(config(600))]

    #[test]
    fn times_from_1900_to_2200_across_clock_changes_never_leak(t in times()) {
        let (text, zone, midnight) = times_case(&t);
        check(&text)?;
        // Where a zoned case is accepted, the hours between its rows are the real hours
        // that passed (UTC), not the wall clock's.
        let (Some(z), false) = (zone, t.with_offsets) else { return Ok(()) };
        // chrono-tz, the reference here, has no clock change in far years: in 2100 it keeps New
        // York on standard time all year, where the zone's rule (second Sunday of March) puts
        // EDT from 02:00 on 14 March 2100, as Python's zoneinfo and the system database (read by
        // ebb) agree. Its tables list changes up to 2037 (the TZif convention, from memory), so
        // the hours are compared up to then.
        if t.year > 2037 {
            return Ok(());
        }
        let Ok(case) = ebb::core::casefile::CaseFile::parse(&text).and_then(|f| f.validate())
        else {
            return Ok(());
        };
        let utc = |m: i64| {
            z.from_local_datetime(&(midnight + Duration::minutes(m)))
                .single()
                .map(|x| x.naive_utc())
        };
        let first = case.doses[0].row - 1;
        for l in &case.levels {
            let (Some(a), Some(b)) = (utc(t.dose_min[first]), utc(t.level_min[l.row - 1])) else {
                prop_assert!(false, "an accepted time does not exist or is doubled:\n{}", text);
                unreachable!();
            };
            let real = (b - a).num_seconds() as f64 / 3600.0;
            prop_assert!((l.t - case.doses[0].t - real).abs() < 1e-9, "{}\n{}", real, text);
        }
    }
}

// ---- 10,000 doses ------------------------------------------------------------------------

fn many_doses_case(n: usize, step_min: i64, amounts: &[f64], level_values: &[f64]) -> String {
    use std::fmt::Write;
    let base = NaiveDate::from_ymd_opt(2026, 1, 1)
        .unwrap()
        .and_hms_opt(6, 0, 0)
        .unwrap();
    let mut s = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
    for i in 0..n {
        let a = amounts[i % amounts.len()];
        let _ = write!(
            s,
            "[[dose]]\ntime = {}\namount_mg = {}\nroute = \"infusion\"\ninfusion_h = 0.5\n",
            at(base, i as i64 * step_min),
            toml_f(a)
        );
    }
    let last = (n as i64 - 1) * step_min;
    for (j, v) in level_values.iter().enumerate() {
        let _ = write!(
            s,
            "[[level]]\ntime = {}\nvalue = {}\n",
            at(base, last + 60 + 180 * j as i64),
            toml_f(*v)
        );
    }
    s += "[plan]\ndose_mg = 140.0\ninterval_h = 8.0\nroute = \"infusion\"\ninfusion_h = 0.5\n";
    s += &format!(
        "[threshold]\nbelow = 0.5\nprocedure = {}\n",
        at(base, last + 4320)
    );
    s
}

proptest! {
    #![proptest_config(config(8))]

    #[test]
    fn ten_thousand_doses_never_leak(
        step_min in prop_oneof![6 => Just(480i64), 1 => Just(0i64), 1 => 1i64..60],
        amounts in prop::collection::vec(mostly(50.0f64..500.0), 1..4),
        mut levels in prop::collection::vec(mostly(0.5f64..20.0), 2..4),
    ) {
        // Falling levels, as after a dose (a hostile value lands anywhere).
        levels.sort_by(|a, b| b.total_cmp(a));
        check(&many_doses_case(10_000, step_min, &amounts, &levels))?;
    }
}

#[test]
fn ten_thousand_ordinary_doses_report_finite_figures() {
    // Infusions every 8 h for 9 years with three falling levels after the last one.
    let text = many_doses_case(10_000, 480, &[120.0], &[6.0, 2.8, 1.3]);
    let case = ebb::core::casefile::CaseFile::parse(&text)
        .and_then(|f| f.validate())
        .unwrap();
    assert_eq!(case.doses.len(), 10_000);
    let r = report::build(&case).unwrap();
    assert!(r.fit.k_per_h.is_finite() && r.fit.k_per_h > 0.0);
    let v: serde_json::Value = serde_json::from_str(&ebb::core::json::to_json(&r)).unwrap();
    assert!(v["plan"]["accumulation_factor"].as_f64().unwrap() >= 1.0);
}
