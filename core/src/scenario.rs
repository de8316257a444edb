//! Scenario files: the raw form a user writes, and its validated form.
//!
//! Raw input is parsed into [`Scenario`], then [`Scenario::validate`] turns it
//! into a [`Problem`] with checked values. Nothing downstream sees unchecked
//! input. Errors name the field path and the reason, e.g.
//! `params.K: must be > 0, got -5`.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::data::CountData;
use crate::events::{EventSpec, Schedule};
use crate::fit::{FitRequest, FitResult};
use crate::model::{ModelSpec, Params, State};
use crate::models;
use crate::solve::SolverOptions;

/// Version of the scenario format this build writes. Older files are
/// brought up to it by [`MIGRATIONS`] when read.
///
/// - 1: model, parameters, initial densities, horizon, events, thresholds.
/// - 2: adds imported counts (`data`), the last fit (`fit`), named
///   `variants` and the settings of the planner, sweeps and stochastic runs
///   (`studies`).
pub const FORMAT_VERSION: u32 = 2;

/// One step per older version: `MIGRATIONS[v - 1]` turns a format-`v` file
/// (as JSON) into a format-`v + 1` one.
pub const MIGRATIONS: &[fn(&mut serde_json::Value)] = &[migrate_1_to_2];

/// Format 2 only added optional fields; a format-1 file is a valid format-2
/// file once its version says so.
fn migrate_1_to_2(value: &mut serde_json::Value) {
    if let Some(map) = value.as_object_mut() {
        map.insert("format".to_string(), serde_json::Value::from(2));
    }
}

/// Most variants a scenario keeps for comparison.
pub const MAX_VARIANTS: usize = 4;

/// A scenario as written in a file. Field names are part of the file format.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// Format version; absent means the current one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub format: Option<u32>,
    /// Model key from the catalogue (`lotka_volterra`, …).
    pub model: String,
    /// Parameter values by symbol. Optional parameters may be left out.
    #[serde(default)]
    pub params: BTreeMap<String, f64>,
    /// Variant of the model, for models that have one (the predator's
    /// functional response of `rosenzweig_macarthur`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub functional_response: Option<String>,
    /// Constant harvest (positive) or stocking (negative) per species, in
    /// individuals per time unit, in state order.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub harvest: Option<Vec<f64>>,
    /// Releases, harvests and stocking on the timeline.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub events: Vec<EventSpec>,
    /// Economic threshold and injury level of the pest, quasi-extinction
    /// levels of each species.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub thresholds: Option<ThresholdSpec>,
    /// Initial densities in the model's state order.
    pub initial: Vec<f64>,
    /// End of the simulated period, in time units.
    pub t_end: f64,
    /// Spacing of the output times; defaults to t_end / 500.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub output_step: Option<f64>,
    /// Names of the species in state order.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub species: Option<Vec<String>>,
    /// Name of the time unit (`days`, `weeks`, `years`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_unit: Option<String>,
    /// Relative tolerance of the integrator.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rtol: Option<f64>,
    /// Absolute tolerance of the integrator (individuals).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub atol: Option<f64>,
    /// Census counts imported for fitting (format 2).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub data: Option<CountData>,
    /// The last fit of the model to `data`: what was asked and what was
    /// found (format 2).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<SavedFit>,
    /// Named alternatives kept for side-by-side comparison, at most
    /// [`MAX_VARIANTS`] (format 2).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub variants: Vec<Variant>,
    /// Settings of the planner, sweeps, fit and stochastic runs last used
    /// (format 2).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub studies: Option<Studies>,
}

/// A fit kept with its scenario.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SavedFit {
    pub request: FitRequest,
    pub result: FitResult,
}

/// A named alternative of a scenario ("three releases at 1:30"). Its
/// scenario has no variants, data or studies of its own.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Variant {
    pub name: String,
    pub scenario: Box<Scenario>,
}

/// What the user last asked of the planner, the sweeps, the fit and the
/// stochastic runs, so a reopened file asks the same again.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Studies {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub plan: Option<crate::plan::PlanRequest>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line: Option<crate::sweep::line::LineRequest>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub map: Option<crate::sweep::map::MapRequest>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<FitRequest>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ensemble: Option<crate::stochastic::EnsembleOptions>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub founders: Option<crate::stochastic::EstablishmentRequest>,
}

/// Thresholds as written in a scenario file.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ThresholdSpec {
    /// Index of the pest species (default 0).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pest: Option<usize>,
    /// Density at which control should start so the pest never reaches the
    /// economic injury level (Stern et al. 1959).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub economic_threshold: Option<f64>,
    /// Lowest density at which damage costs as much as control (Stern et
    /// al. 1959).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub economic_injury_level: Option<f64>,
    /// Per species, a density below which it counts as functionally extinct
    /// (null for none).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub quasi_extinction: Option<Vec<Option<f64>>>,
}

