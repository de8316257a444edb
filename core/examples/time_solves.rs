//! Per-solve time of the benchmark problems, as JSON, for
//! bench/side_by_side.py: `cargo run --release -p tussock-core --example time_solves`.
//!
//! Also times `ode_solvers`' Dopri5 alone on the standard problem (a plain
//! closure in densities, same tolerances and output grid): the floor any
//! solve built on that library can reach on this machine.

use std::time::Instant;

use ode_solvers::{Dopri5, OutputType, System, Vector2};
use tussock_core::bench_problems::{rosenzweig_macarthur_1000_days, standard_non_stiff};
use tussock_core::{solve, Problem};

/// Median over 15 rounds of the mean time per call within a round, and the
/// steps `run` reports.
fn seconds_per_call(run: impl Fn() -> u32) -> (f64, u32) {
    let probe = Instant::now();
    let mut steps = 0;
    for _ in 0..10 {
        steps = std::hint::black_box(run());
    }
    let per = probe.elapsed().as_secs_f64() / 10.0;
    let reps = ((0.2 / per) as usize).clamp(1, 100_000);
    let mut rounds: Vec<f64> = (0..15)
        .map(|_| {
            let start = Instant::now();
            for _ in 0..reps {
                std::hint::black_box(run());
            }
            start.elapsed().as_secs_f64() / reps as f64
        })
        .collect();
    rounds.sort_by(f64::total_cmp);
    (rounds[rounds.len() / 2], steps)
}

fn seconds_per_solve(problem: &Problem) -> (f64, u32) {
    seconds_per_call(|| solve(std::hint::black_box(problem)).stats.accepted_steps)
}

/// dx/dt = 1.5x − xy, dy/dt = −3y + xy.
struct Standard;

impl System<f64, Vector2<f64>> for Standard {
    fn system(&self, _t: f64, y: &Vector2<f64>, dy: &mut Vector2<f64>) {
        dy[0] = 1.5 * y[0] - y[0] * y[1];
        dy[1] = -3.0 * y[1] + y[0] * y[1];
    }
}

/// The standard problem on `ode_solvers` alone, as `solve` drives it
/// (dense output every 0.1, integrated half a step past the end).
fn library_alone() -> u32 {
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

fn main() {
    let (standard, s_steps) = seconds_per_solve(&standard_non_stiff());
    let (rm, rm_steps) = seconds_per_solve(&rosenzweig_macarthur_1000_days());
    let (alone, a_steps) = seconds_per_call(library_alone);
    println!(
        "{{\"standard\": {{\"seconds\": {standard:e}, \"steps\": {s_steps}}}, \"rosenzweig_macarthur\": {{\"seconds\": {rm:e}, \"steps\": {rm_steps}}}, \"library_alone\": {{\"seconds\": {alone:e}, \"steps\": {a_steps}}}}}"
    );
}
