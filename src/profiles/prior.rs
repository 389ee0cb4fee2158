//! Turn a profile's population models (`[model]`, or several `[[model]]`: published models
//! written declaratively, of one or two compartments) and its `[population]` summary values
//! into the core's population models, and say which one a case gets by default and why.
//!
//! Variability is written as `cv_percent` (turned into ω = sqrt(ln(1 + CV²)), the log-normal
//! identity), or as the printed `omega` (SD of the log) or `omega_sq` (its variance). The
//! additive residual error (and a power-model proportional one) is in the profile's level
//! unit and is converted to mg/L here.

use serde::{Deserialize, Serialize};

pub use crate::core::prior::log_sd;
use crate::core::prior::{
    Covariate, CrclRule, CrclWeight, Elimination, Form, Model, Parameter, Peripheral, Range,
    Residual, Term,
};
use crate::profiles::schema::{problem, FieldProblem, Profile};

/// `[model]` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelFile {
    /// First author and year, lower case with a hyphen ("buelga-2005").
    pub name: String,
    /// One line for people: whose model, which patients, how many compartments.
    pub label: String,
    /// The population studied, in words (size, ages, weights, kidney function, setting).
    pub population: String,
    /// Source key(s) of the paper, e.g. "[Buelga05]".
    pub source: String,
    /// How the numbers were read (printed forms, interpretations).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// Whether clearance and volume are apparent (÷F, from oral doses).
    #[serde(default)]
    pub apparent: bool,
    /// Correlation of the clearance and volume η, when published.
    #[serde(default)]
    pub correlation: f64,
    /// The residual error.
    pub residual: ResidualFile,
    /// How the authors computed creatinine clearance (Cockcroft-Gault).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub crcl: Option<CrclFile>,
    /// Whether patients on haemodialysis were left out.
    #[serde(default)]
    pub excludes_dialysis: bool,
    /// Whether its typical values may stand alone before any level (default true); false for a
    /// model that serves only as a wide prior for estimates from levels.
    #[serde(default = "yes")]
    pub a_priori: bool,
    /// Covariate ranges of the population studied.
    #[serde(default)]
    pub ranges: Vec<RangeFile>,
    /// Where the ranges come from (published ranges, or mean ± 2 SD).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ranges_note: Option<String>,
    /// What the model assumes that a case does not record.
    #[serde(default)]
    pub assumptions: Vec<String>,
    /// Clearance, L/h (or `k`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub clearance: Option<ParameterFile>,
    /// Elimination rate constant, 1/h (instead of `clearance`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub k: Option<ParameterFile>,
    /// Volume, L (the central volume V1 of a two-compartment model).
    pub volume: ParameterFile,
    /// Intercompartmental clearance Q, L/h (two compartments; with `v2`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub q: Option<ParameterFile>,
    /// Peripheral volume V2, L (two compartments; with `q`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub v2: Option<ParameterFile>,
}

/// `model` as written: one `[model]` table or an array of `[[model]]` tables.
///
/// # Errors
/// Neither a table nor an array of tables, or a table that is not a model.
pub fn one_or_many<'de, D>(d: D) -> Result<Vec<ModelFile>, D::Error>
where
    D: serde::Deserializer<'de>,
{
    struct OneOrMany;
    impl<'de> serde::de::Visitor<'de> for OneOrMany {
        type Value = Vec<ModelFile>;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("a [model] table or [[model]] tables")
        }
        fn visit_map<A: serde::de::MapAccess<'de>>(self, map: A) -> Result<Self::Value, A::Error> {
            ModelFile::deserialize(serde::de::value::MapAccessDeserializer::new(map))
                .map(|m| vec![m])
        }
        fn visit_seq<A: serde::de::SeqAccess<'de>>(self, seq: A) -> Result<Self::Value, A::Error> {
            Vec::<ModelFile>::deserialize(serde::de::value::SeqAccessDeserializer::new(seq))
        }
    }
    d.deserialize_any(OneOrMany)
}

