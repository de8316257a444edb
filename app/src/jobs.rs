//! Long computations (release plans, sweeps, fits, stochastic ensembles)
//! as jobs for a Web Worker, so the page stays responsive while they run.
//!
//! The page sends a [`Job`] (the scenario and the [`Task`]) as CBOR (see
//! [`encode`]: unlike JSON it keeps infinities, which results may hold); the
//! worker answers with [`Update`]s: progress, partial results as they
//! stream in, and the finished [`Outcome`] or a failure. [`run`] does the
//! work and is plain Rust, tested natively; `src/bin/worker.rs` is only the
//! glue that receives and posts messages. Cancelling terminates the worker:
//! the page keeps the last partial result it received, marked partial.

use serde::{Deserialize, Serialize};
use tussock_core::data::CountData;
use tussock_core::fit::{self, FitRequest, FitResult};
use tussock_core::plan::{self, Plan, PlanRequest};
use tussock_core::stochastic::{
    Ensemble, EnsembleOptions, EnsembleSummary, EstablishmentPlan, EstablishmentRequest,
    EstablishmentTable,
};
use tussock_core::sweep::line::{LineRequest, LineSweep};
use tussock_core::sweep::map::{MapRequest, OutcomeMap};
use tussock_core::Scenario;

/// What to compute.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Task {
    /// The smallest release that meets a goal.
    Plan { request: PlanRequest },
    /// One parameter swept: equilibria, long run, bifurcations.
    Line { request: LineRequest },
    /// Two parameters swept: an outcome map.
    Map { request: MapRequest },
    /// The model fitted to counts.
    Fit {
        data: CountData,
        request: FitRequest,
    },
    /// Stochastic runs: extinction risk and fan chart.
    Ensemble { options: EnsembleOptions },
    /// Establishment probability against founder numbers.
    Founders { request: EstablishmentRequest },
}

impl Task {
    pub fn kind(&self) -> TaskKind {
        match self {
            Task::Plan { .. } => TaskKind::Plan,
            Task::Line { .. } => TaskKind::Line,
            Task::Map { .. } => TaskKind::Map,
            Task::Fit { .. } => TaskKind::Fit,
            Task::Ensemble { .. } => TaskKind::Ensemble,
            Task::Founders { .. } => TaskKind::Founders,
        }
    }
}

/// Which kind of job; each kind has its own worker, so a sweep and a fit
/// can run side by side and cancelling one leaves the other alone.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TaskKind {
    Plan,
    Line,
    Map,
    Fit,
    Ensemble,
    Founders,
}

impl TaskKind {
    pub const ALL: [TaskKind; 6] = [
        TaskKind::Plan,
        TaskKind::Line,
        TaskKind::Map,
        TaskKind::Fit,
        TaskKind::Ensemble,
        TaskKind::Founders,
    ];

    /// What the job does, for progress messages.
    pub fn label(self) -> &'static str {
        match self {
            TaskKind::Plan => "release search",
            TaskKind::Line => "one-parameter sweep",
            TaskKind::Map => "outcome map",
            TaskKind::Fit => "fit",
            TaskKind::Ensemble => "stochastic runs",
            TaskKind::Founders => "founder comparison",
        }
    }
}

/// A job as sent to the worker.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Job {
    pub id: u64,
    pub scenario: Scenario,
    pub task: Task,
}

/// A finished (or partial) result.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", content = "result", rename_all = "snake_case")]
pub enum Outcome {
    Plan(Plan),
    Line(LineSweep),
    Map(OutcomeMap),
    Fit(FitResult),
    Ensemble(EnsembleSummary),
    Founders(EstablishmentTable),
}

impl Outcome {
    pub fn is_partial(&self) -> bool {
        match self {
            Outcome::Plan(p) => p.partial,
            Outcome::Line(l) => l.partial,
            Outcome::Map(m) => m.partial,
            Outcome::Fit(f) => f.partial,
            Outcome::Ensemble(e) => e.partial,
            Outcome::Founders(t) => t.partial,
        }
    }

    /// Mark a result kept after a cancel as partial.
    pub fn mark_partial(&mut self) {
        match self {
            Outcome::Plan(p) => p.partial = true,
            Outcome::Line(l) => l.partial = true,
            Outcome::Map(m) => m.partial = true,
            Outcome::Fit(f) => f.partial = true,
            Outcome::Ensemble(e) => e.partial = true,
            Outcome::Founders(t) => t.partial = true,
        }
    }

