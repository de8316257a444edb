//! Fitting a model to census counts: which parameters to estimate (within
//! bounds), a seeded multi-start search refined by Levenberg–Marquardt, and
//! what a user needs to trust or distrust the result: standard errors,
//! profile-likelihood intervals, correlations, residuals, AIC/AICc and plain
//! warnings.
//!
//! The flow is problem → solve → result, as elsewhere: a [`FitRequest`]
//! (raw, serde) is checked against a scenario's [`Problem`] and the
//! [`CountData`] by [`FitRequest::validate`] into a [`FitProblem`];
//! [`fit`] runs it and returns a [`FitResult`] that says how it stopped.
//! [`fit`] takes a progress callback; returning `false` stops the work, and
//! the best fit so far is returned marked partial.
//!
//! Method, in order:
//! 1. Starts: the scenario's values, then a Latin hypercube (McKay, Beckman
//!    & Conover 1979, Technometrics 21:239) over the bounds, drawn from a
//!    generator seeded by the request. Positive quantities whose bounds span
//!    a factor of 10 or more are sampled and searched on a log scale.
//! 2. Each start is refined by Levenberg–Marquardt (the `levenberg-marquardt`
//!    crate, a port of MINPACK's lmder; Moré 1978) on the residuals of
//!    [`objective`]. Bounds are kept by the sine transformation used by
//!    MINUIT (James 1994, MINUIT Reference Manual, §"Parameter limits"):
//!    w = lo + (hi − lo)(1 + sin u)/2. The Jacobian is taken by forward
//!    differences of fresh integrations at tight tolerances.
//! 3. Standard errors from the Fisher information at the optimum,
//!    Σ wᵢ (∂gᵢ/∂θ)(∂gᵢ/∂θ)ᵀ with central-difference sensitivities (for
//!    least squares this is the usual s²(JᵀJ)⁻¹ with s² = S/(n − p); Bates &
//!    Watts 1988, Nonlinear Regression Analysis, §2.3).
//! 4. 95% profile-likelihood intervals (Raue et al. 2009, Bioinformatics
//!    25:1923): each estimate is stepped away from its optimum with the
//!    others re-fitted, until the statistic crosses its threshold: for
//!    Poisson and negative binomial Δ(−2 ln L) = χ²₁(0.95) = 3.84; for least
//!    squares, where σ² is estimated, the profile-t form of Bates & Watts
//!    (1988, §6.1), (S(θ) − Ŝ)/s² = t²(n − p, 0.975). A side that reaches its
//!    bound first is open: the data do not bound the parameter there.
//! 5. AIC = −2 ln L + 2k and AICc = AIC + 2k(k+1)/(n − k − 1) (Burnham &
//!    Anderson 2002, Model Selection and Multimodel Inference, eqs. 2.1 and
//!    2.14), k counting every estimated quantity including σ (least squares)
//!    or the negative-binomial size. Compare them only between fits to the
//!    same data with the same objective.

mod objective;
mod profile;
mod search;
mod stats;

use serde::{Deserialize, Serialize};

use crate::data::{CountData, DataError};
use crate::model::{ModelSpec, State};
use crate::scenario::{Problem, Scenario, Thresholds};
use crate::solve::{solve, solve_with};

pub use objective::{negative_binomial_ln_pmf, poisson_ln_pmf, Objective, MU_FLOOR};

/// What to estimate and how.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitRequest {
    /// The quantities to estimate; everything else stays at the scenario's
    /// values.
    pub estimate: Vec<EstimateSpec>,
    #[serde(default)]
    pub objective: Objective,
    /// Number of starts (the scenario's values count as the first).
    #[serde(default = "default_starts")]
    pub starts: usize,
    /// Seed of the Latin hypercube; the same seed gives the same result.
    #[serde(default)]
    pub seed: u64,
    /// Compute profile-likelihood intervals (the slow part).
    #[serde(default = "default_true")]
    pub profiles: bool,
    #[serde(default)]
    pub options: FitOptions,
}

fn default_starts() -> usize {
    FitRequest::DEFAULT_STARTS
}

fn default_true() -> bool {
    true
}

impl FitRequest {
    pub const DEFAULT_STARTS: usize = 20;
    pub const MAX_STARTS: usize = 1000;

