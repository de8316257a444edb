//! The fit benchmark problem, its starts and Tussock's time per fit, as
//! JSON for bench/side_by_side.py:
//! `cargo run --release -p tussock-core --example time_fits`.

use std::time::Instant;

use tussock_core::bench_problems::{rosenzweig_macarthur_fit, RM_FIT_TRUTH};
use tussock_core::fit::fit_quietly;

fn main() {
    let (problem, data, request) = rosenzweig_macarthur_fit();
    let fit_problem = match request.validate(&problem, &data) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("time_fits: {e}");
            std::process::exit(1);
        }
    };
    let result = fit_quietly(&fit_problem);
    let mut rounds: Vec<f64> = (0..5)
        .map(|_| {
            let start = Instant::now();
            std::hint::black_box(fit_quietly(std::hint::black_box(&fit_problem)));
            start.elapsed().as_secs_f64()
        })
        .collect();
    rounds.sort_by(f64::total_cmp);
    let out = serde_json::json!({
        "seconds": rounds[rounds.len() / 2],
        "truth": RM_FIT_TRUTH.iter().map(|(k, v)| (k.to_string(), *v)).collect::<std::collections::BTreeMap<_, _>>(),
        "names": fit_problem.unknowns.iter().map(|u| u.name.clone()).collect::<Vec<_>>(),
        "lower": fit_problem.unknowns.iter().map(|u| u.lower).collect::<Vec<_>>(),
        "upper": fit_problem.unknowns.iter().map(|u| u.upper).collect::<Vec<_>>(),
        "initial": [problem.initial[0], problem.initial[1]],
        "times": data.times,
        "counts": data.series.iter().map(|s| s.counts.clone()).collect::<Vec<_>>(),
        "starts": result.starts.iter().map(|s| s.values.clone()).collect::<Vec<_>>(),
        "estimates": result.estimates.iter().map(|e| e.value).collect::<Vec<_>>(),
        "objective": result.objective,
        "evaluations": result.evaluations,
        "start_status": result.starts.iter().map(|s| s.status.clone()).collect::<Vec<_>>(),
        "start_evaluations": result.starts.iter().map(|s| s.evaluations).collect::<Vec<_>>(),
        "start_objectives": result.starts.iter().map(|s| s.objective).collect::<Vec<_>>(),
    });
    println!("{out}");
}
