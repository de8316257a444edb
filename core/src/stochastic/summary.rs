//! Accumulating runs into an ensemble summary.
//!
//! The accumulator keeps, per finished run, the populations on the summary
//! grid and the extinction times; every statistic is computed when a
//! summary is read, from sorted values and integer counts. The summary is
//! therefore the same whatever order runs were added or accumulators merged
//! in: batching and threads do not change it.
//!
//! Runs that stop early (too many events, blow-up) are counted and listed
//! but left out of the statistics, whose denominator is the finished runs.
//!
//! The runs themselves ([`EnsembleRuns`]) can be taken out of an
//! accumulator, sent elsewhere (the page's worker gathers them from
//! several workers) and added to another accumulator of the same ensemble,
//! which checks that they fit before taking them.

use serde::Serialize;

use super::engine::{RunStop, StepCounts, StochasticRun};
use super::stats::{quantiles, wilson, Proportion};
use super::Method;
use crate::solve::{StopReason, Trajectory};

/// Quantile levels of the fan chart: 90% band, 50% band and median.
pub const FAN_LEVELS: [f64; 5] = [0.05, 0.25, 0.5, 0.75, 0.95];

/// Runs listed individually among those that stopped early.
const MAX_LISTED_FAILURES: usize = 100;

#[derive(Clone, Debug)]
pub(crate) struct PestSetting {
    pub species: usize,
    pub threshold: f64,
    pub day: f64,
    /// Position of the day among the record times.
    pub position: usize,
}

/// What the accumulator needs to know about the ensemble.
#[derive(Clone, Debug)]
pub(crate) struct Layout {
    pub species: Vec<String>,
    pub time_unit: String,
    pub n_species: usize,
    /// The summary grid.
    pub times: Vec<f64>,
    /// Position of each grid time among the record times.
    pub grid_positions: Vec<usize>,
    pub record_len: usize,
    pub horizon: f64,
    pub quasi_levels: [Option<f64>; 2],
    pub pest: Option<PestSetting>,
    pub deterministic: Trajectory,
    pub keep_runs: usize,
    pub histogram_bins: usize,
    pub seed: u64,
    pub method: Method,
    pub requested: u64,
}

impl Layout {
    /// A fingerprint of the ensemble (seed, method, grid, species and the
    /// deterministic trajectory, which depends on every parameter), so runs
    /// of another ensemble are not mistaken for this one's.
    fn fingerprint(&self) -> u64 {
        use std::hash::{Hash, Hasher};
        let mut h = std::hash::DefaultHasher::new();
        (self.seed, format!("{:?}", self.method), &self.species).hash(&mut h);
        (self.record_len, self.n_species, self.horizon.to_bits()).hash(&mut h);
        for &t in &self.times {
            t.to_bits().hash(&mut h);
        }
        for i in 0..self.n_species {
            for v in self.deterministic.series(i) {
                v.to_bits().hash(&mut h);
            }
        }
        h.finish()
    }
}

/// Runs added so far; see the module documentation.
#[derive(Clone, Debug)]
pub struct EnsembleAccumulator {
    layout: Layout,
    runs: EnsembleRuns,
}

/// The runs held by an accumulator, without what the ensemble itself
/// knows (grid, levels, deterministic trajectory): small enough to send
/// between workers. Made only by [`EnsembleAccumulator::take_runs`].
#[derive(Clone, Debug, Default, PartialEq, Serialize, serde::Deserialize)]
pub struct EnsembleRuns {
    /// [`Layout::fingerprint`] of the ensemble the runs belong to.
    ensemble: u64,
    /// Finished runs.
    finished: u64,
    /// Per finished run, `record_len × n_species` values (record time major).
    values: Vec<f64>,
    extinction_times: [Vec<f64>; 2],
    quasi_extinction_times: [Vec<f64>; 2],
    /// Runs with the smallest indices, finished or not, on the summary grid.
    kept: Vec<KeptRun>,
    stops: StopCounts,
    failures: Vec<RunFailure>,
    steps: StepCounts,
}

impl EnsembleRuns {
    /// Runs held, however they ended.
    pub fn simulated(&self) -> u64 {
        self.stops.total()
    }
}

/// How many runs ended each way.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, serde::Deserialize)]
pub struct StopCounts {
    pub finished: u64,
    pub too_many_steps: u64,
    pub blew_up: u64,
    pub non_finite: u64,
}

