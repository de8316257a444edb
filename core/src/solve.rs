//! Integration of a [`Problem`] with adaptive Runge–Kutta (Dormand–Prince
//! 5(4), "RK45", from `ode_solvers`).
//!
//! Where every species grows in proportion to itself
//! ([`crate::model::Guarantees::per_capita_growth`]: no harvest, stocking
//! or immigration in that stretch), the integrator works in logarithms,
//! d(ln x)/dt = g(x), the per-capita rate: a positive density then stays
//! positive, as in the equations, and is kept to a relative accuracy of
//! `rtol` however small it gets (the troughs of strongly enriched
//! predator–prey cycles fall below 1e-40). A species at exactly zero is
//! absent and stays zero; a present one is reported as at least
//! `f64::MIN_POSITIVE` (2.2e-308, when its density underflows), so it stays
//! present when a run continues from a reported state.
//!
//! Elsewhere it works in densities, and populations never go negative: the
//! right-hand side is evaluated at the state clamped to zero, a species at
//! zero is not driven below it (a harvested species that reaches zero stays
//! there unless immigration or stocking brings it back), and reported
//! states are clamped too. A run that blows up, produces a non-finite
//! number or cannot make progress stops and says so in [`Trajectory::stop`];
//! the times computed until then are kept.

use std::cell::Cell;

use ode_solvers::dop_shared::IntegrationError;
use ode_solvers::{Dopri5, OutputType, System};
use serde::{Deserialize, Serialize};

use crate::events::Schedule;
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
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
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
    /// At a pulse time the state after the pulse is reported.
    pub states: Vec<State>,
    pub n_species: usize,
    pub stop: StopReason,
    pub stats: StepStats,
    /// Every pulse applied, with the densities just before and after.
    pub pulses: Vec<AppliedPulse>,
    /// Crossings of the levels asked for, located to the solver tolerance.
    pub crossings: Vec<Crossing>,
}

/// A pulse as it happened.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct AppliedPulse {
    pub time: f64,
    pub species: usize,
    pub before: f64,
    pub after: f64,
    pub event: usize,
}

/// A species passing a level.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Crossing {
    pub time: f64,
    pub species: usize,
    pub level: f64,
    /// True when the density rises through the level.
    pub rising: bool,
    /// True when a pulse made the jump across it.
    pub by_pulse: bool,
}

impl Trajectory {
    /// Density of species `i` at every output time.
    pub fn series(&self, i: usize) -> impl Iterator<Item = f64> + '_ {
        self.states.iter().map(move |s| s[i])
    }
}

/// What the integrator's variables y are (see the module documentation).
#[derive(Clone, Copy, Debug, PartialEq)]
enum Coordinates {
    /// The densities themselves.
    Densities,
    /// y = ln x for the species present; an absent one keeps y = 0.
    Logs { present: [bool; 2] },
}

/// Per-capita rates are evaluated at no less than this density: below it a
/// rate equals its limit at zero to about this relative amount, and
/// products of two densities stay clear of underflow.
const RATE_FLOOR: f64 = 1e-150;

/// Per-capita growth rates (dx_i/dt)/x_i at `x` for the species present,
/// zero for those at zero (see [`RATE_FLOOR`]).
pub(crate) fn per_capita_rates(model: &ModelSpec, params: &Params, x: &State) -> State {
    let present = x.map(|v| f64::from(u8::from(v > 0.0)));
    let at = x.map(|v| v.max(RATE_FLOOR)).component_mul(&present);
    rates_at(model, params, &at, &present)
}

/// [`per_capita_rates`] at `at`, already floored, with `present` 1 for the
/// species present and 0 for the others (whose `at` is 0). Without
/// branches: the integrator calls it at every evaluation in logarithms.
#[inline]
fn rates_at(model: &ModelSpec, params: &Params, at: &State, present: &State) -> State {
    let dx = model.derivative(params, at);
    let absent = State::repeat(1.0) - present;
    dx.component_div(&(at + absent)).component_mul(present)
}

