//! Switching agents: the earliest time the next drug may start once this one is stopped after
//! its last recorded dose, by a level to fall below or by a number of half-lives.

pub use crate::core::case::{Switch, SwitchRule};
use crate::core::projection::{self, Patient};

/// When the next agent may start, on the case's axis.
#[derive(Debug, Clone, PartialEq)]
pub struct SwitchProjection {
    /// Where the count starts: the threshold's t0 for a level, the end of the last recorded
    /// dose (without a volume, the last fitted level) for half-lives.
    pub from_t: f64,
    /// The earliest start, hours.
    pub start_t: f64,
    /// The 95 % range of the start: for a level, the threshold's (`uncertainty::crossing_range`);
    /// for half-lives, k_hi and k_lo, when k has an interval above zero.
    pub start_ci95_t: Option<[f64; 2]>,
    /// The model's level at the start, mg/L.
    pub level_at_start_mg_l: f64,
}

/// Project the switch; `start_below` values are in the case's level unit and converted here.
pub fn project(p: &Patient, sw: &Switch) -> SwitchProjection {
    let fit = p.fit;
    match sw.rule {
        SwitchRule::StartBelow(level) => {
            let below = p.case.drug.scale.to_mg_l(level);
            let th = projection::threshold(p, below, None);
            SwitchProjection {
                from_t: th.t0,
                start_t: th.reached_t,
                // The threshold's own range for the same crossing (one computation).
                start_ci95_t: crate::core::uncertainty::crossing_range(p, th.t0, th.c0_mg_l, below),
                level_at_start_mg_l: p.level_mg_l(th.reached_t),
            }
        }
        SwitchRule::AfterHalfLives(n) => {
            let from = projection::washout_start(p);
            let after = |k: f64| from + n * std::f64::consts::LN_2 / k;
            let start = after(fit.k);
            SwitchProjection {
                from_t: from,
                start_t: start,
                start_ci95_t: match fit.k_ci95 {
                    Some([lo, hi]) if lo > 0.0 => Some([after(hi), after(lo)]),
                    _ => None,
                },
                level_at_start_mg_l: p.level_mg_l(start),
            }
        }
    }
}
