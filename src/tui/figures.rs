//! The figures the screens show, all computed by the core from the case file: validation,
//! the fit, the report, and the model's course sampled for the charts.
//!
//! Two savings keep a keystroke cheap on a long dose record: a chart is sampled only when a
//! screen draws it (once per state of the case), and an edit of the plan alone keeps the
//! fit of the state before when that fit never reads the plan (two-point, log-linear and
//! dose-history fits read the doses, levels and drug; a Bayesian or population fit may take
//! the daily dose from the plan, so it is fitted again).

use std::cell::OnceCell;

use crate::analysis::{self, Stop};
use crate::core::case::Case;
use crate::core::casefile::CaseFile;
use crate::core::error::Error;
use crate::core::fit::{Fit, Method};
use crate::core::projection::{self, Patient};
use crate::core::report::Report;
use crate::core::saturable_report;
use crate::core::uncertainty;
use crate::tui::catalog::Profiles;
use crate::tui::strings;
use crate::tui::widgets::chart::{ChartData, Curve, CurveRole, Guide, GuideRole, Mark, MarkKind};

/// Samples per chart curve (dose starts and ends are added to these).
const SAMPLES: usize = 160;
/// The most plan doses a chart draws.
const MAX_CHART_PLAN_DOSES: usize = 200;

/// Why there are no figures, and where the problem is.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// The field or row the core named (`level 3`, `plan.interval_h`), if any.
    pub place: Option<String>,
    /// The whole message.
    pub text: String,
    /// Whether the case itself is invalid (rather than valid but unable to give a fit).
    pub invalid_case: bool,
}

/// Where the threshold projection starts from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ThresholdFrom {
    /// The end of the last recorded dose.
    LastDoseEnd,
    /// The last level drawn.
    LastLevel,
    /// The last level in the fit (no volume: the fitted line is used).
    LastFittedLevel,
}

/// The charts of the four figure screens, each sampled the first time it is asked for.
#[derive(Debug, Clone, Default)]
struct Charts {
    /// Levels, fitted line, model course and threshold.
    fit: OnceCell<Option<ChartData>>,
    /// The projected course of the plan to steady state.
    plan: OnceCell<Option<ChartData>>,
    /// The fall to the threshold.
    threshold: OnceCell<Option<ChartData>>,
    /// The washout, with each half-life marked.
    washout: OnceCell<Option<ChartData>>,
    /// The integrated Michaelis-Menten course of a saturable drug, with its levels.
    saturable: OnceCell<Option<ChartData>>,
}

/// Everything computed from one state of the case file.
#[derive(Debug, Clone, Default)]
pub struct Figures {
    /// The validated case.
    pub case: Option<Case>,
    /// The fit.
    pub fit: Option<Fit>,
    /// The report.
    pub report: Option<Report>,
    /// Why something is missing.
    pub problem: Option<Problem>,
    /// Where the threshold projection starts from.
    pub threshold_from: Option<ThresholdFrom>,
    /// The charts, sampled when first drawn.
    charts: Charts,
    /// The saturable (Michaelis-Menten) analysis, for a drug such as phenytoin (then there
    /// is no first-order fit or report).
    pub saturable: Option<analysis::Saturable>,
}

fn problem(e: &Error, invalid_case: bool) -> Problem {
    let mut inner = e;
    while let Error::InFile { source, .. } = inner {
        inner = source;
    }
    let place = match inner {
        Error::Invalid { place, .. } => Some(place.clone()),
        _ => None,
    };
    Problem {
        place,
        text: e.to_string(),
        invalid_case,
    }
}

impl Figures {
    /// Run the one analysis on the case file (with its drug profile, as `ebb report` does);
    /// never panics, never fails: what cannot be computed is left `None` with the reason in
    /// `problem`. The charts are sampled when first drawn.
    pub fn compute(file: &CaseFile, profiles: &Profiles) -> Figures {
        Figures::compute_keeping(file, profiles, None)
    }

    /// The figures of `file` after a change from the state whose figures were `previous`:
    /// as `compute`, but when the change was to the plan alone (`plan_alone`, see
    /// [`plan_alone_differs`]) a fit of `previous` that never reads the plan is kept rather
    /// than fitted again.
    pub fn after_change(
        previous: &Figures,
        plan_alone: bool,
        file: &CaseFile,
        profiles: &Profiles,
    ) -> Figures {
        let keep = previous.fit.as_ref().filter(|f| {
            plan_alone
                && matches!(
                    f.method,
                    Method::TwoPoint | Method::LogLinear | Method::DoseHistory
                )
        });
        Figures::compute_keeping(file, profiles, keep)
    }