impl Coordinates {
    /// Logarithms when the model grows per capita at `params` and no
    /// density of `x0` is negative or undefined.
    fn choose(model: &ModelSpec, params: &Params, x0: &State) -> Coordinates {
        let n = model.n_species();
        let valid = x0.iter().take(n).all(|v| *v >= 0.0 && v.is_finite());
        if (model.guarantees)(params).per_capita_growth && valid {
            Coordinates::Logs {
                present: [0, 1].map(|i| i < n && x0[i] > 0.0),
            }
        } else {
            Coordinates::Densities
        }
    }

    fn variables(self, x: &State) -> State {
        let Coordinates::Logs { present } = self else {
            return *x;
        };
        let mut y = State::zeros();
        for i in 0..2 {
            if present[i] {
                y[i] = x[i].ln();
            }
        }
        y
    }

    /// The densities at `y`; NaN stays NaN, for the caller to see.
    fn density(self, y: &State) -> State {
        let Coordinates::Logs { present } = self else {
            return y.map(|v| if v <= 0.0 { 0.0 } else { v });
        };
        let mut x = State::zeros();
        for i in 0..2 {
            if present[i] {
                let v = y[i].exp();
                x[i] = if v < f64::MIN_POSITIVE {
                    f64::MIN_POSITIVE
                } else {
                    v
                };
            }
        }
        x
    }
}

struct Rhs<'a> {
    model: &'a ModelSpec,
    params: &'a Params,
    coordinates: Coordinates,
    /// In logarithms: 1 for a species present, 0 otherwise.
    present: State,
    /// [`SolverOptions::blow_up`] in the integrator's variables.
    blow_up: f64,
    failure: Cell<Option<StopReason>>,
    evaluations: Cell<u32>,
}

impl<'a> Rhs<'a> {
    fn new(
        model: &'a ModelSpec,
        params: &'a Params,
        coordinates: Coordinates,
        blow_up: f64,
    ) -> Self {
        let (present, blow_up) = match coordinates {
            Coordinates::Densities => (State::zeros(), blow_up),
            Coordinates::Logs { present } => (
                State::from_fn(|i, _| if present[i] { 1.0 } else { 0.0 }),
                blow_up.ln(),
            ),
        };
        Rhs {
            model,
            params,
            coordinates,
            present,
            blow_up,
            failure: Cell::new(None),
            evaluations: Cell::new(0),
        }
    }
}

// Implemented for a reference so the caller can read `failure` and
// `evaluations` after the integrator (which owns its system) is done.
impl System<f64, State> for &Rhs<'_> {
    fn system(&self, _t: f64, y: &State, dy: &mut State) {
        self.evaluations
            .set(self.evaluations.get().saturating_add(1));
        if let Coordinates::Logs { .. } = self.coordinates {
            // An absent species keeps y = 0; its density is 0.
            let x = y
                .map(|v| v.exp().max(RATE_FLOOR))
                .component_mul(&self.present);
            *dy = rates_at(self.model, self.params, &x, &self.present);
            return;
        }
        let clamped = y.map(|v| v.max(0.0));
        *dy = self.model.derivative(self.params, &clamped);
        // A species at zero cannot be harvested further: zero is absorbing
        // unless something (immigration, stocking) adds individuals.
        for i in 0..self.model.n_species() {
            if clamped[i] == 0.0 && dy[i] < 0.0 {
                dy[i] = 0.0;
            }
        }
    }

    fn solout(&mut self, t: f64, y: &State, _dy: &State) -> bool {
        if self.failure.get().is_some() {
            return true;
        }
        for i in 0..self.model.n_species() {
            if !y[i].is_finite() {
                self.failure.set(Some(StopReason::NonFinite { t }));
                return true;
            }
            if y[i] > self.blow_up {
                self.failure.set(Some(StopReason::BlewUp { t, species: i }));
                return true;
            }
        }
        false
    }
}

/// Integrate a problem from t = 0 to its horizon, applying its schedule of
/// interventions and locating crossings of its thresholds.
///
/// Output is on an even grid of spacing `output_step` (shrunk slightly when
/// the horizon is not a whole multiple of it, so the last point is `t_end`).
pub fn solve(problem: &Problem) -> Trajectory {
    integrate(
        problem.model,
        &problem.params,
        problem.initial,
        problem.t_end,
        problem.output_step,
        &problem.solver,
        &problem.schedule,
        &problem.thresholds.levels(),
    )
}

