//! The report's advice parts as plain data in the case's unit and clock times: suggested
//! regimens, the loading dose, the proportional adjustment, AUC24 by two methods side by side,
//! and the switch to another agent. `report` builds them through `build`.

use crate::core::warning::{Code, Warning};
use std::io::{self, Write};

use crate::core::auc;
use crate::core::case::Case;
use crate::core::clock::ClockTime;
use crate::core::error::{Error, Result};
use crate::core::fit::{self, Fit};
use crate::core::format::{num, when};
use crate::core::model::Route;
use crate::core::projection::Patient;
use crate::core::regimen::{self, Advice, Proportional};
use crate::core::switch::{self, SwitchRule};
use crate::core::units::auc_unit;

/// The published name of the two-level AUC method.
pub const TRAPEZOID_METHOD: &str = "linear-up/log-down trapezoid (Chiou 1978)";

/// One suggested regimen, as reported (level unit; AUC in level unit·h).
#[derive(Debug, Clone, PartialEq)]
pub struct SuggestionEntry {
    /// Dose in mg.
    pub dose_mg: f64,
    /// Interval in hours.
    pub interval_h: f64,
    /// Infusion time in hours (0 for bolus and oral).
    pub infusion_h: f64,
    /// "bolus", "infusion" or "oral".
    pub route: &'static str,
    /// Steady-state peak.
    pub peak_ss: f64,
    /// Steady-state trough.
    pub trough_ss: f64,
    /// Steady-state AUC over 24 h.
    pub auc24_ss: f64,
    /// Addition: the steady-state peak at the time the peak target is defined on.
    pub peak_sampled_ss: f64,
    /// Addition: whether this is the regimen the patient is on.
    pub current: bool,
    /// Addition: hours per interval at or below the trough ceiling (strategies that care).
    pub drug_free_h: Option<f64>,
    /// Addition: whether the infusion was lengthened to keep to the maximum rate.
    pub lengthened: bool,
}

/// The loading dose, as reported.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadingSection {
    /// Dose in mg.
    pub dose_mg: f64,
    /// Infusion time in hours (0 for bolus and oral).
    pub infusion_h: f64,
    /// "bolus", "infusion" or "oral".
    pub route: &'static str,
    /// The peak aimed at (level unit).
    pub target_peak: f64,
    /// The peak the rounded dose gives (level unit).
    pub peak: f64,
    /// What the aim was, in words.
    pub basis: &'static str,
}

/// AUC24 over the fitted interval by two methods, side by side (level unit·h).
#[derive(Debug, Clone, PartialEq)]
pub struct AucSection {
    /// Rows of the two levels used by the trapezoid.
    pub level_rows: [usize; 2],
    /// Row of the dose whose interval they are in.
    pub dose_row: usize,
    /// That dose, mg (when known).
    pub dose_mg: Option<f64>,
    /// The interval, hours: the one given in the record.
    pub interval_h: f64,
    /// Whether the interval is the plan's (only one dose on record, so none was given yet).
    pub interval_from_plan: bool,
    /// By the linear-up/log-down trapezoid from the two levels, at steady state.
    pub by_levels: f64,
    /// By F·D/(k·V)·24/tau with the fitted k and V (None without V).
    pub by_k_and_v: Option<f64>,
    /// The trapezoid's published name.
    pub method: &'static str,
}

/// The switch to another agent, as reported.
#[derive(Debug, Clone, PartialEq)]
pub struct SwitchSection {
    /// The next agent.
    pub to: String,
    /// "start_below" or "after_half_lives".
    pub basis: &'static str,
    /// The rule's number: the level (level unit) or the half-lives.
    pub value: f64,
    /// Where the count starts.
    pub from: ClockTime,
    /// The earliest start (rounded up to the minute).
    pub start_at: ClockTime,
    /// Its 95 % range.
    pub start_at_ci95: Option<[ClockTime; 2]>,
    /// The level predicted at the start (level unit).
    pub level_at_start: f64,
}

