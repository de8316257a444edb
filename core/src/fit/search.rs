//! The search: coordinates, Latin-hypercube starts, Levenberg–Marquardt
//! refinement, and the orchestration of a whole fit.

use std::cell::{Cell, RefCell};

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt, TerminationReason};
use nalgebra::{DMatrix, DVector, Dyn, Owned};
use rand::rngs::ChaCha8Rng;
use rand::{RngExt, SeedableRng};

use super::objective::{residual, Objective};
use super::{
    profile, stats, FitProblem, FitResult, FitStop, FitWarning, PredictionFailure, StartOutcome,
    WarningKind,
};

/// Residual returned for a parameter set the solver cannot integrate: large
/// enough that Levenberg–Marquardt rejects the step and shrinks its region.
const FAILED_RESIDUAL: f64 = 1e10;
/// Forward-difference step in the search coordinate u (|u| is O(1)).
const JACOBIAN_STEP: f64 = 3e-5;
/// Central-difference step in u for the final polish, run at rtol ≈ 1e-11
/// (truncation error ~h² and integration noise ~rtol/h both near 1e-7).
const CENTRAL_STEP: f64 = 1e-4;

/// One coordinate of the search: the quantity on its search scale w (ln of
/// the value for log-scaled ones), kept in [lower, upper] by
/// w = lower + (upper − lower)(1 + sin u)/2.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Coordinate {
    pub lower: f64,
    pub upper: f64,
    pub log_scale: bool,
}

impl Coordinate {
    fn new(lower: f64, upper: f64, log_scale: bool) -> Coordinate {
        if log_scale {
            Coordinate {
                lower: lower.ln(),
                upper: upper.ln(),
                log_scale,
            }
        } else {
            Coordinate {
                lower,
                upper,
                log_scale,
            }
        }
    }

    pub fn natural(&self, w: f64) -> f64 {
        if self.log_scale {
            w.exp()
        } else {
            w
        }
    }

    pub fn w_of(&self, natural: f64) -> f64 {
        let w = if self.log_scale {
            natural.ln()
        } else {
            natural
        };
        w.clamp(self.lower, self.upper)
    }

    pub fn w_from_u(&self, u: f64) -> f64 {
        (self.lower + (self.upper - self.lower) * 0.5 * (1.0 + u.sin()))
            .clamp(self.lower, self.upper)
    }

    pub fn u_from_w(&self, w: f64) -> f64 {
        let x = 2.0 * (w - self.lower) / (self.upper - self.lower) - 1.0;
        x.clamp(-1.0, 1.0).asin()
    }

    pub fn range(&self) -> f64 {
        self.upper - self.lower
    }
}

/// One evaluation of the objective.
#[derive(Clone, Debug)]
pub(super) struct Evaluation {
    pub objective: f64,
    pub residuals: Vec<f64>,
    pub predictions: Vec<f64>,
}

/// What every part of a fit shares.
pub(super) struct Context<'a> {
    pub fit: &'a FitProblem,
    /// The unknowns, then the negative-binomial size for negbin.
    pub coordinates: Vec<Coordinate>,
    pub counts: Vec<f64>,
    pub evaluations: Cell<u64>,
}

