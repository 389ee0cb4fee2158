//! Haemodialysis sessions as the report reads them: marked on the course, never modelled. Which
//! levels are pre-dialysis levels and which were drawn during a session or in the rebound after
//! it, the strategy's pre-dialysis range, when the dose after a session is due, and the
//! warnings that say what marking without modelling means for the projections.

use std::io::{self, Write};

use crate::core::case::{Case, DialysisSession};
use crate::core::clock::ClockTime;
use crate::core::format::{num, when};
use crate::core::warning::{Code, Warning};

/// The one sentence every report, note and JSON of a case with sessions carries.
pub const NOT_MODELLED: &str =
    "Dialysis sessions are marked, not modelled: the projections remove no drug during a session.";

/// Hours after the end of a session during which a level may still be rebounding as drug
/// returns from the tissues (from memory, unverified: vancomycin's rebound after high-flux
/// dialysis runs for some hours; 6 h is the window used here, not a published figure). A level
/// drawn in it is not a pre-dialysis level.
pub const REBOUND_H: f64 = 6.0;

/// Hours before a session's start within which a level counts as its pre-dialysis level
/// (common practice draws the sample just before the session starts; 2 h is our window, not
/// a published figure).
pub const PRE_WINDOW_H: f64 = 2.0;

/// A plan's first dose this close to a session's end (hours) counts as given after it.
const AT_END_H: f64 = 0.5;

/// One session as shown: its row, start and end.
#[derive(Debug, Clone, PartialEq)]
pub struct SessionRow {
    /// Row in the file, counting from 1.
    pub row: usize,
    /// When it started.
    pub start: ClockTime,
    /// When it ended (to the minute).
    pub end: ClockTime,
    /// How long it ran, hours.
    pub duration_h: f64,
}

/// Where a level was drawn relative to the sessions.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Timing {
    /// During the session of this row.
    During {
        /// The session's row.
        session: usize,
    },
    /// This many hours after the end of the session of this row, within `REBOUND_H`.
    Rebound {
        /// The session's row.
        session: usize,
        /// Hours after its end.
        hours_after: f64,
    },
    /// This many hours before the start of the session of this row, within `PRE_WINDOW_H`.
    PreDialysis {
        /// The session's row.
        session: usize,
        /// Hours before its start.
        hours_before: f64,
    },
    /// None of these.
    Between,
}

/// The last pre-dialysis level and the strategy's range.
#[derive(Debug, Clone, PartialEq)]
pub struct PreDialysis {
    /// The level's row.
    pub level: usize,
    /// Its value in the case's level unit.
    pub value: f64,
    /// The session it came before.
    pub session: usize,
    /// Hours before that session's start.
    pub hours_before: f64,
    /// The strategy's pre-dialysis range (level unit) and its source, when it names one.
    pub range: Option<([f64; 2], String)>,
    /// Whether the level is within the range (None without one).
    pub within: Option<bool>,
}

/// When the strategy's dose after a session is due.
#[derive(Debug, Clone, PartialEq)]
pub struct NextDose {
    /// The first session starting after the last recorded dose, when one is recorded.
    pub session: Option<usize>,
    /// Its end: the time the next dose is due.
    pub at: Option<ClockTime>,
    /// The strategy's source for dosing after each session.
    pub source: String,
    /// Whether the plan's first dose is at that session's end (None without a plan or a
    /// session).
    pub plan_at_end: Option<bool>,
}

/// What the report says about dialysis for a case with sessions.
#[derive(Debug, Clone, PartialEq)]
pub struct DialysisSection {
    /// The sessions, in time order.
    pub sessions: Vec<SessionRow>,
    /// Each level's timing, by row, for the levels drawn during or after a session or before
    /// one.
    pub timings: Vec<(usize, Timing)>,
    /// The last pre-dialysis level, when there is one.
    pub pre_dialysis: Option<PreDialysis>,
    /// When the strategy gives each dose after a session: when the next one is due.
    pub next_dose: Option<NextDose>,
}

