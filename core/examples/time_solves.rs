//! Per-solve time of the benchmark problems, as JSON, for
//! bench/side_by_side.py: `cargo run --release -p tussock-core --example time_solves`.

use std::time::Instant;

use tussock_core::bench_problems::{rosenzweig_macarthur_1000_days, standard_non_stiff};
use tussock_core::{solve, Problem};

/// Median over `rounds` of the mean time per solve within a round.
fn seconds_per_solve(problem: &Problem) -> (f64, u32) {
    let probe = Instant::now();
    let mut steps = 0;
    for _ in 0..10 {
        steps = std::hint::black_box(solve(problem)).stats.accepted_steps;
    }
    let per = probe.elapsed().as_secs_f64() / 10.0;
    let reps = ((0.2 / per) as usize).clamp(1, 100_000);
    let mut rounds: Vec<f64> = (0..15)
        .map(|_| {
            let start = Instant::now();
            for _ in 0..reps {
                std::hint::black_box(solve(std::hint::black_box(problem)));
            }
            start.elapsed().as_secs_f64() / reps as f64
        })
        .collect();
    rounds.sort_by(f64::total_cmp);
    (rounds[rounds.len() / 2], steps)
}

fn main() {
    let (standard, s_steps) = seconds_per_solve(&standard_non_stiff());
    let (rm, rm_steps) = seconds_per_solve(&rosenzweig_macarthur_1000_days());
    println!(
        "{{\"standard\": {{\"seconds\": {standard:e}, \"steps\": {s_steps}}}, \"rosenzweig_macarthur\": {{\"seconds\": {rm:e}, \"steps\": {rm_steps}}}}}"
    );
}