/// [`solve`] without interventions or thresholds, with its pieces given
/// separately, for callers that vary one.
pub fn solve_with(
    model: &ModelSpec,
    params: &Params,
    initial: State,
    t_end: f64,
    output_step: f64,
    options: &SolverOptions,
) -> Trajectory {
    integrate(
        model,
        params,
        initial,
        t_end,
        output_step,
        options,
        &Schedule::default(),
        &[],
    )
}

/// Outputs of one stretch of integration.
struct Piece {
    states: Vec<State>,
    stop: StopReason,
    stats: StepStats,
}

fn add_stats(total: &mut StepStats, more: StepStats) {
    total.rhs_evaluations = total.rhs_evaluations.saturating_add(more.rhs_evaluations);
    total.accepted_steps = total.accepted_steps.saturating_add(more.accepted_steps);
    total.rejected_steps = total.rejected_steps.saturating_add(more.rejected_steps);
}

fn run_dopri(
    model: &ModelSpec,
    params: &Params,
    x0: State,
    (t0, t1): (f64, f64),
    dense_step: Option<f64>,
    options: &SolverOptions,
) -> Piece {
    let coordinates = Coordinates::choose(model, params, &x0);
    let rhs = Rhs::new(model, params, coordinates, options.blow_up);
    // In logarithms an absolute error is a relative one in the density:
    // rtol everywhere.
    let (rtol, atol) = match coordinates {
        Coordinates::Densities => (options.rtol, options.atol),
        Coordinates::Logs { .. } => (0.0, options.rtol),
    };
    // ode_solvers 0.6.2 extrapolates its last dense-output point from the
    // step before the end when a grid time lands within 1e-9 of `x_end`
    // (errors of 1e-5 relative seen, whatever the tolerance). Integrating
    // half an output step past the last grid time keeps every grid time
    // inside a step; the points past it are dropped by the caller.
    let (x_end, out_type, dx) = match dense_step {
        Some(dx) => (t1 + 0.5 * dx, OutputType::Dense, dx),
        None => (t1, OutputType::Sparse, t1 - t0),
    };
    let mut stepper = Dopri5::from_param(
        &rhs,
        t0,
        x_end,
        dx,
        coordinates.variables(&x0),
        rtol,
        atol,
        0.9,  // safety factor (Hairer et al. default)
        0.04, // PI controller beta (Hairer et al. default)
        0.2,  // smallest step-size ratio
        10.0, // largest step-size ratio
        x_end - t0,
        0.0, // initial step chosen automatically
        options.max_steps,
        // Never give up on stiffness: explicit steps stay accurate on
        // moderately stiff problems, merely smaller; max_steps bounds the
        // cost and says so if exceeded.
        u32::MAX,
        out_type,
    );
    let outcome = stepper.integrate();
    let (raw_times, raw_states) = stepper.results().get();
    let mut times = raw_times.clone();
    let mut states: Vec<State> = raw_states.iter().map(|y| coordinates.density(y)).collect();
    drop(stepper);
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
    let reached = times
        .last()
        .is_some_and(|&t| t >= t1 - 1e-9 * t1.abs().max(1.0));
    let stop = match (rhs.failure.get(), outcome) {
        (None, Ok(s)) => {
            stats.accepted_steps = s.accepted_steps;
            stats.rejected_steps = s.rejected_steps;
            StopReason::Finished
        }
        // Trouble in the half step past the end does not count.
        _ if reached && dense_step.is_some() => StopReason::Finished,
        (Some(failure), _) => failure,
        (None, Err(IntegrationError::MaxNumStepReached { x, .. })) => {
            StopReason::TooManySteps { t: x }
        }
        (None, Err(IntegrationError::StepSizeUnderflow { x })) => {
            StopReason::StepSizeTooSmall { t: x }
        }
        (None, Err(IntegrationError::StiffnessDetected { x })) => StopReason::Stiff { t: x },
    };
    Piece {
        states,
        stop,
        stats,
    }
}