/// How messages name the `i`-th model (from 0) of `profile`: `model` when it has one,
/// `model[i + 1]` when several.
pub fn model_place(profile: &Profile, i: usize) -> String {
    if profile.models.len() == 1 {
        "model".to_string()
    } else {
        format!("model[{}]", i + 1)
    }
}

fn yes() -> bool {
    true
}

/// One parameter as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ParameterFile {
    /// Typical value before the covariate terms.
    pub typical: f64,
    /// Between-patient variability as a CV, per cent.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cv_percent: Option<f64>,
    /// ... or as the printed SD of the log.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub omega: Option<f64>,
    /// ... or as the printed variance of the log.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub omega_sq: Option<f64>,
    /// Covariate terms.
    #[serde(default)]
    pub terms: Vec<TermFile>,
    /// A constant added after every term (a non-renal clearance beside a renal part).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub add_after_terms: Option<f64>,
}

/// One covariate term as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TermFile {
    /// The covariate (see docs/profiles.md).
    pub of: String,
    /// "power", "linear", "exponential", "add" or "factor".
    pub form: String,
    /// Reference value (power, linear, exponential, add).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference: Option<f64>,
    /// Exponent (power).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub exponent: Option<f64>,
    /// Slope (linear, exponential, add).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub slope: Option<f64>,
    /// Multiplier (factor).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub value: Option<f64>,
    /// Threshold of a numeric covariate (factor).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at_least: Option<f64>,
    /// A covariate above this is taken as this in the term (any form).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cap: Option<f64>,
}

/// The residual error as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ResidualFile {
    /// Additive SD in the profile's level unit.
    #[serde(default)]
    pub additive: f64,
    /// Proportional SD, a fraction.
    #[serde(default)]
    pub proportional: f64,
    /// The power of the prediction in the proportional part (default 1; a power model).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub exponent: Option<f64>,
    /// How it was read (e.g. a printed variance taken as such).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// The creatinine-clearance rule as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CrclFile {
    /// "total", "ideal" or "adjusted".
    pub weight: String,
    /// Floor on serum creatinine, mg/dL.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_creatinine_mg_dl: Option<f64>,
    /// The floor applies from this age, years.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_creatinine_from_age: Option<f64>,
    /// Cap on the clearance, mL/min.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_ml_min: Option<f64>,
}

/// One covariate range as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RangeFile {
    /// The covariate.
    pub of: String,
    /// Lowest value studied.
    pub low: f64,
    /// Highest value studied.
    pub high: f64,
}

/// A field path below `field`: `field.child`, or `field.child[n]` (written only for an error).
struct Below<'a> {
    field: &'a dyn std::fmt::Display,
    child: &'a str,
    item: Option<usize>,
}

impl std::fmt::Display for Below<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}.{}", self.field, self.child)?;
        match self.item {
            Some(n) => write!(f, "[{n}]"),
            None => Ok(()),
        }
    }
}

fn covariate(name: &str, field: &dyn std::fmt::Display) -> Result<Covariate, FieldProblem> {
    Covariate::parse(name).ok_or_else(|| {
        let names: Vec<&str> = Covariate::ALL.iter().map(|(_, n)| *n).collect();
        problem(
            field.to_string(),
            format!(
                "unknown covariate \"{name}\"; use one of {}",
                names.join(", ")
            ),
        )
    })
}

