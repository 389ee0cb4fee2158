//! The warnings a drug profile brings to a report: sampling window, half-life plausibility,
//! level unit, kinetics, route; and the refusal for drugs whose kinetics are not first-order.

use crate::core::case::Case;
use crate::core::case::Targets;
use crate::core::clock::span_words;
use crate::core::fitted;
use crate::core::model::Route;
use crate::core::report::{num, Report};
use crate::core::warning::{Code, Warning};
use crate::profiles::schema::{FirstOrder, Profile};
use crate::profiles::{targets_of, unit_factor};

/// Why first-order projections are refused for this profile, or `None` when they are not.
///
/// The text explains, in plain words, why a plan, threshold or washout from a fixed k would
/// mislead; it is the profile's `kinetics.why` with its source.
pub fn refusal(profile: &Profile) -> Option<String> {
    match profile.kinetics.first_order {
        FirstOrder::No => Some(format!(
            "{} does not follow first-order kinetics: {} {}. The plan, threshold and washout \
             assume a fixed k and would mislead, so they are not computed",
            profile.display_name,
            profile.kinetics.why.trim_end_matches('.'),
            profile.kinetics.source
        )),
        _ => None,
    }
}

/// Put the profile's warnings in front of the report's own. Where the profile flags a level
/// as drawn inside its sampling window, the core's generic distribution-phase warning about
/// the same level is dropped (the profile's says the same, with the drug's own window).
pub fn apply(profile: &Profile, case: &Case, report: &mut Report) {
    let mut all = warnings(profile, case, report);
    let flagged = window_rows(profile, case);
    report.warnings.retain(|w| {
        !(w.code() == Code::DistributionPhase
            && w.level_row().is_some_and(|row| flagged.contains(&row)))
    });
    all.append(&mut report.warnings);
    report.warnings = all;
}

/// Rows of the used levels drawn inside the profile's window, with the dose before each and
/// the hours from the end of that dose (negative: during it).
fn window_hits(profile: &Profile, case: &Case) -> Vec<(usize, usize, f64)> {
    let Some(w) = &profile.level_valid_after_h else {
        return Vec::new();
    };
    let mut out = Vec::new();
    for level in case.levels.iter().filter(|l| l.use_in_fit) {
        let Some((d, after)) = fitted::after_dose(case, level.t) else {
            continue;
        };
        if fitted::in_distribution_phase(after, w.value) {
            out.push((level.row, case.doses[d].row, after));
        }
    }
    out
}

fn window_rows(profile: &Profile, case: &Case) -> Vec<usize> {
    window_hits(profile, case)
        .into_iter()
        .map(|h| h.0)
        .collect()
}

