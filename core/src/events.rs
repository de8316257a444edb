//! Interventions on a timeline: pulses (a release or stocking of `add`
//! individuals, a harvest, cull or spray removing `remove_fraction` of a
//! species), optionally repeated `every` so many time units `count` times,
//! and constant-rate harvest or stocking over an interval.
//!
//! Raw events ([`EventSpec`], as written in a scenario) are validated into a
//! [`Schedule`] of pulses and rate changes, sorted by time. The solver
//! restarts integration exactly at every pulse and at every start and end of
//! a rate, so nothing is smoothed across a jump.

use serde::{Deserialize, Serialize};

use crate::scenario::ScenarioError;

/// One event as written in a scenario file; give exactly one of `add`,
/// `remove_fraction`, `harvest_rate`, `stocking_rate`.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EventSpec {
    /// When the (first) pulse happens, or when a rate starts.
    pub time: f64,
    /// Index of the species in state order.
    pub species: usize,
    /// Individuals added by a pulse (a release, stocking).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub add: Option<f64>,
    /// Individuals added by a pulse per individual of species `ratio_to` at
    /// that moment (a release at a predator:prey ratio, e.g. 0.1 for 1:10).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub add_ratio: Option<f64>,
    /// The species `add_ratio` refers to (default: the other species).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ratio_to: Option<usize>,
    /// Fraction of the species removed by a pulse (harvest, cull, spray), 0–1.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub remove_fraction: Option<f64>,
    /// Individuals removed per time unit from `time` to `until`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub harvest_rate: Option<f64>,
    /// Individuals added per time unit from `time` to `until`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stocking_rate: Option<f64>,
    /// End of a rate (exclusive); required with a rate.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub until: Option<f64>,
    /// Repeat a pulse every so many time units…
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub every: Option<f64>,
    /// …this many times in all (default 1; with `every` and no count, until
    /// the horizon).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub count: Option<u32>,
    /// A name for the event in charts and reports.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
}

/// What a pulse does to its species.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PulseAction {
    Add(f64),
    /// Add `ratio` individuals per individual of species `of`.
    AddRatio {
        ratio: f64,
        of: usize,
    },
    RemoveFraction(f64),
}

#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Pulse {
    pub time: f64,
    pub species: usize,
    pub action: PulseAction,
    /// Index of the event in the scenario's list.
    pub event: usize,
}

impl Pulse {
    /// The density of the pulse's species after it, given the state before.
    pub fn apply(&self, state: &crate::model::State) -> f64 {
        let before = state[self.species];
        match self.action {
            PulseAction::Add(n) => (before + n).max(0.0),
            PulseAction::AddRatio { ratio, of } => (before + ratio * state[of]).max(0.0),
            PulseAction::RemoveFraction(f) => before * (1.0 - f),
        }
    }
}

/// A constant removal (positive) or addition (negative) over [start, end).
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct RateChange {
    pub start: f64,
    pub end: f64,
    pub species: usize,
    pub removal: f64,
    pub event: usize,
}

/// Checked, time-sorted interventions.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Schedule {
    pub pulses: Vec<Pulse>,
    pub rates: Vec<RateChange>,
}

/// Most pulses one scenario may expand to.
pub const MAX_PULSES: usize = 10_000;

fn invalid(path: String, reason: impl Into<String>) -> ScenarioError {
    ScenarioError::Invalid {
        path,
        reason: reason.into(),
    }
}

impl Schedule {
    pub fn is_empty(&self) -> bool {
        self.pulses.is_empty() && self.rates.is_empty()
    }

    /// Times where integration must restart, in (0, t_end), sorted, unique.
    pub fn breakpoints(&self, t_end: f64) -> Vec<f64> {
        let mut times: Vec<f64> = self
            .pulses
            .iter()
            .map(|p| p.time)
            .chain(self.rates.iter().flat_map(|r| [r.start, r.end]))
            .filter(|&t| t > 0.0 && t < t_end)
            .collect();
        times.sort_by(f64::total_cmp);
        times.dedup();
        times
    }

    /// Extra removal per species active at time `t` (rates are on over
    /// [start, end)).
    pub fn removal_at(&self, t: f64) -> [f64; 2] {
        let mut out = [0.0; 2];
        for r in &self.rates {
            if r.start <= t && t < r.end {
                out[r.species] += r.removal;
            }
        }
        out
    }