/// Every advice part of a report.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct AdviceSection {
    /// Suggested regimens, best first, at most five.
    pub suggestions: Vec<SuggestionEntry>,
    /// The loading dose (None without a volume).
    pub loading: Option<LoadingSection>,
    /// The proportional adjustment in the level unit (only without a volume).
    pub proportional: Option<Proportional>,
    /// AUC24 by two methods.
    pub auc24: Option<AucSection>,
    /// The switch, when the case plans one.
    pub switch: Option<SwitchSection>,
}

fn up(case: &Case, t: f64, what: &str) -> Result<ClockTime> {
    case.clock.at_minute_up(t).ok_or_else(|| {
        Error::invalid(
            what,
            "lies too far from the case's dates to be placed on a calendar; check the levels and times",
        )
    })
}

/// Every figure of `what` is finite, or an error at the levels (every figure of the advice
/// is made from the fit, so the levels, their times and the dose amounts are what to check).
fn finite(xs: &[f64], what: &str) -> Result<()> {
    if xs.iter().all(|x| x.is_finite()) {
        Ok(())
    } else {
        Err(Error::invalid(
            "level",
            format!("the {what} is too extreme for the model to give finite figures; check the level values and times and the dose amounts"),
        ))
    }
}

/// AUC24 over the fitted interval from its first and last fitted levels, by the trapezoid
/// and by k and V. `None` when the interval is unknown or the levels do not allow it.
pub fn auc_compare(p: &Patient) -> Option<AucSection> {
    let (case, fit) = (p.case, p.fit);
    let w = fit.window_dose;
    let dose = case.doses.get(w)?;
    let in_window: Vec<usize> = fit
        .used
        .iter()
        .copied()
        .filter(|&i| fit::window_of(case, case.levels[i].t) == Some(w))
        .collect();
    let (&a, &b) = (in_window.first()?, in_window.last()?);
    // The trapezoid extrapolates the falling line back to the end of the input; an absorbed
    // oral dose rises for hours after it is taken, so that would overstate the area.
    if dose.route.absorption().is_some() {
        return None;
    }
    // A measured figure: the interval actually given; the plan's only when the record holds
    // a single dose (and the report says so).
    let recorded = regimen::recorded_interval(case, fit);
    let interval_from_plan = recorded.is_none();
    let tau = recorded.or_else(|| case.plan.as_ref().map(|p| p.interval_h))?;
    let (la, lb) = (&case.levels[a], &case.levels[b]);
    let t_inf = dose.route.infusion_h();
    let two =
        auc::auc24_from_two_levels(la.t - dose.t, la.mg_l, lb.t - dose.t, lb.mg_l, t_inf, tau)?;
    let by_kv = match (p.disposition(), dose.amount_mg) {
        (Some(disp), Some(d)) => {
            Some(dose.route.bioavailability() * d / disp.clearance() * 24.0 / tau)
        }
        _ => None,
    };
    let scale = case.drug.scale;
    Some(AucSection {
        level_rows: [la.row, lb.row],
        dose_row: dose.row,
        dose_mg: dose.amount_mg,
        interval_h: tau,
        interval_from_plan,
        by_levels: scale.to_level(two.auc24),
        by_k_and_v: by_kv.map(|x| scale.to_level(x)),
        method: TRAPEZOID_METHOD,
    })
}

