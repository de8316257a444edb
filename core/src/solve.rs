//! Integration of a [`Problem`] with adaptive Runge–Kutta (Dormand–Prince
//! 5(4), "RK45", from `ode_solvers`).
//!
//! Populations never go negative: the right-hand side is evaluated at the
//! state clamped to zero, a species at zero is not driven below it (a
//! harvested species that reaches zero stays there unless immigration or
//! stocking brings it back), and reported states are clamped too. A run that
//! blows up, produces a non-finite number or cannot make progress stops and
//! says so in [`Trajectory::stop`]; the times computed until then are kept.

use std::cell::Cell;

use ode_solvers::dop_shared::IntegrationError;
use ode_solvers::{Dopri5, OutputType, System};
use serde::Serialize;

use crate::model::{ModelSpec, Params, State};
use crate::scenario::Problem;

/// Integrator settings. Defaults suit planning runs of the demo scenarios.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SolverOptions {
    pub rtol: f64,
    pub atol: f64,
    /// Most accepted-or-rejected steps before the run stops.
    pub max_steps: u32,
    /// A density above this is treated as a blow-up.
    pub blow_up: f64,
}

impl Default for SolverOptions {
    fn default() -> Self {
        SolverOptions {
            rtol: 1e-6,
            atol: 1e-9,
            max_steps: 1_000_000,
            blow_up: 1e15,
        }
    }
}

/// Why a run stopped.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum StopReason {
    /// Reached the end of the horizon.
    Finished,
    /// A density passed [`SolverOptions::blow_up`].
    BlewUp { t: f64, species: usize },
    /// A density became NaN or infinite.
    NonFinite { t: f64 },
    /// The step size fell below what floating point can resolve.
    StepSizeTooSmall { t: f64 },
    /// More than [`SolverOptions::max_steps`] steps were needed.
    TooManySteps { t: f64 },
    /// The integrator detected stiffness and gave up.
    Stiff { t: f64 },
}

impl StopReason {
    pub fn is_finished(&self) -> bool {
        matches!(self, StopReason::Finished)
    }

    /// A sentence a user can act on.
    pub fn describe(&self, species: &[String], time_unit: &str) -> String {
        match *self {
            StopReason::Finished => "finished".to_string(),
            StopReason::BlewUp { t, species: i } => format!(
                "stopped at t = {t:.4} {time_unit}: {} grew without bound; check growth rates and carrying capacity",
                species.get(i).map(String::as_str).unwrap_or("a species")
            ),
            StopReason::NonFinite { t } => format!(
                "stopped at t = {t:.4} {time_unit}: a density became infinite or undefined; check the parameters"
            ),
            StopReason::StepSizeTooSmall { t } => format!(
                "stopped at t = {t:.4} {time_unit}: the step size became too small; loosen rtol/atol or check the parameters"
            ),
            StopReason::TooManySteps { t } => format!(
                "stopped at t = {t:.4} {time_unit}: too many steps; shorten the horizon or loosen rtol"
            ),
            StopReason::Stiff { t } => format!(
                "stopped at t = {t:.4} {time_unit}: the system became stiff (very different time scales)"
            ),
        }
    }
}

/// Work done by the integrator. Step counts are known only for a run that
/// finished; after a failure they are zero and only evaluations are counted.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize)]
pub struct StepStats {
    pub rhs_evaluations: u32,
    pub accepted_steps: u32,
    pub rejected_steps: u32,
}

/// Result of a run: output times, states at those times and why it stopped.
#[derive(Clone, Debug, PartialEq)]
pub struct Trajectory {
    pub times: Vec<f64>,
    /// One entry per time; only the first `n_species` components are used.
    pub states: Vec<State>,
    pub n_species: usize,
    pub stop: StopReason,
    pub stats: StepStats,
}

impl Trajectory {
    /// Density of species `i` at every output time.
    pub fn series(&self, i: usize) -> impl Iterator<Item = f64> + '_ {
        self.states.iter().map(move |s| s[i])
    }
}

struct Rhs<'a> {
    model: &'a ModelSpec,
    params: &'a Params,
    blow_up: f64,
    /// Two species and no harvest: the fast path applies to positive states.
    plain: bool,
    failure: Cell<Option<StopReason>>,
    evaluations: Cell<u32>,
}

