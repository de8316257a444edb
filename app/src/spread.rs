//! Stochastic runs spread over several helper workers, so the page uses
//! every core as the command line does: an ensemble, or the founder rows of
//! a reintroduction comparison.
//!
//! The worker that received the job hands out ranges of runs to helpers as
//! they become free (a helper does a range with [`run_part`]), gathers what
//! they send back (an ensemble's runs, a founder row's tally), and sends
//! the page the updates a single worker would: progress, paced partial
//! results, the finished result. A run depends only on the seed and its
//! index, and the summaries do not depend on the order runs are added in,
//! so the result is the single worker's, bit for bit.
//!
//! The runs of a founders comparison are numbered row after row; a range
//! never crosses a row. Ranges start at one run and double while a range
//! takes under [`PARTIAL_INTERVAL_MS`] (so slow runs still report early),
//! and never exceed half of the remaining runs' fair share, so the last
//! ranges are short and no helper is left working alone at the end (guided
//! self-scheduling: Polychronopoulos & Kuck 1987, "Guided self-scheduling: a
//! practical scheduling scheme for parallel supercomputers").
//!
//! Plain Rust, tested natively; `worker.rs` owns the helpers.

use std::ops::Range;

use serde::{Deserialize, Serialize};
use tussock_core::stochastic::{
    Ensemble, EnsembleAccumulator, EnsembleRuns, EstablishmentPlan, EstablishmentTally,
};

use crate::jobs::{Job, Outcome, Task, Update, PARTIAL_INTERVAL_MS};

/// What a helper sends. `Ready` and `Failed` have the shape of the
/// [`Update`]s of the same name (a helper is the same worker script, which
/// says it is ready, and reports a panic, as an `Update`); reading only
/// these spares the worker the code to read every other result.
#[derive(Debug, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum HelperAnswer {
    Ready,
    /// Runs of an ensemble.
    Runs {
        runs: Box<EnsembleRuns>,
    },
    /// Runs of one founder row.
    Tally {
        tally: Box<EstablishmentTally>,
    },
    Failed {
        message: String,
    },
    #[serde(other)]
    Other,
}

/// What the helpers' runs are gathered into.
enum Gathered {
    Ensemble(Box<EnsembleAccumulator>),
    Founders {
        plan: Box<EstablishmentPlan>,
        tallies: Vec<EstablishmentTally>,
    },
}

impl Gathered {
    /// Prepare `job` (None when it is not stochastic runs or not valid),
    /// with its runs per row.
    fn new(job: &Job) -> Option<(Gathered, u64)> {
        let problem = job.scenario.validate().ok()?;
        match &job.task {
            Task::Ensemble { options } => {
                let ensemble = Ensemble::new(&problem, options).ok()?;
                Some((
                    Gathered::Ensemble(Box::new(ensemble.accumulator())),
                    options.runs,
                ))
            }
            Task::Founders { request } => {
                let plan = EstablishmentPlan::new(&problem, request).ok()?;
                let tallies = (0..plan.rows()).map(|row| plan.tally(row)).collect();
                let plan = Box::new(plan);
                Some((Gathered::Founders { plan, tallies }, request.runs))
            }
            _ => None,
        }
    }

    fn rows(&self) -> u64 {
        match self {
            Gathered::Ensemble(_) => 1,
            Gathered::Founders { tallies, .. } => tallies.len() as u64,
        }
    }

    /// Add a helper's answer for runs `runs`.
    fn add(&mut self, answer: HelperAnswer, runs: &Range<u64>, per_row: u64) -> Result<(), String> {
        match (self, answer) {
            (Gathered::Ensemble(acc), HelperAnswer::Runs { runs }) => acc.add_runs(*runs),
            (Gathered::Founders { tallies, .. }, HelperAnswer::Tally { tally }) => {
                let row = (runs.start / per_row) as usize;
                match tallies.get_mut(row) {
                    Some(mine) => mine.merge(*tally),
                    None => Err(format!("there is no row {row}")),
                }
            }
            _ => Err("an answer of another kind of job".into()),
        }
    }

    fn outcome(&self, finished: bool) -> Outcome {
        match self {
            Gathered::Ensemble(acc) => Outcome::Ensemble(acc.summary()),
            Gathered::Founders { plan, tallies } => {
                // While running, the rows with runs so far.
                let started: Vec<EstablishmentTally> = tallies
                    .iter()
                    .filter(|t| finished || t.simulated() > 0)
                    .cloned()
                    .collect();
                Outcome::Founders(plan.table(&started))
            }
        }
    }
}