/// The profile's warnings for a case and its built report, most important first.
///
/// - the case's level unit differs from the profile's (targets were converted, or could not be);
/// - the kinetics are first-order only with a limit (`first_order = "partly"`);
/// - an oral dose of a drug the profile gives no oral bioavailability;
/// - a level with `use = true` drawn inside the distribution or absorption window;
/// - the fitted half-life outside the typical adult range (a plausibility flag).
pub fn warnings(profile: &Profile, case: &Case, report: &Report) -> Vec<Warning> {
    let mut out = Vec::new();
    let name = &profile.display_name;

    let case_unit = case.drug.scale.unit;
    if let Ok(pu) = profile.unit() {
        let same = pu == case_unit
            || (!pu.is_molar()
                && !case_unit.is_molar()
                && pu.per_mg_l(None) == case_unit.per_mg_l(None));
        if !same {
            let what = match unit_factor(profile, case_unit, case.drug.molar_mass_g_mol) {
                Some(_) => "its ranges and targets were converted",
                None => "its targets could not be converted and were not applied",
            };
            out.push(Warning::new(Code::ProfileUnit, format!(
                "the levels are entered in {} but the {name} profile works in {}: {what}; check the unit on the laboratory report",
                case_unit.as_str(),
                pu.as_str()
            )));
        }
    }

    if profile.kinetics.first_order == FirstOrder::Partly {
        out.push(Warning::new(
            Code::ProfileKinetics,
            format!(
                "{name}: first-order projections have limits here: {} {}",
                profile.kinetics.why.trim_end_matches('.'),
                profile.kinetics.source
            ),
        ));
    }

    let oral = case
        .doses
        .iter()
        .map(|d| d.route)
        .chain(case.plan.iter().map(|p| p.route))
        .any(|r| matches!(r, Route::Oral { .. }));
    if oral && profile.bioavailability.is_none() {
        out.push(Warning::new(Code::ProfileRoute, format!(
            "an oral dose is recorded, but the {name} profile gives no oral bioavailability (it is not given by mouth): check the route"
        )));
    }

    // A two-compartment fit describes the distribution phase: its levels need no window.
    if let Some(w) = profile
        .level_valid_after_h
        .as_ref()
        .filter(|_| report.fit.compartments == 1)
    {
        let phase = w
            .note
            .as_deref()
            .unwrap_or("distribution or absorption phase");
        // A two-compartment model of the profile would use such a level as drawn.
        let two = profile
            .models
            .iter()
            .find(|m| m.q.is_some() && m.v2.is_some())
            .map(|m| {
                format!(
                    ", or ask for the Bayesian fit ([fit] method = \"bayesian\", model \"{}\"), whose two compartments describe that phase",
                    crate::core::text::printable(&m.name)
                )
            })
            .unwrap_or_default();
        for (row, dose_row, after) in window_hits(profile, case) {
            let when = if after < 0.0 {
                format!("during dose {dose_row}")
            } else {
                format!("{} after the end of dose {dose_row}", span_words(after))
            };
            let in_fit = if report.fit.level_rows.contains(&row) {
                "it is in the fit and would distort k; "
            } else {
                ""
            };
            out.push(Warning::about_level(Code::DistributionPhase, row, format!(
                "level {row} was drawn {when}, inside {name}'s first {} ({phase}) {}: {in_fit}use a later level, or set use = false{two}",
                span_words(w.value),
                w.source
            )));
        }
    }

    let t_half = report.fit.half_life_h;
    let typical = &profile.half_life_h;
    // A two-compartment fit's half-life is the terminal one (β), slower than the
    // one-compartment half-life the profile's range describes: the two do not compare.
    if report.fit.compartments == 1 && clearly_outside(t_half, typical.low, typical.high) {
        out.push(Warning::new(Code::HalfLifeImplausible, format!(
            "the fitted half-life {} h is outside {name}'s typical adult range with normal organ function ({}–{} h {}): a plausibility flag, not an error; check the sample and dose times, and renal or hepatic function",
            num(t_half),
            num(typical.low),
            num(typical.high),
            typical.source
        )));
    }
    out.extend(targets_against_strategy(profile, case));
    out.extend(interval_against_strategy(profile, case));
    plausibility(profile, case, report, &mut out);
    out
}

/// Targets in words (`peak 5–10 mg/L, trough at most 2 mg/L`).
fn targets_words(t: &Targets, unit: &str) -> String {
    let mut parts = Vec::new();
    if let Some([lo, hi]) = t.peak {
        parts.push(format!("peak {}–{} {unit}", num(lo), num(hi)));
    }
    if let Some(x) = t.trough_max {
        parts.push(format!("trough at most {} {unit}", num(x)));
    }
    if let Some([lo, hi]) = t.auc24 {
        let u = crate::core::units::auc_unit(unit);
        parts.push(format!("AUC24 {}–{} {u}", num(lo), num(hi)));
    }
    parts.join(", ")
}

/// Whether `x` is above `limit` by more than rounding (a target converted between units
/// may differ from the profile's in the last digits).
fn above(x: f64, limit: f64) -> bool {
    x > limit * (1.0 + 1e-9) + 1e-12
}

/// The case's own targets against the dosing strategy in force (chosen in `drug.strategy`,
/// else the profile's default): a warning when the case sets a target the strategy does not
/// use (a conventional peak with extended-interval dosing, a trough with AUC dosing), or a
/// bound outside the strategy's range or above its ceiling. A case without `[targets]` has
/// the strategy's own, so it never contradicts them; a case whose targets are inside the
/// strategy's (stricter) does not either. The suggestions and checks use the case's targets
/// either way: the warning says so.
fn targets_against_strategy(profile: &Profile, case: &Case) -> Option<Warning> {
    let s = case
        .regimen
        .strategy
        .as_deref()
        .and_then(|n| profile.strategy(n))?;
    let f = unit_factor(profile, case.drug.scale.unit, case.drug.molar_mass_g_mol)?;
    let own = &case.targets;
    let theirs = targets_of(s, f);
    if own.is_empty() || theirs.is_empty() {
        return None;
    }
    let mut why: Vec<String> = Vec::new();
    let range = |what: &str,
                 own: Option<[f64; 2]>,
                 theirs: Option<[f64; 2]>,
                 why: &mut Vec<String>| {
        match (own, theirs) {
            (Some(_), None) => why.push(format!("the strategy sets no {what} target")),
            (Some([lo, hi]), Some([slo, shi])) if above(slo, lo) || above(hi, shi) => {
                why.push(format!(
                    "the {what} range {}–{} reaches outside the strategy's {}–{}",
                    num(lo),
                    num(hi),
                    num(slo),
                    num(shi)
                ))
            }
            _ => {}
        }
    };
    range("peak", own.peak, theirs.peak, &mut why);
    match (own.trough_max, theirs.trough_max) {
        (Some(_), None) => why.push("the strategy sets no trough ceiling".into()),
        (Some(x), Some(limit)) if above(x, limit) => why.push(format!(
            "the trough ceiling {} is above the strategy's {}",
            num(x),
            num(limit)
        )),
        _ => {}
    }
    range("AUC24", own.auc24, theirs.auc24, &mut why);
    if why.is_empty() {
        return None;
    }
    let unit = case.drug.scale.unit.as_str();
    let sources: Vec<&str> = [
        s.peak.as_ref().map(|x| x.source.as_str()),
        s.trough_max.as_ref().map(|x| x.source.as_str()),
        s.auc24.as_ref().map(|x| x.source.as_str()),
    ]
    .into_iter()
    .flatten()
    .collect();
    let mut cited: Vec<&str> = Vec::new();
    for src in sources {
        if !cited.contains(&src) {
            cited.push(src);
        }
    }
    Some(Warning::new(
        Code::TargetsNotStrategy,
        format!(
            "the case's own targets ({}) contradict the dosing strategy {} ({}; targets {} {}): {}. The plan's checks and the suggestions use the case's own targets with the strategy's intervals; remove [targets] to use the strategy's, or choose the strategy the targets belong to",
            targets_words(own, unit),
            crate::core::text::quoted(&s.name),
            s.label,
            targets_words(&theirs, unit),
            cited.join(""),
            why.join("; ")
        ),
    ))
}