    /// Fold a newer partial result into this one. Maps arrive as the rows
    /// done since the last update; everything else arrives whole.
    pub fn absorb(&mut self, newer: Outcome) {
        match (self, newer) {
            (Outcome::Map(mine), Outcome::Map(more)) if mine.x == more.x && mine.y == more.y => {
                mine.rows.extend(more.rows);
                mine.rows.sort_by_key(|r| r.index);
                mine.partial = more.partial || mine.partial;
            }
            (mine, newer) => *mine = newer,
        }
    }
}

/// A message from the worker.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Update {
    /// The worker has loaded and listens.
    Ready,
    Progress {
        id: u64,
        done: u64,
        total: u64,
    },
    /// Results so far (a map: only the rows since the last update).
    Partial {
        id: u64,
        outcome: Outcome,
    },
    Done {
        id: u64,
        outcome: Outcome,
    },
    Failed {
        id: u64,
        message: String,
    },
}

/// A message as bytes for `postMessage`.
pub fn encode<T: Serialize>(value: &T) -> Vec<u8> {
    let mut out = Vec::new();
    // Writing plain data into a Vec cannot fail.
    let _ = ciborium::into_writer(value, &mut out);
    out
}

/// A message from bytes; a message that does not decode says why.
pub fn decode<T: serde::de::DeserializeOwned>(bytes: &[u8]) -> Result<T, String> {
    ciborium::from_reader(bytes).map_err(|e| format!("a garbled message from the worker: {e}"))
}

/// Partial results are posted at most this often (milliseconds).
pub const PARTIAL_INTERVAL_MS: f64 = 250.0;

/// Run a job, sending updates through `send` (which returns false to stop:
/// the worker never stops itself, tests do). `now` gives milliseconds, for
/// pacing partial results.
pub fn run(job: &Job, now: &dyn Fn() -> f64, send: &mut dyn FnMut(Update) -> bool) {
    let id = job.id;
    let problem = match job.scenario.validate() {
        Ok(p) => p,
        Err(e) => {
            send(Update::Failed {
                id,
                message: format!("the scenario is not valid: {e}"),
            });
            return;
        }
    };
    let mut last_partial = f64::NEG_INFINITY;
    // Progress is cheap to post; partial results are paced.
    let mut due = |done: u64, total: u64| {
        let t = now();
        let is_due = t - last_partial >= PARTIAL_INTERVAL_MS || done >= total;
        if is_due {
            last_partial = t;
        }
        is_due
    };
    let result: Result<Outcome, String> = match &job.task {
        Task::Plan { request } => {
            plan::plan_with_progress(&problem, request, &mut |done, total, _| {
                send(Update::Progress {
                    id,
                    done: done as u64,
                    total: total as u64,
                })
            })
            .map(Outcome::Plan)
            .map_err(|e| e.to_string())
        }
        Task::Line { request } => match request.plan(&problem) {
            Err(e) => Err(e.to_string()),
            Ok(line) => {
                let total = line.len();
                let mut points = Vec::with_capacity(total);
                let mut stopped = false;
                for index in 0..total {
                    points.push(line.point(index));
                    let (done, all) = (index as u64 + 1, total as u64);
                    let mut go = send(Update::Progress {
                        id,
                        done,
                        total: all,
                    });
                    if go && due(done, all) && done < all {
                        let mut partial = line.finish(points.clone(), true);
                        partial.bifurcations.clear();
                        go = send(Update::Partial {
                            id,
                            outcome: Outcome::Line(partial),
                        });
                    }
                    if !go {
                        stopped = index + 1 < total;
                        break;
                    }
                }
                Ok(Outcome::Line(line.finish(points, stopped)))
            }
        },
        Task::Map { request } => match request.plan(&problem) {
            Err(e) => Err(e.to_string()),
            Ok(map) => {
                let rows = map.rows();
                let per_row = map.row_len() as u64;
                let total = rows.len() as u64 * per_row;
                let mut done_rows = Vec::with_capacity(rows.len());
                let mut unsent = 0;
                let mut stopped = false;
                for (k, &r) in rows.iter().enumerate() {
                    done_rows.push(map.row(r));
                    let done = (k as u64 + 1) * per_row;
                    let mut go = send(Update::Progress { id, done, total });
                    if go && due(done, total) && done < total {
                        // Only the rows since the last update travel.
                        let mut piece = map.finish(done_rows[unsent..].to_vec(), true);
                        if unsent > 0 {
                            piece.boundaries.clear();
                        }
                        unsent = done_rows.len();
                        go = send(Update::Partial {
                            id,
                            outcome: Outcome::Map(piece),
                        });
                    }
                    if !go {
                        stopped = k + 1 < rows.len();
                        break;
                    }
                }
                Ok(Outcome::Map(map.finish(done_rows, stopped)))
            }
        },
        Task::Fit { data, request } => match request.validate(&problem, data) {
            Err(e) => Err(e.to_string()),
            Ok(fit_problem) => Ok(Outcome::Fit(fit::fit(&fit_problem, &mut |done, total| {
                send(Update::Progress {
                    id,
                    done: done as u64,
                    total: total as u64,
                })
            }))),
        },
        Task::Ensemble { options } => {
            match Ensemble::new(&problem, options) {
                Err(e) => Err(e.to_string()),
                Ok(ensemble) => {
                    let mut acc = ensemble.accumulator();
                    let total = options.runs;
                    // Batches of runs, a partial summary between them. The
                    // first batch is one run and batches double while they
                    // take under a tenth of a second, so slow runs still
                    // report early; the runs do not depend on the batching.
                    let mut batch = 1;
                    let mut start = 0;
                    while start < total {
                        let end = (start + batch).min(total);
                        let mut stop = false;
                        let began = now();
                        ensemble.run_batch(&mut acc, start..end, &mut |_, _| true);
                        if now() - began < 100.0 {
                            batch = (batch * 2).min((total / 50).clamp(1, 200));
                        }
                        let go = send(Update::Progress {
                            id,
                            done: end,
                            total,
                        });
                        if !go {
                            stop = true;
                        } else if due(end, total) && end < total {
                            stop = !send(Update::Partial {
                                id,
                                outcome: Outcome::Ensemble(acc.summary()),
                            });
                        }
                        start = end;
                        if stop {
                            break;
                        }
                    }
                    Ok(Outcome::Ensemble(acc.summary()))
                }
            }
        }
        Task::Founders { request } => match EstablishmentPlan::new(&problem, request) {
            Err(e) => Err(e.to_string()),
            Ok(founders) => {
                let rows = founders.rows();
                let total = rows as u64 * request.runs;
                let mut tallies = Vec::with_capacity(rows);
                let mut stopped = false;
                'rows: for row in 0..rows {
                    let mut tally = founders.tally(row);
                    let base = row as u64 * request.runs;
                    let batch = (request.runs / 10).max(1);
                    let mut start = 0;
                    while start < request.runs {
                        let end = (start + batch).min(request.runs);
                        founders.run_chunk(&mut tally, start..end, &mut |_, _| true);
                        start = end;
                        if !send(Update::Progress {
                            id,
                            done: base + end,
                            total,
                        }) {
                            tallies.push(tally);
                            stopped = true;
                            break 'rows;
                        }
                    }
                    tallies.push(tally);
                    if row + 1 < rows
                        && !send(Update::Partial {
                            id,
                            outcome: Outcome::Founders(founders.table(&tallies)),
                        })
                    {
                        stopped = true;
                        break;
                    }
                }
                let mut table = founders.table(&tallies);
                table.partial |= stopped;
                Ok(Outcome::Founders(table))
            }
        },
    };
    match result {
        Ok(outcome) => send(Update::Done { id, outcome }),
        Err(message) => send(Update::Failed { id, message }),
    };
}

