//! After a procedure: when the held regimen may resume, by a level to fall below or a delay.

use crate::core::project::{Patient, ThresholdProjection};

/// When the regimen may resume after the procedure.
#[derive(Debug, Clone, PartialEq)]
pub struct ResumeProjection {
    /// The earliest time, hours on the axis (the later of the level rule and the delay).
    pub resume_t: f64,
    /// The model's level then, mg/L (with the plan doses given up to the latest allowed one).
    pub level_mg_l: f64,
}

/// When the regimen may resume after `procedure_t`: once the level is at or below
/// `resume_below_mg_l` and `resume_after_h` hours have passed since the procedure (either
/// or both). The plan doses up to the threshold's latest allowed dose are taken as given and
/// no other dose until the resumption. `None` when neither rule is given.
pub fn resume(
    p: &Patient,
    th: &ThresholdProjection,
    procedure_t: f64,
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
    let mut t = procedure_t + resume_after_h.unwrap_or(0.0);
    if let Some(below) = resume_below_mg_l {
        // After the last dose given has fully entered, the level only falls.
        let last_in = match (plan, th.latest_plan_dose) {
            (Some(pl), Some((_, td))) => td + pl.route.infusion_h(),
            _ => f64::NEG_INFINITY,
        };
        let from = t.max(last_in).max(p.last_dose_end());
        let c = level(from);
        let fall = if c <= below {
            0.0
        } else {
            (c / below).ln() / p.fit.k
        };
        if level(t) > below {
            t = from + fall;
        }
    }
    Some(ResumeProjection {
        resume_t: t,
        level_mg_l: level(t),
    })
}