    fn compute_keeping(file: &CaseFile, profiles: &Profiles, fit: Option<&Fit>) -> Figures {
        let a = analysis::analyse_with_fit(file, profiles, fit);
        if let (Some(case), Some(s)) = (&a.case, &a.saturable) {
            return Figures {
                case: Some(case.clone()),
                saturable: Some(s.clone()),
                problem: Some(Problem {
                    place: None,
                    text: strings::SATURABLE_ELSEWHERE.into(),
                    invalid_case: false,
                }),
                ..Figures::default()
            };
        }
        let problem = a.stop.as_ref().map(|stop| match stop {
            Stop::Refused(why) => Problem {
                place: Some("drug.profile".into()),
                text: strings::refused(why),
                invalid_case: false,
            },
            other => problem(&other.to_error(None), other.is_invalid_case()),
        });
        let (case, fit, report) = match (a.case, a.fit, a.report) {
            (Some(c), Some(f), Some(r)) => (c, f, r),
            (case, fit, _) => {
                return Figures {
                    problem,
                    case,
                    fit,
                    ..Figures::default()
                }
            }
        };
        let patient = Patient::new(&case, &fit);
        let threshold_from =
            case.threshold
                .as_ref()
                .map(|_| match projection::threshold_start(&patient).from {
                    projection::Start::LastDoseEnd => ThresholdFrom::LastDoseEnd,
                    projection::Start::LastLevel => ThresholdFrom::LastLevel,
                    projection::Start::LastFittedLevel => ThresholdFrom::LastFittedLevel,
                });
        Figures {
            case: Some(case),
            fit: Some(fit),
            report: Some(report),
            problem: None,
            threshold_from,
            charts: Charts::default(),
            saturable: None,
        }
    }

    /// One chart, sampled by `make` the first time it is asked for; `None` without a report.
    fn chart<'a>(
        &'a self,
        cell: &'a OnceCell<Option<ChartData>>,
        make: fn(&Case, &Fit, &Report, &Patient) -> Option<ChartData>,
    ) -> Option<&'a ChartData> {
        cell.get_or_init(|| {
            let (case, fit, report) = (
                self.case.as_ref()?,
                self.fit.as_ref()?,
                self.report.as_ref()?,
            );
            make(case, fit, report, &Patient::new(case, fit))
        })
        .as_ref()
    }

    /// Levels, fitted line, model course and threshold (screen 2).
    pub fn fit_chart(&self) -> Option<&ChartData> {
        self.chart(&self.charts.fit, |c, f, _, p| Some(fit_chart(c, f, p)))
    }

    /// The projected course of the plan to steady state (screen 3).
    pub fn plan_chart(&self) -> Option<&ChartData> {
        self.chart(&self.charts.plan, |c, _, r, p| plan_chart(c, r, p))
    }

    /// The fall to the threshold (screen 4).
    pub fn threshold_chart(&self) -> Option<&ChartData> {
        self.chart(&self.charts.threshold, |c, _, _, p| threshold_chart(c, p))
    }

    /// The washout, with each half-life marked (screen 5).
    pub fn washout_chart(&self) -> Option<&ChartData> {
        self.chart(&self.charts.washout, |c, _, r, p| washout_chart(c, r, p))
    }

    /// The integrated Michaelis-Menten course over the dose record and the plan, with the
    /// deciding levels (a drug with saturable elimination; screen 2).
    pub fn saturable_chart(&self) -> Option<&ChartData> {
        self.charts
            .saturable
            .get_or_init(|| saturable_chart(self.case.as_ref()?, self.saturable.as_ref()?))
            .as_ref()
    }

    /// Which charts have been sampled so far: fit, plan, threshold, washout.
    pub fn charts_built(&self) -> [bool; 4] {
        let c = &self.charts;
        [
            c.fit.get().is_some(),
            c.plan.get().is_some(),
            c.threshold.get().is_some(),
            c.washout.get().is_some(),
        ]
    }
}

/// Whether two states of the case file differ, and only in `[plan]` (`before` is borrowed
/// mutably to compare it without a copy of the dose record, and left as it was).
pub fn plan_alone_differs(before: &mut CaseFile, after: &CaseFile) -> bool {
    if before.plan == after.plan {
        return false;
    }
    let plan = std::mem::replace(&mut before.plan, after.plan.clone());
    let same_otherwise = *before == *after;
    before.plan = plan;
    same_otherwise
}

