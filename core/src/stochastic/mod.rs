//! Stochastic runs and ensembles: demographic stochasticity with whole
//! individuals, optional environmental noise, and summaries of many runs.
//!
//! # The process
//! Every model lists its demographic events in [`ModelSpec::channels`]
//! (births, deaths, predation, immigration, emigration) with their rates;
//! the engine adds, per species, a removal channel (harvest: a positive
//! constant `harvest` plus the schedule's `harvest_rate`s, −1 at their sum
//! while the species is present) and an addition channel (stocking: a
//! negative constant `harvest` plus `stocking_rate`s, +1). Harvest and
//! stocking at the same time are separate streams of events, not their
//! difference. The rates sum back to the ODE's right-hand side wherever
//! the species is present, so the ODE is the large-population limit (Kurtz
//! 1970, J. Appl. Probab. 7:49).
//!
//! [`ModelSpec::channels`]: crate::model::ModelSpec::channels
//!
//! # Methods ([`Method`])
//! - `Exact`: Gillespie's direct method (Gillespie 1976, 1977), one event at
//!   a time.
//! - `TauLeap`: tau-leaping with the step selection of Cao, Gillespie &
//!   Petzold (2006, J. Chem. Phys. 124:044109), with ε = 0.03 and g = 3;
//!   channels within `critical_firings` (10) events of emptying a species
//!   fire at most once per leap, exactly.
//! - `Auto` (default): the same, but a leap is taken only when the selected
//!   τ covers at least `leap_min_events` (10) expected non-critical events;
//!   otherwise `exact_batch` (100) exact events are simulated before τ is
//!   selected again (the switch proposed by Cao, Gillespie & Petzold 2006).
//!   Small populations are therefore simulated exactly, large ones leap.
//!
//! In every method a leap that would make a population negative is rejected
//! and retried with half the step; populations are whole numbers throughout.
//!
//! # Interventions
//! The scenario's schedule applies: at a pulse, `add` is rounded to a whole
//! number at random with the deterministic value as its mean (10.4 becomes
//! 10 with probability 0.6 and 11 with probability 0.4; whole numbers stay
//! as they are), `add_ratio` likewise from ratio × the other species' count,
//! and `remove_fraction` removes a Binomial(N, fraction) number of
//! individuals (each independently). Initial densities that are not whole
//! numbers are rounded the same way. Rates (`harvest_rate`,
//! `stocking_rate`) are channels over their interval.
//!
//! # Environmental noise ([`EnvironmentalNoise`])
//! Optional: each species' birth rates (channels of kind `Birth`, including
//! a predator's births) are multiplied by exp(σ·z − σ²/2), which has mean 1,
//! held constant over each time unit [k, k + 1) and redrawn at whole times.
//! z is standard normal and follows an AR(1) process from one time unit to
//! the next, z' = ρ·z + √(1 − ρ²)·ε, so ρ = 0 gives independent years (or
//! days) and ρ near 1 long runs of good or bad ones; the species' z are
//! independent. The deterministic trajectory shown alongside has no noise.
//!
//! # Seeds
//! One master seed; run i's generator is derived from (seed, i) alone
//! ([`sampling::RunRng::for_run`]), so an ensemble does not depend on how it
//! is split into batches or threads, and the same seed gives bit-identical
//! runs on native and wasm32 (see [`sampling`]).
//!
//! # Extinction
//! A species is extinct from the first moment it reaches zero after having
//! been present (so a species released later is not counted extinct
//! before its release). It is quasi-extinct from the first moment it falls
//! below its quasi-extinction level after having been at or above it, or
//! when it goes extinct, whichever comes first. A species that comes back
//! (by immigration, stocking or a later release) keeps its first extinction
//! time; the fan chart shows the return.

mod engine;
mod establishment;
pub mod sampling;
pub mod stats;
mod summary;

use std::ops::Range;

use serde::{Deserialize, Serialize};

pub use engine::{expected_change, RunStop, StepCounts, StochasticRun};
pub use establishment::{
    establishment, EstablishmentPlan, EstablishmentRequest, EstablishmentRow, EstablishmentTable,
    EstablishmentTally, OtherSpeciesOutcome,
};
pub use summary::{
    DeterministicSeries, EnsembleAccumulator, EnsembleRuns, EnsembleSummary, FanSeries, KeptRun,
    PestBelow, ProbabilityCurve, QuasiExtinction, RunFailure, SpeciesProbability, StopCounts,
    TimeToExtinction, TimeToExtinctionSpecies,
};

