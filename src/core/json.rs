//! The report's JSON wire form, exactly as contract v1 names it (kept apart from the
//! internal types so the format never leaks them).

use serde::Serialize;

use crate::core::report::Report;

/// The whole report on the wire.
#[derive(Debug, Serialize)]
pub struct JsonReport {
    fit: JsonFit,
    plan: Option<JsonPlan>,
    threshold: Option<JsonThreshold>,
    washout: Vec<JsonWashout>,
    warnings: Vec<String>,
}

#[derive(Debug, Serialize)]
struct JsonFit {
    method: &'static str,
    levels_used: usize,
    k_per_h: f64,
    half_life_h: f64,
    r_squared: Option<f64>,
    k_ci95_per_h: Option<[f64; 2]>,
    half_life_ci95_h: Option<[f64; 2]>,
    volume_l: Option<f64>,
    volume_method: Option<&'static str>,
    clearance_l_per_h: Option<f64>,
}

#[derive(Debug, Serialize)]
struct JsonPlan {
    accumulation_factor: f64,
    peak_ss: Option<f64>,
    trough_ss: Option<f64>,
    auc24_ss: Option<f64>,
    time_to_90pct_ss_h: f64,
    time_to_95pct_ss_h: f64,
    time_to_97pct_ss_h: f64,
    meets_targets: Option<bool>,
}

#[derive(Debug, Serialize)]
struct JsonThreshold {
    below: f64,
    reached_at: String,
    reached_at_ci95: Option<[String; 2]>,
    latest_plan_dose: Option<String>,
    level_at_procedure: Option<f64>,
}

#[derive(Debug, Serialize)]
struct JsonWashout {
    half_lives: u32,
    at: String,
    level: f64,
    fraction_remaining: f64,
}

impl From<&Report> for JsonReport {
    fn from(r: &Report) -> Self {
        JsonReport {
            fit: JsonFit {
                method: r.fit.method,
                levels_used: r.fit.level_rows.len(),
                k_per_h: r.fit.k_per_h,
                half_life_h: r.fit.half_life_h,
                r_squared: r.fit.r_squared,
                k_ci95_per_h: r.fit.k_ci95_per_h,
                half_life_ci95_h: r.fit.half_life_ci95_h,
                volume_l: r.fit.volume_l,
                volume_method: r.fit.volume_method,
                clearance_l_per_h: r.fit.clearance_l_per_h,
            },
            plan: r.plan.as_ref().map(|p| JsonPlan {
                accumulation_factor: p.accumulation_factor,
                peak_ss: p.peak_ss,
                trough_ss: p.trough_ss,
                auc24_ss: p.auc24_ss,
                time_to_90pct_ss_h: p.time_to_ss_h[0],
                time_to_95pct_ss_h: p.time_to_ss_h[1],
                time_to_97pct_ss_h: p.time_to_ss_h[2],
                meets_targets: p.meets_targets,
            }),
            threshold: r.threshold.as_ref().map(|t| JsonThreshold {
                below: t.below,
                reached_at: t.reached_at.iso_minute(),
                reached_at_ci95: t
                    .reached_at_ci95
                    .as_ref()
                    .map(|[a, b]| [a.iso_minute(), b.iso_minute()]),
                latest_plan_dose: t.latest_plan_dose.as_ref().map(|s| s.iso_minute()),
                level_at_procedure: t.level_at_procedure,
            }),
            washout: r
                .washout
                .iter()
                .map(|w| JsonWashout {
                    half_lives: w.half_lives,
                    at: w.at.iso_minute(),
                    level: w.level,
                    fraction_remaining: w.fraction_remaining,
                })
                .collect(),
            warnings: r.warnings.clone(),
        }
    }
}

/// The report as one line of JSON.
pub fn to_json(r: &Report) -> String {
    // Every number was checked finite when the report was built, so serialising cannot fail.
    serde_json::to_string(&JsonReport::from(r))
        .unwrap_or_else(|e| format!("{{\"error\":\"{}\"}}", e.to_string().replace('"', "'")))
}
