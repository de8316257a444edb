//! What a planner reads off a run: when the pest passes its economic
//! threshold, peaks and troughs, and time spent below quasi-extinction.

use serde::Serialize;

use crate::scenario::Problem;
use crate::solve::Trajectory;

/// A density and when it happened.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Extreme {
    pub value: f64,
    pub time: f64,
}

/// The pest against its economic threshold (ET) and injury level (EIL).
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct PestMetrics {
    pub species: usize,
    pub economic_threshold: f64,
    /// When the pest first reaches the ET (0 if it starts there).
    pub first_above_threshold: Option<f64>,
    /// From when the pest stays below the ET to the horizon (0 if it never
    /// reaches it); None when it ends above.
    pub below_threshold_from: Option<f64>,
    /// Total time spent at or above the ET.
    pub time_above_threshold: f64,
    /// When the pest first reaches the EIL, if one is given.
    pub first_above_injury_level: Option<f64>,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Metrics {
    pub pest: Option<PestMetrics>,
    pub peak: Vec<Extreme>,
    pub minimum: Vec<Extreme>,
    /// Per species, total time below its quasi-extinction level (None
    /// without a level).
    pub time_below_quasi_extinction: Vec<Option<f64>>,
}

/// Intervals where `species` is at or above `level`, from its initial
/// density and the located crossings, clipped to [0, t_end].
fn intervals_above(traj: &Trajectory, species: usize, level: f64, t_end: f64) -> Vec<(f64, f64)> {
    let mut above = traj.states.first().is_some_and(|s| s[species] >= level);
    let mut since = 0.0;
    let mut out = Vec::new();
    for c in traj
        .crossings
        .iter()
        .filter(|c| c.species == species && c.level == level)
    {
        if c.rising && !above {
            above = true;
            since = c.time;
        } else if !c.rising && above {
            above = false;
            out.push((since, c.time));
        }
    }
    if above {
        out.push((since, traj.times.last().copied().unwrap_or(t_end)));
    }
    out
}

pub fn metrics(problem: &Problem, traj: &Trajectory) -> Metrics {
    let n = traj.n_species;
    let t_end = traj.times.last().copied().unwrap_or(0.0);
    let th = &problem.thresholds;
    let pest = th.economic_threshold.map(|et| {
        let above = intervals_above(traj, th.pest, et, t_end);
        let ends_above = traj.states.last().is_some_and(|s| s[th.pest] >= et);
        PestMetrics {
            species: th.pest,
            economic_threshold: et,
            first_above_threshold: above.first().map(|iv| iv.0),
            below_threshold_from: if ends_above {
                None
            } else {
                Some(above.last().map_or(0.0, |iv| iv.1))
            },
            time_above_threshold: above.iter().map(|(a, b)| b - a).sum(),
            first_above_injury_level: th.economic_injury_level.and_then(|eil| {
                intervals_above(traj, th.pest, eil, t_end)
                    .first()
                    .map(|iv| iv.0)
            }),
        }
    });
    let extreme = |i: usize, better: fn(f64, f64) -> bool| {
        let mut best = Extreme {
            value: traj.states.first().map_or(f64::NAN, |s| s[i]),
            time: 0.0,
        };
        for (t, s) in traj.times.iter().zip(&traj.states) {
            if better(s[i], best.value) {
                best = Extreme {
                    value: s[i],
                    time: *t,
                };
            }
        }
        // The density just before a removal pulse can be the peak.
        for p in traj.pulses.iter().filter(|p| p.species == i) {
            if better(p.before, best.value) {
                best = Extreme {
                    value: p.before,
                    time: p.time,
                };
            }
        }
        best
    };
    Metrics {
        pest,
        peak: (0..n).map(|i| extreme(i, |a, b| a > b)).collect(),
        minimum: (0..n).map(|i| extreme(i, |a, b| a < b)).collect(),
        time_below_quasi_extinction: (0..n)
            .map(|i| {
                th.quasi_extinction[i].map(|q| {
                    let above: f64 = intervals_above(traj, i, q, t_end)
                        .iter()
                        .map(|(a, b)| b - a)
                        .sum();
                    (t_end - above).max(0.0)
                })
            })
            .collect(),
    }
}
