//! Criterion benchmarks of outcome maps (bench/side_by_side.py compares the
//! same cells against scipy in one run). Target: the whole 200 × 200
//! Rosenzweig–MacArthur map in ≤ 3 s single-threaded in the browser.

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use tussock_core::bench_problems::{map_subsample, rosenzweig_macarthur_map};
use tussock_core::sweep::map::sweep_map;
use tussock_core::sweep::Simulate;

fn outcome_maps(c: &mut Criterion) {
    let (problem, request) = rosenzweig_macarthur_map(Simulate::WhenUndecided);
    let mut group = c.benchmark_group("outcome map");
    group.sample_size(10);
    group.bench_function("rosenzweig_macarthur 200x200, theory first", |b| {
        b.iter(|| sweep_map(black_box(&problem), &request, &mut |_, _| true))
    });
    // Every cell simulated (three long runs to t = 2000 each), on a 4 × 4
    // subsample; multiply by 2500 for the whole grid.
    let (problem, request) = rosenzweig_macarthur_map(Simulate::Always);
    let plan = request.plan(&problem).expect("a valid map");
    let cells = map_subsample(4);
    group.bench_function("rosenzweig_macarthur 16 cells, all simulated", |b| {
        b.iter(|| {
            for &(r, c) in &cells {
                black_box(plan.cell(plan.x.values[c], plan.y.values[r]));
            }
        })
    });
    group.finish();
}

criterion_group!(benches, outcome_maps);
criterion_main!(benches);