use crate::scenario::Problem;
use crate::solve::solve;
use engine::Engine;

/// How runs are simulated; see the module documentation.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    #[default]
    Auto,
    Exact,
    TauLeap,
}

/// Lognormal noise on birth rates, piecewise constant per time unit.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EnvironmentalNoise {
    /// Standard deviation σ of the log multiplier (0 to 3).
    pub sd: f64,
    /// Correlation ρ of the log multiplier from one time unit to the next
    /// (−1 < ρ < 1; 0 for none).
    #[serde(default)]
    pub autocorrelation: f64,
}

/// Settings of tau-leaping (Cao, Gillespie & Petzold 2006).
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct TauLeapSettings {
    /// Bound ε on the relative change of any rate in one leap (0.03, the
    /// value Cao, Gillespie & Petzold recommend).
    pub epsilon: f64,
    /// A channel within this many events of emptying a species is critical
    /// (10).
    pub critical_firings: u32,
    /// Auto method: least expected number of non-critical events in a leap
    /// (10).
    pub leap_min_events: f64,
    /// Exact events simulated when a leap is not worth it (100).
    pub exact_batch: u32,
}

impl Default for TauLeapSettings {
    fn default() -> Self {
        TauLeapSettings {
            epsilon: 0.03,
            critical_firings: 10,
            leap_min_events: 10.0,
            exact_batch: 100,
        }
    }
}

/// How each run is simulated.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct StochasticOptions {
    pub method: Method,
    pub noise: Option<EnvironmentalNoise>,
    pub tau_leap: TauLeapSettings,
    /// Most exact events plus leaps in one run before it stops (10 million).
    pub max_steps: u64,
}

impl Default for StochasticOptions {
    fn default() -> Self {
        StochasticOptions {
            method: Method::Auto,
            noise: None,
            tau_leap: TauLeapSettings::default(),
            max_steps: 10_000_000,
        }
    }
}

/// An ensemble: how many runs, the seed, and what to summarise.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EnsembleOptions {
    /// Number of runs (1000).
    pub runs: u64,
    /// Master seed (0).
    pub seed: u64,
    pub simulation: StochasticOptions,
    /// Individual runs kept for display: those with the smallest indices (5).
    pub keep_runs: usize,
    /// Most intervals of the summary's time grid: the scenario's output
    /// times, thinned evenly to at most this many (200).
    pub max_intervals: usize,
    /// Day D for the probability that the pest is under its economic
    /// threshold (default: the horizon, when the scenario has a threshold).
    pub pest_day: Option<f64>,
    /// Quasi-extinction levels per species, replacing the scenario's
    /// `thresholds.quasi_extinction` when given.
    pub quasi_extinction: Option<[Option<f64>; 2]>,
    /// Bins of the time-to-extinction histogram over [0, horizon] (20).
    pub histogram_bins: usize,
}

impl Default for EnsembleOptions {
    fn default() -> Self {
        EnsembleOptions {
            runs: 1000,
            seed: 0,
            simulation: StochasticOptions::default(),
            keep_runs: 5,
            max_intervals: 200,
            pest_day: None,
            quasi_extinction: None,
            histogram_bins: 20,
        }
    }
}

/// Most runs one ensemble or establishment row may ask for.
pub const MAX_RUNS: u64 = 100_000_000;

/// Why an ensemble cannot be run. The text is `field: reason`.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum EnsembleError {
    #[error("{field}: {reason}")]
    InvalidOption { field: String, reason: String },
    #[error("pest_day: the probability of being under the economic threshold needs thresholds.economic_threshold in the scenario")]
    NoEconomicThreshold,
}

fn invalid(field: &str, reason: impl Into<String>) -> EnsembleError {
    EnsembleError::InvalidOption {
        field: field.to_string(),
        reason: reason.into(),
    }
}

