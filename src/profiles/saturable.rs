//! A drug profile's `[saturable]` section as the core's plain parameters
//! (`core::saturable_report::Params`), for the case's chosen strategy.

use crate::core::case::Case;
use crate::core::saturable::AlbuminRule;
use crate::core::saturable_report::{Params, PriorSpread};
use crate::profiles::schema::{FirstOrder, Profile};

/// The saturable parameters of a profile whose kinetics are not first-order and which has a
/// `[saturable]` section; `None` otherwise. The strategy's range becomes a total level with
/// normal binding in mg/L (a free range is divided by the free fraction).
pub fn params_of(profile: &Profile, case: &Case) -> Option<Params> {
    if profile.kinetics.first_order != FirstOrder::No {
        return None;
    }
    let m = profile.saturable.as_ref()?;
    let strategy = case
        .regimen
        .strategy
        .as_deref()
        .and_then(|n| profile.strategy(n))
        .or_else(|| profile.default_strategy());
    let mm = case
        .drug
        .molar_mass_g_mol
        .or(profile.molar_mass_g_mol.as_ref().map(|x| x.value));
    let per = profile.unit().ok().and_then(|u| u.per_mg_l(mm));
    let range_mg_l = strategy.and_then(|s| {
        let r = s.range.as_ref()?;
        let per = per?;
        let free = s.name == "free";
        let k = if free { m.free_fraction.value } else { 1.0 };
        Some([r.low / per / k, r.high / per / k])
    });
    Some(Params {
        drug: profile.display_name.clone(),
        km_mg_l: m.km_mg_l.value,
        vmax_70kg_mg_per_day: m.vmax_mg_per_day.value,
        vmax_weight_exponent: m.vmax_weight_exponent.value,
        free_fraction: m.free_fraction.value,
        albumin: AlbuminRule {
            slope: m.albumin.slope.value,
            slope_renal_failure: m.albumin.slope_renal_failure.value,
            intercept: m.albumin.intercept.value,
        },
        salts: m
            .salts
            .iter()
            .map(|s| (s.name.clone(), s.factor.value))
            .collect(),
        increase_below_mg_l: m.increase_steps.below_mg_l.clone(),
        increase_max_mg_per_day: m.increase_steps.max_mg_per_day.clone(),
        volume_l_per_kg: (profile.volume.l_per_kg.low + profile.volume.l_per_kg.high) / 2.0,
        range_mg_l,
        dose_forms_mg: profile
            .dose_forms_mg
            .as_ref()
            .map(|l| l.values.clone())
            .unwrap_or_default(),
        spread: m.prior.as_ref().map(|pr| PriorSpread {
            vmax_cv: pr.vmax_cv_percent.value / 100.0,
            km_cv: pr.km_cv_percent.value / 100.0,
            residual_cv: pr.residual_percent.value / 100.0,
        }),
    })
}