fn parameter(p: &ParameterFile, field: &dyn std::fmt::Display) -> Result<Parameter, FieldProblem> {
    let omega = match (p.cv_percent, p.omega, p.omega_sq) {
        (Some(cv), None, None) => Some(log_sd(cv)),
        (None, Some(w), None) => Some(w),
        (None, None, Some(w2)) => Some(w2.max(0.0).sqrt()),
        (None, None, None) => None,
        _ => {
            return Err(problem(
                field.to_string(),
                "give one of cv_percent, omega and omega_sq, not several",
            ))
        }
    };
    let mut terms = Vec::new();
    for (i, t) in p.terms.iter().enumerate() {
        let at = Below {
            field,
            child: "terms",
            item: Some(i + 1),
        };
        let need = |x: Option<f64>, what: &str| {
            x.ok_or_else(|| {
                problem(
                    at.to_string(),
                    format!("a \"{}\" term needs {what}", t.form),
                )
            })
        };
        let form = match t.form.as_str() {
            "power" => Form::Power {
                reference: need(t.reference, "reference")?,
                exponent: need(t.exponent, "exponent")?,
            },
            "linear" => Form::Linear {
                reference: need(t.reference, "reference")?,
                slope: need(t.slope, "slope")?,
            },
            "exponential" => Form::Exponential {
                reference: need(t.reference, "reference")?,
                slope: need(t.slope, "slope")?,
            },
            "add" => Form::Add {
                reference: need(t.reference, "reference")?,
                slope: need(t.slope, "slope")?,
            },
            "factor" => Form::Factor {
                value: need(t.value, "value")?,
                at_least: t.at_least,
            },
            other => {
                return Err(problem(
                    at.to_string(),
                    format!(
                        "unknown form \"{other}\"; use power, linear, exponential, add or factor"
                    ),
                ))
            }
        };
        terms.push(Term {
            of: covariate(&t.of, &at)?,
            form,
            cap: t.cap,
        });
    }
    Ok(Parameter {
        typical: p.typical,
        terms,
        add_after_terms: p.add_after_terms.unwrap_or(0.0),
        omega,
    })
}

/// The core model a `[model]` section describes, naming its fields from `place` (`model`
/// or `model[2]`); `level_per_mg_l` converts the profile's level unit to mg/L (for the
/// additive error), `cite` writes a source key out.
///
/// # Errors
/// The first field that cannot be read, named `PLACE.…`.
pub fn model_of(
    m: &ModelFile,
    place: &str,
    level_per_mg_l: f64,
    cite: &dyn Fn(&str) -> Vec<String>,
) -> Result<Model, FieldProblem> {
    let at = |f: &str| format!("{place}.{f}");
    let below = |child| Below {
        field: &place,
        child,
        item: None,
    };
    let (elimination_kind, elimination) = match (&m.clearance, &m.k) {
        (Some(c), None) => (Elimination::Clearance, parameter(c, &below("clearance"))?),
        (None, Some(k)) => (Elimination::RateConstant, parameter(k, &below("k"))?),
        _ => {
            return Err(problem(
                place,
                format!("give [{place}.clearance] or [{place}.k], one of the two"),
            ))
        }
    };
    let peripheral = match (&m.q, &m.v2) {
        (Some(q), Some(v2)) => Some(Peripheral {
            q: parameter(q, &below("q"))?,
            v2: parameter(v2, &below("v2"))?,
        }),
        (None, None) => None,
        _ => {
            return Err(problem(
                place,
                format!("a two-compartment model gives both [{place}.q] and [{place}.v2]"),
            ))
        }
    };
    let crcl = match &m.crcl {
        None => crate::core::renal::TOTAL_WEIGHT,
        Some(c) => CrclRule {
            weight: match c.weight.as_str() {
                "total" => CrclWeight::Total,
                "ideal" => CrclWeight::Ideal,
                "adjusted" => CrclWeight::Adjusted,
                other => {
                    return Err(problem(
                        at("crcl.weight"),
                        format!("unknown weight \"{other}\"; use total, ideal or adjusted"),
                    ))
                }
            },
            min_creatinine_mg_dl: c.min_creatinine_mg_dl,
            min_creatinine_from_age: c.min_creatinine_from_age,
            max_ml_min: c.max_ml_min,
        },
    };
    let mut envelope = Vec::new();
    for (i, r) in m.ranges.iter().enumerate() {
        envelope.push(Range {
            of: covariate(
                &r.of,
                &Below {
                    field: &place,
                    child: "ranges",
                    item: Some(i + 1),
                },
            )?,
            low: r.low,
            high: r.high,
        });
    }
    let model = Model {
        name: m.name.clone(),
        label: m.label.clone(),
        elimination_kind,
        elimination,
        volume: parameter(&m.volume, &below("volume"))?,
        peripheral,
        correlation: m.correlation,
        residual: residual_of(&m.residual, level_per_mg_l),
        apparent: m.apparent,
        crcl,
        envelope,
        excludes_dialysis: m.excludes_dialysis,
        a_priori: m.a_priori,
        population: m.population.clone(),
        assumptions: m.assumptions.clone(),
        sources: cite(&m.source),
    };
    model.check().map_err(|e| match e {
        // The check names `model.FIELD`: here it is this model's field.
        crate::core::error::Error::Invalid { place: at, message } => problem(
            at.replacen("model", place, 1).replacen(
                ".elimination",
                elimination_field(elimination_kind),
                1,
            ),
            message,
        ),
        other => problem(place, other.to_string()),
    })?;
    Ok(model)
}