/// Checked thresholds.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Thresholds {
    pub pest: usize,
    pub economic_threshold: Option<f64>,
    pub economic_injury_level: Option<f64>,
    pub quasi_extinction: [Option<f64>; 2],
}

impl Thresholds {
    /// (species, level) pairs whose crossings the solver locates.
    pub fn levels(&self) -> Vec<(usize, f64)> {
        let mut out = Vec::new();
        for level in [self.economic_threshold, self.economic_injury_level]
            .into_iter()
            .flatten()
        {
            out.push((self.pest, level));
        }
        for (i, q) in self.quasi_extinction.iter().enumerate() {
            if let Some(q) = q {
                out.push((i, *q));
            }
        }
        out
    }

    fn from_spec(spec: Option<&ThresholdSpec>, n: usize) -> Result<Thresholds, ScenarioError> {
        let Some(spec) = spec else {
            return Ok(Thresholds::default());
        };
        let pest = spec.pest.unwrap_or(0);
        if pest >= n {
            return Err(invalid(
                "thresholds.pest",
                format!("no species {pest} (this model has {n})"),
            ));
        }
        let mut t = Thresholds {
            pest,
            ..Thresholds::default()
        };
        if let Some(v) = spec.economic_threshold {
            check_range("thresholds.economic_threshold", v, 1e-300, MAX_DENSITY)?;
            t.economic_threshold = Some(v);
        }
        if let Some(v) = spec.economic_injury_level {
            check_range("thresholds.economic_injury_level", v, 1e-300, MAX_DENSITY)?;
            t.economic_injury_level = Some(v);
        }
        if let (Some(et), Some(eil)) = (t.economic_threshold, t.economic_injury_level) {
            if et > eil {
                return Err(invalid(
                    "thresholds.economic_threshold",
                    format!("must not exceed the economic injury level ({eil}), got {et}"),
                ));
            }
        }
        if let Some(q) = &spec.quasi_extinction {
            if q.len() != n {
                return Err(invalid(
                    "thresholds.quasi_extinction",
                    format!("needs {n} entries (null for none), got {}", q.len()),
                ));
            }
            for (i, v) in q.iter().enumerate() {
                if let Some(v) = v {
                    check_range(
                        &format!("thresholds.quasi_extinction[{i}]"),
                        *v,
                        1e-300,
                        MAX_DENSITY,
                    )?;
                    t.quasi_extinction[i] = Some(*v);
                }
            }
        }
        Ok(t)
    }
}

/// Why a scenario could not be used.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum ScenarioError {
    #[error("not a valid scenario file: {message}")]
    Syntax { message: String },
    #[error("model: unknown model \"{key}\" (known: {known})")]
    UnknownModel { key: String, known: String },
    #[error("format: this file is format {found}, newer than this build reads ({supported}); update Tussock")]
    NewerFormat { found: u32, supported: u32 },
    #[error("params.{symbol}: not a parameter of {model} (its parameters: {known})")]
    UnknownParam {
        symbol: String,
        model: String,
        known: String,
    },
    #[error("{path}: {reason}")]
    Invalid { path: String, reason: String },
}

fn invalid(path: impl Into<String>, reason: impl Into<String>) -> ScenarioError {
    ScenarioError::Invalid {
        path: path.into(),
        reason: reason.into(),
    }
}

/// A checked scenario, ready to solve.
#[derive(Clone, Debug)]
pub struct Problem {
    pub model: &'static ModelSpec,
    pub params: Params,
    pub initial: State,
    pub t_end: f64,
    pub output_step: f64,
    pub species: Vec<String>,
    pub time_unit: String,
    pub solver: SolverOptions,
    pub schedule: Schedule,
    pub thresholds: Thresholds,
}

/// Largest horizon accepted, in time units.
pub const MAX_T_END: f64 = 1e6;
/// Most output points a run may ask for.
pub const MAX_OUTPUT_POINTS: f64 = 1e6;
/// Largest initial density accepted.
pub const MAX_DENSITY: f64 = 1e12;

impl Scenario {
    /// Parse a scenario from JSON text, bringing an older format up to
    /// date. A file from a newer format is refused with a message saying so.
    pub fn from_json(text: &str) -> Result<Scenario, ScenarioError> {
        let syntax = |e: serde_json::Error| ScenarioError::Syntax {
            message: e.to_string(),
        };
        let mut value: serde_json::Value = serde_json::from_str(text).map_err(syntax)?;
        let found = match value.get("format") {
            None | Some(serde_json::Value::Null) => FORMAT_VERSION,
            Some(v) => match v.as_u64().and_then(|v| u32::try_from(v).ok()) {
                Some(v) if v >= 1 => v,
                _ => {
                    return Err(invalid(
                        "format",
                        format!("must be a whole number from 1 to {FORMAT_VERSION}, got {v}"),
                    ))
                }
            },
        };
        if found > FORMAT_VERSION {
            return Err(ScenarioError::NewerFormat {
                found,
                supported: FORMAT_VERSION,
            });
        }
        for step in &MIGRATIONS[(found - 1) as usize..] {
            step(&mut value);
        }
        serde_json::from_value(value).map_err(syntax)
    }