/// Build the advice parts; `plan_peak_mg_l` is the plan's steady-state peak, when projected.
/// Notes for the warnings list are appended to `warnings`.
///
/// # Errors
/// A start time too far away for any calendar, or a figure that is not finite.
pub fn build(
    case: &Case,
    fit: &Fit,
    plan_peak_mg_l: Option<f64>,
    warnings: &mut Vec<Warning>,
) -> Result<AdviceSection> {
    let p = Patient::new(case, fit);
    let scale = case.drug.scale;
    let to = |x: f64| scale.to_level(x);
    let Advice {
        suggestions,
        loading,
        proportional,
        notes,
    } = regimen::advise(&p, plan_peak_mg_l, &case.regimen);
    warnings.extend(notes);
    let suggestions: Vec<SuggestionEntry> = suggestions
        .iter()
        .map(|s| SuggestionEntry {
            dose_mg: s.dose_mg,
            interval_h: s.interval_h,
            infusion_h: s.route.infusion_h(),
            route: s.route.name(),
            peak_ss: to(s.steady.peak_mg_l),
            trough_ss: to(s.steady.trough_mg_l),
            auc24_ss: to(s.steady.auc24_mg_h_l),
            peak_sampled_ss: to(s.peak_sampled_mg_l),
            current: s.current,
            drug_free_h: s.drug_free_h,
            lengthened: s.lengthened,
        })
        .filter(|s| {
            [s.peak_ss, s.trough_ss, s.auc24_ss]
                .iter()
                .all(|x| x.is_finite())
        })
        .collect();
    let loading = loading.map(|l| LoadingSection {
        dose_mg: l.dose_mg,
        infusion_h: l.route.infusion_h(),
        route: l.route.name(),
        target_peak: to(l.target_peak_mg_l),
        peak: to(l.peak_mg_l),
        basis: l.basis.words(),
    });
    if let Some(l) = &loading {
        finite(&[l.dose_mg, l.target_peak, l.peak], "loading dose")?;
    }
    let proportional = proportional.map(|q| q.in_level_unit(to));
    if let Some(q) = &proportional {
        finite(
            &[q.measured, q.target, q.factor, q.trough_after],
            "proportional adjustment",
        )?;
    }
    let auc24 = auc_compare(&p)
        .filter(|a| a.by_levels.is_finite() && a.by_k_and_v.is_none_or(|x| x.is_finite()));
    if let Some(a) = &auc24 {
        // The trapezoid takes the level at the start of the interval to equal the one at its
        // end, as at steady state. Say so only when the model shows they differ by more than
        // 10 %, or when there is no model to tell.
        let dose_t = case.doses[fit.window_dose].t;
        let (start, end) = (p.level_mg_l(dose_t), p.level_mg_l(dose_t + a.interval_h));
        let apart = p.v().is_none() || (start - end).abs() > 0.1 * start.max(end);
        if apart {
            warnings.push(Warning::new(Code::AucNotSteady,
                "AUC24 from two levels assumes steady state (the level at the start of the interval equals the one at its end); this interval is not at steady state, so it differs from the k-and-V figure",
            ));
        }
    }
    let switch = match &case.switch {
        None => None,
        Some(sw) => {
            let sp = switch::project(&p, sw);
            finite(&[sp.level_at_start_mg_l], "switch level")?;
            let place = match sw.rule {
                SwitchRule::StartBelow(_) => "switch.start_below",
                SwitchRule::AfterHalfLives(_) => "switch.after_half_lives",
            };
            let ci = match sp.start_ci95_t {
                Some([a, b]) => Some([up(case, a, place)?, up(case, b, place)?]),
                None => None,
            };
            Some(SwitchSection {
                to: sw.to.clone(),
                basis: sw.rule.basis(),
                value: match sw.rule {
                    SwitchRule::StartBelow(x) | SwitchRule::AfterHalfLives(x) => x,
                },
                from: up(case, sp.from_t, place)?,
                start_at: up(case, sp.start_t, place)?,
                start_at_ci95: ci,
                level_at_start: to(sp.level_at_start_mg_l),
            })
        }
    };
    Ok(AdviceSection {
        suggestions,
        loading,
        proportional,
        auc24,
        switch,
    })
}

fn route_words(route: &str, infusion_h: f64) -> String {
    if route == "infusion" {
        format!("infusion over {} h", num(infusion_h))
    } else {
        route.to_string()
    }
}

/// The route of a suggestion in words, for every output that shows one.
pub fn suggestion_route(s: &SuggestionEntry) -> String {
    route_words(s.route, s.infusion_h)
}

/// The route of the loading dose in words.
pub fn loading_route(l: &LoadingSection) -> String {
    route_words(l.route, l.infusion_h)
}

/// A route as the model holds it, in the same words.
pub fn route_of(r: Route) -> String {
    route_words(r.name(), r.infusion_h())
}

