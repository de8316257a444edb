//! Criterion benchmark of a whole fit: six Rosenzweig–MacArthur parameters
//! from 40 counts, 8 starts (bench/side_by_side.py times scipy's
//! least_squares on the same problem from the same starts). Target ≤ 1 s.

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use tussock_core::bench_problems::rosenzweig_macarthur_fit;
use tussock_core::fit::fit_quietly;

fn fits(c: &mut Criterion) {
    let (problem, data, request) = rosenzweig_macarthur_fit();
    let fit_problem = request.validate(&problem, &data).expect("a valid fit");
    let mut group = c.benchmark_group("fit");
    group.sample_size(10);
    group.bench_function(
        "rosenzweig_macarthur 6 parameters, 40 counts, 8 starts",
        |b| b.iter(|| fit_quietly(black_box(&fit_problem))),
    );
    let mut with_profiles = fit_problem.clone();
    with_profiles.profiles = true;
    group.bench_function(
        "rosenzweig_macarthur 6 parameters, 40 counts, 8 starts, with profiles",
        |b| b.iter(|| fit_quietly(black_box(&with_profiles))),
    );
    group.finish();
}

criterion_group!(benches, fits);
criterion_main!(benches);
