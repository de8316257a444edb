//! Reintroduction planning: the probability that a released species
//! establishes, against the number of founders and how they are split into
//! releases.
//!
//! Each row releases a total of `founders` individuals of `species` in
//! `releases` equal releases (as equal as whole individuals allow: the
//! remainder goes one each to the earliest releases), the first at
//! `first_release` and then every `every` time units, added to the
//! scenario's schedule. The scenario's initial number of the released
//! species is replaced by zero: the founders are all there is. The species
//! is established when at least `level` individuals are present at the
//! horizon. Combinations with fewer founders than releases are skipped.
//!
//! Run i of every row uses the generator of (seed, i): rows share their
//! random numbers (common random numbers), which makes differences between
//! rows more precise than independent runs would.

use std::ops::Range;

use serde::{Deserialize, Serialize};

use super::engine::{Engine, StochasticRun};
use super::stats::{quantiles, wilson};
use super::summary::StopCounts;
use super::{check_runs, invalid, EnsembleError, Method, StochasticOptions};
use crate::events::{Pulse, PulseAction};
use crate::scenario::Problem;

/// Quantile levels reported at the horizon: 5%, median, 95%.
pub const HORIZON_LEVELS: [f64; 3] = [0.05, 0.5, 0.95];

/// What to compare; see the module documentation.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EstablishmentRequest {
    /// Index of the species released (1, the predator of the
    /// predator–prey models).
    pub species: usize,
    /// Total founders per row.
    pub founders: Vec<u64>,
    /// Numbers of releases the founders are split into.
    pub releases: Vec<u32>,
    /// Time of the first release (0).
    pub first_release: f64,
    /// Time between releases (1).
    pub every: f64,
    /// Established: at least this many individuals at the horizon (1).
    pub level: f64,
    /// The horizon (default: the scenario's `t_end`; at most that).
    pub horizon: Option<f64>,
    /// Runs per row (1000).
    pub runs: u64,
    pub seed: u64,
    pub simulation: StochasticOptions,
}

impl Default for EstablishmentRequest {
    fn default() -> Self {
        EstablishmentRequest {
            species: 1,
            founders: vec![10, 20, 40],
            releases: vec![1],
            first_release: 0.0,
            every: 1.0,
            level: 1.0,
            horizon: None,
            runs: 1000,
            seed: 0,
            simulation: StochasticOptions::default(),
        }
    }
}

/// The other species of a two-species model at the horizon.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct OtherSpeciesOutcome {
    pub species: String,
    /// 5%, median and 95% of its population at the horizon.
    pub at_horizon: Option<Vec<f64>>,
    /// Its extinction by the horizon.
    pub extinction: Option<f64>,
    pub extinction_ci: Option<[f64; 2]>,
    /// Its quasi-extinction level from the scenario, if any, and the
    /// probability of falling below it by the horizon.
    pub quasi_extinction_level: Option<f64>,
    pub quasi_extinction: Option<f64>,
    pub quasi_extinction_ci: Option<[f64; 2]>,
}

/// One row of the table: a number of founders in a number of releases.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct EstablishmentRow {
    pub founders: u64,
    pub releases: u32,
    pub release_times: Vec<f64>,
    pub release_sizes: Vec<u64>,
    /// Finished runs counted.
    pub runs: u64,
    pub requested: u64,
    pub simulated: u64,
    pub partial: bool,
    /// Runs with at least `level` individuals at the horizon.
    pub established_runs: u64,
    pub probability: Option<f64>,
    pub ci: Option<[f64; 2]>,
    /// The released species extinct by the horizon (after its first
    /// release).
    pub extinction: Option<f64>,
    pub extinction_ci: Option<[f64; 2]>,
    /// 5%, median and 95% of the released species at the horizon.
    pub at_horizon: Option<Vec<f64>>,
    pub other: Option<OtherSpeciesOutcome>,
    pub stops: StopCounts,
}

/// The whole comparison.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct EstablishmentTable {
    pub species: String,
    pub level: f64,
    pub horizon: f64,
    pub time_unit: String,
    pub seed: u64,
    pub method: Method,
    pub runs: u64,
    /// Some row has fewer runs than asked for.
    pub partial: bool,
    pub rows: Vec<EstablishmentRow>,
}