/// The state at `t1` from `x0` at `t0`.
fn advance(
    model: &ModelSpec,
    params: &Params,
    x0: State,
    t0: f64,
    t1: f64,
    options: &SolverOptions,
    stats: &mut StepStats,
) -> Result<State, StopReason> {
    if t1 <= t0 {
        return Ok(x0);
    }
    let piece = run_dopri(model, params, x0, (t0, t1), None, options);
    add_stats(stats, piece.stats);
    match (piece.stop, piece.states.last()) {
        (StopReason::Finished, Some(x)) => Ok(*x),
        (StopReason::Finished, None) => Ok(x0),
        (stop, _) => Err(stop),
    }
}

/// Params with the schedule's rates active over a segment added to harvest.
fn segment_params(params: &Params, schedule: &Schedule, t: f64) -> Params {
    let mut p = *params;
    let extra = schedule.removal_at(t);
    p.harvest[0] += extra[0];
    p.harvest[1] += extra[1];
    p
}

#[allow(clippy::too_many_arguments)]
fn integrate(
    model: &ModelSpec,
    params: &Params,
    initial: State,
    t_end: f64,
    output_step: f64,
    options: &SolverOptions,
    schedule: &Schedule,
    levels: &[(usize, f64)],
) -> Trajectory {
    let n_intervals = (t_end / output_step - 1e-9).ceil().max(1.0) as usize;
    let dx = t_end / n_intervals as f64;
    let grid = |k: usize| {
        if k == n_intervals {
            t_end
        } else {
            k as f64 * dx
        }
    };
    let n = model.n_species();
    let mut out = Trajectory {
        times: Vec::with_capacity(n_intervals + 1),
        states: Vec::with_capacity(n_intervals + 1),
        n_species: n,
        stop: StopReason::Finished,
        stats: StepStats::default(),
        pulses: Vec::new(),
        crossings: Vec::new(),
    };
    let mut x = initial;
    let apply_pulses_at = |t: f64, x: &mut State, out: &mut Trajectory| {
        for p in schedule.pulses.iter().filter(|p| p.time == t) {
            let before = x[p.species];
            x[p.species] = p.apply(x);
            out.pulses.push(AppliedPulse {
                time: t,
                species: p.species,
                before,
                after: x[p.species],
                event: p.event,
            });
            for &(species, level) in levels {
                if species == p.species && (before < level) != (x[species] < level) {
                    out.crossings.push(Crossing {
                        time: t,
                        species,
                        level,
                        rising: x[species] >= level,
                        by_pulse: true,
                    });
                }
            }
        }
    };
    apply_pulses_at(0.0, &mut x, &mut out);
    out.times.push(0.0);
    out.states.push(x);

    let mut bounds = vec![0.0];
    bounds.extend(schedule.breakpoints(t_end));
    bounds.push(t_end);
    let mut next_k = 1; // next grid index to output
    for w in bounds.windows(2) {
        let (a, b) = (w[0], w[1]);
        let p = segment_params(params, schedule, a);
        let seg_start = (a, x);
        // Grid indices inside (a, b].
        let first = next_k;
        let mut last = first;
        while last <= n_intervals && grid(last) <= b + 1e-9 * dx {
            last += 1;
        }
        let outputs = first..last;
        let mut t = a;
        let mut failed = None;
        if !outputs.is_empty() {
            // Reach the first grid time exactly, then dense output on the grid.
            let g0 = grid(first);
            let start_on_grid = (a - grid(first - 1)).abs() <= 1e-9 * dx && first >= 1;
            let (from, x_from) = if start_on_grid {
                (grid(first - 1), x)
            } else {
                match advance(model, &p, x, a, g0, options, &mut out.stats) {
                    Ok(y) => {
                        out.times.push(g0);
                        out.states.push(y);
                        (g0, y)
                    }
                    Err(stop) => {
                        failed = Some(stop);
                        (a, x)
                    }
                }
            };
            let already = if start_on_grid { 0 } else { 1 };
            let remaining = outputs.len() - already;
            if failed.is_none() && remaining > 0 {
                let g_last = grid(last - 1);
                let piece = run_dopri(model, &p, x_from, (from, g_last), Some(dx), options);
                add_stats(&mut out.stats, piece.stats);
                // The piece starts with `from` itself; take the grid times after it.
                for (i, state) in piece.states.iter().enumerate().skip(1).take(remaining) {
                    out.times.push(grid(first + already + i - 1));
                    out.states.push(*state);
                }
                let got = piece.states.len().saturating_sub(1).min(remaining);
                if got < remaining || !piece.stop.is_finished() {
                    failed = Some(piece.stop);
                }
            }
            if let (None, Some(&last_t), Some(&last_x)) =
                (failed, out.times.last(), out.states.last())
            {
                t = last_t;
                x = last_x;
            }
        }
        next_k = last;
        if failed.is_none() && b > t + 1e-12 * b.abs().max(1.0) {
            match advance(model, &p, x, t, b, options, &mut out.stats) {
                Ok(y) => x = y,
                Err(stop) => failed = Some(stop),
            }
        }
        if !levels.is_empty() {
            let found = locate_crossings(model, &p, seg_start, (b, x), &out, levels, options);
            out.crossings.extend(found);
        }
        if let Some(stop) = failed {
            out.stop = stop;
            break;
        }
        if b < t_end || schedule.pulses.iter().any(|q| q.time == t_end) {
            apply_pulses_at(b, &mut x, &mut out);
            // A pulse on a grid time: report the state after it.
            if out
                .times
                .last()
                .is_some_and(|&tl| (tl - b).abs() <= 1e-9 * dx)
            {
                if let Some(s) = out.states.last_mut() {
                    *s = x;
                }
            }
        }
    }
    out.crossings.sort_by(|a, b| a.time.total_cmp(&b.time));
    out
}

