//! The benchmark problems of `tussock_core::bench_problems` as functions
//! with a C signature, so a WebAssembly build of this crate can be called
//! from JavaScript with no bindings and timed there (bench/wasm_solve.mjs),
//! and the same functions timed natively (`src/bin/time_native.rs`). Each returns a number that
//! depends on the whole computation, so nothing can be skipped.

use std::sync::OnceLock;

use tussock_core::bench_problems::{
    rosenzweig_macarthur_1000_days, rosenzweig_macarthur_365_days, standard_non_stiff,
    thousand_runs,
};
use tussock_core::stochastic::{run_ensemble, Method};
use tussock_core::{solve, Problem};

fn cached(cell: &'static OnceLock<Problem>, make: fn() -> Problem) -> &'static Problem {
    cell.get_or_init(make)
}

/// One solve of the standard non-stiff problem; its accepted steps.
#[no_mangle]
pub extern "C" fn standard_problem() -> u32 {
    static PROBLEM: OnceLock<Problem> = OnceLock::new();
    solve(cached(&PROBLEM, standard_non_stiff))
        .stats
        .accepted_steps
}

/// One solve of Rosenzweig–MacArthur over 1000 days; its accepted steps.
#[no_mangle]
pub extern "C" fn rosenzweig_macarthur_1000() -> u32 {
    static PROBLEM: OnceLock<Problem> = OnceLock::new();
    solve(cached(&PROBLEM, rosenzweig_macarthur_1000_days))
        .stats
        .accepted_steps
}

/// 1,000 exact stochastic runs of the Rosenzweig–MacArthur case with about
/// 1,000 individuals over 365 days (seed 1), on one thread; the number of
/// prey's median at the horizon, rounded.
#[no_mangle]
pub extern "C" fn ensemble_exact_1000() -> u32 {
    static PROBLEM: OnceLock<Problem> = OnceLock::new();
    match run_ensemble(
        cached(&PROBLEM, rosenzweig_macarthur_365_days),
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
