//! Solve the standard problem many times, for a profiler:
//! `valgrind --tool=callgrind target/release/examples/profile_solve`.
fn main() {
    let p = tussock_core::bench_problems::standard_non_stiff();
    let n: usize = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(200);
    let mut steps = 0;
    for _ in 0..n {
        steps += std::hint::black_box(tussock_core::solve(&p))
            .stats
            .accepted_steps;
    }
    println!("{steps}");
}