    pub fn to_json_pretty(&self) -> String {
        // Serializing plain data with string keys cannot fail.
        serde_json::to_string_pretty(self).unwrap_or_default()
    }

    /// A scenario with a model's defaults.
    pub fn with_defaults(model: &ModelSpec, initial: Vec<f64>, t_end: f64) -> Scenario {
        let params = model
            .params
            .iter()
            .filter(|p| !p.optional)
            .map(|p| (p.symbol.to_string(), p.default))
            .collect();
        Scenario {
            format: Some(FORMAT_VERSION),
            model: model.key.to_string(),
            params,
            functional_response: None,
            harvest: None,
            events: Vec::new(),
            thresholds: None,
            initial,
            t_end,
            output_step: None,
            species: None,
            time_unit: None,
            rtol: None,
            atol: None,
            data: None,
            fit: None,
            variants: Vec::new(),
            studies: None,
        }
    }

    /// Check every field and build a [`Problem`]. The first problem found is
    /// reported.
    pub fn validate(&self) -> Result<Problem, ScenarioError> {
        if let Some(found) = self.format {
            if found > FORMAT_VERSION {
                return Err(ScenarioError::NewerFormat {
                    found,
                    supported: FORMAT_VERSION,
                });
            }
        }
        let model = models::find(&self.model).ok_or_else(|| ScenarioError::UnknownModel {
            key: self.model.clone(),
            known: models::MODELS
                .iter()
                .map(|m| m.key)
                .collect::<Vec<_>>()
                .join(", "),
        })?;
        let mut params = validate_params(model, &self.params)?;
        let n = model.n_species();
        params.choice = validate_choice(model, self.functional_response.as_deref())?;
        if let Some(harvest) = &self.harvest {
            if harvest.len() != n {
                return Err(invalid(
                    "harvest",
                    format!(
                        "{} has {n} species, got {} harvest rates",
                        model.key,
                        harvest.len()
                    ),
                ));
            }
            for (i, &h) in harvest.iter().enumerate() {
                check_range(&format!("harvest[{i}]"), h, -MAX_DENSITY, MAX_DENSITY)?;
                params.harvest[i] = h;
            }
        }
        (model.check)(&params)
            .map_err(|(symbol, reason)| invalid(format!("params.{symbol}"), reason))?;

        if self.initial.len() != n {
            return Err(invalid(
                "initial",
                format!(
                    "{} needs {n} initial densities ({}), got {}",
                    model.key,
                    model.species.join(", "),
                    self.initial.len()
                ),
            ));
        }
        let mut initial = State::zeros();
        for (i, &x) in self.initial.iter().enumerate() {
            check_range(&format!("initial[{i}]"), x, 0.0, MAX_DENSITY)?;
            initial[i] = x;
        }

        if !self.t_end.is_finite() || self.t_end <= 0.0 {
            return Err(invalid(
                "t_end",
                format!("must be a positive number, got {}", self.t_end),
            ));
        }
        if self.t_end > MAX_T_END {
            return Err(invalid(
                "t_end",
                format!("must be at most {MAX_T_END}, got {}", self.t_end),
            ));
        }
        let output_step = match self.output_step {
            None => self.t_end / 500.0,
            Some(dt) => {
                if !dt.is_finite() || dt <= 0.0 {
                    return Err(invalid(
                        "output_step",
                        format!("must be a positive number, got {dt}"),
                    ));
                }
                if self.t_end / dt > MAX_OUTPUT_POINTS {
                    return Err(invalid(
                        "output_step",
                        format!(
                            "gives {:.0} output points; at most {MAX_OUTPUT_POINTS} are allowed",
                            self.t_end / dt
                        ),
                    ));
                }
                dt
            }
        };

        let species = match &self.species {
            None => model.species.iter().map(|s| s.to_string()).collect(),
            Some(names) => {
                if names.len() != n {
                    return Err(invalid(
                        "species",
                        format!("{} has {n} species, got {} names", model.key, names.len()),
                    ));
                }
                for (i, name) in names.iter().enumerate() {
                    if name.trim().is_empty() {
                        return Err(invalid(format!("species[{i}]"), "must not be empty"));
                    }
                    if name.chars().count() > 80 {
                        return Err(invalid(
                            format!("species[{i}]"),
                            "must be at most 80 characters",
                        ));
                    }
                }
                names.clone()
            }
        };
        let time_unit = self.time_unit.clone().unwrap_or_else(|| "days".to_string());
        if time_unit.trim().is_empty() {
            return Err(invalid("time_unit", "must not be empty"));
        }

        let defaults = SolverOptions::default();
        let rtol = self.rtol.unwrap_or(defaults.rtol);
        check_range("rtol", rtol, 1e-14, 0.1)?;
        let atol = self.atol.unwrap_or(defaults.atol);
        check_range("atol", atol, 1e-14, 1e3)?;

        let schedule = Schedule::from_specs(&self.events, n, &species, self.t_end)?;
        let thresholds = Thresholds::from_spec(self.thresholds.as_ref(), n)?;
        if let Some(data) = &self.data {
            data.validate(n).map_err(|e| invalid(e.path, e.reason))?;
        }
        self.validate_variants()?;

        Ok(Problem {
            model,
            params,
            initial,
            t_end: self.t_end,
            output_step,
            species,
            time_unit,
            solver: SolverOptions {
                rtol,
                atol,
                ..defaults
            },
            schedule,
            thresholds,
        })
    }
}