#[derive(Clone, Debug)]
struct RowPlan {
    founders: u64,
    releases: u32,
    release_times: Vec<f64>,
    release_sizes: Vec<u64>,
    engine: Engine,
}

/// A checked request, prepared row by row; runs can be added to a row's
/// [`EstablishmentTally`] in chunks of any size.
#[derive(Clone, Debug)]
pub struct EstablishmentPlan {
    request: EstablishmentRequest,
    horizon: f64,
    species_names: Vec<String>,
    time_unit: String,
    n_species: usize,
    other_quasi_level: Option<f64>,
    rows: Vec<RowPlan>,
}

/// Runs of one row added so far; serialisable, so that runs done in one
/// worker can be added to a tally in another ([`EstablishmentTally::merge`]
/// checks that they fit).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct EstablishmentTally {
    row: usize,
    finished: u64,
    established: u64,
    extinct: u64,
    at_horizon: Vec<f64>,
    other_at_horizon: Vec<f64>,
    other_extinct: u64,
    other_quasi: u64,
    stops: StopCounts,
}

/// Founders split into `releases` whole releases as equal as possible, the
/// remainder one each to the earliest.
fn split(founders: u64, releases: u32) -> Vec<u64> {
    let k = u64::from(releases);
    (0..k)
        .map(|j| founders / k + u64::from(j < founders % k))
        .collect()
}

impl EstablishmentPlan {
    pub fn new(
        problem: &Problem,
        request: &EstablishmentRequest,
    ) -> Result<EstablishmentPlan, EnsembleError> {
        check_runs("runs", request.runs)?;
        request.simulation.check()?;
        let n = problem.model.n_species();
        if request.species >= n {
            return Err(invalid(
                "species",
                format!(
                    "no species {} (this model has {n}: {})",
                    request.species,
                    problem.species.join(", ")
                ),
            ));
        }
        if request.founders.is_empty() || request.founders.len() > 100 {
            return Err(invalid("founders", "give 1 to 100 numbers of founders"));
        }
        if let Some(&f) = request
            .founders
            .iter()
            .find(|&&f| f == 0 || f > 1_000_000_000)
        {
            return Err(invalid(
                "founders",
                format!("each must be between 1 and 1000000000, got {f}"),
            ));
        }
        if request.releases.is_empty() || request.releases.len() > 100 {
            return Err(invalid("releases", "give 1 to 100 numbers of releases"));
        }
        if let Some(&k) = request.releases.iter().find(|&&k| k == 0 || k > 1000) {
            return Err(invalid(
                "releases",
                format!("each must be between 1 and 1000, got {k}"),
            ));
        }
        let horizon = request.horizon.unwrap_or(problem.t_end);
        if !(horizon.is_finite() && horizon > 0.0 && horizon <= problem.t_end) {
            return Err(invalid(
                "horizon",
                format!(
                    "must be > 0 and at most the scenario's t_end ({}), got {horizon}",
                    problem.t_end
                ),
            ));
        }
        if !(request.first_release.is_finite() && request.first_release >= 0.0) {
            return Err(invalid(
                "first_release",
                format!("must be a time ≥ 0, got {}", request.first_release),
            ));
        }
        if !(request.every.is_finite() && request.every > 0.0) {
            return Err(invalid(
                "every",
                format!("must be a positive interval, got {}", request.every),
            ));
        }
        if !(request.level.is_finite() && request.level > 0.0) {
            return Err(invalid(
                "level",
                format!("must be a positive number, got {}", request.level),
            ));
        }
        let most_releases = request.releases.iter().copied().max().unwrap_or(1);
        let last = request.first_release + f64::from(most_releases - 1) * request.every;
        if last >= horizon {
            return Err(invalid(
                "every",
                format!(
                    "{most_releases} releases from {} every {} end at {last}, not before the horizon ({horizon})",
                    request.first_release, request.every
                ),
            ));
        }
        let other = (n == 2).then_some(1 - request.species);
        let mut rows = Vec::new();
        for &founders in &request.founders {
            for &releases in &request.releases {
                if founders < u64::from(releases) {
                    continue;
                }
                let release_sizes = split(founders, releases);
                let release_times: Vec<f64> = (0..releases)
                    .map(|j| request.first_release + f64::from(j) * request.every)
                    .collect();
                let mut row_problem = problem.clone();
                row_problem.t_end = horizon;
                row_problem.initial[request.species] = 0.0;
                row_problem.schedule.pulses.retain(|p| p.time <= horizon);
                for (&time, &size) in release_times.iter().zip(&release_sizes) {
                    row_problem.schedule.pulses.push(Pulse {
                        time,
                        species: request.species,
                        action: PulseAction::Add(size as f64),
                        event: usize::MAX,
                    });
                }
                row_problem
                    .schedule
                    .pulses
                    .sort_by(|a, b| a.time.total_cmp(&b.time));
                let engine = Engine::new(
                    &row_problem,
                    vec![horizon],
                    problem.thresholds.quasi_extinction,
                    request.simulation,
                );
                rows.push(RowPlan {
                    founders,
                    releases,
                    release_times,
                    release_sizes,
                    engine,
                });
            }
        }
        if rows.is_empty() {
            return Err(invalid(
                "releases",
                "every combination has fewer founders than releases",
            ));
        }
        Ok(EstablishmentPlan {
            request: request.clone(),
            horizon,
            species_names: problem.species.clone(),
            time_unit: problem.time_unit.clone(),
            n_species: n,
            other_quasi_level: other.and_then(|o| problem.thresholds.quasi_extinction[o]),
            rows,
        })
    }

