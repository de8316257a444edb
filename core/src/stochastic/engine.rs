//! One stochastic run: exact Gillespie steps and tau-leaps over the
//! segments between interventions.

use serde::Serialize;

use super::sampling::RunRng;
use super::{EnvironmentalNoise, Method, StochasticOptions};
use crate::events::{Pulse, PulseAction, RateChange};
use crate::model::{ModelSpec, Params, State, MAX_CHANNELS};
use crate::scenario::Problem;

/// Model channels plus a removal and an addition channel per species.
const ALL_CHANNELS: usize = MAX_CHANNELS + 4;

/// The highest order of any rate in the catalogue in one species (the
/// Allee logistic's N³ term): Cao, Gillespie & Petzold (2006) bound the
/// relative change of a species by ε/g so that no rate changes by more than
/// about ε in a leap.
const HIGHEST_ORDER: f64 = 3.0;

/// Halvings of a rejected leap before the engine takes exact steps instead.
const MAX_HALVINGS: u32 = 40;

/// Why a run stopped.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, serde::Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum RunStop {
    /// Reached the horizon.
    Finished,
    /// More than [`StochasticOptions::max_steps`] events and leaps.
    TooManySteps { t: f64 },
    /// A population passed the scenario's blow-up level.
    BlewUp { t: f64, species: usize },
    /// A rate became NaN or infinite.
    NonFinite { t: f64 },
}

impl RunStop {
    pub fn is_finished(&self) -> bool {
        matches!(self, RunStop::Finished)
    }

    /// A sentence a user can act on.
    pub fn describe(&self, species: &[String], time_unit: &str) -> String {
        match *self {
            RunStop::Finished => "finished".to_string(),
            RunStop::TooManySteps { t } => format!(
                "stopped at t = {t:.4} {time_unit}: too many events; use the tau-leap or auto method, or raise the step limit"
            ),
            RunStop::BlewUp { t, species: i } => format!(
                "stopped at t = {t:.4} {time_unit}: {} grew without bound",
                species.get(i).map(String::as_str).unwrap_or("a species")
            ),
            RunStop::NonFinite { t } => format!(
                "stopped at t = {t:.4} {time_unit}: an event rate became infinite or undefined; check the parameters"
            ),
        }
    }
}

/// Work done by a run.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, serde::Deserialize)]
pub struct StepCounts {
    /// Single events simulated exactly (Gillespie's direct method).
    pub exact_events: u64,
    /// Tau-leaps taken.
    pub leaps: u64,
    /// Leaps rejected because a population would have gone negative.
    pub rejected_leaps: u64,
}

impl StepCounts {
    pub fn add(&mut self, other: &StepCounts) {
        self.exact_events = self.exact_events.saturating_add(other.exact_events);
        self.leaps = self.leaps.saturating_add(other.leaps);
        self.rejected_leaps = self.rejected_leaps.saturating_add(other.rejected_leaps);
    }
}

/// One stochastic run (see [`super::KeptRun`] for its serializable form).
#[derive(Clone, Debug, PartialEq)]
pub struct StochasticRun {
    /// Index of the run; its generator depends only on (seed, run).
    pub run: u64,
    /// Whole-number populations at the record times reached before the run
    /// stopped (all of them for a finished run); only the first `n_species`
    /// components are used.
    pub states: Vec<State>,
    pub stop: RunStop,
    /// Per species, when it first reached zero after having been present
    /// (the exact event time; the end of the leap in a tau-leap).
    pub extinction_time: [Option<f64>; 2],
    /// Per species with a quasi-extinction level, when it first fell below
    /// the level after having been at or above it, or went extinct,
    /// whichever came first.
    pub quasi_extinction_time: [Option<f64>; 2],
    pub steps: StepCounts,
}