/// A helper's work: runs `runs` of `job` (numbered row after row for a
/// founders comparison, within one row).
pub fn run_part(job: &Job, runs: Range<u64>) -> HelperAnswer {
    let problem = match job.scenario.validate() {
        Ok(problem) => problem,
        Err(e) => {
            return HelperAnswer::Failed {
                message: format!("the scenario is not valid: {e}"),
            }
        }
    };
    let answer = match &job.task {
        Task::Ensemble { options } => Ensemble::new(&problem, options).map(|ensemble| {
            let mut acc = ensemble.accumulator();
            ensemble.run_batch(&mut acc, runs, &mut |_, _| true);
            HelperAnswer::Runs {
                runs: Box::new(acc.take_runs()),
            }
        }),
        Task::Founders { request } => EstablishmentPlan::new(&problem, request).map(|plan| {
            let per_row = request.runs.max(1);
            let row = runs.start / per_row;
            let first = row * per_row;
            let mut tally = plan.tally(row as usize);
            plan.run_chunk(
                &mut tally,
                runs.start - first..runs.end.clamp(runs.start, first + per_row) - first,
                &mut |_, _| true,
            );
            HelperAnswer::Tally {
                tally: Box::new(tally),
            }
        }),
        _ => {
            return HelperAnswer::Failed {
                message: "a helper was sent a job that is not stochastic runs".into(),
            }
        }
    };
    answer.unwrap_or_else(|e| HelperAnswer::Failed {
        message: e.to_string(),
    })
}

/// Stochastic runs being computed by helpers.
pub struct Spread {
    id: u64,
    gathered: Gathered,
    /// Runs per row (an ensemble is one row).
    per_row: u64,
    /// Runs in all rows.
    total: u64,
    helpers: u64,
    /// The first run not yet handed out.
    next_run: u64,
    /// Runs whose results have come back.
    done: u64,
    /// The longest range handed out next.
    range_limit: u64,
    /// Per helper, the range it is doing and when it was handed out.
    out: Vec<Option<(Range<u64>, f64)>>,
    last_partial: f64,
    over: bool,
}

impl Spread {
    /// Plan `job` over `helpers` helpers; None when it is not stochastic
    /// runs or does not validate (run in place, it reports its own error).
    pub fn new(job: &Job, helpers: usize) -> Option<Spread> {
        let (gathered, per_row) = Gathered::new(job)?;
        let total = per_row.checked_mul(gathered.rows())?;
        (total > 0).then(|| Spread {
            id: job.id,
            gathered,
            per_row,
            total,
            helpers: helpers.max(1) as u64,
            next_run: 0,
            done: 0,
            range_limit: 1,
            out: vec![None; helpers.max(1)],
            last_partial: f64::NEG_INFINITY,
            over: false,
        })
    }

    /// The next range of runs for `helper`, now idle; None when every run
    /// has been handed out (or the job is over).
    pub fn next_piece(&mut self, helper: usize, now: f64) -> Option<Range<u64>> {
        let remaining = self.total - self.next_run;
        if self.over || remaining == 0 || helper >= self.out.len() {
            return None;
        }
        let fair_share = remaining.div_ceil(2 * self.helpers);
        let row_end = (self.next_run / self.per_row + 1) * self.per_row;
        let len = self
            .range_limit
            .min(fair_share)
            .min(row_end - self.next_run)
            .max(1);
        let runs = self.next_run..self.next_run + len;
        self.next_run = runs.end;
        self.out[helper] = Some((runs.clone(), now));
        Some(runs)
    }

    /// What `helper` sent; returns the updates for the page.
    pub fn receive(&mut self, helper: usize, answer: HelperAnswer, now: f64) -> Vec<Update> {
        if self.over {
            return Vec::new();
        }
        let id = self.id;
        match answer {
            HelperAnswer::Failed { message } => self.fail(message),
            HelperAnswer::Ready | HelperAnswer::Other => Vec::new(),
            answer => {
                let Some((runs, sent)) = self.out.get_mut(helper).and_then(Option::take) else {
                    return self.fail("a helper sent runs it was not asked for".into());
                };
                if now - sent < PARTIAL_INTERVAL_MS {
                    self.range_limit = self.range_limit.saturating_mul(2);
                }
                if let Err(reason) = self.gathered.add(answer, &runs, self.per_row) {
                    return self.fail(format!(
                        "a helper worker sent runs that do not fit: {reason}"
                    ));
                }
                self.done += runs.end - runs.start;
                let (done, total) = (self.done, self.total);
                let mut updates = vec![Update::Progress { id, done, total }];
                if done >= total {
                    self.over = true;
                    updates.push(Update::Done {
                        id,
                        outcome: self.gathered.outcome(true),
                    });
                } else if now - self.last_partial >= PARTIAL_INTERVAL_MS {
                    self.last_partial = now;
                    updates.push(Update::Partial {
                        id,
                        outcome: self.gathered.outcome(false),
                    });
                }
                updates
            }
        }
    }