/// Whether `interval` is one of `usual` (within 10 %: recorded doses are given to the
/// nearest hour or so).
fn among(interval: f64, usual: &[f64]) -> bool {
    usual.iter().any(|u| (interval - u).abs() <= 0.1 * u)
}

/// The regimen's dosing interval against the strategy in force: a warning when it is not
/// one of that strategy's usual intervals but is one of another strategy's (a 24-hourly
/// aminoglycoside read against the conventional strategy's peak and trough, whose
/// suggestions would move it to 8 or 12 hours). The interval is the plan's, else the last
/// one between recorded doses. A haemodialysis strategy is offered only to a patient on
/// haemodialysis.
fn interval_against_strategy(profile: &Profile, case: &Case) -> Option<Warning> {
    let (interval, whose) = match &case.plan {
        Some(p) => (p.interval_h, "the plan's"),
        None => {
            let [.., a, b] = case.doses.as_slice() else {
                return None;
            };
            (b.t - a.t, "between the last two doses")
        }
    };
    if !(interval.is_finite() && interval > 0.0) {
        return None;
    }
    let in_force = case
        .regimen
        .strategy
        .as_deref()
        .and_then(|n| profile.strategy(n))?;
    let usual = in_force
        .usual_intervals_h
        .as_ref()
        .or(profile.usual_intervals_h.as_ref())?;
    if among(interval, &usual.values) {
        return None;
    }
    let dialysis = case.patient.dialysis == Some(true) || !case.dialysis_sessions.is_empty();
    let fits: Vec<&crate::profiles::schema::Strategy> = profile
        .strategies
        .iter()
        .filter(|s| s.name != in_force.name)
        .filter(|s| dialysis || (s.pre_dialysis.is_none() && s.dose_after_session.is_none()))
        .filter(|s| {
            s.usual_intervals_h
                .as_ref()
                .is_some_and(|l| among(interval, &l.values))
        })
        .collect();
    if fits.is_empty() {
        return None;
    }
    let hours = |v: &[f64]| v.iter().map(|x| num(*x)).collect::<Vec<_>>().join(", ");
    let others: Vec<String> = fits
        .iter()
        .map(|s| {
            format!(
                "strategy {} ({})",
                crate::core::text::quoted(&s.name),
                s.label
            )
        })
        .collect();
    let name = crate::core::text::quoted(&in_force.name);
    Some(Warning::new(
        Code::IntervalNotStrategy,
        format!(
            "the dosing interval of {} h ({whose}) is not one of the usual intervals of the strategy in force, {name} ({} h), but is one of {}: the targets, checks and suggested regimens here are those of {name}; if the patient is dosed that way, choose that strategy (drug.strategy, or Strategy on screen 1)",
            num(interval),
            hours(&usual.values),
            others.join(" or "),
        ),
    ))
}

/// Whether `x` lies clearly outside `[low, high]`: by more than 10 % of the nearer end (a
/// half-life of 3.0 h against 2-3 h is inside; 3.4 h is outside).
pub fn clearly_outside(x: f64, low: f64, high: f64) -> bool {
    x < low * 0.9 || x > high * 1.1
}