impl<'a> Context<'a> {
    pub fn new(fit: &'a FitProblem) -> Context<'a> {
        let mut coordinates: Vec<Coordinate> = fit
            .unknowns
            .iter()
            .map(|u| Coordinate::new(u.lower, u.upper, u.log_scale))
            .collect();
        if fit.objective == Objective::NegativeBinomial {
            let (lo, hi) = fit.options.dispersion_bounds;
            coordinates.push(Coordinate::new(lo, hi, true));
        }
        Context {
            fit,
            coordinates,
            counts: fit.counts(),
            evaluations: Cell::new(0),
        }
    }

    pub fn n_unknowns(&self) -> usize {
        self.fit.unknowns.len()
    }

    /// Natural values of the unknowns at w.
    pub fn values(&self, w: &[f64]) -> Vec<f64> {
        self.coordinates
            .iter()
            .zip(w)
            .take(self.n_unknowns())
            .map(|(c, &w)| c.natural(w))
            .collect()
    }

    /// The negative-binomial size at w (1 for other objectives, unused).
    pub fn dispersion(&self, w: &[f64]) -> f64 {
        if self.fit.objective == Objective::NegativeBinomial {
            let i = self.n_unknowns();
            match (self.coordinates.get(i), w.get(i)) {
                (Some(c), Some(&w)) => c.natural(w),
                _ => 1.0,
            }
        } else {
            1.0
        }
    }

    pub fn predict_values(&self, values: &[f64]) -> Result<Vec<f64>, PredictionFailure> {
        self.evaluations.set(self.evaluations.get() + 1);
        self.fit.predict(values)
    }

    pub fn evaluate(&self, w: &[f64]) -> Result<Evaluation, PredictionFailure> {
        let predictions = self.predict_values(&self.values(w))?;
        let k = self.dispersion(w);
        let objective = self.fit.objective;
        let residuals: Vec<f64> = self
            .counts
            .iter()
            .zip(&predictions)
            .map(|(&y, &mu)| residual(objective, y, mu, k))
            .collect();
        let s: f64 = residuals.iter().map(|r| r * r).sum();
        if !s.is_finite() {
            return Err(PredictionFailure {
                message: "the objective is not finite".into(),
            });
        }
        Ok(Evaluation {
            objective: s,
            residuals,
            predictions,
        })
    }
}

/// The least-squares problem handed to Levenberg–Marquardt: the free
/// coordinates move (through u), the others stay at `base`.
struct Refinement<'c, 'a> {
    context: &'c Context<'a>,
    base: Vec<f64>,
    free: Vec<usize>,
    u: DVector<f64>,
    m: usize,
    /// Residuals at the last u evaluated, reused by the Jacobian.
    last: RefCell<Option<(DVector<f64>, DVector<f64>)>>,
    best: RefCell<Option<(f64, Vec<f64>)>>,
    evaluations: Cell<usize>,
    /// Central differences (twice the integrations, far more accurate).
    central: bool,
}

impl Refinement<'_, '_> {
    fn full_w(&self, u: &DVector<f64>) -> Vec<f64> {
        let mut w = self.base.clone();
        for (k, &i) in self.free.iter().enumerate() {
            w[i] = self.context.coordinates[i].w_from_u(u[k]);
        }
        w
    }