    /// Number of rows (founders × releases combinations kept).
    pub fn rows(&self) -> usize {
        self.rows.len()
    }

    /// An empty tally for row `row`.
    pub fn tally(&self, row: usize) -> EstablishmentTally {
        EstablishmentTally {
            row,
            finished: 0,
            established: 0,
            extinct: 0,
            at_horizon: Vec::new(),
            other_at_horizon: Vec::new(),
            other_extinct: 0,
            other_quasi: 0,
            stops: StopCounts::default(),
        }
    }

    /// Simulate run `run` of row `row` (None for a row that does not exist).
    pub fn simulate(&self, row: usize, run: u64) -> Option<StochasticRun> {
        self.rows
            .get(row)
            .map(|r| r.engine.run(self.request.seed, run))
    }

    /// Add runs `runs` of the tally's row, calling `progress(done, total)`
    /// after each; false stops the chunk. Returns true when it all ran.
    pub fn run_chunk(
        &self,
        tally: &mut EstablishmentTally,
        runs: Range<u64>,
        progress: &mut dyn FnMut(u64, u64) -> bool,
    ) -> bool {
        super::for_each_run(runs, progress, |run| {
            if let Some(result) = self.simulate(tally.row, run) {
                self.add(tally, &result);
            }
        })
    }

    /// Add one run of the tally's row.
    pub fn add(&self, tally: &mut EstablishmentTally, run: &StochasticRun) {
        tally.stops.count(&run.stop);
        if !run.stop.is_finished() {
            return;
        }
        let Some(state) = run.states.last() else {
            return;
        };
        let s = self.request.species;
        tally.finished += 1;
        tally.at_horizon.push(state[s]);
        if state[s] >= self.request.level {
            tally.established += 1;
        }
        if run.extinction_time[s].is_some_and(|t| t <= self.horizon) {
            tally.extinct += 1;
        }
        if self.n_species == 2 {
            let o = 1 - s;
            tally.other_at_horizon.push(state[o]);
            if run.extinction_time[o].is_some_and(|t| t <= self.horizon) {
                tally.other_extinct += 1;
            }
            if run.quasi_extinction_time[o].is_some_and(|t| t <= self.horizon) {
                tally.other_quasi += 1;
            }
        }
    }