impl Scenario {
    fn validate_variants(&self) -> Result<(), ScenarioError> {
        if self.variants.len() > MAX_VARIANTS {
            return Err(invalid(
                "variants",
                format!(
                    "at most {MAX_VARIANTS} variants, got {}",
                    self.variants.len()
                ),
            ));
        }
        for (i, v) in self.variants.iter().enumerate() {
            let path = format!("variants[{i}]");
            if v.name.trim().is_empty() || v.name.chars().count() > 80 {
                return Err(invalid(
                    format!("{path}.name"),
                    "must be 1 to 80 characters",
                ));
            }
            let inner = &v.scenario;
            if !inner.variants.is_empty()
                || inner.data.is_some()
                || inner.fit.is_some()
                || inner.studies.is_some()
            {
                return Err(invalid(
                    format!("{path}.scenario"),
                    "a variant holds only a model setup (no variants, data, fit or studies of its own)",
                ));
            }
            inner.validate().map_err(|e| match e {
                ScenarioError::Invalid { path: p, reason } => {
                    invalid(format!("{path}.scenario.{p}"), reason)
                }
                other => invalid(format!("{path}.scenario"), other.to_string()),
            })?;
        }
        Ok(())
    }
}

fn validate_choice(model: &ModelSpec, given: Option<&str>) -> Result<usize, ScenarioError> {
    match (model.choice, given) {
        (None, None) => Ok(0),
        (Some(choice), None) => Ok(choice.default),
        (None, Some(_)) => Err(invalid(
            "functional_response",
            format!("{} has no functional-response choice", model.key),
        )),
        (Some(choice), Some(key)) => choice
            .options
            .iter()
            .position(|(k, _)| *k == key)
            .ok_or_else(|| {
                invalid(
                    choice.key,
                    format!(
                        "unknown choice \"{key}\" (choose one of: {})",
                        choice
                            .options
                            .iter()
                            .map(|(k, _)| *k)
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                )
            }),
    }
}

fn validate_params(
    model: &ModelSpec,
    given: &BTreeMap<String, f64>,
) -> Result<Params, ScenarioError> {
    for symbol in given.keys() {
        if model.param_index(symbol).is_none() {
            return Err(ScenarioError::UnknownParam {
                symbol: symbol.clone(),
                model: model.key.to_string(),
                known: model
                    .params
                    .iter()
                    .map(|p| p.symbol)
                    .collect::<Vec<_>>()
                    .join(", "),
            });
        }
    }
    let mut params = Params::defaults(model);
    for (i, spec) in model.params.iter().enumerate() {
        match given.get(spec.symbol) {
            Some(&value) => {
                check_range(
                    &format!("params.{}", spec.symbol),
                    value,
                    spec.min,
                    spec.max,
                )?;
                params[i] = value;
            }
            None if spec.optional => {}
            None => {
                return Err(invalid(
                    format!("params.{}", spec.symbol),
                    format!("missing ({}, {})", spec.name, spec.help),
                ))
            }
        }
    }
    Ok(params)
}

/// Check that `value` is a finite number in `[min, max]`; an infinite `max`
/// means no upper limit.
pub fn check_range(path: &str, value: f64, min: f64, max: f64) -> Result<(), ScenarioError> {
    if !value.is_finite() {
        return Err(invalid(
            path,
            format!("must be a finite number, got {value}"),
        ));
    }
    if value < min {
        let reason = if min == 0.0 {
            format!("must be ≥ 0, got {value}")
        } else if min > 0.0 && min < 1e-6 {
            format!("must be > 0, got {value}")
        } else {
            format!("must be ≥ {min}, got {value}")
        };
        return Err(invalid(path, reason));
    }
    if value > max {
        return Err(invalid(path, format!("must be ≤ {max}, got {value}")));
    }
    Ok(())
}