    /// A request for `names` with default bounds and settings.
    pub fn new(names: &[&str]) -> FitRequest {
        FitRequest {
            estimate: names
                .iter()
                .map(|n| EstimateSpec {
                    name: n.to_string(),
                    lower: None,
                    upper: None,
                })
                .collect(),
            objective: Objective::default(),
            starts: Self::DEFAULT_STARTS,
            seed: 0,
            profiles: true,
            options: FitOptions::default(),
        }
    }
}

/// One quantity to estimate.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EstimateSpec {
    /// A parameter symbol of the model (`r`, `K`, …) or `init1`/`init2`
    /// for the initial density of species 1 or 2 (state order).
    pub name: String,
    /// Bounds of the search. Default: the start ÷ 100 and × 100, within the
    /// parameter's valid range.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lower: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub upper: Option<f64>,
}

/// Settings of the search; the defaults suit counts from a few to 10⁶.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FitOptions {
    /// Relative tolerance of the integrator while fitting (tighter than for
    /// planning runs: the Jacobian is taken by finite differences).
    pub rtol: f64,
    /// Levenberg–Marquardt's budget: at most this many residual
    /// evaluations per free quantity plus one, per start.
    pub patience: usize,
    /// Bounds of the negative-binomial size k (variance μ + μ²/k).
    pub dispersion_bounds: (f64, f64),
    /// Starting value of k.
    pub dispersion_start: f64,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            rtol: 1e-9,
            patience: 40,
            dispersion_bounds: (1e-3, 1e6),
            dispersion_start: 10.0,
        }
    }
}

/// What an estimate sets.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Target {
    /// A model parameter, by index into the model's parameter list.
    Param { index: usize, symbol: String },
    /// The initial density of a species (state order).
    Initial { species: usize },
}

/// Why a fit cannot be set up. The text names the field.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum FitError {
    #[error("estimate: name at least one parameter or initial density to estimate")]
    NothingToEstimate,
    #[error("estimate: \"{name}\" is not a parameter of {model} (its parameters: {known}; init1…init{n_species} for initial densities)")]
    UnknownName {
        name: String,
        model: String,
        known: String,
        n_species: usize,
    },
    #[error("estimate: \"{name}\" is named twice")]
    Duplicate { name: String },
    #[error("bounds of {name}: {reason}")]
    Bounds { name: String, reason: String },
    #[error("{field}: {reason}")]
    Invalid { field: String, reason: String },
    #[error(transparent)]
    Data(#[from] DataError),
    #[error("too few counts: {n_observations} counts for {n_estimated} estimated quantities (including {extra}); a fit needs more counts than that")]
    TooFewObservations {
        n_observations: usize,
        n_estimated: usize,
        extra: &'static str,
    },
    #[error("data.times: the scenario has interventions, and the data times have no common spacing (e.g. 0, 0.5, 2, 3.5): add counts on a regular grid of times or remove the interventions")]
    IrregularTimesWithEvents,
}

/// One estimated quantity, checked.
#[derive(Clone, Debug, PartialEq)]
pub struct Unknown {
    pub name: String,
    pub label: String,
    pub target: Target,
    pub lower: f64,
    pub upper: f64,
    /// Searched and sampled on a log scale.
    pub log_scale: bool,
    /// The scenario's value, moved inside the bounds if it was outside.
    pub start: f64,
    /// The scenario's value as given.
    pub scenario_value: f64,
}

/// One count and where its prediction comes from.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Observation {
    pub time_index: usize,
    pub species: usize,
    pub count: f64,
}

/// How predictions at the data times are computed.
#[derive(Clone, Debug, PartialEq)]
pub(crate) enum TimePlan {
    /// Every data time is a multiple of `step`: one solve with output on
    /// that grid (interventions included); `grid_index[i]` of data time i.
    Grid { step: f64, grid_index: Vec<usize> },
    /// No common spacing (and no interventions): one integration per gap.
    Segments,
}

/// A checked fit, ready to run.
#[derive(Clone, Debug)]
pub struct FitProblem {
    /// The scenario's problem, horizon set to the last data time, thresholds
    /// cleared and tolerances tightened.
    pub problem: Problem,
    pub data: CountData,
    pub objective: Objective,
    pub unknowns: Vec<Unknown>,
    pub starts: usize,
    pub seed: u64,
    pub profiles: bool,
    pub options: FitOptions,
    pub(crate) observations: Vec<Observation>,
    pub(crate) plan: TimePlan,
}

