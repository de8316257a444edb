//! The release planner: the smallest release that meets a goal, searched
//! over release size, first release time and number of releases, with the
//! response curve that shows the margin.
//!
//! For each (time, count) the goal's margin is evaluated on a grid of sizes:
//! zero, then geometric from 1/1000 of the largest allowed to the largest;
//! the smallest size on the grid that meets the goal is then refined by
//! bisection between it and the grid size below it (not below the first
//! positive size: see [`PlanRow::at_lower_bound`]). Responses need not be monotone (a larger
//! release can set off a rebound); when a larger grid size fails again the
//! row says so.

use serde::Serialize;

use crate::events::{Pulse, PulseAction};
use crate::scenario::Problem;
use crate::solve::{solve, Trajectory};

/// What the release must achieve.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Goal {
    /// The pest (the scenario's `thresholds.pest`) is below its economic
    /// threshold at every time from `by` to `until`.
    PestBelowThreshold { by: f64, until: f64 },
    /// `species` stays at or above `level` from the first release to
    /// `until`, and, if given, species `floor.0` never falls below
    /// `floor.1` before `until`.
    Persist {
        species: usize,
        level: f64,
        until: f64,
        floor: Option<(usize, f64)>,
    },
}

/// How a release size is counted.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SizeUnit {
    /// Individuals per release (per plant, per m², per site: the scenario's
    /// density unit).
    Individuals,
    /// Released individuals per individual of the other species at the
    /// moment of release (a predator:prey ratio such as 1:10 = 0.1).
    RatioToOther,
}

#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct PlanRequest {
    pub goal: Goal,
    /// The species released.
    pub species: usize,
    pub unit: SizeUnit,
    /// Largest size per release searched.
    pub max_size: f64,
    /// First release times to try.
    pub times: Vec<f64>,
    /// Numbers of releases to try.
    pub counts: Vec<u32>,
    /// Spacing of repeated releases.
    pub every: f64,
    /// Sizes on the response curve (besides zero).
    pub curve_points: usize,
}

/// One point of a response curve.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct Evaluation {
    /// Size per release.
    pub size: f64,
    /// How far the outcome is from failing: positive when the goal is met
    /// (threshold minus worst pest density, or worst density minus level).
    pub margin: f64,
    pub met: bool,
}

/// The answer for one release time and number of releases.
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct PlanRow {
    pub time: f64,
    pub count: u32,
    pub every: f64,
    /// Smallest size per release that meets the goal, if any in range.
    pub smallest: Option<f64>,
    /// `smallest` times the number of releases.
    pub total: Option<f64>,
    /// A larger size on the curve fails again.
    pub non_monotone: bool,
    /// The smallest size searched already meets the goal: the answer is
    /// "this much or less" (densities far below one individual are not
    /// searched, since the model's predictions mean little there).
    pub at_lower_bound: bool,
    pub curve: Vec<Evaluation>,
}

#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct Plan {
    pub rows: Vec<PlanRow>,
    /// True when the search was stopped before every row was done.
    #[serde(default)]
    pub partial: bool,
    /// Index of the row with the smallest total release.
    pub best: Option<usize>,
    pub unit: SizeUnit,
}

/// Why a plan cannot be made.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum PlanError {
    #[error("the goal needs the pest's economic threshold: add thresholds.economic_threshold to the scenario")]
    NoThreshold,
    #[error("{0}")]
    Invalid(String),
}