/// Where a level drawn at `t` (hours on the axis) falls relative to the sessions.
pub fn timing(sessions: &[DialysisSession], t: f64) -> Timing {
    // A sample drawn at the very start is taken before the session runs (common practice
    // draws the pre-dialysis sample from the line as the session starts).
    for s in sessions {
        if t > s.t && t <= s.end() {
            return Timing::During { session: s.row };
        }
    }
    // The latest session that ended before t: is t in its rebound?
    if let Some(s) = sessions
        .iter()
        .filter(|s| s.end() < t)
        .max_by(|a, b| a.end().total_cmp(&b.end()))
    {
        if t - s.end() <= REBOUND_H {
            return Timing::Rebound {
                session: s.row,
                hours_after: t - s.end(),
            };
        }
    }
    if let Some(s) = sessions
        .iter()
        .filter(|s| s.t >= t && s.t - t <= PRE_WINDOW_H)
        .min_by(|a, b| a.t.total_cmp(&b.t))
    {
        return Timing::PreDialysis {
            session: s.row,
            hours_before: s.t - t,
        };
    }
    Timing::Between
}

/// The dialysis section of a case's report, or `None` when the case records no session.
pub fn section(case: &Case) -> Option<DialysisSection> {
    if case.dialysis_sessions.is_empty() {
        return None;
    }
    let sessions = case
        .dialysis_sessions
        .iter()
        .map(|s| SessionRow {
            row: s.row,
            start: s.start,
            end: case.stamp(s.end()).unwrap_or(s.start),
            duration_h: s.duration_h,
        })
        .collect();
    let timings: Vec<(usize, Timing)> = case
        .levels
        .iter()
        .map(|l| (l.row, timing(&case.dialysis_sessions, l.t)))
        .filter(|(_, t)| *t != Timing::Between)
        .collect();
    let rule = &case.regimen.dialysis;
    let pre_dialysis = case
        .levels
        .iter()
        .filter(|l| !l.below_limit && !l.free)
        .filter_map(|l| match timing(&case.dialysis_sessions, l.t) {
            Timing::PreDialysis {
                session,
                hours_before,
            } => Some((l, session, hours_before)),
            _ => None,
        })
        .max_by(|a, b| a.0.t.total_cmp(&b.0.t))
        .map(|(l, session, hours_before)| {
            let range = rule
                .pre_dialysis
                .map(|r| (r, rule.pre_dialysis_source.clone()));
            PreDialysis {
                level: l.row,
                value: l.value,
                session,
                hours_before,
                within: range
                    .as_ref()
                    .map(|([a, b], _)| l.value >= *a && l.value <= *b),
                range,
            }
        });
    let next_dose = rule.dose_after_session.then(|| {
        let last_dose = case.doses.last().map_or(f64::NEG_INFINITY, |d| d.t);
        // The first session that starts after the last dose: a dose given during a session
        // (or at its end) is that session's dose.
        let next = case.dialysis_sessions.iter().find(|s| s.t > last_dose);
        NextDose {
            session: next.map(|s| s.row),
            at: next.and_then(|s| case.stamp(s.end())),
            source: rule.dose_after_session_source.clone(),
            plan_at_end: match (next, &case.plan) {
                (Some(s), Some(p)) => Some((p.start_t - s.end()).abs() <= AT_END_H),
                _ => None,
            },
        }
    });
    Some(DialysisSection {
        sessions,
        timings,
        pre_dialysis,
        next_dose,
    })
}