impl StochasticOptions {
    /// Check every setting.
    pub fn check(&self) -> Result<(), EnsembleError> {
        if let Some(noise) = self.noise {
            if !(noise.sd.is_finite() && (0.0..=3.0).contains(&noise.sd)) {
                return Err(invalid(
                    "noise.sd",
                    format!("must be between 0 and 3, got {}", noise.sd),
                ));
            }
            if !(noise.autocorrelation > -1.0 && noise.autocorrelation < 1.0) {
                return Err(invalid(
                    "noise.autocorrelation",
                    format!(
                        "must be greater than −1 and less than 1, got {}",
                        noise.autocorrelation
                    ),
                ));
            }
        }
        let t = &self.tau_leap;
        if !(t.epsilon > 0.0 && t.epsilon <= 1.0) {
            return Err(invalid(
                "tau_leap.epsilon",
                format!("must be > 0 and ≤ 1, got {}", t.epsilon),
            ));
        }
        if !(1..=1_000_000).contains(&t.critical_firings) {
            return Err(invalid(
                "tau_leap.critical_firings",
                format!("must be between 1 and 1000000, got {}", t.critical_firings),
            ));
        }
        if !(t.leap_min_events.is_finite() && t.leap_min_events >= 0.0) {
            return Err(invalid(
                "tau_leap.leap_min_events",
                format!("must be a number ≥ 0, got {}", t.leap_min_events),
            ));
        }
        if t.exact_batch == 0 {
            return Err(invalid("tau_leap.exact_batch", "must be at least 1"));
        }
        if self.max_steps == 0 {
            return Err(invalid("max_steps", "must be at least 1"));
        }
        Ok(())
    }
}

fn check_runs(field: &str, runs: u64) -> Result<(), EnsembleError> {
    if runs == 0 || runs > MAX_RUNS {
        return Err(invalid(
            field,
            format!("must be between 1 and {MAX_RUNS}, got {runs}"),
        ));
    }
    Ok(())
}

/// The summary grid: the scenario's output grid (as [`solve`] builds it),
/// thinned evenly to at most `max_intervals` intervals.
fn summary_grid(problem: &Problem, max_intervals: usize) -> Vec<f64> {
    let wanted = (problem.t_end / problem.output_step - 1e-9).ceil().max(1.0);
    let n = (wanted as usize).clamp(1, max_intervals.max(1));
    let dx = problem.t_end / n as f64;
    (0..=n)
        .map(|k| if k == n { problem.t_end } else { k as f64 * dx })
        .collect()
}

/// A problem checked and prepared for an ensemble. Runs are simulated one
/// at a time ([`Ensemble::simulate`]) or in batches into an
/// [`EnsembleAccumulator`] ([`Ensemble::run_batch`]); the accumulator gives
/// an [`EnsembleSummary`] at any moment. A browser worker makes one
/// `Ensemble`, then runs batches of, say, 100 runs and posts
/// `accumulator.summary()` after each.
#[derive(Clone, Debug)]
pub struct Ensemble {
    engine: Engine,
    options: EnsembleOptions,
    template: EnsembleAccumulator,
}

