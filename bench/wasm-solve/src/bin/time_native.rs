//! Native time per call of this crate's exports, as JSON, with the same
//! protocol as bench/wasm_solve.mjs uses for the WebAssembly build: the
//! median over rounds of the mean time per call within a round, a round
//! lasting at least 0.2 s (one call for the ensemble). Names as arguments
//! time only those (`time_native standard library_alone`).

use std::time::Instant;

use tussock_wasm_bench::{
    ensemble_exact_1000, library_alone, rosenzweig_macarthur_1000, standard_problem,
};

fn seconds_per_call(f: extern "C" fn() -> u32, rounds: usize) -> (f64, u32) {
    let probe = Instant::now();
    let mut answer = f();
    let per = probe.elapsed().as_secs_f64();
    let reps = ((0.2 / per.max(1e-9)) as usize).clamp(1, 100_000);
    let mut times: Vec<f64> = (0..rounds)
        .map(|_| {
            let start = Instant::now();
            for _ in 0..reps {
                answer = std::hint::black_box(f());
            }
            start.elapsed().as_secs_f64() / reps as f64
        })
        .collect();
    times.sort_by(f64::total_cmp);
    (times[times.len() / 2], answer)
}

fn main() {
    let all: [(&str, extern "C" fn() -> u32, usize); 4] = [
        ("standard", standard_problem, 15),
        ("rosenzweig_macarthur", rosenzweig_macarthur_1000, 15),
        ("library_alone", library_alone, 15),
        ("ensemble", ensemble_exact_1000, 3),
    ];
    let asked: Vec<String> = std::env::args().skip(1).collect();
    let body: Vec<String> = all
        .iter()
        .filter(|(name, _, _)| asked.is_empty() || asked.iter().any(|a| a == name))
        .map(|(name, f, rounds)| {
            let (s, answer) = seconds_per_call(*f, *rounds);
            format!("\"{name}\": {{\"seconds\": {s:e}, \"answer\": {answer}}}")
        })
        .collect();
    println!("{{{}}}", body.join(", "));
}