/// The warnings of a case with sessions: that the sessions are not modelled (always), each
/// level drawn during a session or in the rebound after it, levels in the fit `used`
/// (indices into `case.levels`) that span a session, and a last pre-dialysis level outside
/// the strategy's range. Level values are in `unit`.
pub fn warnings(case: &Case, used: &[usize], unit: &str) -> Vec<Warning> {
    let Some(sec) = section(case) else {
        return Vec::new();
    };
    let mut out = Vec::new();
    // Sessions before the first dose removed none of this drug.
    let first_dose = case.doses.first().map_or(f64::NEG_INFINITY, |d| d.t);
    let names: Vec<String> = case
        .dialysis_sessions
        .iter()
        .filter(|s| s.end() > first_dose)
        .map(|s| format!("dialysis_session {} ({})", s.row, when(&s.start)))
        .collect();
    let what = if names.is_empty() {
        "every steady-state figure for a patient who goes on dialysing is".to_string()
    } else {
        format!(
            "every projected level after {}, and every steady-state figure for a patient who goes on dialysing, are",
            names.join(", ")
        )
    };
    out.push(Warning::new(
        Code::DialysisNotModelled,
        format!(
            "{NOT_MODELLED} So {what} too high by what the sessions remove; a level drawn after a session is needed before a projection past it is relied on"
        ),
    ));
    if case.patient.dialysis != Some(true) {
        out.push(Warning::new(
            Code::DialysisCovariate,
            "the case records dialysis sessions but [patient] dialysis is not true, so the patient is taken as not on haemodialysis wherever that counts (a population model's dialysis covariate, the albumin adjustment of a saturable drug); set dialysis = true if the patient is on intermittent haemodialysis",
        ));
    }
    for (row, t) in &sec.timings {
        let Some(l) = case.levels.iter().find(|l| l.row == *row) else {
            continue;
        };
        let in_fit = if used.iter().any(|&i| case.levels[i].row == *row) {
            "it is in the fit, which models no session"
        } else {
            "it is not in the fit"
        };
        let text = match t {
            Timing::During { session } => format!(
                "level {row} ({} {unit}) was drawn during dialysis_session {session}: it is not a pre-dialysis level; {in_fit}",
                l.value_words()
            ),
            Timing::Rebound {
                session,
                hours_after,
            } => format!(
                "level {row} ({} {unit}) was drawn {} h after the end of dialysis_session {session}, within the {} h the level may still rebound after a session (from memory, unverified): it is not a pre-dialysis level; {in_fit}",
                l.value_words(),
                num(*hours_after),
                num(REBOUND_H)
            ),
            _ => continue,
        };
        out.push(Warning::about_level(Code::NotPreDialysis, *row, text));
    }
    let fitted: Vec<f64> = used
        .iter()
        .filter_map(|&i| case.levels.get(i))
        .map(|l| l.t)
        .collect();
    if let (Some(first), Some(last)) = (
        fitted.iter().copied().reduce(f64::min),
        fitted.iter().copied().reduce(f64::max),
    ) {
        let spanned: Vec<String> = case
            .dialysis_sessions
            .iter()
            .filter(|s| s.t < last && s.end() > first)
            .map(|s| format!("dialysis_session {}", s.row))
            .collect();
        if !spanned.is_empty() {
            out.push(Warning::new(
                Code::FitAcrossSession,
                format!(
                    "the fitted levels span {}: the fitted k mixes what the session removed with the body's own elimination, so it is too high for the time between sessions; fit levels drawn between sessions",
                    spanned.join(", ")
                ),
            ));
        }
    }
    if let Some(p) = &sec.pre_dialysis {
        if let (Some(([a, b], source)), Some(false)) = (&p.range, p.within) {
            let side = if p.value < *a { "below" } else { "above" };
            out.push(Warning::about_level(
                Code::PreDialysisRange,
                p.level,
                format!(
                    "the last pre-dialysis level, level {} ({} {unit} before dialysis_session {}), is {side} the strategy's pre-dialysis range {}-{} {unit} {source}",
                    p.level,
                    num(p.value),
                    p.session,
                    num(*a),
                    num(*b)
                ),
            ));
        }
    }
    out
}

/// Write the report's dialysis section (nothing without sessions). Level values are in `unit`.
///
/// # Errors
/// Only the writer's errors.
pub fn write_text(w: &mut dyn Write, sec: &DialysisSection, unit: &str) -> io::Result<()> {
    writeln!(w, "Dialysis sessions")?;
    writeln!(w, "  {NOT_MODELLED}")?;
    for s in &sec.sessions {
        writeln!(
            w,
            "  session {}  {} to {}  ({} h)",
            s.row,
            when(&s.start),
            end_words(s),
            num(s.duration_h)
        )?;
    }
    match &sec.pre_dialysis {
        Some(p) => {
            let check = match (&p.range, p.within) {
                (Some(([a, b], source)), Some(within)) => format!(
                    "; pre-dialysis range {}-{} {unit} {source}: {}",
                    num(*a),
                    num(*b),
                    if within { "within" } else { "NOT within" }
                ),
                _ => String::new(),
            };
            writeln!(
                w,
                "  last pre-dialysis level: level {}, {} {unit}, {} h before session {}{check}",
                p.level,
                num(p.value),
                num(p.hours_before),
                p.session
            )?;
        }
        None => writeln!(
            w,
            "  no pre-dialysis level (one drawn within {} h before a session starts)",
            num(PRE_WINDOW_H)
        )?,
    }
    if let Some(n) = &sec.next_dose {
        match (n.session, &n.at) {
            (Some(row), Some(at)) => writeln!(
                w,
                "  the strategy gives each dose after a session {}: the next dose is due at the end of session {row}, {}",
                n.source,
                when(at)
            )?,
            _ => writeln!(
                w,
                "  the strategy gives each dose after a session {}: no session is recorded after the last dose, so the next dose is due at the end of the next session",
                n.source
            )?,
        }
        if n.plan_at_end == Some(false) {
            writeln!(
                w,
                "  the plan's first dose is not at the end of that session; time it to the session's end"
            )?;
        }
    }
    writeln!(w)
}