impl Ensemble {
    /// Check the options against the problem and prepare it: the summary
    /// grid, the deterministic trajectory on it ([`solve`]) and the levels
    /// to watch.
    pub fn new(problem: &Problem, options: &EnsembleOptions) -> Result<Ensemble, EnsembleError> {
        check_runs("runs", options.runs)?;
        options.simulation.check()?;
        if options.keep_runs > 1000 {
            return Err(invalid(
                "keep_runs",
                format!("at most 1000 runs can be kept, got {}", options.keep_runs),
            ));
        }
        if !(1..=100_000).contains(&options.max_intervals) {
            return Err(invalid(
                "max_intervals",
                format!(
                    "must be between 1 and 100000, got {}",
                    options.max_intervals
                ),
            ));
        }
        if !(1..=1000).contains(&options.histogram_bins) {
            return Err(invalid(
                "histogram_bins",
                format!("must be between 1 and 1000, got {}", options.histogram_bins),
            ));
        }
        let n = problem.model.n_species();
        let quasi = match options.quasi_extinction {
            Some(levels) => {
                for (i, level) in levels.iter().enumerate() {
                    if let Some(q) = level {
                        if i >= n {
                            return Err(invalid(
                                "quasi_extinction",
                                format!("this model has {n} species; no level for species {i}"),
                            ));
                        }
                        if !(q.is_finite() && *q > 0.0) {
                            return Err(invalid(
                                &format!("quasi_extinction[{i}]"),
                                format!("must be a positive number, got {q}"),
                            ));
                        }
                    }
                }
                levels
            }
            None => problem.thresholds.quasi_extinction,
        };
        let economic_threshold = problem.thresholds.economic_threshold;
        let pest_day = match (options.pest_day, economic_threshold) {
            (Some(_), None) => return Err(EnsembleError::NoEconomicThreshold),
            (Some(d), Some(_)) => {
                if !(d.is_finite() && d >= 0.0 && d <= problem.t_end) {
                    return Err(invalid(
                        "pest_day",
                        format!(
                            "must be a time from 0 to the horizon ({}), got {d}",
                            problem.t_end
                        ),
                    ));
                }
                Some(d)
            }
            (None, Some(_)) => Some(problem.t_end),
            (None, None) => None,
        };

        let grid = summary_grid(problem, options.max_intervals);
        let mut record_times = grid.clone();
        let pest = pest_day.map(|d| {
            let position = record_times.partition_point(|&t| t < d);
            if record_times.get(position) != Some(&d) {
                record_times.insert(position, d);
            }
            position
        });
        let grid_positions: Vec<usize> = grid
            .iter()
            .map(|t| record_times.partition_point(|r| r < t))
            .collect();

        let mut on_grid = problem.clone();
        on_grid.output_step = problem.t_end / (grid.len() - 1) as f64;
        let deterministic = solve(&on_grid);

        let engine = Engine::new(problem, record_times, quasi, options.simulation);
        let template = EnsembleAccumulator::new(summary::Layout {
            species: problem.species.clone(),
            time_unit: problem.time_unit.clone(),
            n_species: n,
            times: grid,
            grid_positions,
            record_len: engine.record_times.len(),
            horizon: problem.t_end,
            quasi_levels: quasi,
            pest: match (pest, economic_threshold, pest_day) {
                (Some(position), Some(threshold), Some(day)) => Some(summary::PestSetting {
                    species: problem.thresholds.pest,
                    threshold,
                    day,
                    position,
                }),
                _ => None,
            },
            deterministic,
            keep_runs: options.keep_runs,
            histogram_bins: options.histogram_bins,
            seed: options.seed,
            method: options.simulation.method,
            requested: options.runs,
        });
        Ok(Ensemble {
            engine,
            options: options.clone(),
            template,
        })
    }

    pub fn options(&self) -> &EnsembleOptions {
        &self.options
    }

    /// Times of the summary grid.
    pub fn times(&self) -> &[f64] {
        self.template.times()
    }

    /// Simulate run `run` (0-based) of this ensemble.
    pub fn simulate(&self, run: u64) -> StochasticRun {
        self.engine.run(self.options.seed, run)
    }

    /// Run `run` on the summary grid, serializable: an individual run on
    /// demand.
    pub fn individual_run(&self, run: u64) -> KeptRun {
        self.template.on_grid(&self.simulate(run))
    }

    /// An empty accumulator for this ensemble, expecting `options.runs`
    /// runs.
    pub fn accumulator(&self) -> EnsembleAccumulator {
        self.template.clone()
    }

    /// Simulate runs `runs` into `accumulator`, calling
    /// `progress(done, total)` after each run of the batch; when it returns
    /// false the batch stops there. Returns true when the whole batch ran.
    pub fn run_batch(
        &self,
        accumulator: &mut EnsembleAccumulator,
        runs: Range<u64>,
        progress: &mut dyn FnMut(u64, u64) -> bool,
    ) -> bool {
        for_each_run(runs, progress, |run| accumulator.add(&self.simulate(run)))
    }
}

/// Call `each` for every run of `runs`, then `progress(done, total)`;
/// stop when it returns false. True when every run was done.
fn for_each_run(
    runs: Range<u64>,
    progress: &mut dyn FnMut(u64, u64) -> bool,
    mut each: impl FnMut(u64),
) -> bool {
    let total = runs.end.saturating_sub(runs.start);
    for (done, run) in runs.enumerate() {
        each(run);
        if !progress(done as u64 + 1, total) {
            return done as u64 + 1 == total;
        }
    }
    true
}

/// Run a whole ensemble: `options.runs` runs, with `progress(done, total)`
/// after each; when it returns false the runs so far are summarised and the
/// summary is marked partial.
pub fn run_ensemble(
    problem: &Problem,
    options: &EnsembleOptions,
    progress: &mut dyn FnMut(u64, u64) -> bool,
) -> Result<EnsembleSummary, EnsembleError> {
    let ensemble = Ensemble::new(problem, options)?;
    let mut accumulator = ensemble.accumulator();
    ensemble.run_batch(&mut accumulator, 0..options.runs, progress);
    Ok(accumulator.summary())
}
