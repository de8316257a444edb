//! Criterion benchmarks of single solves (see bench/side_by_side.py for the
//! same problems measured against scipy and deSolve in one run).

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use tussock_core::bench_problems::{rosenzweig_macarthur_1000_days, standard_non_stiff};
use tussock_core::solve;

fn single_solves(c: &mut Criterion) {
    let standard = standard_non_stiff();
    c.bench_function("lotka_volterra standard problem, rtol=atol=1e-8", |b| {
        b.iter(|| solve(black_box(&standard)))
    });
    let rm = rosenzweig_macarthur_1000_days();
    c.bench_function("rosenzweig_macarthur 1000 days", |b| {
        b.iter(|| solve(black_box(&rm)))
    });
}

criterion_group!(benches, single_solves);
criterion_main!(benches);
