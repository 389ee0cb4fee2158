//! After a procedure: when the held regimen may resume, by a level to fall below or a delay.

use crate::core::projection::{Patient, ThresholdProjection};

/// When the regimen may resume after the procedure.
#[derive(Debug, Clone, PartialEq)]
pub struct ResumeProjection {
    /// The earliest time, hours on the axis (the later of the level rule and the delay).
    pub resume_t: f64,
    /// The model's level then, mg/L (with the plan doses given up to the latest allowed one).
    pub level_mg_l: f64,
}

/// When the regimen may resume after a procedure at `procedure_t` lasting `window_h` hours:
/// once `resume_after_h` hours have passed since the end of the procedure, and once the level
/// is at or below `resume_below_mg_l` and stays there: a dose still running (recorded or plan)
/// must not lift it above again. The plan doses up to the threshold's latest allowed dose are
/// taken as given and no other dose until the resumption. `None` when neither rule is given.
pub fn resume(
    p: &Patient,
    th: &ThresholdProjection,
    procedure_t: f64,
    window_h: f64,
    resume_below_mg_l: Option<f64>,
    resume_after_h: Option<f64>,
) -> Option<ResumeProjection> {
    if resume_below_mg_l.is_none() && resume_after_h.is_none() {
        return None;
    }
    let plan = p.case.plan.as_ref();
    let latest = th.latest_plan_dose.map(|(n, _)| n);
    let level = |t: f64| -> f64 {
        match plan.and_then(|pl| p.level_with_plan(t, pl, latest)) {
            Some(c) => c,
            None => p.level_mg_l(t),
        }
    };
    let mut t = procedure_t + window_h.max(0.0) + resume_after_h.unwrap_or(0.0);
    let absorbed =
        crate::core::projection::Absorbing::of(p.case.doses.iter().map(|d| (d.t, d.route)).chain(
            plan.zip(latest).into_iter().flat_map(|(pl, n)| {
                (0..=n).map(|j| (pl.start_t + j as f64 * pl.interval_h, pl.route))
            }),
        ));
    if let (Some(below), Some(a)) = (resume_below_mg_l, absorbed) {
        // Absorbed oral doses lift the level after their lag: from the highest level after t
        // the model is followed down.
        t = a.settles_below(&level, t, below, p.fit.k).max(t);
    } else if let Some(below) = resume_below_mg_l {
        // After the last dose given has fully entered, the level only falls; before that a
        // running infusion may still lift it, so the level must be low enough both now and
        // once every dose has entered (between the two it is monotonic: c + d·e^(-k·t)).
        let last_in = match (plan, th.latest_plan_dose) {
            (Some(pl), Some((_, td))) => td + pl.route.infusion_h(),
            _ => f64::NEG_INFINITY,
        };
        let from = t.max(last_in).max(p.last_dose_end());
        let c = level(from);
        if level(t) > below || c > below {
            let fall = if c <= below {
                0.0
            } else if p.two() {
                // Two compartments: a sum of falling exponentials, found by bisection.
                crate::core::projection::first_below(&level, from, below, p.fit.k) - from
            } else {
                (c / below).ln() / p.fit.k
            };
            t = from + fall;
        }
    }
    Some(ResumeProjection {
        resume_t: t,
        level_mg_l: level(t),
    })
}

#[cfg(test)]
mod tests {
    use super::resume;
    use crate::core::casefile::CaseFile;
    use crate::core::fit;
    use crate::core::model::{self, Administration, Route};
    use crate::core::projection::{self, Patient};
    use crate::core::report;

    const K: f64 = 0.1;
    const V: f64 = 50.0;
    const INF: Route = Route::Infusion { hours: 2.0 };