fn species_label(problem: &Problem, s: usize) -> String {
    problem
        .species
        .get(s)
        .cloned()
        .unwrap_or_else(|| format!("species {}", s + 1))
}

impl FitRequest {
    /// Check the request against the problem and the data.
    pub fn validate(&self, problem: &Problem, data: &CountData) -> Result<FitProblem, FitError> {
        let model = problem.model;
        let n_species = model.n_species();
        data.validate(n_species)?;
        if self.estimate.is_empty() {
            return Err(FitError::NothingToEstimate);
        }
        if self.starts == 0 || self.starts > Self::MAX_STARTS {
            return Err(FitError::Invalid {
                field: "starts".into(),
                reason: format!("must be 1 to {}, got {}", Self::MAX_STARTS, self.starts),
            });
        }
        let o = &self.options;
        if !(o.rtol.is_finite() && o.rtol >= 1e-14 && o.rtol <= 1e-3) {
            return Err(FitError::Invalid {
                field: "options.rtol".into(),
                reason: format!("must be 1e-14 to 1e-3, got {}", o.rtol),
            });
        }
        if o.patience == 0 || o.patience > 100_000 {
            return Err(FitError::Invalid {
                field: "options.patience".into(),
                reason: format!("must be 1 to 100000, got {}", o.patience),
            });
        }
        let (dlo, dhi) = o.dispersion_bounds;
        let dispersion_ok = dlo.is_finite()
            && dhi.is_finite()
            && dlo > 0.0
            && dhi > dlo
            && (dlo..=dhi).contains(&o.dispersion_start);
        if !dispersion_ok {
            return Err(FitError::Invalid {
                field: "options.dispersion_bounds".into(),
                reason: format!(
                    "need 0 < lower < upper and the start ({}) between them, got {dlo}:{dhi}",
                    o.dispersion_start
                ),
            });
        }

        let mut unknowns: Vec<Unknown> = Vec::new();
        for spec in &self.estimate {
            let name = spec.name.trim();
            if unknowns.iter().any(|u| u.name == name) {
                return Err(FitError::Duplicate {
                    name: name.to_string(),
                });
            }
            unknowns.push(unknown(problem, name, spec.lower, spec.upper)?);
        }

        // Observations and the time plan.
        let mut observations = Vec::new();
        for (i, _) in data.times.iter().enumerate() {
            for s in &data.series {
                if let Some(Some(c)) = s.counts.get(i) {
                    observations.push(Observation {
                        time_index: i,
                        species: s.species,
                        count: *c,
                    });
                }
            }
        }
        let extra_quantities: usize = match self.objective {
            Objective::Poisson => 0,
            _ => 1,
        };
        let n_estimated = unknowns.len() + extra_quantities;
        if observations.len() <= n_estimated {
            return Err(FitError::TooFewObservations {
                n_observations: observations.len(),
                n_estimated,
                extra: match self.objective {
                    Objective::Poisson => "nothing else",
                    Objective::NegativeBinomial => "the negative-binomial size k",
                    _ => "the residual variance",
                },
            });
        }
        let plan = match common_step(&data.times) {
            Some(step) => TimePlan::Grid {
                step,
                grid_index: data
                    .times
                    .iter()
                    .map(|t| (t / step).round() as usize)
                    .collect(),
            },
            None if problem.schedule.is_empty() => TimePlan::Segments,
            None => return Err(FitError::IrregularTimesWithEvents),
        };

        let t_last = data.times.last().copied().unwrap_or(1.0);
        let mut fitted = problem.clone();
        fitted.t_end = t_last;
        if let TimePlan::Grid { step, .. } = plan {
            fitted.output_step = step;
        }
        fitted.thresholds = Thresholds::default();
        fitted.solver.rtol = o.rtol.min(problem.solver.rtol);
        // Absolute tolerance relative to the counts' size.
        let scale = observations.iter().map(|o| o.count).fold(1.0_f64, f64::max);
        fitted.solver.atol = (o.rtol * scale * 1e-3).min(problem.solver.atol);

        Ok(FitProblem {
            problem: fitted,
            data: data.clone(),
            objective: self.objective,
            unknowns,
            starts: self.starts,
            seed: self.seed,
            profiles: self.profiles,
            options: self.options,
            observations,
            plan,
        })
    }
}