impl StopCounts {
    /// Count one run that ended with `stop`.
    pub fn count(&mut self, stop: &RunStop) {
        match stop {
            RunStop::Finished => self.finished += 1,
            RunStop::TooManySteps { .. } => self.too_many_steps += 1,
            RunStop::BlewUp { .. } => self.blew_up += 1,
            RunStop::NonFinite { .. } => self.non_finite += 1,
        }
    }

    pub fn add(&mut self, other: &StopCounts) {
        self.finished += other.finished;
        self.too_many_steps += other.too_many_steps;
        self.blew_up += other.blew_up;
        self.non_finite += other.non_finite;
    }

    /// Runs counted, however they ended.
    pub fn total(&self) -> u64 {
        self.finished
            .saturating_add(self.too_many_steps)
            .saturating_add(self.blew_up)
            .saturating_add(self.non_finite)
    }
}

/// A run left out of the statistics.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct RunFailure {
    pub run: u64,
    pub stop: RunStop,
}

/// Probability of an event for one species, with its 95% Wilson interval.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct SpeciesProbability {
    pub species: String,
    pub probability: Option<f64>,
    pub ci: Option<[f64; 2]>,
    pub count: u64,
    pub runs: u64,
}

/// Probability of quasi-extinction by the horizon for a species with a
/// level.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct QuasiExtinction {
    pub species: String,
    pub level: f64,
    pub probability: Option<f64>,
    pub ci: Option<[f64; 2]>,
    pub count: u64,
    pub runs: u64,
}

/// A probability at every summary time, with its interval, as columns.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct ProbabilityCurve {
    pub species: String,
    /// For quasi-extinction: the level; for the pest: its threshold.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub level: Option<f64>,
    pub probability: Vec<f64>,
    pub lower: Vec<f64>,
    pub upper: Vec<f64>,
}

/// The time to extinction of one species, over the runs where it went
/// extinct by the horizon.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct TimeToExtinctionSpecies {
    pub species: String,
    pub extinct_runs: u64,
    /// At [`TimeToExtinction::quantile_levels`]; None without extinctions.
    pub quantiles: Option<Vec<f64>>,
    pub mean: Option<f64>,
    /// Runs per bin of [`TimeToExtinction::histogram_edges`].
    pub histogram: Vec<u64>,
}

#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct TimeToExtinction {
    pub quantile_levels: Vec<f64>,
    /// Bin edges over [0, horizon]; a time equal to an inner edge falls in
    /// the bin above it, the horizon in the last bin.
    pub histogram_edges: Vec<f64>,
    pub species: Vec<TimeToExtinctionSpecies>,
}

/// One species' fan chart: quantiles at every summary time.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct FanSeries {
    pub species: String,
    pub p05: Vec<f64>,
    pub p25: Vec<f64>,
    pub median: Vec<f64>,
    pub p75: Vec<f64>,
    pub p95: Vec<f64>,
    pub mean: Vec<f64>,
}

/// The probability that the pest is under its economic threshold at day D.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct PestBelow {
    pub species: String,
    pub threshold: f64,
    pub day: f64,
    pub probability: Option<f64>,
    pub ci: Option<[f64; 2]>,
    pub count: u64,
    pub runs: u64,
}

/// The ODE trajectory on the summary grid (shorter if the solve stopped).
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct DeterministicSeries {
    /// Per species, the densities at the summary times.
    pub states: Vec<Vec<f64>>,
    pub stop: StopReason,
}

/// One individual run on the summary grid.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct KeptRun {
    pub run: u64,
    /// Per species, populations at the summary times reached.
    pub states: Vec<Vec<f64>>,
    pub stop: RunStop,
    pub extinction_time: Vec<Option<f64>>,
}