    /// Validate raw events for a model with `n_species` species named
    /// `species`, over a horizon `t_end`.
    pub fn from_specs(
        specs: &[EventSpec],
        n_species: usize,
        species: &[String],
        t_end: f64,
    ) -> Result<Schedule, ScenarioError> {
        let mut schedule = Schedule::default();
        for (i, e) in specs.iter().enumerate() {
            let path = |field: &str| format!("events[{i}].{field}");
            if !e.time.is_finite() || e.time < 0.0 {
                return Err(invalid(
                    path("time"),
                    format!("must be a time ≥ 0, got {}", e.time),
                ));
            }
            if e.time > t_end {
                return Err(invalid(
                    path("time"),
                    format!("{} is past the horizon ({t_end})", e.time),
                ));
            }
            if e.species >= n_species {
                let names: Vec<String> = species
                    .iter()
                    .enumerate()
                    .map(|(k, s)| format!("{k} = {s}"))
                    .collect();
                return Err(invalid(
                    path("species"),
                    format!(
                        "no species {} (this model has {n_species}: {})",
                        e.species,
                        names.join(", ")
                    ),
                ));
            }
            let given = [
                e.add.is_some(),
                e.add_ratio.is_some(),
                e.remove_fraction.is_some(),
                e.harvest_rate.is_some(),
                e.stocking_rate.is_some(),
            ];
            if given.iter().filter(|g| **g).count() != 1 {
                return Err(invalid(
                    format!("events[{i}]"),
                    "give exactly one of add, add_ratio, remove_fraction, harvest_rate, stocking_rate",
                ));
            }
            if e.ratio_to.is_some() && e.add_ratio.is_none() {
                return Err(invalid(path("ratio_to"), "only add_ratio takes ratio_to"));
            }
            if let Some(rate) = e.harvest_rate.or(e.stocking_rate) {
                let field = if e.harvest_rate.is_some() {
                    "harvest_rate"
                } else {
                    "stocking_rate"
                };
                if !rate.is_finite() || rate < 0.0 {
                    return Err(invalid(
                        path(field),
                        format!("must be a rate ≥ 0, got {rate}"),
                    ));
                }
                let Some(until) = e.until else {
                    return Err(invalid(path("until"), "a rate needs an end time (until)"));
                };
                if !until.is_finite() || until <= e.time {
                    return Err(invalid(
                        path("until"),
                        format!("must be after time ({}), got {until}", e.time),
                    ));
                }
                if e.every.is_some() || e.count.is_some() {
                    return Err(invalid(
                        path("every"),
                        "rates are not repeated; give one event per interval",
                    ));
                }
                schedule.rates.push(RateChange {
                    start: e.time,
                    end: until.min(t_end),
                    species: e.species,
                    removal: if e.harvest_rate.is_some() {
                        rate
                    } else {
                        -rate
                    },
                    event: i,
                });
                continue;
            }
            if e.until.is_some() {
                return Err(invalid(
                    path("until"),
                    "only rates (harvest_rate, stocking_rate) take an end time",
                ));
            }
            let action = match (e.add, e.add_ratio, e.remove_fraction) {
                (_, Some(ratio), _) => {
                    if !(0.0..=1e6).contains(&ratio) {
                        return Err(invalid(
                            path("add_ratio"),
                            format!("must be a ratio ≥ 0, got {ratio}"),
                        ));
                    }
                    let of = e.ratio_to.unwrap_or(if e.species == 0 { 1 } else { 0 });
                    if of >= n_species || of == e.species {
                        return Err(invalid(
                            path("ratio_to"),
                            format!("must name another species of this model, got {of}"),
                        ));
                    }
                    PulseAction::AddRatio { ratio, of }
                }
                (Some(n), _, _) => {
                    if !(0.0..=1e12).contains(&n) {
                        return Err(invalid(
                            path("add"),
                            format!("must be a number of individuals ≥ 0, got {n}"),
                        ));
                    }
                    PulseAction::Add(n)
                }
                (_, _, Some(f)) => {
                    if !(0.0..=1.0).contains(&f) {
                        return Err(invalid(
                            path("remove_fraction"),
                            format!("must be between 0 and 1, got {f}"),
                        ));
                    }
                    PulseAction::RemoveFraction(f)
                }
                _ => unreachable!("exactly one action was checked above"),
            };
            let times: Vec<f64> = match (e.every, e.count) {
                (None, None) | (None, Some(1)) => vec![e.time],
                (None, Some(n)) => {
                    return Err(invalid(
                        path("count"),
                        format!("{n} repeats need a spacing (every)"),
                    ));
                }
                (Some(every), count) => {
                    if !every.is_finite() || every <= 0.0 {
                        return Err(invalid(
                            path("every"),
                            format!("must be a positive interval, got {every}"),
                        ));
                    }
                    if count == Some(0) {
                        return Err(invalid(path("count"), "must be at least 1"));
                    }
                    let until_horizon =
                        (((t_end - e.time) / every + 1e-9).floor() as u64).saturating_add(1);
                    let n = count.map_or(until_horizon, u64::from).min(until_horizon);
                    if n as usize > MAX_PULSES {
                        return Err(invalid(
                            path("count"),
                            format!("expands to {n} pulses; at most {MAX_PULSES}"),
                        ));
                    }
                    (0..n).map(|k| e.time + k as f64 * every).collect()
                }
            };
            for time in times {
                schedule.pulses.push(Pulse {
                    time,
                    species: e.species,
                    action,
                    event: i,
                });
            }
            if schedule.pulses.len() > MAX_PULSES {
                return Err(invalid(
                    "events".to_string(),
                    format!("more than {MAX_PULSES} pulses in all"),
                ));
            }
        }
        schedule.pulses.sort_by(|a, b| a.time.total_cmp(&b.time));
        Ok(schedule)
    }
}