/// The residual error as the core holds it, in mg/L: the additive SD divided by the level
/// unit's size; a proportional SD of the prediction to a power b ≠ 1 is in the level unit's
/// scale too (SD = p·c^b in the profile's unit is p·u^(b−1)·c^b in mg/L, u the profile's unit
/// per mg/L), while with b = 1 it is a plain fraction and stays as written.
fn residual_of(r: &ResidualFile, level_per_mg_l: f64) -> Residual {
    let exponent = r.exponent.unwrap_or(1.0);
    Residual {
        additive_mg_l: r.additive / level_per_mg_l,
        proportional: if exponent == 1.0 {
            r.proportional
        } else {
            r.proportional * level_per_mg_l.powf(exponent - 1.0)
        },
        exponent,
    }
}

/// The summary values of `[population]` as a model: a typical elimination (clearance, else
/// k, else half-life; a half-life CV carries over to k unchanged, since ln k = ln ln 2 −
/// ln t½) and a volume per kg of total weight, each with its CV, and a proportional residual.
fn summary_model(profile: &Profile, cite: &dyn Fn(&str) -> Vec<String>) -> Option<Model> {
    let pop = profile.population.as_ref()?;
    let with_cv = |e: &Option<crate::profiles::schema::Estimate>| {
        let e = e.as_ref()?;
        Some((e.clone(), log_sd(e.cv_percent?)))
    };
    let (kind, typical, omega, elim) = if let Some((e, w)) = with_cv(&pop.clearance_l_per_h) {
        (Elimination::Clearance, e.value, w, e)
    } else if let Some((e, w)) = with_cv(&pop.k_per_h) {
        (Elimination::RateConstant, e.value, w, e)
    } else {
        let (e, w) = with_cv(&pop.half_life_h)?;
        (
            Elimination::RateConstant,
            std::f64::consts::LN_2 / e.value,
            w,
            e,
        )
    };
    let (vol, omega_v) = with_cv(&pop.volume_l_per_kg)?;
    let residual = pop.residual_error_percent.as_ref()?;
    let mut sources: Vec<String> = Vec::new();
    for s in [&elim.source, &vol.source, &residual.source] {
        for c in cite(s) {
            if !sources.contains(&c) {
                sources.push(c);
            }
        }
    }
    let model = Model {
        name: "summary-values".into(),
        label: "a typical half-life and volume per kg with their spread, from a published cohort (not a population model)".into(),
        elimination_kind: kind,
        elimination: Parameter {
            typical,
            terms: Vec::new(),
            add_after_terms: 0.0,
            omega: Some(omega),
        },
        volume: Parameter {
            typical: vol.value,
            terms: vec![Term {
                of: Covariate::WeightKg,
                form: Form::Power {
                    reference: 1.0,
                    exponent: 1.0,
                },
                cap: None,
            }],
            add_after_terms: 0.0,
            omega: Some(omega_v),
        },
        peripheral: None,
        correlation: 0.0,
        residual: Residual {
            additive_mg_l: 0.0,
            proportional: residual.value / 100.0,
            exponent: 1.0,
        },
        apparent: false,
        crcl: crate::core::renal::TOTAL_WEIGHT,
        // Summary values describe adults with normal kidney function; below 60 mL/min
        // (common practice: the start of moderately reduced function) the report says so.
        envelope: vec![Range {
            of: Covariate::CrclMlMin,
            low: 60.0,
            high: f64::INFINITY,
        }],
        excludes_dialysis: true,
        a_priori: true,
        population: elim.note.clone().unwrap_or_default(),
        assumptions: vec![
            "the typical values do not follow kidney function or body size beyond total weight".into(),
        ],
        sources,
    };
    model.check().ok().map(|_| model)
}