    /// The row of a tally.
    pub fn row(&self, tally: &EstablishmentTally) -> Option<EstablishmentRow> {
        let plan = self.rows.get(tally.row)?;
        let runs = tally.finished;
        let established = wilson(tally.established, runs);
        let extinct = wilson(tally.extinct, runs);
        let other = (self.n_species == 2).then(|| {
            let o = 1 - self.request.species;
            let extinct = wilson(tally.other_extinct, runs);
            let quasi = self
                .other_quasi_level
                .and_then(|_| wilson(tally.other_quasi, runs));
            OtherSpeciesOutcome {
                species: self.species_names[o].clone(),
                at_horizon: quantiles(&mut tally.other_at_horizon.clone(), &HORIZON_LEVELS),
                extinction: extinct.map(|p| p.probability),
                extinction_ci: extinct.map(|p| p.ci),
                quasi_extinction_level: self.other_quasi_level,
                quasi_extinction: quasi.map(|p| p.probability),
                quasi_extinction_ci: quasi.map(|p| p.ci),
            }
        });
        let simulated = tally.stops.total();
        Some(EstablishmentRow {
            founders: plan.founders,
            releases: plan.releases,
            release_times: plan.release_times.clone(),
            release_sizes: plan.release_sizes.clone(),
            runs,
            requested: self.request.runs,
            simulated,
            partial: simulated < self.request.runs,
            established_runs: tally.established,
            probability: established.map(|p| p.probability),
            ci: established.map(|p| p.ci),
            extinction: extinct.map(|p| p.probability),
            extinction_ci: extinct.map(|p| p.ci),
            at_horizon: quantiles(&mut tally.at_horizon.clone(), &HORIZON_LEVELS),
            other,
            stops: tally.stops,
        })
    }

    /// The table of the given rows' tallies.
    pub fn table(&self, tallies: &[EstablishmentTally]) -> EstablishmentTable {
        let rows: Vec<EstablishmentRow> = tallies.iter().filter_map(|t| self.row(t)).collect();
        EstablishmentTable {
            species: self.species_names[self.request.species].clone(),
            level: self.request.level,
            horizon: self.horizon,
            time_unit: self.time_unit.clone(),
            seed: self.request.seed,
            method: self.request.simulation.method,
            runs: self.request.runs,
            partial: rows.len() < self.rows.len() || rows.iter().any(|r| r.partial),
            rows,
        }
    }
}

impl EstablishmentTally {
    /// Runs added, however they ended.
    pub fn simulated(&self) -> u64 {
        self.stops.total()
    }

    /// Add the runs of another tally of the same row. A tally of another
    /// row, or one whose counts cannot be (damaged on the way), is refused
    /// with the reason and nothing is added.
    pub fn merge(&mut self, other: EstablishmentTally) -> Result<(), String> {
        if other.row != self.row {
            return Err(format!(
                "a tally of row {} cannot join row {}",
                other.row, self.row
            ));
        }
        let n = other.finished;
        let len = |v: &Vec<f64>| v.len() as u64;
        if other.stops.finished != n
            || len(&other.at_horizon) != n
            || !(len(&other.other_at_horizon) == n || other.other_at_horizon.is_empty())
            || [
                other.established,
                other.extinct,
                other.other_extinct,
                other.other_quasi,
            ]
            .iter()
            .any(|&count| count > n)
        {
            return Err(format!(
                "the counts of a tally of row {} do not add up",
                other.row
            ));
        }
        self.finished += other.finished;
        self.established += other.established;
        self.extinct += other.extinct;
        self.at_horizon.extend(other.at_horizon);
        self.other_at_horizon.extend(other.other_at_horizon);
        self.other_extinct += other.other_extinct;
        self.other_quasi += other.other_quasi;
        self.stops.add(&other.stops);
        Ok(())
    }
}

/// Every row of a request, `request.runs` runs each, with
/// `progress(done, total)` over all rows; false stops, and the rows so far
/// are returned (marked partial).
pub fn establishment(
    problem: &Problem,
    request: &EstablishmentRequest,
    progress: &mut dyn FnMut(u64, u64) -> bool,
) -> Result<EstablishmentTable, EnsembleError> {
    let plan = EstablishmentPlan::new(problem, request)?;
    let total = plan.rows() as u64 * request.runs;
    let mut tallies = Vec::new();
    let mut done_before = 0;
    for row in 0..plan.rows() {
        let mut tally = plan.tally(row);
        let mut keep_going = true;
        let complete = plan.run_chunk(&mut tally, 0..request.runs, &mut |done, _| {
            keep_going = progress(done_before + done, total);
            keep_going
        });
        tallies.push(tally);
        done_before += request.runs;
        if !complete || !keep_going {
            break;
        }
    }
    Ok(plan.table(&tallies))
}
