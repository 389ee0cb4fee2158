//! Areas under the level-time curve: the linear-up/log-down trapezoid, and AUC24 from two
//! levels drawn in one dosing interval at steady state.
//!
//! The method is the one Chiou (J Pharmacokinet Biopharm 1978;6:539–46) recommends: a linear
//! trapezoid while levels rise or stay flat, a logarithmic one while they fall, which is exact
//! for a first-order decline. Concentrations may be in any one unit; the area comes out in that
//! unit times hours.

/// One segment's area by the linear-up/log-down rule: the linear trapezoid when the level
/// rises or stays flat, the logarithmic one when it falls. `None` for a level at or below zero
/// or a segment that runs backwards in time.
pub fn segment_linear_up_log_down(t1: f64, c1: f64, t2: f64, c2: f64) -> Option<f64> {
    let dt = t2 - t1;
    if !(dt >= 0.0 && c1 > 0.0 && c2 > 0.0 && dt.is_finite()) {
        return None;
    }
    let area = if c2 >= c1 {
        (c1 + c2) / 2.0 * dt
    } else {
        (c1 - c2) * dt / (c1 / c2).ln()
    };
    area.is_finite().then_some(area)
}

/// One segment's area by the plain linear trapezoid (kept to show its bias on a fall).
pub fn segment_linear(t1: f64, c1: f64, t2: f64, c2: f64) -> Option<f64> {
    let dt = t2 - t1;
    if !(dt >= 0.0 && c1 >= 0.0 && c2 >= 0.0 && dt.is_finite()) {
        return None;
    }
    let area = (c1 + c2) / 2.0 * dt;
    area.is_finite().then_some(area)
}

/// Area through the points `(time, level)` by the linear-up/log-down rule. `None` for fewer
/// than two points, times out of order or a level at or below zero.
pub fn linear_up_log_down(points: &[(f64, f64)]) -> Option<f64> {
    if points.len() < 2 {
        return None;
    }
    points.windows(2).try_fold(0.0, |acc, w| {
        segment_linear_up_log_down(w[0].0, w[0].1, w[1].0, w[1].1).map(|a| acc + a)
    })
}

/// Area through the points by the plain linear trapezoid. `None` as for `linear_up_log_down`.
pub fn linear(points: &[(f64, f64)]) -> Option<f64> {
    if points.len() < 2 {
        return None;
    }
    points.windows(2).try_fold(0.0, |acc, w| {
        segment_linear(w[0].0, w[0].1, w[1].0, w[1].1).map(|a| acc + a)
    })
}

/// AUC over one dosing interval and over 24 h from two levels, by the linear-up/log-down
/// trapezoid, assuming steady state (the level at the start of the interval equals the one at
/// its end).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoLevelAuc {
    /// k from the two levels, 1/h.
    pub k_per_h: f64,
    /// The level at the end of the infusion (bolus, oral: at the dose), back-extrapolated.
    pub c_max: f64,
    /// The level at the end of the interval (and so at its start, at steady state).
    pub c_min: f64,
    /// Area while the infusion runs: linear from `c_min` to `c_max`.
    pub auc_up: f64,
    /// Area from the end of the infusion to the end of the interval: logarithmic.
    pub auc_down: f64,
    /// `auc_up + auc_down`, over one interval.
    pub auc_tau: f64,
    /// `auc_tau · 24 / tau`.
    pub auc24: f64,
}

