//! Parameter sweeps: the whole landscape instead of one run.
//!
//! - [`line`]: one parameter over a range (a bifurcation diagram): the
//!   equilibria with their stability on continuous branches, the long-run
//!   minimum and maximum of each species, and the points where stability
//!   changes (Hopf, transcritical, saddle-node), located by bisection.
//! - [`map`]: two parameters over a grid (an outcome map): each cell
//!   classified from theory where theory decides, by simulation where it
//!   does not; with the analytic boundary curves for overlay.
//!
//! Both are built for work in pieces: a request (serde) is checked into a
//! plan ([`line::LinePlan`], [`map::MapPlan`]) whose points or rows are
//! computed one at a time, in any order or in parallel, and assembled at
//! the end; the one-call forms take a progress callback that can stop the
//! work, and keep and mark what was done. Interventions on the scenario's
//! timeline are not part of a sweep: it studies the model with constant
//! parameters from the scenario's initial densities.

use serde::{Deserialize, Serialize};

use crate::model::{ModelSpec, Params, State};
use crate::scenario::MAX_DENSITY;

pub mod line;
pub mod map;

/// Told how many pieces are done out of how many; returns false to stop.
pub type Progress<'a> = &'a mut dyn FnMut(usize, usize) -> bool;

/// How values are spaced along an axis.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Spacing {
    #[default]
    Linear,
    /// Evenly spaced logarithms (both ends must be positive).
    Log,
}

/// One swept parameter, as requested.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AxisSpec {
    /// A parameter symbol of the model (`K`, `alpha12`) or a constant
    /// harvest rate `harvest[i]` (species index from 0, as in scenarios).
    pub param: String,
    pub from: f64,
    pub to: f64,
    /// Number of values, ends included.
    pub steps: usize,
    #[serde(default)]
    pub spacing: Spacing,
}

/// What an axis changes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Target {
    Param(usize),
    Harvest(usize),
}

/// A checked axis: its values and what they set.
#[derive(Clone, Debug, PartialEq)]
pub struct Axis {
    pub param: String,
    pub spacing: Spacing,
    pub values: Vec<f64>,
    target: Target,
}

/// The axis as reported in results.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AxisValues {
    pub param: String,
    pub spacing: Spacing,
    pub values: Vec<f64>,
}

/// Why a sweep cannot be made. `field` names the request field
/// (`axis.from`, `y.steps`, `shard`…).
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum SweepError {
    #[error("{field}: {model} has no parameter \"{param}\" (its parameters: {known})")]
    UnknownParam {
        field: String,
        param: String,
        model: String,
        known: String,
    },
    #[error("{field}: {reason}")]
    Invalid { field: String, reason: String },
}

fn invalid(field: &str, reason: impl Into<String>) -> SweepError {
    SweepError::Invalid {
        field: field.to_string(),
        reason: reason.into(),
    }
}

/// Settings shared by line sweeps and maps. Defaults suit interactive use.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SweepOptions {
    /// Bifurcation values are located until the bracket is at most this
    /// fraction of the value.
    pub bifurcation_rtol: f64,
    /// Time simulated for each long run; `None` chooses it from the
    /// equilibria's time scales as `tussock analyze` does (at least the
    /// scenario's horizon; see [`crate::analysis::long_run_horizon`]).
    pub horizon: Option<f64>,
    /// Output points in the last quarter of each long run, where the
    /// minimum, maximum and kind are read (as many again each time a slow
    /// cycle doubles that window; see [`crate::analysis::long_run_over`]).
    pub samples: usize,
    /// When map cells are simulated.
    pub simulate: Simulate,
}

impl Default for SweepOptions {
    fn default() -> Self {
        SweepOptions {
            bifurcation_rtol: 1e-8,
            horizon: None,
            samples: 4000,
            simulate: Simulate::WhenUndecided,
        }
    }
}

/// When an outcome-map cell is simulated.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Simulate {
    /// Only where theory cannot decide the class.
    #[default]
    WhenUndecided,
    /// Every cell (slow; gives cycle extents everywhere and lets theory be
    /// checked against simulation).
    Always,
}

impl SweepOptions {
    fn check(&self) -> Result<(), SweepError> {
        if !(self.bifurcation_rtol.is_finite()
            && self.bifurcation_rtol >= 1e-14
            && self.bifurcation_rtol <= 0.1)
        {
            return Err(invalid(
                "options.bifurcation_rtol",
                format!("must be 1e-14 to 0.1, got {}", self.bifurcation_rtol),
            ));
        }
        if let Some(h) = self.horizon {
            if !(h.is_finite() && h > 0.0 && h <= crate::scenario::MAX_T_END) {
                return Err(invalid(
                    "options.horizon",
                    format!(
                        "must be a positive number up to {}, got {h}",
                        crate::scenario::MAX_T_END
                    ),
                ));
            }
        }
        if !(8..=1_000_000).contains(&self.samples) {
            return Err(invalid(
                "options.samples",
                format!("must be 8 to 1000000, got {}", self.samples),
            ));
        }
        Ok(())
    }
}