    /// Two recorded 1000 mg doses over 2 h, 12 h apart, from 2027-03-02 00:00, with three
    /// levels after the second written from the model (k 0.1 /h, V 50 L); a plan of the same
    /// doses every 12 h from hour 24; a threshold `below` at a procedure `proc_h` hours from
    /// the first dose. Invented data.
    fn case_text(below: f64, proc_h: f64, extra: &str) -> String {
        let given: Vec<Administration> = [0.0, 12.0]
            .iter()
            .map(|&t| Administration {
                t,
                amount_mg: 1000.0,
                route: INF,
            })
            .collect();
        let at = |h: f64| {
            let base = chrono::NaiveDate::from_ymd_opt(2027, 3, 2)
                .unwrap()
                .and_hms_opt(0, 0, 0)
                .unwrap();
            (base + chrono::Duration::minutes((h * 60.0).round() as i64))
                .format("%Y-%m-%dT%H:%M:00")
                .to_string()
        };
        let mut s = String::from("[drug]\nlevel_unit = \"mg/L\"\n");
        for g in &given {
            s += &format!(
                "[[dose]]\ntime = {}\namount_mg = 1000.0\nroute = \"infusion\"\ninfusion_h = 2.0\n",
                at(g.t)
            );
        }
        for h in [15.0, 18.0, 22.0] {
            s += &format!(
                "[[level]]\ntime = {}\nvalue = {}\n",
                at(h),
                model::superpose(&given, K, V, h)
            );
        }
        s += &format!(
            "[plan]\ndose_mg = 1000.0\ninterval_h = 12.0\nroute = \"infusion\"\ninfusion_h = 2.0\nstart = {}\n",
            at(24.0)
        );
        s += &format!(
            "[threshold]\nbelow = {below}\nprocedure = {}\n{extra}",
            at(proc_h)
        );
        s
    }

    #[test]
    fn no_plan_dose_may_still_be_infusing_at_the_procedure() {
        // Rule (common practice): a dose given before a procedure must have fully entered, and
        // the level must be at or below the threshold at the procedure; the plan may resume
        // only once the level will not rise above the resume level again. A 2-h infusion every
        // 12 h; the procedure 20 min after the plan dose at hour 48 starts. The threshold is
        // set just above the level then with that dose running, which the old search allowed.
        let tp = 48.0 + 20.0 / 60.0;
        let probe = CaseFile::parse(&case_text(100.0, tp, ""))
            .unwrap()
            .validate()
            .unwrap();
        let f = fit::fit(&probe).unwrap();
        let p = Patient::new(&probe, &f);
        let plan = probe.plan.clone().unwrap();
        let running = p.level_with_plan(tp, &plan, Some(2)).unwrap();
        let below = running * 1.01;
        let text = case_text(below, tp, &format!("resume_below = {below}\n"));
        let case = CaseFile::parse(&text).unwrap().validate().unwrap();
        let f = fit::fit(&case).unwrap();
        let p = Patient::new(&case, &f);
        let th = projection::threshold(&p, below, Some(tp));
        let (n, td) = th.latest_plan_dose.expect("an earlier dose is allowed");
        assert_eq!(
            n, 1,
            "the dose at hour 48 is still infusing at the procedure"
        );
        assert!((td - 36.0).abs() < 1e-9);
        assert!(th.level_at_procedure_mg_l.unwrap() <= below);
        assert_eq!(th.plan_doses_before, Some(3));
        assert_eq!(th.plan_doses_done_before, Some(2));
        // Resume: from then on the level never rises above the resume level again.
        let r = resume(&p, &th, tp, 0.0, Some(below), None).unwrap();
        for i in 0..=400 {
            let t = r.resume_t + i as f64 * 0.05;
            let c = p.level_with_plan(t, &plan, Some(n)).unwrap();
            assert!(c <= below * (1.0 + 1e-9), "{c} > {below} at {t}");
        }
    }