/// Run a job to the end and return its outcome (for tests and benchmarks).
pub fn run_to_end(job: &Job) -> Result<Outcome, String> {
    let mut last = Err("the job sent nothing".to_string());
    run(job, &|| 0.0, &mut |u| {
        match u {
            Update::Done { outcome, .. } => last = Ok(outcome),
            Update::Failed { message, .. } => last = Err(message),
            _ => {}
        }
        true
    });
    last
}

#[cfg(test)]
mod tests {
    use super::*;
    use tussock_core::plan::{Goal, SizeUnit};
    use tussock_core::sweep::{AxisSpec, Spacing, SweepOptions};

    fn scenario(name: &str) -> Scenario {
        let text = std::fs::read_to_string(format!(
            "{}/../examples/{name}.json",
            env!("CARGO_MANIFEST_DIR")
        ))
        .unwrap();
        Scenario::from_json(&text).unwrap()
    }

    fn plan_task() -> Task {
        Task::Plan {
            request: PlanRequest {
                goal: Goal::PestBelowThreshold {
                    by: 28.0,
                    until: 90.0,
                },
                species: 1,
                unit: SizeUnit::RatioToOther,
                max_size: 1.0,
                times: vec![0.0, 7.0],
                counts: vec![1, 2],
                every: 7.0,
                curve_points: 8,
            },
        }
    }

    /// The job's messages in order, stopping (like a cancel) after `limit`.
    fn messages(job: &Job, limit: usize) -> Vec<Update> {
        let mut out = Vec::new();
        let clock = std::cell::Cell::new(0.0);
        run(
            job,
            &|| {
                clock.set(clock.get() + 1000.0);
                clock.get()
            },
            &mut |u| {
                out.push(u);
                out.len() < limit
            },
        );
        out
    }