impl AxisSpec {
    /// Check the axis against the model: a known parameter, finite ends
    /// inside its valid range, 1 to `max_steps` values, positive ends for
    /// log spacing. `field` prefixes error paths (`axis`, `x`, `y`).
    pub fn validate(
        &self,
        model: &ModelSpec,
        field: &str,
        max_steps: usize,
    ) -> Result<Axis, SweepError> {
        let at = |name: &str| format!("{field}.{name}");
        let (target, min, max, range) = if let Some(i) = harvest_index(&self.param) {
            if i >= model.n_species() {
                return Err(invalid(
                    &at("param"),
                    format!(
                        "{} has {} species, so no {}",
                        model.key,
                        model.n_species(),
                        self.param
                    ),
                ));
            }
            (
                Target::Harvest(i),
                -MAX_DENSITY,
                MAX_DENSITY,
                format!("{} to {}", -MAX_DENSITY, MAX_DENSITY),
            )
        } else {
            let i = model
                .param_index(&self.param)
                .ok_or_else(|| SweepError::UnknownParam {
                    field: at("param"),
                    param: self.param.clone(),
                    model: model.key.to_string(),
                    known: model
                        .params
                        .iter()
                        .map(|p| p.symbol.to_string())
                        .chain((0..model.n_species()).map(|i| format!("harvest[{i}]")))
                        .collect::<Vec<_>>()
                        .join(", "),
                })?;
            let spec = &model.params[i];
            (Target::Param(i), spec.min, spec.max, spec.range_text())
        };
        for (name, v) in [("from", self.from), ("to", self.to)] {
            if !v.is_finite() {
                return Err(invalid(
                    &at(name),
                    format!("must be a finite number, got {v}"),
                ));
            }
            if v < min || v > max {
                return Err(invalid(
                    &at(name),
                    format!("{} must be {range}, got {v}", self.param),
                ));
            }
        }
        if self.steps == 0 || self.steps > max_steps {
            return Err(invalid(
                &at("steps"),
                format!("must be 1 to {max_steps}, got {}", self.steps),
            ));
        }
        if self.steps > 1 && self.from == self.to {
            return Err(invalid(
                &at("to"),
                format!(
                    "must differ from `from` ({}) for more than one step",
                    self.from
                ),
            ));
        }
        if self.spacing == Spacing::Log && !(self.from > 0.0 && self.to > 0.0) {
            return Err(invalid(
                &at("from"),
                format!(
                    "log spacing needs positive ends, got {} to {}",
                    self.from, self.to
                ),
            ));
        }
        let mut axis = Axis {
            param: self.param.clone(),
            spacing: self.spacing,
            values: Vec::with_capacity(self.steps),
            target,
        };
        axis.values = (0..self.steps)
            .map(|k| {
                if self.steps == 1 {
                    self.from
                } else if k == self.steps - 1 {
                    self.to
                } else {
                    axis.at_fraction(self.from, self.to, k as f64 / (self.steps - 1) as f64)
                }
            })
            .collect();
        Ok(axis)
    }
}

/// `harvest[i]` → i.
fn harvest_index(param: &str) -> Option<usize> {
    param
        .strip_prefix("harvest[")?
        .strip_suffix(']')?
        .parse()
        .ok()
}

impl Axis {
    /// The value a fraction `u` of the way from `from` to `to`, in this
    /// axis's spacing.
    fn at_fraction(&self, from: f64, to: f64, u: f64) -> f64 {
        match self.spacing {
            Spacing::Linear => from + u * (to - from),
            Spacing::Log => from * (to / from).powf(u),
        }
    }

    /// The value a fraction `u` of the way along the whole axis.
    pub fn at(&self, u: f64) -> f64 {
        match (self.values.first(), self.values.last()) {
            (Some(&a), Some(&b)) => self.at_fraction(a, b, u),
            _ => f64::NAN,
        }
    }

    /// `params` with this axis's parameter set to `value`.
    pub fn set(&self, params: &Params, value: f64) -> Params {
        let mut p = *params;
        match self.target {
            Target::Param(i) => p[i] = value,
            Target::Harvest(i) => p.harvest[i] = value,
        }
        p
    }

    pub fn report(&self) -> AxisValues {
        AxisValues {
            param: self.param.clone(),
            spacing: self.spacing,
            values: self.values.clone(),
        }
    }
}

/// Parameters a sweep point may use: the model's cross-parameter check,
/// turned into a message that names the parameter.
fn checked(model: &ModelSpec, p: Params) -> Result<Params, String> {
    (model.check)(&p)
        .map(|()| p)
        .map_err(|(symbol, reason)| format!("params.{symbol}: {reason}"))
}

/// Equilibria for a sweep point: the closed forms when the model says they
/// are complete (fast, and what makes 40 000-cell maps quick), else the
/// full search of [`crate::analysis::equilibria`].
pub fn point_equilibria(
    model: &ModelSpec,
    p: &Params,
    scale: [f64; 2],
) -> Vec<crate::analysis::Equilibrium> {
    if (model.guarantees)(p).closed_forms_complete {
        crate::analysis::equilibria_at(model, p, (model.equilibria)(p), scale)
    } else {
        crate::analysis::equilibria(model, p, scale)
    }
}

/// Density scale for the equilibrium search at `p` (as
/// [`crate::analysis::search_scale`] for a problem).
fn scale_at(model: &ModelSpec, p: &Params, initial: &State) -> [f64; 2] {
    crate::analysis::search_scale_for(model, p, initial)
}