/// How the profile spells the elimination parameter of a model of `kind`.
fn elimination_field(kind: Elimination) -> &'static str {
    match kind {
        Elimination::Clearance => ".clearance",
        Elimination::RateConstant => ".k",
    }
}

/// The name the summary values of `[population]` go by as a model.
pub const SUMMARY_VALUES: &str = "summary-values";

/// Every population model the profile offers, in file order: each `[model]`, then one made
/// of its `[population]` summary values when they are complete.
pub fn models_of(profile: &Profile) -> Vec<Model> {
    let cite = |keys: &str| cite_keys(profile, keys);
    let per = level_per_mg_l(profile);
    let mut out: Vec<Model> = profile
        .models
        .iter()
        .enumerate()
        .filter_map(|(i, m)| model_of(m, &model_place(profile, i), per, &cite).ok())
        .collect();
    out.extend(summary_model(profile, &cite));
    out
}

fn level_per_mg_l(profile: &Profile) -> f64 {
    profile
        .unit()
        .ok()
        .and_then(|u| u.per_mg_l(profile.molar_mass_g_mol.as_ref().map(|x| x.value)))
        .unwrap_or(1.0)
}

/// The name of the model a case gets by default: `default_model`, else the first `[model]`,
/// else the summary values (None when the profile offers no model).
pub fn default_model_name(profile: &Profile) -> Option<String> {
    if let Some(n) = &profile.default_model {
        return Some(n.clone());
    }
    models_of(profile).first().map(|m| m.name.clone())
}

/// The profile's default population model (see [`default_model_name`]), else None.
pub fn prior_of(profile: &Profile) -> Option<Model> {
    let name = default_model_name(profile)?;
    models_of(profile).into_iter().find(|m| m.name == name)
}

/// Check every model of the profile, their names (distinct, not the summary values' name)
/// and the default.
///
/// # Errors
/// The first field in the way, named `model[i].…`, `default_model` or
/// `default_model_reason`.
pub fn check_models(profile: &Profile) -> Result<(), FieldProblem> {
    let per = level_per_mg_l(profile);
    let mut names: Vec<String> = Vec::new();
    for (i, m) in profile.models.iter().enumerate() {
        let place = model_place(profile, i);
        model_of(m, &place, per, &|k| vec![k.to_string()])?;
        if m.name == SUMMARY_VALUES || names.contains(&m.name) {
            return Err(problem(
                format!("{place}.name"),
                format!("\"{}\" names another model of the profile already", m.name),
            ));
        }
        names.push(m.name.clone());
    }
    names.extend(summary_model(profile, &|k| vec![k.to_string()]).map(|m| m.name));
    if let Some(d) = &profile.default_model {
        if !names.contains(d) {
            return Err(problem(
                "default_model",
                format!(
                    "the profile has no model \"{d}\"; it has {}",
                    if names.is_empty() {
                        "none".to_string()
                    } else {
                        names.join(", ")
                    }
                ),
            ));
        }
    }
    if names.len() > 1
        && profile
            .default_model_reason
            .as_deref()
            .is_none_or(|r| r.trim().is_empty())
    {
        return Err(problem(
            "default_model_reason",
            "the profile offers several population models: say why the default is the default",
        ));
    }
    Ok(())
}