    #[test]
    fn a_job_and_its_updates_survive_the_trip() {
        let job = Job {
            id: 7,
            scenario: scenario("greenhouse-plan"),
            task: plan_task(),
        };
        assert_eq!(decode::<Job>(&encode(&job)), Ok(job.clone()));
        let updates = messages(&job, usize::MAX);
        assert!(updates.len() > 2);
        for update in updates {
            assert_eq!(decode::<Update>(&encode(&update)), Ok(update));
        }
        assert!(decode::<Update>(b"not a message").is_err());
    }

    #[test]
    fn infinities_survive_the_trip() {
        // A failed run has margin −∞ on a response curve; JSON would make it null.
        let mut plan = match run_to_end(&Job {
            id: 8,
            scenario: scenario("greenhouse-plan"),
            task: plan_task(),
        }) {
            Ok(Outcome::Plan(p)) => p,
            other => panic!("{other:?}"),
        };
        plan.rows[0].curve[0].margin = f64::NEG_INFINITY;
        let update = Update::Done {
            id: 8,
            outcome: Outcome::Plan(plan),
        };
        assert_eq!(decode::<Update>(&encode(&update)), Ok(update));
    }

    #[test]
    fn the_worker_gives_the_same_plan_as_the_core() {
        let job = Job {
            id: 1,
            scenario: scenario("greenhouse-plan"),
            task: plan_task(),
        };
        let Task::Plan { request } = &job.task else {
            unreachable!()
        };
        let direct = plan::plan(&job.scenario.validate().unwrap(), request).unwrap();
        assert_eq!(run_to_end(&job), Ok(Outcome::Plan(direct)));
    }

    #[test]
    fn map_rows_stream_in_and_add_up_to_the_whole_map() {
        let axis = |param: &str, from, to| AxisSpec {
            param: param.into(),
            from,
            to,
            steps: 12,
            spacing: Spacing::Linear,
        };
        let job = Job {
            id: 2,
            scenario: scenario("microcosm-competition"),
            task: Task::Map {
                request: MapRequest {
                    x: axis("K1", 100.0, 900.0),
                    y: axis("K2", 100.0, 900.0),
                    options: SweepOptions::default(),
                    shard: None,
                },
            },
        };
        let updates = messages(&job, usize::MAX);
        let mut assembled: Option<Outcome> = None;
        let mut whole = None;
        for u in updates {
            match u {
                Update::Partial { outcome, .. } => match &mut assembled {
                    None => assembled = Some(outcome),
                    Some(a) => a.absorb(outcome),
                },
                Update::Done { outcome, .. } => whole = Some(outcome),
                _ => {}
            }
        }
        let (Some(Outcome::Map(parts)), Some(Outcome::Map(whole))) = (assembled, whole) else {
            panic!("expected partial and whole maps");
        };
        assert!(!whole.partial);
        // Every partial row is the finished map's row.
        assert!(parts.rows.len() >= 2 && parts.rows.len() < whole.rows.len());
        for row in &parts.rows {
            assert_eq!(Some(row), whole.rows.iter().find(|r| r.index == row.index));
        }
    }

    #[test]
    fn stopping_keeps_what_was_done_and_says_partial() {
        let job = Job {
            id: 3,
            scenario: scenario("reserve-reintroduction"),
            task: Task::Ensemble {
                options: EnsembleOptions {
                    runs: 200,
                    seed: 1,
                    ..EnsembleOptions::default()
                },
            },
        };
        // Stop after a few progress messages, as a cancel would.
        let updates = messages(&job, 6);
        let last_partial = updates.iter().rev().find_map(|u| match u {
            Update::Partial { outcome, .. } => Some(outcome.clone()),
            _ => None,
        });
        let Some(Outcome::Ensemble(summary)) = last_partial else {
            panic!("no partial summary in {updates:?}");
        };
        assert!(summary.partial && summary.simulated > 0 && summary.simulated < 200);
    }

    #[test]
    fn bad_requests_fail_with_a_message() {
        let mut bad = scenario("greenhouse-mites");
        bad.t_end = -1.0;
        let job = Job {
            id: 4,
            scenario: bad,
            task: plan_task(),
        };
        let err = run_to_end(&job).unwrap_err();
        assert!(err.contains("t_end"), "{err}");
        let job = Job {
            id: 5,
            scenario: scenario("greenhouse-mites"),
            task: plan_task(),
        };
        // No economic threshold in this scenario.
        let err = run_to_end(&job).unwrap_err();
        assert!(err.contains("economic threshold"), "{err}");
    }
}