/// Plausibility flags: a fitted volume far from the profile's L/kg range (a unit slip of
/// x1000 gives a volume a thousand times off), a level beyond any clinical value for the drug,
/// and a projection that leaves the strategy's therapeutic range.
fn plausibility(profile: &Profile, case: &Case, report: &Report, out: &mut Vec<Warning>) {
    let name = &profile.display_name;
    let per_kg = &profile.volume.l_per_kg;
    // A two-compartment fit's volume is the central one: the profile's L/kg range describes
    // the whole volume of distribution, so it is compared with the steady-state volume V1 + V2.
    let whole = report.fit.volume_l.map(|v| match &report.fit.peripheral {
        Some(pe) => (
            v + pe.volume_l,
            "steady-state volume (central + peripheral)",
        ),
        None => (v, "fitted volume"),
    });
    if let Some((v, what)) = whole {
        // Per kg of the recorded weight; without one, any adult from 30 to 200 kg.
        let (lo, hi, per) = match case.patient.weight_kg {
            Some(w) => (per_kg.low * w, per_kg.high * w, format!("{} kg", num(w))),
            None => (
                per_kg.low * 30.0,
                per_kg.high * 200.0,
                "30-200 kg".to_string(),
            ),
        };
        if v < lo / 2.0 || v > hi * 2.0 {
            let from_model = if matches!(report.fit.method, "bayesian" | "population") {
                "; with few levels the volume is mostly the population model's own"
            } else {
                ""
            };
            out.push(Warning::new(Code::VolumeImplausible, format!(
                "the {what} {} L is far outside {name}'s {}–{} L/kg {} for {per}: check the level unit (a slip of x1000 moves the volume as much), the dose amounts and the times{from_model}",
                num(v),
                num(per_kg.low),
                num(per_kg.high),
                per_kg.source
            )));
        }
    }
    if let Some(max) = &profile.max_plausible_level {
        if let Some(f) = unit_factor(profile, case.drug.scale.unit, case.drug.molar_mass_g_mol) {
            let limit = max.value * f;
            for l in case.levels.iter().filter(|l| l.value > limit) {
                out.push(Warning::about_level(Code::LevelImplausible, l.row, format!(
                    "level {} ({} {}) is above {} {}, beyond any clinical value for {name} {}: check the unit and the value",
                    l.row,
                    num(l.value),
                    case.drug.scale.unit.as_str(),
                    num(limit),
                    case.drug.scale.unit.as_str(),
                    max.source
                )));
            }
        }
    }
    // The strategy's therapeutic range (shown, not a target) against the projection, for
    // strategies whose targets do not already check the peak or AUC24.
    let strategy = case
        .regimen
        .strategy
        .as_deref()
        .and_then(|n| profile.strategy(n))
        .or_else(|| profile.default_strategy());
    let (Some(s), Some(plan)) = (strategy, &report.plan) else {
        return;
    };
    // The standard 12-hour level (lithium) against the range quoted at 12 h.
    if let (Some(x), Some(range)) = (plan.level_12h_ss, s.range.as_ref()) {
        if let Some(f) = unit_factor(profile, case.drug.scale.unit, case.drug.molar_mass_g_mol) {
            let (low, high) = (range.low * f, range.high * f);
            let u = case.drug.scale.unit.as_str();
            let side = if x < low {
                Some("below")
            } else if x > high {
                Some("above")
            } else {
                None
            };
            if let Some(side) = side {
                out.push(Warning::new(Code::OutsideRange, format!(
                    "the plan's steady-state level 12 h after a dose, {} {u}, is {side} {name}'s range of {}–{} {u} for a level drawn then {}",
                    num(x),
                    num(low),
                    num(high),
                    range.source
                )));
            }
        }
    }
    let Some(range) = s
        .range
        .as_ref()
        .filter(|_| s.peak.is_none() && s.auc24.is_none())
    else {
        return;
    };
    let Some(f) = unit_factor(profile, case.drug.scale.unit, case.drug.molar_mass_g_mol) else {
        return;
    };
    let (low, high) = (range.low * f, range.high * f);
    let u = case.drug.scale.unit.as_str();
    if let Some(t) = plan.trough_ss.filter(|t| *t < low * 0.9) {
        out.push(Warning::new(Code::OutsideRange, format!(
            "the plan's steady-state trough {} {u} is below {name}'s range of {}–{} {u} {}: the level may fall below it before each dose",
            num(t),
            num(low),
            num(high),
            range.source
        )));
    }
    if let Some(p) = plan.peak_ss.filter(|p| *p > high * 1.1) {
        out.push(Warning::new(
            Code::OutsideRange,
            format!(
                "the plan's steady-state peak {} {u} is above {name}'s range of {}–{} {u} {}",
                num(p),
                num(low),
                num(high),
                range.source
            ),
        ));
    }
}
