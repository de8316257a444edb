//! The benchmark problems of `tussock_core::bench_problems` as functions
//! with a C signature, so a WebAssembly build of this crate can be called
//! from JavaScript with no bindings and timed there (bench/wasm_solve.mjs),
//! and the same functions timed natively (`src/bin/time_native.rs`, which
//! bench/side_by_side.py also uses). Each returns a number that depends on
//! the whole computation, so nothing can be skipped.

use std::sync::OnceLock;

use ode_solvers::{Dopri5, OutputType, System, Vector2};

use tussock_core::bench_problems::{
    rosenzweig_macarthur_1000_days, rosenzweig_macarthur_365_days, standard_non_stiff,
    thousand_runs,
};
use tussock_core::stochastic::{run_ensemble, Method};
use tussock_core::{solve, Problem};

/// Accepted steps of one solve of the problem `make` builds (once).
fn steps(cell: &'static OnceLock<Problem>, make: fn() -> Problem) -> u32 {
    solve(cell.get_or_init(make)).stats.accepted_steps
}

/// One solve of the standard non-stiff problem; its accepted steps.
#[no_mangle]
pub extern "C" fn standard_problem() -> u32 {
    static PROBLEM: OnceLock<Problem> = OnceLock::new();
    steps(&PROBLEM, standard_non_stiff)
}

/// One solve of Rosenzweig–MacArthur over 1000 days; its accepted steps.
#[no_mangle]
pub extern "C" fn rosenzweig_macarthur_1000() -> u32 {
    static PROBLEM: OnceLock<Problem> = OnceLock::new();
    steps(&PROBLEM, rosenzweig_macarthur_1000_days)
}

/// dx/dt = 1.5x − xy, dy/dt = −3y + xy.
struct Standard;

impl System<f64, Vector2<f64>> for Standard {
    fn system(&self, _t: f64, y: &Vector2<f64>, dy: &mut Vector2<f64>) {
        dy[0] = 1.5 * y[0] - y[0] * y[1];
        dy[1] = -3.0 * y[1] + y[0] * y[1];
    }
}

/// The standard problem on `ode_solvers` alone, a plain closure in
/// densities driven as `solve` drives it (same tolerances, dense output
/// every 0.1, half a step past the end): the floor of any solve built on
/// that library. Its accepted steps.
#[no_mangle]
pub extern "C" fn library_alone() -> u32 {
    let mut stepper = Dopri5::from_param(
        Standard,
        0.0,
        10.05,
        0.1,
        std::hint::black_box(Vector2::new(1.0, 1.0)),
        1e-8,
        1e-8,
        0.9,
        0.04,
        0.2,
        10.0,
        10.05,
        0.0,
        100_000,
        u32::MAX,
        OutputType::Dense,
    );
    let steps = stepper.integrate().map_or(0, |s| s.accepted_steps);
    std::hint::black_box(stepper.results().get().1.len());
    steps
}

/// 1,000 exact stochastic runs of the Rosenzweig–MacArthur case with about
/// 1,000 individuals over 365 days (seed 1), on one thread; the prey's
/// median at the horizon, rounded.
#[no_mangle]
pub extern "C" fn ensemble_exact_1000() -> u32 {
    static PROBLEM: OnceLock<Problem> = OnceLock::new();
    match run_ensemble(
        PROBLEM.get_or_init(rosenzweig_macarthur_365_days),
        &thousand_runs(Method::Exact),
        &mut |_, _| true,
    ) {
        Ok(summary) => summary
            .fan
            .first()
            .and_then(|f| f.median.last())
            .map_or(0, |m| m.round() as u32),
        Err(_) => u32::MAX,
    }
}