fn to_level(case: &Case, pts: Vec<(f64, f64)>) -> Vec<(f64, f64)> {
    let s = case.drug.scale;
    pts.into_iter().map(|(t, c)| (t, s.to_level(c))).collect()
}

fn threshold_guide(case: &Case) -> Option<Guide> {
    case.threshold.as_ref().map(|t| Guide {
        value: t.below,
        role: GuideRole::Threshold,
    })
}

/// The haemodialysis sessions as bands of hours on the axis (marked, not modelled).
fn session_bands(case: &Case) -> Vec<[f64; 2]> {
    case.dialysis_sessions
        .iter()
        .map(|s| [s.t, s.end()])
        .collect()
}

fn fit_chart(case: &Case, fit: &Fit, p: &Patient) -> ChartData {
    let first = case.doses.first().map(|d| d.t).unwrap_or(0.0);
    let last_level = case.levels.iter().map(|l| l.t).fold(first, f64::max);
    let end = last_level.max(p.last_dose_end());
    let span = (end - first).max(1.0);
    let x = [first - 0.02 * span, end + 0.12 * span];
    let mut curves = Vec::new();
    if p.v().is_some() {
        let model = projection::course_mg_l(p, None, x[0], x[1], SAMPLES);
        let times: Vec<f64> = model.iter().map(|(t, _)| *t).collect();
        let band = uncertainty::band(case, fit, &times);
        if band.iter().any(|b| b.band.is_some()) {
            let edge = |i: usize| -> Vec<(f64, f64)> {
                band.iter()
                    .filter_map(|b| b.band.map(|e| (b.t, e[i])))
                    .collect()
            };
            curves.push(Curve {
                role: CurveRole::Band,
                points: to_level(case, edge(0)),
            });
            curves.push(Curve {
                role: CurveRole::Band,
                points: to_level(case, edge(1)),
            });
        }
        curves.push(Curve {
            role: CurveRole::Model,
            points: to_level(case, model),
        });
    }
    // The straight fitted line belongs to the fits within one dosing interval; the other
    // fits are the model curve itself.
    if matches!(fit.method, Method::TwoPoint | Method::LogLinear) {
        let used_t: Vec<f64> = fit.used.iter().map(|&i| case.levels[i].t).collect();
        let a = case
            .doses
            .get(fit.window_dose)
            .map(|d| d.end())
            .unwrap_or(first);
        let b = used_t.iter().copied().fold(a, f64::max);
        let b = b + 0.1 * (b - a).max(0.5);
        curves.push(Curve {
            role: CurveRole::Fitted,
            points: to_level(case, vec![(a, fit.line_mg_l(a)), (b, fit.line_mg_l(b))]),
        });
    }
    let marks = case
        .levels
        .iter()
        .enumerate()
        .map(|(i, l)| Mark {
            t: l.t,
            value: l.value,
            kind: if fit.used.contains(&i) {
                MarkKind::InFit
            } else if l.use_in_fit {
                MarkKind::NotInFit
            } else {
                MarkKind::LeftOut
            },
        })
        .collect();
    ChartData {
        clock: case.clock,
        x,
        curves,
        marks,
        guide: threshold_guide(case),
        vline: None,
        bands: session_bands(case),
    }
}

fn saturable_chart(case: &Case, s: &analysis::Saturable) -> Option<ChartData> {
    let r = &s.report;
    let span = saturable_report::chart_span(case, r);
    let saturable_report::ChartCourse { record, plan, band } =
        saturable_report::chart_course(case, r, span, SAMPLES);
    let mut curves = Vec::new();
    for edge in band.into_iter().flatten() {
        curves.push(Curve {
            role: CurveRole::Band,
            points: to_level(case, edge),
        });
    }
    if !record.is_empty() {
        curves.push(Curve {
            role: CurveRole::Model,
            points: to_level(case, record),
        });
    }
    if !plan.is_empty() {
        curves.push(Curve {
            role: CurveRole::Plan,
            points: to_level(case, plan),
        });
    }
    let marks = r
        .readings
        .iter()
        .map(|x| Mark {
            t: x.t,
            value: case.drug.scale.to_level(x.decision_mg_l),
            kind: MarkKind::InFit,
        })
        .collect();
    Some(ChartData {
        clock: case.clock,
        x: span,
        curves,
        marks,
        guide: threshold_guide(case),
        vline: case.threshold.as_ref().and_then(|t| t.procedure_t),
        bands: session_bands(case),
    })
}