    #[test]
    fn a_dose_running_at_the_procedure_delays_the_resumption() {
        // Rule (common practice): resuming is safe only after every dose already running has
        // entered and the level has fallen to the resume level. With the latest allowed dose
        // ending after the procedure (no threshold on it), the resumption must wait for it.
        let tp = 24.0 + 0.5; // 30 min into the first plan dose, which the threshold allows here
        let case = CaseFile::parse(&case_text(1000.0, tp, ""))
            .unwrap()
            .validate()
            .unwrap();
        let f = fit::fit(&case).unwrap();
        let p = Patient::new(&case, &f);
        let mut th = projection::threshold(&p, 1000.0, Some(tp));
        // Force the running dose in, as a record still infusing would be.
        th.latest_plan_dose = Some((0, 24.0));
        let plan = case.plan.clone().unwrap();
        let at_tp = p.level_with_plan(tp, &plan, Some(0)).unwrap();
        let r = resume(&p, &th, tp, 0.0, Some(at_tp * 1.05), None).unwrap();
        assert!(
            r.resume_t >= 26.0,
            "resumed at {} while infusing",
            r.resume_t
        );
        let peak = p.level_with_plan(26.0, &plan, Some(0)).unwrap();
        assert!(
            peak > at_tp * 1.05,
            "the test needs the level to rise: {peak}"
        );
    }

    #[test]
    fn the_procedure_window_pushes_the_resumption_past_its_end() {
        // Rule (common practice): the regimen resumes after the procedure is over, not during
        // it; `resume_after_h` counts from its end.
        let tp = 60.0;
        let text = case_text(5.0, tp, "procedure_h = 3.0\nresume_after_h = 1.0\n");
        let case = CaseFile::parse(&text).unwrap().validate().unwrap();
        let r = report::build(&case).unwrap();
        let t = r.threshold.unwrap();
        assert_eq!(t.procedure_h, 3.0);
        let resume = case.clock.hours(&t.resume_at.unwrap());
        assert!((resume - (tp + 4.0)).abs() < 1.0 / 60.0 + 1e-9, "{resume}");
    }

    #[test]
    fn no_plan_dose_before_the_procedure_is_not_called_holding() {
        // Rule (common practice): when the first plan dose falls after the procedure there is
        // nothing to hold; the report says so and gives the level at the procedure.
        let text = case_text(50.0, 23.0, "");
        let case = CaseFile::parse(&text).unwrap().validate().unwrap();
        let r = report::build(&case).unwrap();
        let t = r.threshold.as_ref().unwrap();
        assert_eq!(t.plan_doses_before_procedure, Some(0));
        let words = report::procedure_words(t, true, "mg/L");
        assert!(
            words.starts_with("no plan dose falls before the procedure"),
            "{words}"
        );
        assert!(!words.contains("even the first"));
        let mut out = Vec::new();
        report::write_text(&mut out, &case, &r).unwrap();
        let out = String::from_utf8(out).unwrap();
        assert!(out.contains("no plan dose falls before the procedure (level then"));
    }
}

#[cfg(test)]
mod record_tests {
    use crate::core::casefile::CaseFile;
    use crate::core::report;

    const BOLUSES: &str = r#"
[drug]
level_unit = "mg/L"
[[dose]]
time = 2027-03-02T08:00:00
amount_mg = 400.0
route = "bolus"
[[dose]]
time = 2027-03-02T20:00:00
amount_mg = 400.0
route = "bolus"
[[level]]
time = 2027-03-02T19:30:00
value = 3.0
use = false
[[level]]
time = 2027-03-02T21:00:00
value = 20.0
[[level]]
time = 2027-03-03T00:00:00
value = 14.5
[[level]]
time = 2027-03-03T03:00:00
value = 10.0
"#;

    #[test]
    fn an_unused_pre_dose_level_that_sets_the_volume_is_named() {
        // Rule (common practice): a level the user leaves out is out of everything, or the
        // report says which figure still uses it. Contract v1 keeps the Sawchuk-Zaske volume
        // from a pre-dose level used or not, so the report names it.
        let case = CaseFile::parse(BOLUSES).unwrap().validate().unwrap();
        let r = report::build(&case).unwrap();
        assert_eq!(r.fit.volume_method, Some("pre-dose level"));
        assert!(
            r.warnings
                .iter()
                .any(|w| w.starts_with("level 1 is marked use = false")
                    && w.contains("still sets the volume")),
            "{:?}",
            r.warnings
        );
        // A used pre-dose level gets no such warning.
        let used = CaseFile::parse(&BOLUSES.replace("use = false\n", ""))
            .unwrap()
            .validate()
            .unwrap();
        let r = report::build(&used).unwrap();
        assert!(!r.warnings.iter().any(|w| w.contains("use = false")));
    }