/// A problem prepared for stochastic runs.
#[derive(Clone, Debug)]
pub(crate) struct Engine {
    model: &'static ModelSpec,
    params: Params,
    n_species: usize,
    initial: State,
    t_end: f64,
    blow_up: f64,
    pulses: Vec<Pulse>,
    rates: Vec<RateChange>,
    /// Times in (0, t_end) where the schedule changes, sorted, unique.
    breakpoints: Vec<f64>,
    pub(crate) record_times: Vec<f64>,
    quasi_levels: [Option<f64>; 2],
    options: StochasticOptions,
    /// Change of each channel: the model's channels (padded to
    /// `MAX_CHANNELS` with unused ones of rate zero), then per species a
    /// removal and an addition channel.
    changes: [[f64; 2]; ALL_CHANNELS],
    /// For each model channel, the species whose births it is (noise
    /// applies).
    birth_of: [Option<usize>; MAX_CHANNELS],
    /// Per species: the state changes of interest below this level
    /// (extinction at 0, the quasi-extinction level).
    watch_below: [f64; 2],
    noise_on: bool,
}

/// The state of a run in progress.
struct Run<'e> {
    engine: &'e Engine,
    rng: RunRng,
    t: f64,
    x: State,
    recorded: Vec<State>,
    present: [bool; 2],
    above_quasi: [bool; 2],
    /// Per species: present, and at or above its quasi-extinction level if
    /// it has one; increases then need no bookkeeping.
    settled: [bool; 2],
    extinction_time: [Option<f64>; 2],
    quasi_extinction_time: [Option<f64>; 2],
    steps: StepCounts,
    /// Removal (harvest) and addition (stocking) rates of the segment.
    removal: [f64; 2],
    addition: [f64; 2],
    /// Environmental noise: AR(1) state and rate multiplier per species.
    noise_z: [f64; 2],
    multiplier: [f64; 2],
}

impl Engine {
    /// Prepare `problem`; populations are recorded at `record_times`
    /// (sorted, within [0, t_end]).
    pub(crate) fn new(
        problem: &Problem,
        record_times: Vec<f64>,
        quasi_levels: [Option<f64>; 2],
        options: StochasticOptions,
    ) -> Engine {
        let model = problem.model;
        let n_species = model.n_species();
        let mut changes = [[0.0; 2]; ALL_CHANNELS];
        let mut birth_of = [None; MAX_CHANNELS];
        for (j, channel) in model.channels.iter().take(MAX_CHANNELS).enumerate() {
            changes[j] = [f64::from(channel.change[0]), f64::from(channel.change[1])];
            if channel.kind == crate::model::ChannelKind::Birth {
                birth_of[j] = channel.change.iter().position(|&c| c > 0);
            }
        }
        for i in 0..2 {
            changes[MAX_CHANNELS + 2 * i][i] = -1.0;
            changes[MAX_CHANNELS + 2 * i + 1][i] = 1.0;
        }
        Engine {
            model,
            params: problem.params,
            n_species,
            initial: problem.initial,
            t_end: problem.t_end,
            blow_up: problem.solver.blow_up,
            pulses: problem.schedule.pulses.clone(),
            rates: problem.schedule.rates.clone(),
            breakpoints: problem.schedule.breakpoints(problem.t_end),
            record_times,
            quasi_levels,
            options,
            changes,
            birth_of,
            watch_below: [
                quasi_levels[0].unwrap_or(0.0).max(1.0),
                quasi_levels[1].unwrap_or(0.0).max(1.0),
            ],
            noise_on: options.noise.is_some_and(|n| n.sd > 0.0),
        }
    }

    /// Simulate run `run` under master seed `seed`.
    pub(crate) fn run(&self, seed: u64, run: u64) -> StochasticRun {
        let mut state = Run {
            engine: self,
            rng: RunRng::for_run(seed, run),
            t: 0.0,
            x: State::zeros(),
            recorded: Vec::with_capacity(self.record_times.len()),
            present: [false; 2],
            above_quasi: [false; 2],
            settled: [false; 2],
            extinction_time: [None; 2],
            quasi_extinction_time: [None; 2],
            steps: StepCounts::default(),
            removal: [0.0; 2],
            addition: [0.0; 2],
            noise_z: [0.0; 2],
            multiplier: [1.0; 2],
        };
        let stop = state.simulate();
        StochasticRun {
            run,
            states: state.recorded,
            stop,
            extinction_time: state.extinction_time,
            quasi_extinction_time: state.quasi_extinction_time,
            steps: state.steps,
        }
    }