fn plan_chart(case: &Case, r: &Report, p: &Patient) -> Option<ChartData> {
    let (plan, part) = (case.plan.as_ref()?, r.plan.as_ref()?);
    p.v()?;
    let tau = plan.interval_h;
    let from = case
        .doses
        .last()
        .map(|d| d.t)
        .unwrap_or(plan.start_t)
        .min(plan.start_t);
    let reach = (part.time_to_ss_h[2] + tau).max(3.0 * tau);
    let to = plan.start_t + reach.min(MAX_CHART_PLAN_DOSES as f64 * tau);
    let last = projection::plan_doses_before(plan, to).max(1) - 1;
    let points = projection::course_mg_l(p, Some((plan, last)), from, to, SAMPLES + SAMPLES / 4);
    Some(ChartData {
        clock: case.clock,
        x: [from, to],
        curves: vec![Curve {
            role: CurveRole::Plan,
            points: to_level(case, points),
        }],
        marks: Vec::new(),
        guide: case.targets.trough_max.map(|v| Guide {
            value: v,
            role: GuideRole::TroughTarget,
        }),
        vline: None,
        bands: session_bands(case),
    })
}

fn threshold_chart(case: &Case, p: &Patient) -> Option<ChartData> {
    let th = case.threshold.as_ref()?;
    let below_mg_l = case.drug.scale.to_mg_l(th.below);
    let tp = projection::threshold(p, below_mg_l, th.procedure_t);
    let from = case.doses.last().map(|d| d.t).unwrap_or(tp.t0).min(tp.t0);
    let mut end = tp.reached_t;
    if let Some([_, late]) = tp.reached_ci95_t {
        end = end.max(late);
    }
    if let Some(t) = th.procedure_t {
        end = end.max(t);
    }
    let span = (end - from).max(1.0);
    let to = end + 0.1 * span;
    let points = projection::course_mg_l(p, None, from, to, SAMPLES);
    Some(ChartData {
        clock: case.clock,
        x: [from, to],
        curves: vec![Curve {
            role: CurveRole::Model,
            points: to_level(case, points),
        }],
        marks: vec![Mark {
            t: tp.reached_t,
            value: th.below,
            kind: MarkKind::Reached,
        }],
        guide: threshold_guide(case),
        vline: th.procedure_t,
        bands: session_bands(case),
    })
}

fn washout_chart(case: &Case, r: &Report, p: &Patient) -> Option<ChartData> {
    let first = r.washout.first()?;
    let last = r.washout.last()?;
    let t_first = case.clock.hours(&first.at);
    let t_last = case.clock.hours(&last.at);
    let th = p.fit.half_life_h;
    let from = t_first - th;
    let switch = r
        .advice
        .switch
        .as_ref()
        .map(|s| (case.clock.hours(&s.start_at), s.level_at_start))
        .filter(|(t, v)| t.is_finite() && v.is_finite() && *v > 0.0);
    let mut to = t_last + 0.5 * th;
    if let Some((t, _)) = switch {
        // The start of the next agent stays in view, within reason.
        if t > to && t < t_last + 20.0 * th {
            to = t + 0.1 * (t - from);
        }
    }
    let points = projection::course_mg_l(p, None, from, to, SAMPLES);
    let mut marks: Vec<Mark> = r
        .washout
        .iter()
        .map(|w| Mark {
            t: case.clock.hours(&w.at),
            value: w.level,
            kind: MarkKind::HalfLife(w.half_lives),
        })
        .collect();
    if let Some((t, value)) = switch {
        marks.push(Mark {
            t,
            value,
            kind: MarkKind::SwitchStart,
        });
    }
    Some(ChartData {
        clock: case.clock,
        x: [from, to],
        curves: vec![Curve {
            role: CurveRole::Model,
            points: to_level(case, points),
        }],
        marks,
        guide: threshold_guide(case),
        vline: None,
        bands: session_bands(case),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_plan_edit_alone_is_told_from_any_other() {
        let demo = CaseFile::parse(crate::demo::DEMO_CASE).unwrap();
        let mut before = demo.clone();
        let mut plan = demo.clone();
        if let Some(p) = plan.plan.as_mut() {
            p.dose_mg += 10.0;
        }
        assert!(plan_alone_differs(&mut before, &plan));
        assert_eq!(before, demo, "left as it was");
        // No change, a change elsewhere, or both: not the plan alone.
        assert!(!plan_alone_differs(&mut before, &demo));
        let mut level = demo.clone();
        level.levels[0].value = 0.8;
        assert!(!plan_alone_differs(&mut before, &level));
        let mut both = plan.clone();
        both.levels[0].value = 0.8;
        assert!(!plan_alone_differs(&mut before, &both));
        assert_eq!(before, demo);
    }
}