    #[test]
    fn a_plan_starting_before_the_last_dose_is_refused() {
        // Rule (common practice): the plan continues the record; a first plan dose at or before
        // the last recorded dose would count doses twice.
        let text = format!(
            "{BOLUSES}[plan]\ndose_mg = 400.0\ninterval_h = 12.0\nroute = \"bolus\"\nstart = 2027-03-02T18:00:00\n"
        );
        let e = CaseFile::parse(&text).unwrap().validate().unwrap_err();
        let m = e.to_string();
        assert!(m.starts_with("plan.start:"), "{m}");
        assert!(
            m.contains("not after the last recorded dose (dose 2"),
            "{m}"
        );
        let ok = text.replace("2027-03-02T18:00:00", "2027-03-03T08:00:00");
        assert!(CaseFile::parse(&ok).unwrap().validate().is_ok());
    }

    #[test]
    fn the_measured_auc24_uses_the_interval_given_not_the_plan() {
        // Rule (common practice): a measured figure depends on the record only; the doses were
        // given 12 h apart, so the AUC24 over dose 2's interval is over 12 h whatever the plan.
        let with_plan = |tau: f64| {
            let text = format!(
                "{BOLUSES}[plan]\ndose_mg = 400.0\ninterval_h = {tau}\nroute = \"bolus\"\n"
            );
            let case = CaseFile::parse(&text).unwrap().validate().unwrap();
            report::build(&case).unwrap().advice.auc24.unwrap()
        };
        let (a, b) = (with_plan(8.0), with_plan(24.0));
        assert_eq!(a.interval_h, 12.0);
        assert!(!a.interval_from_plan);
        assert_eq!(a.by_levels, b.by_levels);
        assert_eq!(a.by_k_and_v, b.by_k_and_v);
    }

    #[test]
    fn a_plan_above_the_single_or_daily_maximum_is_flagged() {
        // Rule (common practice): a plan that breaks a published size limit is flagged. The
        // limits here are set by hand (no profile in this case): 300 mg a dose, 600 mg a day.
        let text = format!(
            "{BOLUSES}[plan]\ndose_mg = 400.0\ninterval_h = 12.0\nroute = \"bolus\"\n[targets]\npeak = [5.0, 30.0]\n"
        );
        let mut case = CaseFile::parse(&text).unwrap().validate().unwrap();
        case.regimen.max_single_dose_mg = Some(300.0);
        case.regimen.max_daily_dose_mg = Some(600.0);
        let r = report::build(&case).unwrap();
        let w: Vec<&str> = r.warnings.iter().map(|w| w.text()).collect();
        assert!(w
            .iter()
            .any(|x| x.contains("above the profile's largest single dose of 300 mg")));
        assert!(w
            .iter()
            .any(|x| x.contains("800 mg a day, above the profile's largest daily dose of 600 mg")));
        // No suggestion breaks them either.
        assert!(!r.advice.suggestions.is_empty());
        for s in &r.advice.suggestions {
            assert!(s.dose_mg <= 300.0 && s.dose_mg * 24.0 / s.interval_h <= 600.0 + 1e-9);
        }
    }

    #[test]
    fn one_crossing_time_has_one_range_for_threshold_and_switch() {
        // Rule (common practice): the same event (the level falling to one value) gets one
        // answer. A dose-history fit (k and V together, with a joint spread) and a switch at
        // the threshold's level must give the threshold's 95 % range.
        let text = format!(
            "{BOLUSES}[fit]\nmethod = \"dose-history\"\n[threshold]\nbelow = 2.0\n[switch]\nto = \"next\"\nstart_below = 2.0\n"
        );
        let case = CaseFile::parse(&text).unwrap().validate().unwrap();
        let r = report::build(&case).unwrap();
        let th = r.threshold.as_ref().unwrap();
        let sw = r.advice.switch.as_ref().unwrap();
        assert!(th.reached_at_ci95.is_some());
        assert_eq!(th.reached_at_ci95, sw.start_at_ci95);
        assert_eq!(th.reached_at, sw.start_at);
    }
}