/// Write the regimen sections of the readable report: suggestions, loading dose,
/// proportional adjustment and the two AUC24 figures (`u` is the level unit).
///
/// # Errors
/// Only the writer's errors.
pub fn write_regimen_text(w: &mut dyn Write, a: &AdviceSection, u: &str) -> io::Result<()> {
    if !a.suggestions.is_empty() {
        writeln!(w, "Regimens that meet every target (best first):")?;
        for (i, s) in a.suggestions.iter().enumerate() {
            let sampled = if s.peak_sampled_ss != s.peak_ss {
                format!(" ({} {u} when sampled)", num(s.peak_sampled_ss))
            } else {
                String::new()
            };
            let mut tail = String::new();
            if let Some(h) = s.drug_free_h {
                tail += &format!(", drug-free {} h per interval", num(h));
            }
            if s.current {
                tail += " — the current regimen";
            }
            if s.lengthened {
                tail += " — infusion lengthened for the maximum rate";
            }
            writeln!(
                w,
                "  {}. {} mg {} every {} h: peak {} {u}{sampled}, trough {} {u}, AUC24 {} {}{tail}",
                i + 1,
                num(s.dose_mg),
                suggestion_route(s),
                num(s.interval_h),
                num(s.peak_ss),
                num(s.trough_ss),
                num(s.auc24_ss),
                auc_unit(u)
            )?;
        }
    }
    if let Some(l) = &a.loading {
        writeln!(
            w,
            "Loading dose: {} mg {} reaches a peak of {} {u} at once (aim {} {u}, {}), with no drug on board",
            num(l.dose_mg),
            loading_route(l),
            num(l.peak),
            num(l.target_peak),
            l.basis
        )?;
    }
    if let Some(q) = &a.proportional {
        let unit = if q.basis == "peak" {
            u.to_string()
        } else {
            auc_unit(u)
        };
        let basis = if q.basis == "peak" && q.peak_after_h > 0.0 {
            format!("level {} h after the end of the dose", num(q.peak_after_h))
        } else {
            q.basis.to_string()
        };
        write!(
            w,
            "Proportional adjustment (no volume): {basis} measured {} {unit}, aim {} {unit}, factor {}",
            num(q.measured),
            num(q.target),
            num(q.factor)
        )?;
        match (q.dose_given_mg, q.new_dose_mg) {
            (Some(d), Some(n)) => write!(
                w,
                ": {} mg becomes {} mg every {} h",
                num(d),
                num(n),
                num(q.interval_h)
            )?,
            _ => write!(
                w,
                ": scale the dose given by the factor, every {} h",
                num(q.interval_h)
            )?,
        }
        writeln!(w, "; trough then {} {u}", num(q.trough_after))?;
    }
    if !a.suggestions.is_empty() || a.loading.is_some() || a.proportional.is_some() {
        writeln!(w)?;
    }
    if let Some(x) = &a.auc24 {
        let whose = if x.interval_from_plan {
            ", the plan's: only one dose is on record"
        } else {
            " as given"
        };
        writeln!(
            w,
            "AUC24 over the interval of dose {} ({} h{whose}), at steady state:",
            x.dose_row,
            num(x.interval_h)
        )?;
        writeln!(
            w,
            "  from levels {} and {} by the {}: {} {}",
            x.level_rows[0],
            x.level_rows[1],
            x.method,
            num(x.by_levels),
            auc_unit(u)
        )?;
        match x.by_k_and_v {
            Some(v) => writeln!(
                w,
                "  from k and V (dose / clearance): {} {}",
                num(v),
                auc_unit(u)
            )?,
            None => writeln!(w, "  from k and V: not known (no volume)")?,
        }
        writeln!(w)?;
    }
    Ok(())
}

/// Write the switch section of the readable report (`u` is the level unit).
///
/// # Errors
/// Only the writer's errors.
pub fn write_switch_text(w: &mut dyn Write, a: &AdviceSection, u: &str) -> io::Result<()> {
    if let Some(s) = &a.switch {
        let rule = match s.basis {
            "start_below" => format!("once below {} {u}", num(s.value)),
            _ => format!("{} half-lives after {}", num(s.value), when(&s.from)),
        };
        writeln!(w, "Switch to {}: {rule}", s.to)?;
        writeln!(
            w,
            "  earliest start {} (level then {} {u})",
            s.start_at.readable_near(&s.from),
            num(s.level_at_start)
        )?;
        match &s.start_at_ci95 {
            Some([a, b]) => writeln!(w, "  95 % range {} to {}", when(a), when(b))?,
            None => writeln!(w, "  95 % range not known (no interval of k)")?,
        }
        writeln!(w)?;
    }
    Ok(())
}