/// Largest spacing h (among min-gap/k, k = 1…64) of which every time is a
/// whole multiple, with at most 200 000 grid points.
fn common_step(times: &[f64]) -> Option<f64> {
    let t_last = *times.last()?;
    let mut smallest = f64::INFINITY;
    let mut previous = 0.0;
    for &t in times {
        if t > previous {
            smallest = smallest.min(t - previous);
        }
        previous = t;
    }
    if !smallest.is_finite() || smallest <= 0.0 {
        return None;
    }
    (1..=64).map(|k| smallest / k as f64).find(|&h| {
        t_last / h <= 200_000.0
            && times.iter().all(|&t| {
                let q = t / h;
                (q - q.round()).abs() <= 1e-9 * q.max(1.0)
            })
    })
}

fn bounds_error(name: &str, reason: String) -> FitError {
    FitError::Bounds {
        name: name.to_string(),
        reason,
    }
}

fn unknown(
    problem: &Problem,
    name: &str,
    lower: Option<f64>,
    upper: Option<f64>,
) -> Result<Unknown, FitError> {
    let model = problem.model;
    let n_species = model.n_species();
    let (target, label, valid_min, valid_max, value) = if let Some(index) = model.param_index(name)
    {
        let p = &model.params[index];
        (
            Target::Param {
                index,
                symbol: p.symbol.to_string(),
            },
            p.name.to_string(),
            p.min,
            p.max,
            problem.params[index],
        )
    } else if let Some(species) = name
        .strip_prefix("init")
        .and_then(|d| d.parse::<usize>().ok())
        .filter(|&d| d >= 1 && d <= n_species)
        .map(|d| d - 1)
    {
        (
            Target::Initial { species },
            format!("initial {}", species_label(problem, species)),
            0.0,
            crate::scenario::MAX_DENSITY,
            problem.initial[species],
        )
    } else {
        return Err(FitError::UnknownName {
            name: name.to_string(),
            model: model.key.to_string(),
            known: model
                .params
                .iter()
                .map(|p| p.symbol)
                .collect::<Vec<_>>()
                .join(", "),
            n_species,
        });
    };
    let default_lower = || {
        if value.is_finite() && value > 0.0 {
            Ok((value / 100.0).max(valid_min))
        } else {
            Err(bounds_error(
                name,
                format!("the scenario's value is {value}; give bounds (e.g. {name}=0.01:10)"),
            ))
        }
    };
    let default_upper = || {
        if value.is_finite() && value > 0.0 {
            Ok((value * 100.0).min(valid_max))
        } else {
            Err(bounds_error(
                name,
                format!("the scenario's value is {value}; give bounds (e.g. {name}=0.01:10)"),
            ))
        }
    };
    let lower = match lower {
        Some(v) => v,
        None => default_lower()?,
    };
    let upper = match upper {
        Some(v) => v,
        None => default_upper()?,
    };
    if !lower.is_finite() || !upper.is_finite() {
        return Err(FitError::Bounds {
            name: name.to_string(),
            reason: format!("must be finite numbers, got {lower}:{upper}"),
        });
    }
    if lower >= upper {
        return Err(FitError::Bounds {
            name: name.to_string(),
            reason: format!("the lower bound must be below the upper, got {lower}:{upper}"),
        });
    }
    if lower < valid_min || upper > valid_max {
        return Err(FitError::Bounds {
            name: name.to_string(),
            reason: format!("{lower}:{upper} leaves the valid range {valid_min} to {valid_max}"),
        });
    }
    let log_scale = lower > 0.0 && upper / lower >= 10.0;
    let start = if value.is_finite() {
        value.clamp(lower, upper)
    } else if log_scale {
        (lower * upper).sqrt()
    } else {
        0.5 * (lower + upper)
    };
    Ok(Unknown {
        name: name.to_string(),
        label,
        target,
        lower,
        upper,
        log_scale,
        start,
        scenario_value: value,
    })
}

/// Why a solve for predictions failed.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct PredictionFailure {
    pub message: String,
}

