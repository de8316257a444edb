//! Criterion benchmarks of stochastic ensembles: 1,000 runs of a
//! Rosenzweig–MacArthur case with about 1,000 individuals over 365 days
//! (issue 8's target: ≤ 2 s native for exact runs), exact and automatic.

use criterion::{criterion_group, criterion_main, Criterion};
use tussock_core::bench_problems::{rosenzweig_macarthur_365_days, thousand_runs};
use tussock_core::stochastic::{run_ensemble, Method};

fn ensembles(c: &mut Criterion) {
    let problem = rosenzweig_macarthur_365_days();
    let mut group = c.benchmark_group("ensemble");
    group.sample_size(10);
    for (name, method) in [("exact", Method::Exact), ("auto", Method::Auto)] {
        let options = thousand_runs(method);
        group.bench_function(
            format!("1000 {name} runs, rosenzweig_macarthur 365 days"),
            |b| b.iter(|| run_ensemble(&problem, &options, &mut |_, _| true)),
        );
    }
    group.finish();
}

criterion_group!(benches, ensembles);
criterion_main!(benches);