    /// Rates of every channel at `x` (no noise), with the segment's
    /// removal and addition rates; returns their sum.
    #[inline]
    fn rates(
        &self,
        x: &State,
        removal: &[f64; 2],
        addition: &[f64; 2],
        multiplier: Option<&[f64; 2]>,
        a: &mut [f64; ALL_CHANNELS],
    ) -> f64 {
        let (head, _) = a.split_at_mut(MAX_CHANNELS);
        if let Ok(model_rates) = <&mut [f64; MAX_CHANNELS]>::try_from(head) {
            (self.model.propensities)(&self.params, x, model_rates);
            if let Some(mult) = multiplier {
                for (rate, birth_of) in model_rates.iter_mut().zip(&self.birth_of) {
                    if let Some(i) = *birth_of {
                        *rate *= mult[i & 1];
                    }
                }
            }
        }
        // A pairwise sum: short dependency chains keep the exact method fast.
        let r = &a;
        let mut sum = ((r[0] + r[1]) + (r[2] + r[3])) + ((r[4] + r[5]) + (r[6] + r[7]));
        // Removal and addition channels sit after the model's; a species at
        // zero cannot be harvested further (as in the ODE).
        if removal == &[0.0; 2] && addition == &[0.0; 2] {
            a[MAX_CHANNELS..].fill(0.0);
        } else {
            a[MAX_CHANNELS] = if x[0] >= 1.0 { removal[0] } else { 0.0 };
            a[MAX_CHANNELS + 1] = addition[0];
            a[MAX_CHANNELS + 2] = if x[1] >= 1.0 { removal[1] } else { 0.0 };
            a[MAX_CHANNELS + 3] = addition[1];
            sum += (a[MAX_CHANNELS] + a[MAX_CHANNELS + 1])
                + (a[MAX_CHANNELS + 2] + a[MAX_CHANNELS + 3]);
        }
        sum
    }

    /// Removal (harvest) and addition (stocking) rates per species at time
    /// `t`: the constant harvest (positive) or stocking (negative) plus the
    /// schedule's rates active then, harvests and stockings kept apart so
    /// that each is its own stream of events.
    fn removal_and_addition(&self, t: f64) -> ([f64; 2], [f64; 2]) {
        let mut removal = [0.0; 2];
        let mut addition = [0.0; 2];
        let mut put = |species: usize, rate: f64| {
            if rate > 0.0 {
                removal[species] += rate;
            } else {
                addition[species] -= rate;
            }
        };
        put(0, self.params.harvest[0]);
        put(1, self.params.harvest[1]);
        for r in &self.rates {
            if r.start <= t && t < r.end {
                put(r.species, r.removal);
            }
        }
        (removal, addition)
    }
}

/// Σ change × rate over every channel at time `t` and state `x`: the
/// expected change per unit time of the stochastic process, including
/// constant and scheduled harvest and stocking (no environmental noise).
pub fn expected_change(problem: &Problem, t: f64, x: &State) -> State {
    let engine = Engine::new(
        problem,
        vec![problem.t_end],
        [None; 2],
        StochasticOptions::default(),
    );
    let (removal, addition) = engine.removal_and_addition(t);
    let mut a = [0.0; ALL_CHANNELS];
    engine.rates(x, &removal, &addition, None, &mut a);
    let mut drift = State::zeros();
    for (change, rate) in engine.changes.iter().zip(&a) {
        drift[0] += change[0] * rate;
        drift[1] += change[1] * rate;
    }
    drift
}

enum Phase {
    /// The segment's end was reached.
    Done,
    /// More work in the segment.
    Continue,
}