impl FitProblem {
    pub fn model(&self) -> &'static ModelSpec {
        self.problem.model
    }

    /// Number of observed counts.
    pub fn n_observations(&self) -> usize {
        self.observations.len()
    }

    /// The counts in observation order.
    pub(crate) fn counts(&self) -> Vec<f64> {
        self.observations.iter().map(|o| o.count).collect()
    }

    /// Predictions at every observation for the unknowns at `values`
    /// (natural scale, in the order of [`FitProblem::unknowns`]).
    pub(crate) fn predict(&self, values: &[f64]) -> Result<Vec<f64>, PredictionFailure> {
        let mut problem = self.problem.clone();
        for (u, &v) in self.unknowns.iter().zip(values) {
            match u.target {
                Target::Param { index, .. } => problem.params[index] = v,
                Target::Initial { species } => problem.initial[species] = v,
            }
        }
        if let Err((symbol, reason)) = (problem.model.check)(&problem.params) {
            return Err(PredictionFailure {
                message: format!("{symbol}: {reason}"),
            });
        }
        let states: Vec<State> = match &self.plan {
            TimePlan::Grid { grid_index, .. } => {
                let trajectory = solve(&problem);
                if !trajectory.stop.is_finished() {
                    return Err(PredictionFailure {
                        message: trajectory
                            .stop
                            .describe(&problem.species, &problem.time_unit),
                    });
                }
                let mut out = Vec::with_capacity(grid_index.len());
                for &g in grid_index {
                    match trajectory.states.get(g) {
                        Some(s) => out.push(*s),
                        None => {
                            return Err(PredictionFailure {
                                message: "the solver returned fewer output times than asked".into(),
                            })
                        }
                    }
                }
                out
            }
            TimePlan::Segments => {
                let mut out = Vec::with_capacity(self.data.times.len());
                let mut x = problem.initial;
                let mut t = 0.0;
                for &ti in &self.data.times {
                    let dt = ti - t;
                    if dt > 0.0 {
                        let piece =
                            solve_with(problem.model, &problem.params, x, dt, dt, &problem.solver);
                        match (piece.stop.is_finished(), piece.states.last()) {
                            (true, Some(s)) => x = *s,
                            _ => {
                                return Err(PredictionFailure {
                                    message: piece
                                        .stop
                                        .describe(&problem.species, &problem.time_unit),
                                })
                            }
                        }
                    }
                    out.push(x);
                    t = ti;
                }
                out
            }
        };
        Ok(self
            .observations
            .iter()
            .map(|o| states[o.time_index][o.species])
            .collect())
    }
}

// ---------------------------------------------------------------- results

/// How a fit ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum FitStop {
    Finished,
    /// The progress callback asked to stop during the search or the
    /// profiles; the best fit so far is reported.
    Cancelled,
    /// No start could be integrated or improved.
    NoFit,
}

/// A point of a profile: the fixed value and the statistic there (0 at the
/// optimum; the interval ends where it reaches `threshold`).
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ProfilePoint {
    pub value: f64,
    pub statistic: f64,
}

/// One estimated quantity.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Estimate {
    pub name: String,
    /// Plain name (`prey growth rate`, `initial prey`).
    pub label: String,
    pub target: Option<Target>,
    pub value: f64,
    /// Standard error from the Fisher information; none when it is singular.
    pub se: Option<f64>,
    /// 95% profile-likelihood interval; a side is none when the profile
    /// stays below the threshold up to the bound (open), or when profiles
    /// were not computed.
    pub ci: [Option<f64>; 2],
    pub lower: f64,
    pub upper: f64,
    pub start: f64,
    pub log_scale: bool,
    pub at_bound: bool,
    /// The profile (sorted by value); empty when not computed.
    pub profile: Vec<ProfilePoint>,
}

/// One count, its prediction and residual.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ResidualPoint {
    pub time: f64,
    pub species: usize,
    pub observed: f64,
    pub predicted: f64,
    /// On the objective's scale, observed − predicted (log difference,
    /// count difference, or signed deviance residual).
    pub residual: f64,
}

/// The runs test on the signs of one species' residuals (Wald & Wolfowitz
/// 1940, Ann. Math. Statist. 11:147; normal approximation): too few runs
/// means residuals come in streaks, a pattern the model misses.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunsTest {
    pub species: usize,
    pub runs: usize,
    pub expected: f64,
    /// One-sided p-value for too few runs.
    pub p_value: f64,
}