    /// A helper could not go on: the job fails with `message`.
    pub fn fail(&mut self, message: String) -> Vec<Update> {
        if self.over {
            return Vec::new();
        }
        self.over = true;
        vec![Update::Failed {
            id: self.id,
            message,
        }]
    }

    /// Finished or failed: the helpers can go.
    pub fn is_over(&self) -> bool {
        self.over
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::jobs::{decode, encode, run_to_end};
    use tussock_core::stochastic::{EnsembleOptions, EstablishmentRequest};
    use tussock_core::Scenario;

    /// The founders comparison of the reserve example: 12, 20 and 40
    /// founders in one or two releases, `runs` runs a row.
    fn founders_job(runs: u64) -> Job {
        Job {
            task: Task::Founders {
                request: EstablishmentRequest {
                    species: 1,
                    founders: vec![12, 20, 40],
                    releases: vec![1, 2],
                    runs,
                    seed: 3,
                    ..EstablishmentRequest::default()
                },
            },
            ..job(1)
        }
    }

    fn job(runs: u64) -> Job {
        let text = std::fs::read_to_string(format!(
            "{}/../examples/reserve-reintroduction.json",
            env!("CARGO_MANIFEST_DIR")
        ))
        .unwrap();
        Job {
            id: 7,
            scenario: Scenario::from_json(&text).unwrap(),
            task: Task::Ensemble {
                options: EnsembleOptions {
                    runs,
                    seed: 11,
                    keep_runs: 5,
                    ..EnsembleOptions::default()
                },
            },
        }
    }

    /// What a helper answers, through CBOR both ways as in the browser.
    fn helper(job: &Job, runs: Range<u64>) -> HelperAnswer {
        let job: Job = decode(&encode(job)).unwrap();
        decode(&encode(&run_part(&job, runs))).unwrap()
    }

    /// Drive a spread job, helpers answering in the order `pick` chooses
    /// among the pieces out; the clock advances `step` ms per answer.
    fn drive(job: &Job, helpers: usize, step: f64, pick: fn(usize) -> usize) -> Vec<Update> {
        let mut spread = Spread::new(job, helpers).unwrap();
        let mut now = 0.0;
        let per_row = spread.per_row;
        let mut out: Vec<(usize, Range<u64>)> = (0..helpers)
            .filter_map(|h| spread.next_piece(h, now).map(|p| (h, p)))
            .collect();
        let mut updates = Vec::new();
        while !out.is_empty() {
            let (h, piece) = out.remove(pick(out.len()));
            assert_eq!(
                piece.start / per_row,
                (piece.end - 1) / per_row,
                "{piece:?}"
            );
            now += step;
            updates.extend(spread.receive(h, helper(job, piece), now));
            if let Some(next) = spread.next_piece(h, now) {
                out.push((h, next));
            }
        }
        assert!(spread.is_over());
        updates
    }

    #[test]
    fn helpers_in_any_order_give_the_single_workers_summary_exactly() {
        let job = job(150);
        let alone = run_to_end(&job).unwrap();
        for (helpers, pick) in [
            (1, (|_| 0) as fn(usize) -> usize),
            (3, |n| n - 1),
            (4, |n| n / 2),
        ] {
            let updates = drive(&job, helpers, 30.0, pick);
            let Some(Update::Done { id, outcome }) = updates.last() else {
                panic!("no result: {:?}", updates.last());
            };
            assert_eq!(*id, 7);
            assert!(
                *outcome == alone,
                "{helpers} helpers differ from one worker"
            );
            // Progress only grows, partial summaries are paced and partial.
            let done: Vec<u64> = updates
                .iter()
                .filter_map(|u| match u {
                    Update::Progress { done, .. } => Some(*done),
                    _ => None,
                })
                .collect();
            assert!(done.windows(2).all(|w| w[0] < w[1]) && done.last() == Some(&150));
            let partials = updates
                .iter()
                .filter(|u| matches!(u, Update::Partial { outcome, .. } if outcome.is_partial()))
                .count();
            assert!(
                partials >= 1 && partials <= done.len() / 8 + 1,
                "{partials}"
            );
        }
    }

    #[test]
    fn founder_rows_spread_over_helpers_give_the_single_workers_table() {
        let job = founders_job(50);
        let alone = run_to_end(&job).unwrap();
        let Outcome::Founders(table) = &alone else {
            panic!("not a founders table");
        };
        assert_eq!((table.rows.len(), table.partial), (6, false));
        for (helpers, pick) in [(2, (|n| n - 1) as fn(usize) -> usize), (5, |_| 0)] {
            let updates = drive(&job, helpers, 40.0, pick);
            let Some(Update::Done { outcome, .. }) = updates.last() else {
                panic!("no result");
            };
            assert!(
                *outcome == alone,
                "{helpers} helpers differ from one worker"
            );
            // Partial tables list the rows begun so far, marked partial.
            let partial = updates.iter().find_map(|u| match u {
                Update::Partial {
                    outcome: Outcome::Founders(t),
                    ..
                } => Some(t),
                _ => None,
            });
            let partial = partial.expect("a partial table");
            assert!(partial.partial && !partial.rows.is_empty());
        }
    }

    #[test]
    fn ranges_grow_while_quick_then_shrink_to_share_the_end() {
        let job = job(1000);
        let mut spread = Spread::new(&job, 2).unwrap();
        let mut lengths = Vec::new();
        let mut now = 0.0;
        while let Some(runs) = spread.next_piece(0, now) {
            assert_eq!(runs.start, lengths.iter().sum::<u64>());
            lengths.push(runs.end - runs.start);
            now += 10.0;
            spread.receive(0, helper(&job, runs), now);
        }
        assert_eq!(lengths.iter().sum::<u64>(), 1000);
        assert_eq!(lengths[..4], [1, 2, 4, 8]);
        let longest = *lengths.iter().max().unwrap();
        assert!(longest <= 250, "{lengths:?}");
        assert_eq!(lengths[lengths.len() - 1], 1);
    }

    #[test]
    fn a_failing_or_garbled_helper_fails_the_job_once() {
        let job = job(40);
        let mut spread = Spread::new(&job, 2).unwrap();
        let piece = spread.next_piece(0, 0.0).unwrap();
        let failed = Update::Failed {
            id: 7,
            message: "out of memory".into(),
        };
        let got = spread.receive(0, decode(&encode(&failed)).unwrap(), 1.0);
        assert_eq!(
            got,
            [Update::Failed {
                id: 7,
                message: "out of memory".into()
            }]
        );
        assert!(spread.is_over() && spread.next_piece(1, 2.0).is_none());
        assert!(spread.receive(1, helper(&job, piece), 3.0).is_empty());

        // Runs of another ensemble (another scenario) do not fit.
        let mut spread = Spread::new(&job, 2).unwrap();
        let mut other = job.clone();
        other.scenario = Scenario::from_json(
            &std::fs::read_to_string(format!(
                "{}/../examples/greenhouse-mites.json",
                env!("CARGO_MANIFEST_DIR")
            ))
            .unwrap(),
        )
        .unwrap();
        let mut foreign = Spread::new(&other, 1).unwrap();
        let answer = helper(&other, foreign.next_piece(0, 0.0).unwrap());
        spread.next_piece(0, 0.0);
        let got = spread.receive(0, answer, 1.0);
        let [Update::Failed { id: 7, message }] = &got[..] else {
            panic!("{} updates, not one failure", got.len());
        };
        assert!(message.contains("another ensemble"), "{message}");

        // Runs nobody asked for, and an ensemble's runs for founder rows.
        let mut spread = Spread::new(&job, 2).unwrap();
        let got = spread.receive(1, helper(&job, 0..1), 1.0);
        assert!(
            matches!(&got[..], [Update::Failed { message, .. }] if message.contains("not asked"))
        );
        let founders = founders_job(10);
        let mut spread = Spread::new(&founders, 2).unwrap();
        spread.next_piece(0, 0.0);
        let got = spread.receive(0, helper(&job, 0..1), 1.0);
        assert!(
            matches!(&got[..], [Update::Failed { message, .. }] if message.contains("another kind"))
        );
    }

    #[test]
    fn other_messages_from_a_helper_are_ignored() {
        let mut spread = Spread::new(&job(10), 2).unwrap();
        let progress = Update::Progress {
            id: 7,
            done: 1,
            total: 10,
        };
        let answer: HelperAnswer = decode(&encode(&progress)).unwrap();
        assert!(matches!(answer, HelperAnswer::Other));
        let ready: HelperAnswer = decode(&encode(&Update::Ready)).unwrap();
        assert!(matches!(ready, HelperAnswer::Ready));
        assert!(spread.receive(0, answer, 1.0).is_empty() && !spread.is_over());
        let mut bad = job(10);
        bad.scenario.t_end = -1.0;
        let HelperAnswer::Failed { message } = run_part(&bad, 0..2) else {
            panic!("a bad scenario was run");
        };
        assert!(message.contains("t_end"), "{message}");
    }

    #[test]
    fn only_valid_ensembles_are_spread() {
        let mut bad = job(10);
        bad.scenario.t_end = -1.0;
        assert!(Spread::new(&bad, 2).is_none());
        let mut none = job(10);
        none.task = Task::Ensemble {
            options: EnsembleOptions {
                runs: 0,
                ..EnsembleOptions::default()
            },
        };
        assert!(Spread::new(&none, 2).is_none());
    }
}