    fn residuals_at(&self, u: &DVector<f64>) -> Option<DVector<f64>> {
        self.evaluations.set(self.evaluations.get() + 1);
        let w = self.full_w(u);
        let e = self.context.evaluate(&w).ok()?;
        let mut best = self.best.borrow_mut();
        if best.as_ref().is_none_or(|(s, _)| e.objective < *s) {
            *best = Some((e.objective, w));
        }
        Some(DVector::from_vec(e.residuals))
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Refinement<'_, '_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.u.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.u.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        let r = self
            .residuals_at(&self.u)
            .unwrap_or_else(|| DVector::from_element(self.m, FAILED_RESIDUAL));
        *self.last.borrow_mut() = Some((self.u.clone(), r.clone()));
        Some(r)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let cached = self
            .last
            .borrow()
            .as_ref()
            .filter(|(u, _)| *u == self.u)
            .map(|(_, r)| r.clone());
        let r0 = match cached {
            Some(r) => r,
            None => self.residuals_at(&self.u)?,
        };
        if r0.iter().all(|&r| r == FAILED_RESIDUAL) {
            return None;
        }
        let n = self.free.len();
        let mut jac = DMatrix::zeros(self.m, n);
        for k in 0..n {
            if self.central {
                let h = CENTRAL_STEP;
                let mut plus = self.u.clone();
                plus[k] += h;
                let mut minus = self.u.clone();
                minus[k] -= h;
                if let (Some(rp), Some(rm)) = (self.residuals_at(&plus), self.residuals_at(&minus))
                {
                    jac.set_column(k, &((rp - rm) / (2.0 * h)));
                    continue;
                }
            }
            let h = JACOBIAN_STEP * self.u[k].abs().max(1.0);
            let mut moved = self.u.clone();
            moved[k] += h;
            let (r1, step) = match self.residuals_at(&moved) {
                Some(r) => (r, h),
                None => {
                    moved[k] = self.u[k] - h;
                    (self.residuals_at(&moved)?, -h)
                }
            };
            jac.set_column(k, &((r1 - &r0) / step));
        }
        Some(jac)
    }
}

/// The result of refining from one point.
#[derive(Clone, Debug)]
pub(super) struct Refined {
    pub w: Vec<f64>,
    pub objective: f64,
    pub status: String,
    pub evaluations: usize,
}

struct Run {
    refined: Refined,
    exhausted: bool,
}

/// Most Levenberg–Marquardt runs in one refinement.
const MAX_RESTARTS: usize = 6;

/// One Levenberg–Marquardt run from `w0` (objective `s0` there).
fn minimise(context: &Context, w0: &[f64], s0: f64, free: &[usize], central: bool) -> Run {
    let u0 = DVector::from_iterator(
        free.len(),
        free.iter().map(|&i| context.coordinates[i].u_from_w(w0[i])),
    );
    let problem = Refinement {
        context,
        base: w0.to_vec(),
        free: free.to_vec(),
        u: u0,
        m: context.counts.len(),
        last: RefCell::new(None),
        best: RefCell::new(Some((s0, w0.to_vec()))),
        evaluations: Cell::new(0),
        central,
    };
    let (problem, report) = LevenbergMarquardt::new()
        .with_ftol(1e-12)
        .with_xtol(1e-10)
        .with_gtol(1e-10)
        .with_patience(context.fit.options.patience)
        .minimize(problem);
    let exhausted = report.termination == TerminationReason::LostPatience;
    let status = if report.termination.was_successful() {
        "converged".to_string()
    } else if exhausted {
        "stopped: evaluation budget used up".to_string()
    } else {
        format!("stopped: {:?}", report.termination)
    };
    let evaluations = problem.evaluations.get();
    let (objective, w) = problem.best.into_inner().unwrap_or((s0, w0.to_vec()));
    Run {
        refined: Refined {
            w,
            objective,
            status,
            evaluations,
        },
        exhausted,
    }
}

/// Refine from `w0`, moving only the coordinates in `free`.
pub(super) fn refine(
    context: &Context,
    w0: &[f64],
    free: &[usize],
) -> Result<Refined, PredictionFailure> {
    refine_with(context, w0, free, false)
}

/// [`refine`], optionally with central-difference Jacobians.
pub(super) fn refine_with(
    context: &Context,
    w0: &[f64],
    free: &[usize],
    central: bool,
) -> Result<Refined, PredictionFailure> {
    let first = context.evaluate(w0)?;
    if free.is_empty() {
        return Ok(Refined {
            w: w0.to_vec(),
            objective: first.objective,
            status: "nothing free to move".into(),
            evaluations: 1,
        });
    }
    // MINPACK's trust region can shrink on a long way down and then stop on
    // its step-size test short of the minimum; restarting from where it
    // stopped (with a fresh region) finishes the job. Restart until a run
    // improves the objective by less than a relative 1e-10.
    let mut w = w0.to_vec();
    let mut objective = first.objective;
    let mut evaluations = 1;
    let mut status = String::new();
    for _ in 0..MAX_RESTARTS {
        let run = minimise(context, &w, objective, free, central);
        evaluations += run.refined.evaluations;
        status = run.refined.status;
        let gain = objective - run.refined.objective;
        w = run.refined.w;
        objective = run.refined.objective;
        // A run that used its whole budget is not restarted.
        if gain <= 1e-10 * objective.abs().max(f64::MIN_POSITIVE) || run.exhausted {
            break;
        }
    }
    Ok(Refined {
        w,
        objective,
        status,
        evaluations,
    })
}

/// Starting points on the w scale: the scenario's values, then a seeded
/// Latin hypercube of `n − 1` points over the bounds (McKay, Beckman &
/// Conover 1979): each coordinate's range cut in n − 1 equal strata, one
/// point per stratum, strata matched across coordinates by random
/// permutations. The negative-binomial size always starts at its default.
pub(super) fn starting_points(context: &Context) -> Vec<Vec<f64>> {
    let fit = context.fit;
    let n_unknowns = context.n_unknowns();
    let mut first: Vec<f64> = fit
        .unknowns
        .iter()
        .zip(&context.coordinates)
        .map(|(u, c)| {
            // Keep the start off the bounds, where the sine transformation
            // has no slope.
            let margin = 1e-6 * c.range();
            c.w_of(u.start).clamp(c.lower + margin, c.upper - margin)
        })
        .collect();
    let dispersion_w = context
        .coordinates
        .get(n_unknowns)
        .map(|c| c.w_of(fit.options.dispersion_start));
    first.extend(dispersion_w);
    let mut points = vec![first];
    let m = fit.starts.saturating_sub(1);
    if m == 0 {
        return points;
    }
    let mut rng = ChaCha8Rng::seed_from_u64(fit.seed);
    let mut columns: Vec<Vec<f64>> = Vec::with_capacity(n_unknowns);
    for c in context.coordinates.iter().take(n_unknowns) {
        let mut strata: Vec<usize> = (0..m).collect();
        // Fisher–Yates shuffle.
        for i in (1..m).rev() {
            let j = rng.random_range(0..=i);
            strata.swap(i, j);
        }
        columns.push(
            strata
                .iter()
                .map(|&s| {
                    let x = (s as f64 + rng.random::<f64>()) / m as f64;
                    c.lower + x * c.range()
                })
                .collect(),
        );
    }
    for k in 0..m {
        let mut w: Vec<f64> = columns.iter().map(|col| col[k]).collect();
        w.extend(dispersion_w);
        points.push(w);
    }
    points
}

/// The whole fit (see the module notes of `fit`).
pub(super) fn run(fit: &FitProblem, progress: &mut dyn FnMut(usize, usize) -> bool) -> FitResult {
    let context = Context::new(fit);
    let all: Vec<usize> = (0..context.coordinates.len()).collect();
    let starts = starting_points(&context);
    let n_profile_sides = if fit.profiles {
        2 * fit.unknowns.len()
    } else {
        0
    };
    let mut total = starts.len() + n_profile_sides;
    let mut done = 0;
    let mut cancelled = false;
    let mut outcomes: Vec<StartOutcome> = Vec::with_capacity(starts.len());
    let mut best: Option<(usize, Refined)> = None;
    for (i, w0) in starts.iter().enumerate() {
        let values = context.values(w0);
        match refine(&context, w0, &all) {
            Ok(r) => {
                outcomes.push(StartOutcome {
                    values,
                    objective: Some(r.objective),
                    status: r.status.clone(),
                    evaluations: r.evaluations,
                });
                if best.as_ref().is_none_or(|(_, b)| r.objective < b.objective) {
                    best = Some((i, r));
                }
            }
            Err(failure) => outcomes.push(StartOutcome {
                values,
                objective: None,
                status: format!("failed: {}", failure.message),
                evaluations: 1,
            }),
        }
        done += 1;
        if !progress(done, total) {
            cancelled = true;
            break;
        }
    }

    let mut warnings = Vec::new();
    let n_failed = outcomes.iter().filter(|o| o.objective.is_none()).count();
    if n_failed > 0 {
        let first_reason = outcomes
            .iter()
            .find(|o| o.objective.is_none())
            .map(|o| o.status.trim_start_matches("failed: ").to_string())
            .unwrap_or_default();
        warnings.push(FitWarning {
            kind: WarningKind::StartsFailed,
            parameter: None,
            message: format!(
                "{n_failed} of {} starts could not be integrated (e.g. {first_reason}); the search used the others",
                outcomes.len()
            ),
        });
    }
    for u in &fit.unknowns {
        if u.scenario_value.is_finite() && u.scenario_value != u.start {
            warnings.push(FitWarning {
                kind: WarningKind::StartOutsideBounds,
                parameter: Some(u.name.clone()),
                message: format!(
                    "{}: the scenario's value {} is outside the bounds {}:{}; the first start used {}",
                    u.name, u.scenario_value, u.lower, u.upper, u.start
                ),
            });
        }
    }

    let Some((best_start, mut optimum)) = best else {
        return stats::no_fit(&context, outcomes, warnings, cancelled);
    };
    // Polish the best with central-difference Jacobians at 100 times tighter
    // integration: in long, flat valleys forward differences stop a little
    // short of the minimum. Everything after (profiles, statistics) uses the
    // tighter integration, so objectives stay comparable.
    let mut tight_fit = fit.clone();
    tight_fit.problem.solver.rtol = (fit.problem.solver.rtol * 0.01).max(1e-13);
    tight_fit.problem.solver.atol = (fit.problem.solver.atol * 0.01).max(1e-300);
    let tight = Context::new(&tight_fit);
    tight.evaluations.set(context.evaluations.get());
    let context = tight;
    if let Ok(start) = context.evaluate(&optimum.w) {
        optimum.objective = start.objective;
    }
    if !cancelled {
        if let Ok(polished) = refine_with(&context, &optimum.w, &all, true) {
            if polished.objective <= optimum.objective {
                optimum = polished;
            }
        }
    }

    let mut profiles = Vec::new();
    if fit.profiles && !cancelled {
        let mut restarts = 0;
        loop {
            let outcome = profile::profile_all(&context, &optimum, &mut |extra| {
                done += extra;
                progress(done, total)
            });
            match outcome.better {
                Some(better) if restarts == 0 && !outcome.cancelled => {
                    // The search missed the best fit: refine from the
                    // profile's point and profile again (once).
                    restarts += 1;
                    warnings.push(FitWarning {
                        kind: WarningKind::BetterFitInProfile,
                        parameter: None,
                        message: format!(
                            "a profile found a better fit than the search (objective {:.6} instead of {:.6}); the fit was refined from it; consider more starts",
                            better.objective, optimum.objective
                        ),
                    });
                    optimum = match refine(&context, &better.w, &all) {
                        Ok(r) if r.objective <= better.objective => r,
                        _ => better,
                    };
                    total += n_profile_sides;
                }
                Some(better) => {
                    warnings.push(FitWarning {
                        kind: WarningKind::BetterFitInProfile,
                        parameter: None,
                        message: format!(
                            "the profiles found a better fit again (objective {:.6} instead of {:.6}): the optimum is poorly determined; treat the intervals with care",
                            better.objective, optimum.objective
                        ),
                    });
                    cancelled |= outcome.cancelled;
                    profiles = outcome.profiles;
                    break;
                }
                None => {
                    cancelled |= outcome.cancelled;
                    profiles = outcome.profiles;
                    break;
                }
            }
        }
    }

    let stop = if cancelled {
        FitStop::Cancelled
    } else {
        FitStop::Finished
    };
    if cancelled {
        warnings.push(FitWarning {
            kind: WarningKind::Cancelled,
            parameter: None,
            message: "stopped before the end: this is the best fit so far; missing intervals were not computed".into(),
        });
    }
    stats::assemble(
        &context,
        &optimum,
        profiles,
        outcomes,
        Some(best_start),
        warnings,
        stop,
    )
}