/// Crossings of `levels` inside one segment (no pulse inside it), found as
/// sign changes between output times and located by the Illinois method on
/// fresh integrations from the left output time (to 1e-10 in time).
fn locate_crossings(
    model: &ModelSpec,
    params: &Params,
    (a, x_a): (f64, State),
    (b, x_b): (f64, State),
    out: &Trajectory,
    levels: &[(usize, f64)],
    options: &SolverOptions,
) -> Vec<Crossing> {
    // Points of this segment: its start, then the outputs in (a, b].
    let mut points: Vec<(f64, State)> = vec![(a, x_a)];
    for (t, s) in out.times.iter().zip(&out.states) {
        if *t > a && *t <= b {
            points.push((*t, *s));
        }
    }
    if points.last().is_some_and(|(t, _)| *t < b) {
        points.push((b, x_b));
    }
    let mut found = Vec::new();
    let mut scratch = StepStats::default();
    for w in points.windows(2) {
        let ((t0, x0), (t1, x1)) = (w[0], w[1]);
        for &(species, level) in levels {
            let (below0, below1) = (x0[species] < level, x1[species] < level);
            if below0 == below1 {
                continue;
            }
            // Illinois (modified regula falsi) on g(t) = x(t) − level, each
            // g from a fresh integration from the left output time.
            let g = |t: f64, scratch: &mut StepStats| {
                advance(model, params, x0, t0, t, options, scratch).map(|y| y[species] - level)
            };
            let (mut lo, mut hi) = (t0, t1);
            let (mut g_lo, mut g_hi) = (x0[species] - level, x1[species] - level);
            let mut side = 0;
            for _ in 0..60 {
                if hi - lo <= 1e-10 * hi.abs().max(1.0) {
                    break;
                }
                let guess = if g_hi != g_lo {
                    hi - g_hi * (hi - lo) / (g_hi - g_lo)
                } else {
                    0.5 * (lo + hi)
                };
                let t = if guess > lo && guess < hi {
                    guess
                } else {
                    0.5 * (lo + hi)
                };
                let Ok(gt) = g(t, &mut scratch) else { break };
                if gt == 0.0 {
                    lo = t;
                    hi = t;
                    break;
                }
                if (gt < 0.0) == (g_lo < 0.0) {
                    lo = t;
                    g_lo = gt;
                    if side == -1 {
                        g_hi *= 0.5;
                    }
                    side = -1;
                } else {
                    hi = t;
                    g_hi = gt;
                    if side == 1 {
                        g_lo *= 0.5;
                    }
                    side = 1;
                }
            }
            found.push(Crossing {
                time: 0.5 * (lo + hi),
                species,
                level,
                rising: below0,
                by_pulse: false,
            });
        }
    }
    found
}