// Implemented for a reference so the caller can read `failure` and
// `evaluations` after the integrator (which owns its system) is done.
impl System<f64, State> for &Rhs<'_> {
    fn system(&self, _t: f64, x: &State, dx: &mut State) {
        self.evaluations
            .set(self.evaluations.get().saturating_add(1));
        if self.plain && x[0] > 0.0 && x[1] > 0.0 {
            // The common case: nothing to clamp, no harvest.
            *dx = (self.model.rhs)(self.params, x);
            return;
        }
        let clamped = x.map(|v| v.max(0.0));
        *dx = self.model.derivative(self.params, &clamped);
        // A species at zero cannot be harvested further: zero is absorbing
        // unless something (immigration, stocking) adds individuals.
        for i in 0..self.model.n_species() {
            if clamped[i] == 0.0 && dx[i] < 0.0 {
                dx[i] = 0.0;
            }
        }
    }

    fn solout(&mut self, t: f64, x: &State, _dx: &State) -> bool {
        if self.failure.get().is_some() {
            return true;
        }
        for i in 0..self.model.n_species() {
            if !x[i].is_finite() {
                self.failure.set(Some(StopReason::NonFinite { t }));
                return true;
            }
            if x[i] > self.blow_up {
                self.failure.set(Some(StopReason::BlewUp { t, species: i }));
                return true;
            }
        }
        false
    }
}

/// Integrate a problem from t = 0 to its horizon.
///
/// Output is on an even grid of spacing `output_step` (shrunk slightly when
/// the horizon is not a whole multiple of it, so the last point is `t_end`).
pub fn solve(problem: &Problem) -> Trajectory {
    solve_with(
        problem.model,
        &problem.params,
        problem.initial,
        problem.t_end,
        problem.output_step,
        &problem.solver,
    )
}

/// [`solve`] with its pieces given separately, for callers that vary one.
pub fn solve_with(
    model: &ModelSpec,
    params: &Params,
    initial: State,
    t_end: f64,
    output_step: f64,
    options: &SolverOptions,
) -> Trajectory {
    let n_intervals = (t_end / output_step - 1e-9).ceil().max(1.0);
    let dx = t_end / n_intervals;
    let n_points = n_intervals as usize + 1;
    // ode_solvers 0.6.2 extrapolates its last dense-output point from the
    // step before the end when a grid time lands within 1e-9 of `x_end`
    // (errors of 1e-5 relative seen, whatever the tolerance). Integrating
    // half an output step past the horizon keeps every grid time inside a
    // step; the points past `t_end` are dropped below.
    let x_end = t_end + 0.5 * dx;
    let rhs = Rhs {
        model,
        params,
        blow_up: options.blow_up,
        plain: model.n_species() == 2 && params.harvest == State::zeros(),
        failure: Cell::new(None),
        evaluations: Cell::new(0),
    };
    let mut stepper = Dopri5::from_param(
        &rhs,
        0.0,
        x_end,
        dx,
        initial,
        options.rtol,
        options.atol,
        0.9,  // safety factor (Hairer et al. default)
        0.04, // PI controller beta (Hairer et al. default)
        0.2,  // smallest step-size ratio
        10.0, // largest step-size ratio
        x_end,
        0.0, // initial step chosen automatically
        options.max_steps,
        // Never give up on stiffness: explicit steps stay accurate on
        // moderately stiff problems, merely smaller; max_steps bounds the
        // cost and says so if exceeded.
        u32::MAX,
        OutputType::Dense,
    );
    let outcome = stepper.integrate();
    let (raw_times, raw_states) = stepper.results().get();
    let mut times = raw_times.clone();
    let mut states: Vec<State> = raw_states.iter().map(|s| s.map(|v| v.max(0.0))).collect();
    drop(stepper);
    times.truncate(n_points);
    states.truncate(n_points);
    if times.len() == n_points {
        // Exactly the horizon, not t_end plus accumulated rounding.
        times[n_points - 1] = t_end;
    }
    // A failing state may have been written out before it was checked; keep
    // only finite output.
    while states
        .last()
        .is_some_and(|s| s.iter().any(|v| !v.is_finite()))
    {
        states.pop();
        times.pop();
    }
    let mut stats = StepStats {
        rhs_evaluations: rhs.evaluations.get(),
        ..StepStats::default()
    };
    let complete = times.len() == n_points;
    let stop = match (rhs.failure.get(), outcome) {
        (None, Ok(s)) => {
            stats.accepted_steps = s.accepted_steps;
            stats.rejected_steps = s.rejected_steps;
            StopReason::Finished
        }
        // Trouble in the half step past the horizon does not count.
        _ if complete => StopReason::Finished,
        (Some(failure), _) => failure,
        (None, Err(IntegrationError::MaxNumStepReached { x, .. })) => {
            StopReason::TooManySteps { t: x }
        }
        (None, Err(IntegrationError::StepSizeUnderflow { x })) => {
            StopReason::StepSizeTooSmall { t: x }
        }
        (None, Err(IntegrationError::StiffnessDetected { x })) => StopReason::Stiff { t: x },
    };
    Trajectory {
        times,
        states,
        n_species: model.n_species(),
        stop,
        stats,
    }
}