/// AUC from two levels `c1` at `t1` and `c2` at `t2` (hours after the start of the dose,
/// `infusion_h <= t1 < t2 <= tau`, `c1 > c2 > 0`), for a dose repeated every `tau` hours at
/// steady state. `None` when the levels or times do not allow it.
///
/// # Example
/// The vancomycin example of drug-facts.md (after Chiou 1978): 1000 mg over 1 h every 12 h,
/// 30 mg/L at 2 h and 12 mg/L at 11.5 h give AUC0–12 246.21 and AUC24 492.42 mg·h/L.
/// ```
/// let a = ebb::core::auc::auc24_from_two_levels(2.0, 30.0, 11.5, 12.0, 1.0, 12.0).unwrap();
/// assert!((a.auc_tau - 246.21).abs() < 0.01);
/// assert!((a.auc24 - 492.42).abs() < 0.02);
/// ```
pub fn auc24_from_two_levels(
    t1: f64,
    c1: f64,
    t2: f64,
    c2: f64,
    infusion_h: f64,
    tau: f64,
) -> Option<TwoLevelAuc> {
    let ok = infusion_h >= 0.0
        && t1 >= infusion_h
        && t2 > t1
        && t2 <= tau
        && c1 > c2
        && c2 > 0.0
        && [t1, c1, t2, c2, infusion_h, tau]
            .iter()
            .all(|x| x.is_finite());
    if !ok {
        return None;
    }
    let k = (c1 / c2).ln() / (t2 - t1);
    let c_max = c1 * (k * (t1 - infusion_h)).exp();
    let c_min = c2 * (-k * (tau - t2)).exp();
    let auc_up = segment_linear_up_log_down(0.0, c_min, infusion_h, c_max)?;
    let auc_down = segment_linear_up_log_down(infusion_h, c_max, tau, c_min)?;
    let auc_tau = auc_up + auc_down;
    let auc24 = auc_tau * 24.0 / tau;
    [k, c_max, c_min, auc_tau, auc24]
        .iter()
        .all(|x| x.is_finite())
        .then_some(TwoLevelAuc {
            k_per_h: k,
            c_max,
            c_min,
            auc_up,
            auc_down,
            auc_tau,
            auc24,
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn vancomycin_example_parts() {
        // drug-facts.md, "AUC, linear-up / log-down" row ([Chiou78], [Bebac-Trap]):
        // k 0.096452, Cmax 33.038, Cmin 11.435, up 22.24, down 223.97, AUC0-12 246.21.
        let a = auc24_from_two_levels(2.0, 30.0, 11.5, 12.0, 1.0, 12.0).unwrap();
        assert!((a.k_per_h - 0.096452).abs() < 5e-7);
        assert!((a.c_max - 33.038).abs() < 5e-4);
        assert!((a.c_min - 11.435).abs() < 5e-4);
        assert!((a.auc_up - 22.24).abs() < 5e-3);
        assert!((a.auc_down - 223.97).abs() < 5e-3);
        assert!((a.auc_tau - 246.21).abs() < 5e-3);
        assert!((a.auc24 - 492.42).abs() < 1e-2);
    }

    #[test]
    fn linear_trapezoid_bias_on_a_fall() {
        // Linear-trapezoid overestimate on a declining exponential over n half-lives:
        // n = 1: +4.0 %, 2: +15.5 %, 4: +57.1 % (drug-facts.md, after [Chiou78]).
        for (n, bias) in [(1.0, 0.040), (2.0, 0.155), (4.0, 0.571)] {
            let pts = [(0.0, 1.0), (n, 0.5f64.powf(n))];
            let lin = linear(&pts).unwrap();
            let log = linear_up_log_down(&pts).unwrap();
            assert!((lin / log - 1.0 - bias).abs() < 1e-3, "{n}: {}", lin / log);
        }
    }

    #[test]
    fn impossible_inputs_give_none() {
        assert!(linear_up_log_down(&[(0.0, 1.0)]).is_none());
        assert!(linear_up_log_down(&[(1.0, 1.0), (0.0, 2.0)]).is_none());
        assert!(linear_up_log_down(&[(0.0, 1.0), (1.0, 0.0)]).is_none());
        // Rising levels, a trough after the interval, or an infusion not yet over.
        assert!(auc24_from_two_levels(2.0, 10.0, 8.0, 12.0, 1.0, 12.0).is_none());
        assert!(auc24_from_two_levels(2.0, 30.0, 13.0, 12.0, 1.0, 12.0).is_none());
        assert!(auc24_from_two_levels(0.5, 30.0, 8.0, 12.0, 1.0, 12.0).is_none());
    }
}