/// Each `[Key]` in `text` written out from the profile's `[sources]`, or the text itself.
fn cite_keys(profile: &Profile, text: &str) -> Vec<String> {
    let keys: Vec<&str> = text
        .split('[')
        .skip(1)
        .filter_map(|p| p.split(']').next())
        .collect();
    if keys.is_empty() {
        return vec![text.to_string()];
    }
    keys.iter()
        .map(|k| {
            profile
                .sources
                .get(*k)
                .cloned()
                .unwrap_or_else(|| k.to_string())
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gentamicin_summary_values_need_a_residual_error() {
        let cat = crate::profiles::Catalog::built_in().unwrap();
        let g = Profile::clone(&cat.get("gentamicin").unwrap().profile);
        let mut without = g.clone();
        without.population.as_mut().unwrap().residual_error_percent = None;
        let summary = |p: &Profile| models_of(p).into_iter().find(|m| m.name == SUMMARY_VALUES);
        assert_eq!(summary(&without), None);
        let m = summary(&g).unwrap();
        let pop = g.population.as_ref().unwrap();
        let hl = pop.half_life_h.as_ref().unwrap();
        assert_eq!(m.elimination_kind, Elimination::RateConstant);
        assert_eq!(m.elimination.typical, std::f64::consts::LN_2 / hl.value);
        assert_eq!(m.elimination.omega, Some(log_sd(hl.cv_percent.unwrap())));
        assert_eq!(
            m.residual.proportional,
            pop.residual_error_percent.as_ref().unwrap().value / 100.0
        );
    }

    fn vancomycin_text() -> String {
        std::fs::read_to_string(
            std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("drug-profiles/vancomycin.toml"),
        )
        .unwrap()
    }

    fn refused(text: &str) -> String {
        crate::profiles::parse_profile(text, "v.toml")
            .expect_err("refused")
            .to_string()
    }

    #[test]
    fn a_profile_offers_each_model_and_its_default() {
        let v = crate::profiles::parse_profile(&vancomycin_text(), "v.toml").unwrap();
        let names: Vec<String> = models_of(&v).into_iter().map(|m| m.name).collect();
        assert_eq!(names, ["goti-2018", "buelga-2005"]);
        assert_eq!(default_model_name(&v).as_deref(), Some("goti-2018"));
        let goti = prior_of(&v).unwrap();
        assert_eq!(goti.compartments(), 2);
        let p = goti.peripheral.as_ref().unwrap();
        assert_eq!(p.q.omega, None);
        assert!(p.v2.omega.is_some());
        // Without default_model the first [[model]] is the default.
        let first = vancomycin_text().replace("default_model = \"goti-2018\"\n", "");
        let v = crate::profiles::parse_profile(&first, "v.toml").unwrap();
        assert_eq!(default_model_name(&v).as_deref(), Some("goti-2018"));
    }

    #[test]
    fn a_refused_term_or_range_is_named_by_its_whole_path() {
        let text = vancomycin_text();
        let term = text.replacen(
            "{ of = \"dialysis\", form = \"factor\", value = 0.5 }",
            "{ of = \"dialysis\", form = \"square\", value = 0.5 }",
            1,
        );
        let e = refused(&term);
        assert!(
            e.contains("field model[1].volume.terms[2]: unknown form \"square\""),
            "{e}"
        );
        let needs = text.replacen(
            "{ of = \"crcl_ml_min\", form = \"power\", reference = 120.0, exponent = 0.8 }",
            "{ of = \"crcl_ml_min\", form = \"power\", reference = 120.0 }",
            1,
        );
        let e = refused(&needs);
        assert!(
            e.contains("field model[1].clearance.terms[1]: a \"power\" term needs exponent"),
            "{e}"
        );
        let range = text.replacen(
            "{ of = \"weight_kg\", low = 33.0, high = 255.0 }",
            "{ of = \"shoe_size\", low = 33.0, high = 255.0 }",
            1,
        );
        let e = refused(&range);
        assert!(
            e.contains("field model[1].ranges[2]: unknown covariate \"shoe_size\""),
            "{e}"
        );
        let several = text.replacen(
            "typical = 4.5\ncv_percent = 39.8",
            "typical = 4.5\ncv_percent = 39.8\nomega = 0.4",
            1,
        );
        let e = refused(&several);
        assert!(
            e.contains(
                "field model[1].clearance: give one of cv_percent, omega and omega_sq, not several"
            ),
            "{e}"
        );
    }

    #[test]
    fn the_models_and_the_default_are_checked_by_name() {
        let text = vancomycin_text();
        let unknown = text.replace(
            "default_model = \"goti-2018\"",
            "default_model = \"goti-2019\"",
        );
        let e = refused(&unknown);
        assert!(
            e.contains("field default_model: the profile has no model \"goti-2019\"; it has goti-2018, buelga-2005"),
            "{e}"
        );
        let silent: String = text
            .lines()
            .filter(|l| !l.starts_with("default_model_reason"))
            .map(|l| format!("{l}\n"))
            .collect();
        let e = refused(&silent);
        assert!(
            e.contains("field default_model_reason: the profile offers several population models"),
            "{e}"
        );
        let twice = text.replace("name = \"buelga-2005\"", "name = \"goti-2018\"");
        let e = refused(&twice);
        assert!(e.contains("field model[2].name"), "{e}");
        // A peripheral volume without Q names the second model and its line.
        let half = text.replacen("[model.q]\ntypical = 6.5\n", "", 1);
        let e = refused(&half);
        assert!(
            e.contains(
                "model[1]: a two-compartment model gives both [model[1].q] and [model[1].v2]"
            ),
            "{e}"
        );
        // A number the check refuses is named at its own field and line.
        let negative = text.replacen("[model.q]\ntypical = 6.5", "[model.q]\ntypical = -6.5", 1);
        let e = refused(&negative);
        assert!(
            e.contains("field model[1].q: typical must be above 0, got -6.5"),
            "{e}"
        );
        let line = text.lines().position(|l| l == "[model.q]").unwrap() + 1;
        assert!(e.contains(&format!("line {line}: ")), "{e}");
        // A two-compartment model gives the central clearance, not k.
        let on_k = text.replacen(
            "[model.clearance]\ntypical = 4.5",
            "[model.k]\ntypical = 0.1",
            1,
        );
        let e = refused(&on_k);
        assert!(
            e.contains("a two-compartment model gives the central clearance, not k"),
            "{e}"
        );
    }

    #[test]
    fn a_power_residual_in_another_level_unit_is_the_same_error_in_mg_per_l() {
        // SD = 0.4·c^0.9 with c in ng/mL (1 mg/L = 1000 ng/mL): at 2 mg/L = 2000 ng/mL the SD
        // is 0.4 x 2000^0.9 ng/mL, i.e. that / 1000 mg/L (self-consistency of the units).
        let file = ResidualFile {
            additive: 0.0,
            proportional: 0.4,
            exponent: Some(0.9),
            note: None,
        };
        let r = residual_of(&file, 1000.0);
        let want = 0.4 * 2000f64.powf(0.9) / 1000.0;
        assert!((r.variance(2.0).sqrt() / want - 1.0).abs() < 1e-12);
        // Exponent 1 (written or not) keeps the fraction as written.
        for exponent in [None, Some(1.0)] {
            let r = residual_of(
                &ResidualFile {
                    exponent,
                    ..file.clone()
                },
                1000.0,
            );
            assert_eq!((r.proportional, r.exponent), (0.4, 1.0));
        }
    }

    #[test]
    fn log_sd_of_a_cv() {
        // sqrt(ln(1 + 0.3²)) = 0.29356 (the log-normal identity; common practice).
        assert!((log_sd(30.0) - 0.293_560).abs() < 1e-6);
    }
}