/// Everything an ensemble tells, at any moment. Probabilities are over the
/// finished runs (`runs`); they are None (null) while there are none.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct EnsembleSummary {
    /// Finished runs in the statistics.
    pub runs: u64,
    /// Runs asked for.
    pub requested: u64,
    /// Runs simulated so far, finished or not.
    pub simulated: u64,
    /// Fewer runs simulated than asked for (stopped or still running).
    pub partial: bool,
    pub seed: u64,
    pub method: Method,
    pub species: Vec<String>,
    pub time_unit: String,
    pub horizon: f64,
    /// Extinction by the horizon, per species.
    pub extinction: Vec<SpeciesProbability>,
    /// Quasi-extinction by the horizon, per species with a level.
    pub quasi_extinction: Vec<QuasiExtinction>,
    pub time_to_extinction: TimeToExtinction,
    pub pest_below_threshold: Option<PestBelow>,
    /// The summary grid.
    pub times: Vec<f64>,
    pub fan: Vec<FanSeries>,
    /// Extinction by each summary time, per species.
    pub extinction_by_time: Vec<ProbabilityCurve>,
    /// Quasi-extinction by each summary time, per species with a level.
    pub quasi_extinction_by_time: Vec<ProbabilityCurve>,
    /// The pest under its economic threshold at each summary time.
    pub pest_below_by_time: Option<ProbabilityCurve>,
    pub deterministic: DeterministicSeries,
    pub kept_runs: Vec<KeptRun>,
    pub stops: StopCounts,
    /// Runs that stopped early (the first 100 by index).
    pub failures: Vec<RunFailure>,
    pub steps: StepCounts,
}

fn unpack(p: Option<Proportion>) -> (Option<f64>, Option<[f64; 2]>) {
    match p {
        Some(p) => (Some(p.probability), Some(p.ci)),
        None => (None, None),
    }
}

impl EnsembleAccumulator {
    pub(crate) fn new(layout: Layout) -> EnsembleAccumulator {
        let runs = EnsembleRuns {
            ensemble: layout.fingerprint(),
            ..EnsembleRuns::default()
        };
        EnsembleAccumulator { layout, runs }
    }

    pub fn times(&self) -> &[f64] {
        &self.layout.times
    }

    /// Runs added so far, finished or not.
    pub fn simulated(&self) -> u64 {
        self.runs.simulated()
    }

    /// Add one run of this ensemble. A finished run whose length does not
    /// match this ensemble's record times (from another ensemble) is
    /// ignored.
    pub fn add(&mut self, run: &StochasticRun) {
        let n = self.layout.n_species;
        if run.stop.is_finished() && run.states.len() != self.layout.record_len {
            return;
        }
        if self.keeps(run.run) {
            let on_grid = self.on_grid(run);
            self.keep(on_grid);
        }
        let runs = &mut self.runs;
        runs.steps.add(&run.steps);
        runs.stops.count(&run.stop);
        if run.stop.is_finished() {
            runs.finished += 1;
            for state in &run.states {
                runs.values.extend((0..n).map(|i| state[i]));
            }
            for i in 0..n {
                if let Some(t) = run.extinction_time[i] {
                    runs.extinction_times[i].push(t);
                }
                if let Some(t) = run.quasi_extinction_time[i] {
                    runs.quasi_extinction_times[i].push(t);
                }
            }
            return;
        }
        runs.failures.push(RunFailure {
            run: run.run,
            stop: run.stop,
        });
        runs.failures.sort_by_key(|f| f.run);
        runs.failures.truncate(MAX_LISTED_FAILURES);
    }

    /// Whether run number `run` is among those kept so far.
    fn keeps(&self, run: u64) -> bool {
        self.runs.kept.partition_point(|k| k.run < run) < self.layout.keep_runs
    }

    fn keep(&mut self, run: KeptRun) {
        if self.keeps(run.run) {
            let kept = &mut self.runs.kept;
            kept.insert(kept.partition_point(|k| k.run < run.run), run);
            kept.truncate(self.layout.keep_runs);
        }
    }

    /// Take the runs out, leaving this accumulator empty.
    pub fn take_runs(&mut self) -> EnsembleRuns {
        let empty = EnsembleRuns {
            ensemble: self.runs.ensemble,
            ..EnsembleRuns::default()
        };
        std::mem::replace(&mut self.runs, empty)
    }

    /// Add runs taken from another accumulator of this ensemble. Runs that
    /// do not fit it (another ensemble's, or damaged on the way) are
    /// refused with the reason, and nothing is added.
    pub fn add_runs(&mut self, other: EnsembleRuns) -> Result<(), String> {
        self.check_fits(&other)?;
        let runs = &mut self.runs;
        runs.finished += other.finished;
        runs.values.extend(other.values);
        for i in 0..2 {
            runs.extinction_times[i].extend(&other.extinction_times[i]);
            runs.quasi_extinction_times[i].extend(&other.quasi_extinction_times[i]);
        }
        runs.stops.add(&other.stops);
        runs.failures.extend(other.failures);
        runs.failures.sort_by_key(|f| f.run);
        runs.failures.truncate(MAX_LISTED_FAILURES);
        runs.steps.add(&other.steps);
        for run in other.kept {
            self.keep(run);
        }
        Ok(())
    }