/// A session's end, with the date only when it differs from the start's.
fn end_words(s: &SessionRow) -> String {
    if s.end.wall().date() == s.start.wall().date() {
        s.end.wall().format("%H:%M").to_string()
    } else {
        when(&s.end)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::casefile::CaseFile;

    const CASE: &str = r#"
[drug]
level_unit = "mg/L"
[[dose]]
time = 2027-03-01T12:30:00
amount_mg = 1750.0
route = "infusion"
infusion_h = 2.0
[[level]]
time = 2027-03-01T16:30:00
value = 40.0
[[level]]
time = 2027-03-03T07:30:00
value = 22.0
[[level]]
time = 2027-03-03T10:00:00
value = 12.0
[[level]]
time = 2027-03-03T14:00:00
value = 15.0
[[dialysis_session]]
start = 2027-03-01T08:00:00
duration_h = 4.0
[[dialysis_session]]
start = 2027-03-03T08:00:00
duration_h = 4.0
"#;

    fn case(text: &str) -> Case {
        CaseFile::parse(text).unwrap().validate().unwrap()
    }

    #[test]
    fn levels_are_placed_against_the_sessions() {
        let c = case(CASE);
        let s = &c.dialysis_sessions;
        // Sessions at 0-4 h and 48-52 h on the axis (origin: the first session's start).
        assert_eq!(s[1].t, 48.0);
        assert_eq!(s[1].end(), 52.0);
        assert_eq!(
            timing(s, 47.5),
            Timing::PreDialysis {
                session: 2,
                hours_before: 0.5
            }
        );
        assert_eq!(timing(s, 50.0), Timing::During { session: 2 });
        assert_eq!(
            timing(s, 48.0),
            Timing::PreDialysis {
                session: 2,
                hours_before: 0.0
            }
        );
        assert_eq!(timing(s, 52.0), Timing::During { session: 2 });
        assert_eq!(
            timing(s, 54.0),
            Timing::Rebound {
                session: 2,
                hours_after: 2.0
            }
        );
        assert_eq!(timing(s, 58.5), Timing::Between);
        assert_eq!(timing(s, 45.5), Timing::Between);
        assert_eq!(
            timing(s, 46.0),
            Timing::PreDialysis {
                session: 2,
                hours_before: 2.0
            }
        );
    }

    #[test]
    fn the_last_pre_dialysis_level_is_checked_against_the_range() {
        let mut c = case(CASE);
        c.regimen.dialysis.pre_dialysis = Some([15.0, 20.0]);
        c.regimen.dialysis.pre_dialysis_source = "[Src]".into();
        let sec = section(&c).unwrap();
        let p = sec.pre_dialysis.unwrap();
        assert_eq!((p.level, p.session, p.value), (2, 2, 22.0));
        assert_eq!(p.within, Some(false));
        let w = warnings(&c, &[], "mg/L");
        let texts: Vec<(Code, Option<usize>)> =
            w.iter().map(|w| (w.code(), w.level_row())).collect();
        assert_eq!(
            texts,
            vec![
                (Code::DialysisNotModelled, None),
                (Code::DialysisCovariate, None),
                // 4.5 h after the end of session 1: in its rebound.
                (Code::NotPreDialysis, Some(1)),
                (Code::NotPreDialysis, Some(3)),
                (Code::NotPreDialysis, Some(4)),
                (Code::PreDialysisRange, Some(2)),
            ]
        );
        assert!(w[0].text().starts_with(NOT_MODELLED), "{}", w[0].text());
        assert_eq!(
            w[5].text(),
            "the last pre-dialysis level, level 2 (22 mg/L before dialysis_session 2), is above the strategy's pre-dialysis range 15-20 mg/L [Src]"
        );
        assert!(
            w[4].text()
                .contains("2 h after the end of dialysis_session 2"),
            "{}",
            w[4].text()
        );
    }

    #[test]
    fn the_next_dose_is_due_at_the_end_of_the_first_session_after_the_last_dose() {
        let mut c = case(CASE);
        c.regimen.dialysis.dose_after_session = true;
        let n = section(&c).unwrap().next_dose.unwrap();
        assert_eq!(n.session, Some(2));
        assert_eq!(n.at.unwrap().iso_minute(), "2027-03-03T12:00");
        assert_eq!(n.plan_at_end, None);
        // A plan whose first dose is 12 h after the end of session 2 is flagged.
        let text = format!(
            "{CASE}[plan]\ndose_mg = 750.0\ninterval_h = 48.0\nroute = \"bolus\"\nstart = 2027-03-04T00:00:00\n"
        );
        let mut later = case(&text);
        later.regimen.dialysis.dose_after_session = true;
        let n = section(&later).unwrap().next_dose.unwrap();
        assert_eq!(n.plan_at_end, Some(false));
        let mut out = Vec::new();
        write_text(&mut out, &section(&later).unwrap(), "mg/L").unwrap();
        let out = String::from_utf8(out).unwrap();
        assert!(
            out.contains("  the plan's first dose is not at the end of that session;"),
            "{out}"
        );
        // A dose given during session 2 is that session's: the next is after a later one,
        // and none is recorded.
        let text = CASE.replace(
            "[[level]]\ntime = 2027-03-01T16:30:00",
            "[[dose]]\ntime = 2027-03-03T11:00:00\namount_mg = 500.0\nroute = \"bolus\"\n[[level]]\ntime = 2027-03-01T16:30:00",
        );
        let mut during = case(&text);
        during.regimen.dialysis.dose_after_session = true;
        let n = section(&during).unwrap().next_dose.unwrap();
        assert_eq!((n.session, n.at), (None, None));
        // With no rule, nothing is said about the next dose.
        c.regimen.dialysis.dose_after_session = false;
        assert!(section(&c).unwrap().next_dose.is_none());
    }

    #[test]
    fn a_fit_across_a_session_is_warned_about() {
        let c = case(CASE);
        // Levels 2 and 4 (indices 1 and 3) lie on either side of session 2.
        let w = warnings(&c, &[1, 3], "mg/L");
        let across: Vec<&Warning> = w
            .iter()
            .filter(|w| w.code() == Code::FitAcrossSession)
            .collect();
        assert_eq!(across.len(), 1);
        assert!(across[0]
            .text()
            .starts_with("the fitted levels span dialysis_session 2:"));
        // Levels 1 and 2 lie between sessions 1 and 2.
        assert!(warnings(&c, &[0, 1], "mg/L")
            .iter()
            .all(|w| w.code() != Code::FitAcrossSession));
    }

    #[test]
    fn sessions_without_the_dialysis_covariate_are_warned_about() {
        let covariate = |c: &Case| {
            warnings(c, &[], "mg/L")
                .iter()
                .filter(|w| w.code() == Code::DialysisCovariate)
                .count()
        };
        let mut c = case(CASE);
        assert_eq!(covariate(&c), 1);
        c.patient.dialysis = Some(false);
        assert_eq!(covariate(&c), 1);
        c.patient.dialysis = Some(true);
        assert_eq!(covariate(&c), 0);
    }

    #[test]
    fn a_case_without_sessions_has_no_section_and_no_warning() {
        let c = case(&CASE[..CASE.find("[[dialysis_session]]").unwrap()]);
        assert!(section(&c).is_none());
        assert!(warnings(&c, &[0, 1], "mg/L").is_empty());
    }
}