/// Checks of the fit as a whole.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct GoodnessOfFit {
    pub runs: Vec<RunsTest>,
    /// Poisson only: the deviance, its degrees of freedom n − p and the
    /// chi-square p-value (McCullagh & Nelder 1989, §4.4.3; approximate for
    /// small counts).
    pub deviance: Option<DevianceCheck>,
}

#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct DevianceCheck {
    pub deviance: f64,
    pub degrees_of_freedom: usize,
    pub p_value: f64,
}

/// What happened to one start.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StartOutcome {
    /// Starting values (natural scale) in the order of the estimates.
    pub values: Vec<f64>,
    /// The objective reached; none if the start failed.
    pub objective: Option<f64>,
    pub status: String,
    /// Residual evaluations (one integration each) used by this start.
    pub evaluations: usize,
}

/// A plain warning, with a stable kind for programs.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FitWarning {
    pub kind: WarningKind,
    /// The estimate concerned, if one.
    pub parameter: Option<String>,
    pub message: String,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum WarningKind {
    /// The profile is flat: the data say (almost) nothing about it.
    NotIdentifiable,
    /// The 95% interval reaches a bound.
    IntervalReachesBound,
    EstimateAtBound,
    StrongCorrelation,
    SingularInformation,
    PoorFit,
    StartsFailed,
    /// A profile found a better fit than the search did.
    BetterFitInProfile,
    NonIntegerCounts,
    StartOutsideBounds,
    /// The negative-binomial size went to its upper bound: no overdispersion.
    NoOverdispersion,
    Cancelled,
}

/// Everything a fit found.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FitResult {
    pub stop: FitStop,
    /// True when stopped early: some intervals (or starts) are missing.
    pub partial: bool,
    pub objective_kind: Objective,
    pub estimates: Vec<Estimate>,
    /// The negative-binomial size k (variance μ + μ²/k), estimated with the
    /// parameters; its interval is Wald's (estimate ± 1.96 se on ln k).
    pub dispersion: Option<Estimate>,
    /// Residual standard deviation s = √(S/(n − p)) of least-squares fits,
    /// on the objective's scale.
    pub sigma: Option<f64>,
    /// Σ rᵢ² at the optimum (see the objective's definition).
    pub objective: f64,
    pub log_likelihood: f64,
    pub n_observations: usize,
    /// Estimated quantities counted by AIC (with σ or k).
    pub n_estimated: usize,
    pub aic: f64,
    /// None when n − k − 1 ≤ 0.
    pub aicc: Option<f64>,
    /// Threshold of the profile statistic for 95%.
    pub profile_threshold: f64,
    /// Correlations of the estimates (and k last, for negbin); none where
    /// undefined.
    pub correlations: Vec<Vec<Option<f64>>>,
    pub residuals: Vec<ResidualPoint>,
    pub goodness: GoodnessOfFit,
    pub starts: Vec<StartOutcome>,
    /// Index into `starts` of the best.
    pub best_start: Option<usize>,
    pub warnings: Vec<FitWarning>,
    /// Integrations used in all.
    pub evaluations: u64,
}

impl FitResult {
    /// The scenario with the fitted values in place of its own ("use fitted
    /// values"). Only parameters and initial densities change.
    pub fn apply_to(&self, scenario: &Scenario) -> Scenario {
        let mut out = scenario.clone();
        for e in &self.estimates {
            match &e.target {
                Some(Target::Param { symbol, .. }) => {
                    out.params.insert(symbol.clone(), e.value);
                }
                Some(Target::Initial { species }) => {
                    if let Some(x) = out.initial.get_mut(*species) {
                        *x = e.value;
                    }
                }
                None => {}
            }
        }
        out
    }
}

/// Run a fit. `progress(done, total)` is called after each start and each
/// profile side; returning `false` stops, keeping the best fit so far.
pub fn fit(problem: &FitProblem, progress: &mut dyn FnMut(usize, usize) -> bool) -> FitResult {
    search::run(problem, progress)
}

/// [`fit`] without progress reports.
pub fn fit_quietly(problem: &FitProblem) -> FitResult {
    fit(problem, &mut |_, _| true)
}