    fn check_fits(&self, other: &EnsembleRuns) -> Result<(), String> {
        if other.ensemble != self.runs.ensemble {
            return Err("runs of another ensemble".into());
        }
        let l = &self.layout;
        let n = l.n_species;
        let per_run = l.record_len * n;
        let finished = usize::try_from(other.finished).unwrap_or(usize::MAX);
        if other.stops.finished != other.finished
            || finished.checked_mul(per_run) != Some(other.values.len())
        {
            return Err(format!(
                "{} values for {} finished runs of {per_run} values each",
                other.values.len(),
                other.finished
            ));
        }
        let events = other
            .extinction_times
            .iter()
            .chain(&other.quasi_extinction_times);
        for (i, times) in events.enumerate() {
            if (i % 2 >= n && !times.is_empty()) || times.len() > finished {
                return Err("more extinctions than finished runs".into());
            }
        }
        let grid = l.times.len();
        if other.failures.len() as u64 > other.stops.total() - other.finished
            || other.kept.iter().any(|k| {
                k.states.len() != n
                    || k.states.iter().any(|s| s.len() > grid)
                    || k.extinction_time.len() != n
            })
        {
            return Err("kept runs or failures that cannot be".into());
        }
        Ok(())
    }

    /// Add the runs of another accumulator of the same ensemble (from
    /// another thread or batch). An accumulator of a different ensemble
    /// (other species or times) is ignored; returns whether it was merged.
    pub fn merge(&mut self, other: EnsembleAccumulator) -> bool {
        if other.layout.n_species != self.layout.n_species
            || other.layout.record_len != self.layout.record_len
            || other.layout.times != self.layout.times
        {
            return false;
        }
        self.add_runs(other.runs).is_ok()
    }

    /// A run of this ensemble on the summary grid.
    pub fn on_grid(&self, run: &StochasticRun) -> KeptRun {
        let l = &self.layout;
        KeptRun {
            run: run.run,
            states: (0..l.n_species)
                .map(|i| {
                    l.grid_positions
                        .iter()
                        .filter_map(|&k| run.states.get(k).map(|s| s[i]))
                        .collect()
                })
                .collect(),
            stop: run.stop,
            extinction_time: run.extinction_time[..l.n_species].to_vec(),
        }
    }

    /// Values of species `i` at record position `k` over finished runs.
    fn column(&self, k: usize, i: usize) -> Vec<f64> {
        let n = self.layout.n_species;
        let stride = self.layout.record_len * n;
        (0..self.runs.finished as usize)
            .map(|r| self.runs.values[r * stride + k * n + i])
            .collect()
    }