impl Run<'_> {
    fn simulate(&mut self) -> RunStop {
        let e = self.engine;
        let noise = e.options.noise.filter(|n| n.sd > 0.0);
        if let Some(n) = noise {
            for i in 0..e.n_species {
                self.noise_z[i] = self.rng.standard_normal();
            }
            self.set_multipliers(&n);
        }
        for i in 0..e.n_species {
            self.x[i] = self.rng.round_stochastic(e.initial[i]);
        }
        let mut next_pulse = 0;
        next_pulse = self.apply_pulses(0.0, next_pulse);
        self.note_state();
        let mut next_break = 0;
        let mut next_tick = 1.0;
        loop {
            while next_break < e.breakpoints.len() && e.breakpoints[next_break] <= self.t {
                next_break += 1;
            }
            let mut seg_end = e.t_end;
            if let Some(&b) = e.breakpoints.get(next_break) {
                seg_end = seg_end.min(b);
            }
            if noise.is_some() && next_tick < seg_end {
                seg_end = next_tick;
            }
            let (removal, addition) = e.removal_and_addition(self.t);
            self.removal = removal;
            self.addition = addition;
            if let Err(stop) = self.segment(seg_end) {
                return stop;
            }
            self.t = seg_end;
            self.record_before(seg_end);
            next_pulse = self.apply_pulses(seg_end, next_pulse);
            self.note_state();
            if let Some(stop) = self.blown_up() {
                return stop;
            }
            if let Some(n) = noise {
                if seg_end == next_tick {
                    for i in 0..e.n_species {
                        let fresh = self.rng.standard_normal();
                        let rho = n.autocorrelation;
                        self.noise_z[i] = rho * self.noise_z[i] + (1.0 - rho * rho).sqrt() * fresh;
                    }
                    self.set_multipliers(&n);
                    next_tick += 1.0;
                }
            }
            if seg_end >= e.t_end {
                break;
            }
        }
        self.record_through(e.t_end);
        RunStop::Finished
    }

    fn set_multipliers(&mut self, noise: &EnvironmentalNoise) {
        for i in 0..self.engine.n_species {
            self.multiplier[i] = libm::exp(noise.sd * self.noise_z[i] - 0.5 * noise.sd * noise.sd);
        }
    }

    /// Apply the pulses at time `t` (pulses are sorted); returns the index
    /// of the next pulse.
    fn apply_pulses(&mut self, t: f64, mut next: usize) -> usize {
        let pulses = &self.engine.pulses;
        while next < pulses.len() && pulses[next].time <= t {
            let p = pulses[next];
            let s = p.species;
            match p.action {
                PulseAction::Add(n) => self.x[s] += self.rng.round_stochastic(n),
                PulseAction::AddRatio { ratio, of } => {
                    self.x[s] += self.rng.round_stochastic(ratio * self.x[of]);
                }
                PulseAction::RemoveFraction(f) => {
                    let removed = self.rng.binomial(self.x[s] as u64, f);
                    self.x[s] = (self.x[s] - removed as f64).max(0.0);
                }
            }
            next += 1;
        }
        next
    }

    /// Record the current state at every record time before `t`.
    fn record_before(&mut self, t: f64) {
        let times = &self.engine.record_times;
        while self.recorded.len() < times.len() && times[self.recorded.len()] < t {
            self.recorded.push(self.x);
        }
    }

    /// Record the current state at every record time up to and including `t`.
    fn record_through(&mut self, t: f64) {
        let times = &self.engine.record_times;
        while self.recorded.len() < times.len() && times[self.recorded.len()] <= t {
            self.recorded.push(self.x);
        }
    }

    /// Update presence, extinction and quasi-extinction after a change at
    /// the current time.
    fn note_state(&mut self) {
        for i in 0..self.engine.n_species {
            let v = self.x[i];
            if v >= 1.0 {
                self.present[i] = true;
            } else if self.present[i] && self.extinction_time[i].is_none() {
                self.extinction_time[i] = Some(self.t);
            }
            if let Some(q) = self.engine.quasi_levels[i] {
                if v >= q {
                    self.above_quasi[i] = true;
                }
                let fell = self.above_quasi[i] && v < q;
                if self.quasi_extinction_time[i].is_none()
                    && (fell || self.extinction_time[i].is_some())
                {
                    self.quasi_extinction_time[i] = Some(self.t);
                }
            }
            self.settled[i] =
                self.present[i] && (self.engine.quasi_levels[i].is_none() || self.above_quasi[i]);
        }
    }

    fn blown_up(&self) -> Option<RunStop> {
        (0..self.engine.n_species)
            .find(|&i| self.x[i] > self.engine.blow_up)
            .map(|species| RunStop::BlewUp { t: self.t, species })
    }

    fn too_many_steps(&self) -> Option<RunStop> {
        let taken = self.steps.exact_events.saturating_add(self.steps.leaps);
        (taken >= self.engine.options.max_steps).then_some(RunStop::TooManySteps { t: self.t })
    }

    fn current_rates(&self, a: &mut [f64; ALL_CHANNELS]) -> f64 {
        let e = self.engine;
        let mult = e.noise_on.then_some(&self.multiplier);
        e.rates(&self.x, &self.removal, &self.addition, mult, a)
    }

    /// Simulate from the current time to `seg_end`, where nothing in the
    /// schedule changes.
    fn segment(&mut self, seg_end: f64) -> Result<(), RunStop> {
        match self.engine.options.method {
            Method::Exact => self.exact_steps(seg_end, u64::MAX).map(|_| ()),
            Method::Auto => self.leaping(seg_end, false),
            Method::TauLeap => self.leaping(seg_end, true),
        }
    }

    /// Up to `budget` events of Gillespie's direct method (Gillespie 1976,
    /// J. Comput. Phys. 22:403; 1977, J. Phys. Chem. 81:2340): the waiting
    /// time to the next event is exponential with the total rate a₀, and
    /// the event is channel j with probability a_j/a₀. Rates are constant
    /// between events inside a segment, so an event drawn past the
    /// segment's end is discarded and the clock set to the end (exact by
    /// the memoryless property).
    fn exact_steps(&mut self, seg_end: f64, budget: u64) -> Result<Phase, RunStop> {
        let e = self.engine;
        let mut a = [0.0; ALL_CHANNELS];
        let max_steps = e.options.max_steps;
        let mut next_record = e
            .record_times
            .get(self.recorded.len())
            .copied()
            .unwrap_or(f64::INFINITY);
        for _ in 0..budget {
            let a0 = self.current_rates(&mut a);
            if !a0.is_finite() {
                return Err(RunStop::NonFinite { t: self.t });
            }
            if a0 <= 0.0 {
                self.t = seg_end;
                return Ok(Phase::Done);
            }
            let t_next = self.t + self.rng.exponential(a0);
            if t_next >= seg_end {
                self.t = seg_end;
                return Ok(Phase::Done);
            }
            if t_next > next_record {
                self.record_before(t_next);
                next_record = e
                    .record_times
                    .get(self.recorded.len())
                    .copied()
                    .unwrap_or(f64::INFINITY);
            }
            self.t = t_next;
            let target = self.rng.uniform() * a0;
            let mut j = 0;
            let mut cumulative = a[0];
            while cumulative <= target && j + 1 < ALL_CHANNELS {
                j += 1;
                cumulative += a[j];
            }
            // Rounding can leave the target past the last positive rate.
            while a[j] <= 0.0 && j > 0 {
                j -= 1;
            }
            let change = e.changes[j];
            self.x[0] += change[0];
            self.x[1] += change[1];
            self.steps.exact_events += 1;
            let mut notable = false;
            for (i, &c) in change.iter().enumerate() {
                if c < 0.0 {
                    notable |= self.x[i] < e.watch_below[i];
                } else if c > 0.0 {
                    notable |= !self.settled[i];
                    if self.x[i] > e.blow_up {
                        return Err(RunStop::BlewUp {
                            t: self.t,
                            species: i,
                        });
                    }
                }
            }
            if notable {
                self.note_state();
            }
            if self.steps.exact_events.saturating_add(self.steps.leaps) >= max_steps {
                return Err(RunStop::TooManySteps { t: self.t });
            }
        }
        Ok(Phase::Continue)
    }

    /// Tau-leaping with the step selection of Cao, Gillespie & Petzold
    /// (2006, J. Chem. Phys. 124:044109): channels that could empty a
    /// species within `critical_firings` events are critical and fire at
    /// most once per leap, exactly; the others fire Poisson(a_j τ) times
    /// with τ chosen so that no species' expected change or standard
    /// deviation exceeds max(ε·x_i/g, 1). With `force` false (the Auto
    /// method) a leap is taken only when τ covers at least
    /// `leap_min_events` expected events; otherwise `exact_batch` exact
    /// steps are taken. A leap that would make a population negative is
    /// rejected and retried with half the step.
    fn leaping(&mut self, seg_end: f64, force: bool) -> Result<(), RunStop> {
        let e = self.engine;
        let settings = e.options.tau_leap;
        let n_channels = ALL_CHANNELS;
        let mut a = [0.0; ALL_CHANNELS];
        while self.t < seg_end {
            let a0 = self.current_rates(&mut a);
            if !a0.is_finite() {
                return Err(RunStop::NonFinite { t: self.t });
            }
            if a0 <= 0.0 {
                self.t = seg_end;
                return Ok(());
            }
            // State at a record time equal to now is the current state.
            self.record_through(self.t);
            let critical_level = f64::from(settings.critical_firings);
            let mut critical = [false; ALL_CHANNELS];
            let mut mean = [0.0; 2];
            let mut variance = [0.0; 2];
            let mut a0_critical = 0.0;
            for j in 0..n_channels {
                if a[j] <= 0.0 {
                    continue;
                }
                let change = e.changes[j];
                critical[j] =
                    (0..e.n_species).any(|i| change[i] < 0.0 && self.x[i] < critical_level);
                if critical[j] {
                    a0_critical += a[j];
                } else {
                    for i in 0..e.n_species {
                        mean[i] += change[i] * a[j];
                        variance[i] += change[i] * change[i] * a[j];
                    }
                }
            }
            let mut tau_noncritical = f64::INFINITY;
            for i in 0..e.n_species {
                let bound = (settings.epsilon * self.x[i] / HIGHEST_ORDER).max(1.0);
                if mean[i] != 0.0 {
                    tau_noncritical = tau_noncritical.min(bound / mean[i].abs());
                }
                if variance[i] > 0.0 {
                    tau_noncritical = tau_noncritical.min(bound * bound / variance[i]);
                }
            }
            // The next record time bounds the leap, so recorded states are
            // the states at those times.
            let next_record = e
                .record_times
                .get(self.recorded.len())
                .copied()
                .filter(|&r| r < seg_end)
                .unwrap_or(seg_end);
            let limit = next_record - self.t;
            // Leap only when it covers enough expected non-critical events.
            if !force && tau_noncritical.min(limit) * (a0 - a0_critical) < settings.leap_min_events
            {
                self.exact_steps(seg_end, u64::from(settings.exact_batch))?;
                continue;
            }
            let mut halvings = 0;
            let leap = loop {
                let tau_critical = if a0_critical > 0.0 {
                    self.rng.exponential(a0_critical)
                } else {
                    f64::INFINITY
                };
                let (tau, fire_critical) = if tau_noncritical < tau_critical {
                    (tau_noncritical, false)
                } else {
                    (tau_critical, true)
                };
                let (tau, fire_critical) = if tau >= limit {
                    (limit, false)
                } else {
                    (tau, fire_critical)
                };
                let mut x_new = self.x;
                for j in 0..n_channels {
                    if critical[j] || a[j] <= 0.0 {
                        continue;
                    }
                    let k = self.rng.poisson(a[j] * tau) as f64;
                    x_new[0] += e.changes[j][0] * k;
                    x_new[1] += e.changes[j][1] * k;
                }
                if fire_critical {
                    let target = self.rng.uniform() * a0_critical;
                    let mut cumulative = 0.0;
                    let mut chosen = None;
                    for j in 0..n_channels {
                        if critical[j] {
                            cumulative += a[j];
                            chosen = Some(j);
                            if cumulative > target {
                                break;
                            }
                        }
                    }
                    if let Some(j) = chosen {
                        x_new[0] += e.changes[j][0];
                        x_new[1] += e.changes[j][1];
                    }
                }
                if x_new[0] >= 0.0 && x_new[1] >= 0.0 {
                    break Some((tau, x_new));
                }
                self.steps.rejected_leaps += 1;
                halvings += 1;
                if halvings > MAX_HALVINGS {
                    break None;
                }
                tau_noncritical *= 0.5;
            };
            let Some((tau, x_new)) = leap else {
                self.exact_steps(seg_end, u64::from(settings.exact_batch))?;
                continue;
            };
            self.x = x_new;
            self.t = if tau >= limit {
                next_record
            } else {
                self.t + tau
            };
            self.steps.leaps += 1;
            self.note_state();
            if let Some(stop) = self.blown_up().or_else(|| self.too_many_steps()) {
                return Err(stop);
            }
            if self.t < seg_end {
                self.record_through(self.t);
            }
        }
        Ok(())
    }
}