impl PlanRequest {
    fn check(&self, problem: &Problem) -> Result<(), PlanError> {
        let n = problem.model.n_species();
        let bad = |m: String| Err(PlanError::Invalid(m));
        if self.species >= n {
            return bad(format!(
                "release species {} does not exist (this model has {n})",
                self.species
            ));
        }
        if self.unit == SizeUnit::RatioToOther && n < 2 {
            return bad("a ratio release needs a second species".to_string());
        }
        if !(self.max_size.is_finite() && self.max_size > 0.0) {
            return bad(format!(
                "the largest release must be a positive number, got {}",
                self.max_size
            ));
        }
        if self.times.is_empty() || self.counts.is_empty() {
            return bad("give at least one release time and one number of releases".to_string());
        }
        for &t in &self.times {
            if !(t.is_finite() && (0.0..=problem.t_end).contains(&t)) {
                return bad(format!(
                    "release time {t} is outside 0 to {}",
                    problem.t_end
                ));
            }
        }
        if self.counts.iter().any(|&c| c == 0 || c > 1000) {
            return bad("numbers of releases must be 1 to 1000".to_string());
        }
        if self.counts.iter().any(|&c| c > 1) && !(self.every.is_finite() && self.every > 0.0) {
            return bad(format!(
                "repeated releases need a positive spacing, got {}",
                self.every
            ));
        }
        match self.goal {
            Goal::PestBelowThreshold { by, until } => {
                if problem.thresholds.economic_threshold.is_none() {
                    return Err(PlanError::NoThreshold);
                }
                if !(by >= 0.0 && until >= by && until <= problem.t_end) {
                    return bad(format!(
                        "the goal window {by} to {until} must lie within 0 to {}",
                        problem.t_end
                    ));
                }
            }
            Goal::Persist {
                species,
                level,
                until,
                floor,
            } => {
                if species >= n || floor.is_some_and(|(s, _)| s >= n) {
                    return bad("the goal names a species this model does not have".to_string());
                }
                if !(level.is_finite() && level >= 0.0 && until > 0.0 && until <= problem.t_end) {
                    return bad(format!(
                        "the goal needs a level ≥ 0 and an end within 0 to {}",
                        problem.t_end
                    ));
                }
            }
        }
        Ok(())
    }
}

/// The problem with `count` releases of `size` added to its schedule.
pub fn with_releases(
    problem: &Problem,
    request: &PlanRequest,
    time: f64,
    count: u32,
    size: f64,
) -> Problem {
    let mut p = problem.clone();
    let action = match request.unit {
        SizeUnit::Individuals => PulseAction::Add(size),
        SizeUnit::RatioToOther => PulseAction::AddRatio {
            ratio: size,
            of: 1 - request.species.min(1),
        },
    };
    let event = usize::MAX; // not from the scenario's list
    for k in 0..count {
        let t = time + f64::from(k) * request.every;
        if t <= p.t_end {
            p.schedule.pulses.push(Pulse {
                time: t,
                species: request.species,
                action,
                event,
            });
        }
    }
    p.schedule.pulses.sort_by(|a, b| a.time.total_cmp(&b.time));
    p
}

/// Margin of a finished run against the goal.
pub fn margin(problem: &Problem, goal: &Goal, first_release: f64, traj: &Trajectory) -> f64 {
    if !traj.stop.is_finished() {
        return f64::NEG_INFINITY;
    }
    let in_window = |lo: f64, hi: f64| {
        traj.times
            .iter()
            .zip(&traj.states)
            .filter(move |(t, _)| **t >= lo - 1e-9 && **t <= hi + 1e-9)
            .map(|(_, s)| *s)
    };
    match *goal {
        Goal::PestBelowThreshold { by, until } => {
            let pest = problem.thresholds.pest;
            let et = problem
                .thresholds
                .economic_threshold
                .unwrap_or(f64::INFINITY);
            let mut worst = in_window(by, until)
                .map(|s| s[pest])
                .fold(f64::NEG_INFINITY, f64::max);
            // Densities just before pulses and located crossings count too.
            for p in traj
                .pulses
                .iter()
                .filter(|p| p.species == pest && p.time > by && p.time <= until)
            {
                worst = worst.max(p.before);
            }
            if traj.crossings.iter().any(|c| {
                c.species == pest && c.level == et && c.rising && c.time >= by && c.time <= until
            }) {
                worst = worst.max(et);
            }
            et - worst
        }
        Goal::Persist {
            species,
            level,
            until,
            floor,
        } => {
            let low = in_window(first_release, until)
                .map(|s| s[species])
                .fold(f64::INFINITY, f64::min);
            let mut m = low - level;
            if let Some((other, f)) = floor {
                let other_low = in_window(0.0, until)
                    .map(|s| s[other])
                    .fold(f64::INFINITY, f64::min);
                m = m.min(other_low - f);
            }
            m
        }
    }
}