    /// The summary of the runs added so far.
    pub fn summary(&self) -> EnsembleSummary {
        let l = &self.layout;
        let n = l.n_species;
        let runs = self.runs.finished;
        let by_time = |times: &mut Vec<f64>, name: &str, level: Option<f64>| {
            times.sort_unstable_by(f64::total_cmp);
            let mut curve = ProbabilityCurve {
                species: name.to_string(),
                level,
                probability: Vec::with_capacity(l.times.len()),
                lower: Vec::with_capacity(l.times.len()),
                upper: Vec::with_capacity(l.times.len()),
            };
            for &t in &l.times {
                let count = times.partition_point(|&e| e <= t) as u64;
                if let Some(p) = wilson(count, runs) {
                    curve.probability.push(p.probability);
                    curve.lower.push(p.ci[0]);
                    curve.upper.push(p.ci[1]);
                }
            }
            curve
        };

        let mut extinction = Vec::new();
        let mut extinction_by_time = Vec::new();
        let mut quasi_extinction = Vec::new();
        let mut quasi_extinction_by_time = Vec::new();
        let mut time_species = Vec::new();
        let edges: Vec<f64> = (0..=l.histogram_bins)
            .map(|b| l.horizon * b as f64 / l.histogram_bins as f64)
            .collect();
        for i in 0..n {
            let name = &l.species[i];
            let mut times = self.runs.extinction_times[i].clone();
            times.retain(|&t| t <= l.horizon);
            let count = times.len() as u64;
            let (probability, ci) = unpack(wilson(count, runs));
            extinction.push(SpeciesProbability {
                species: name.clone(),
                probability,
                ci,
                count,
                runs,
            });
            extinction_by_time.push(by_time(&mut times, name, None));
            let mut histogram = vec![0u64; l.histogram_bins];
            for &t in &times {
                let bin = ((t / l.horizon) * l.histogram_bins as f64).floor() as usize;
                histogram[bin.min(l.histogram_bins - 1)] += 1;
            }
            let mean = (!times.is_empty()).then(|| times.iter().sum::<f64>() / times.len() as f64);
            time_species.push(TimeToExtinctionSpecies {
                species: name.clone(),
                extinct_runs: count,
                quantiles: quantiles(&mut times, &FAN_LEVELS),
                mean,
                histogram,
            });
            if let Some(level) = l.quasi_levels[i] {
                let mut q_times = self.runs.quasi_extinction_times[i].clone();
                q_times.retain(|&t| t <= l.horizon);
                let q_count = q_times.len() as u64;
                let (probability, ci) = unpack(wilson(q_count, runs));
                quasi_extinction.push(QuasiExtinction {
                    species: name.clone(),
                    level,
                    probability,
                    ci,
                    count: q_count,
                    runs,
                });
                quasi_extinction_by_time.push(by_time(&mut q_times, name, Some(level)));
            }
        }

        let mut fan = Vec::with_capacity(n);
        let mut pest_below_by_time = None;
        for i in 0..n {
            let mut series = FanSeries {
                species: l.species[i].clone(),
                p05: Vec::new(),
                p25: Vec::new(),
                median: Vec::new(),
                p75: Vec::new(),
                p95: Vec::new(),
                mean: Vec::new(),
            };
            let pest = l.pest.as_ref().filter(|p| p.species == i);
            let mut below = pest.map(|p| ProbabilityCurve {
                species: l.species[i].clone(),
                level: Some(p.threshold),
                probability: Vec::new(),
                lower: Vec::new(),
                upper: Vec::new(),
            });
            if runs > 0 {
                for &k in &l.grid_positions {
                    let mut column = self.column(k, i);
                    if let (Some(p), Some(curve)) = (pest, below.as_mut()) {
                        let count = column.iter().filter(|&&v| v < p.threshold).count() as u64;
                        if let Some(w) = wilson(count, runs) {
                            curve.probability.push(w.probability);
                            curve.lower.push(w.ci[0]);
                            curve.upper.push(w.ci[1]);
                        }
                    }
                    let q = quantiles(&mut column, &FAN_LEVELS).unwrap_or_default();
                    // Sorted, so the sum does not depend on the run order.
                    let mean = column.iter().sum::<f64>() / column.len() as f64;
                    if let [p05, p25, median, p75, p95] = q[..] {
                        series.p05.push(p05);
                        series.p25.push(p25);
                        series.median.push(median);
                        series.p75.push(p75);
                        series.p95.push(p95);
                        series.mean.push(mean);
                    }
                }
            }
            if below.is_some() {
                pest_below_by_time = below;
            }
            fan.push(series);
        }

        let pest_below_threshold = l.pest.as_ref().map(|p| {
            let count = if runs > 0 {
                self.column(p.position, p.species)
                    .iter()
                    .filter(|&&v| v < p.threshold)
                    .count() as u64
            } else {
                0
            };
            let (probability, ci) = unpack(wilson(count, runs));
            PestBelow {
                species: l.species[p.species].clone(),
                threshold: p.threshold,
                day: p.day,
                probability,
                ci,
                count,
                runs,
            }
        });

        let simulated = self.simulated();
        EnsembleSummary {
            runs,
            requested: l.requested,
            simulated,
            partial: simulated < l.requested,
            seed: l.seed,
            method: l.method,
            species: l.species.clone(),
            time_unit: l.time_unit.clone(),
            horizon: l.horizon,
            extinction,
            quasi_extinction,
            time_to_extinction: TimeToExtinction {
                quantile_levels: FAN_LEVELS.to_vec(),
                histogram_edges: edges,
                species: time_species,
            },
            pest_below_threshold,
            times: l.times.clone(),
            fan,
            extinction_by_time,
            quasi_extinction_by_time,
            pest_below_by_time,
            deterministic: DeterministicSeries {
                states: (0..n)
                    .map(|i| l.deterministic.series(i).collect())
                    .collect(),
                stop: l.deterministic.stop,
            },
            kept_runs: self.runs.kept.clone(),
            stops: self.runs.stops,
            failures: self.runs.failures.clone(),
            steps: self.runs.steps,
        }
    }
}