/// Run the scenario with a release and measure the goal's margin.
pub fn evaluate(
    problem: &Problem,
    request: &PlanRequest,
    time: f64,
    count: u32,
    size: f64,
) -> Evaluation {
    let p = with_releases(problem, request, time, count, size);
    let traj = solve(&p);
    let m = margin(&p, &request.goal, time, &traj);
    let met = match request.goal {
        Goal::PestBelowThreshold { .. } => m > 0.0,
        Goal::Persist { .. } => m >= 0.0,
    };
    Evaluation {
        size,
        margin: m,
        met,
    }
}

/// Sizes of the response curve: zero, then geometric from max/1000 to max.
fn curve_sizes(max: f64, points: usize) -> Vec<f64> {
    let points = points.clamp(4, 400);
    let lo = max / 1000.0;
    std::iter::once(0.0)
        .chain((0..points).map(|i| lo * (max / lo).powf(i as f64 / (points - 1) as f64)))
        .collect()
}

/// Search every (time, count) of the request and report the smallest
/// release meeting the goal for each, and the best overall.
pub fn plan(problem: &Problem, request: &PlanRequest) -> Result<Plan, PlanError> {
    plan_with_progress(problem, request, &mut |_, _, _| true)
}

/// [`plan`], calling `progress(done, total, row)` after each row; when it
/// returns false the search stops and the rows so far are returned, marked
/// partial.
pub fn plan_with_progress(
    problem: &Problem,
    request: &PlanRequest,
    progress: &mut dyn FnMut(usize, usize, &PlanRow) -> bool,
) -> Result<Plan, PlanError> {
    request.check(problem)?;
    let sizes = curve_sizes(request.max_size, request.curve_points);
    let total = request.times.len() * request.counts.len();
    let mut rows = Vec::new();
    let mut partial = false;
    'search: for &time in &request.times {
        for &count in &request.counts {
            let row = plan_row(problem, request, &sizes, time, count);
            rows.push(row);
            if let Some(row) = rows.last() {
                if !progress(rows.len(), total, row) && rows.len() < total {
                    partial = true;
                    break 'search;
                }
            }
        }
    }
    let best = rows
        .iter()
        .enumerate()
        .filter_map(|(i, r)| r.total.map(|t| (i, t)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(i, _)| i);
    Ok(Plan {
        rows,
        partial,
        best,
        unit: request.unit,
    })
}

/// The response curve and smallest release for one first release time and
/// number of releases.
fn plan_row(
    problem: &Problem,
    request: &PlanRequest,
    sizes: &[f64],
    time: f64,
    count: u32,
) -> PlanRow {
    let curve: Vec<Evaluation> = sizes
        .iter()
        .map(|&s| evaluate(problem, request, time, count, s))
        .collect();
    let first = curve.iter().position(|e| e.met);
    let smallest = first.map(|j| {
        if j <= 1 {
            return curve[j].size;
        }
        // Bisection between the last failing and first meeting size.
        let (mut lo, mut hi) = (curve[j - 1].size, curve[j].size);
        for _ in 0..50 {
            if hi - lo <= 1e-6 * hi {
                break;
            }
            let mid = 0.5 * (lo + hi);
            if evaluate(problem, request, time, count, mid).met {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        hi
    });
    let non_monotone = first.is_some_and(|j| curve[j..].iter().any(|e| !e.met));
    let at_lower_bound = first == Some(1);
    PlanRow {
        time,
        count,
        every: request.every,
        smallest,
        total: smallest.map(|s| s * f64::from(count)),
        non_monotone,
        at_lower_bound,
        curve,
    }
}
