//! The problems benchmarks measure, defined once so criterion, the
//! side-by-side script and tests agree on them.

use crate::models;
use crate::scenario::{Problem, Scenario};
use crate::sweep::map::MapRequest;
use crate::sweep::{AxisSpec, Simulate, Spacing, SweepOptions};

fn build(
    model: &str,
    params: &[(&str, f64)],
    initial: Vec<f64>,
    t_end: f64,
    output_step: f64,
    tol: f64,
) -> Problem {
    let spec = models::find(model).expect("a registered model");
    let mut s = Scenario::with_defaults(spec, initial, t_end);
    for (k, v) in params {
        s.params.insert((*k).to_string(), *v);
    }
    s.output_step = Some(output_step);
    s.rtol = Some(tol);
    s.atol = Some(tol);
    s.validate().expect("benchmark problems are valid")
}

/// The standard non-stiff test problem dx/dt = 1.5x − xy, dy/dt = −3y + xy,
/// x(0) = y(0) = 1, t ∈ [0, 10], rtol = atol = 1e-8 (the Lotka–Volterra
/// problem of Hairer, Nørsett & Wanner 1993, Solving ODEs I, and of
/// deSolve's and scipy's examples), i.e. r = 1.5, a = 1, e = 1, m = 3.
pub fn standard_non_stiff() -> Problem {
    build(
        "lotka_volterra",
        &[("r", 1.5), ("a", 1.0), ("e", 1.0), ("m", 3.0)],
        vec![1.0, 1.0],
        10.0,
        0.1,
        1e-8,
    )
}

/// Rosenzweig–MacArthur's default parameters.
const ROSENZWEIG_MACARTHUR: [(&str, f64); 6] = [
    ("r", 1.0),
    ("K", 500.0),
    ("a", 0.02),
    ("h", 0.5),
    ("e", 0.4),
    ("m", 0.3),
];

/// Rosenzweig–MacArthur with its defaults over 1000 days, daily output.
pub fn rosenzweig_macarthur_1000_days() -> Problem {
    build(
        "rosenzweig_macarthur",
        &ROSENZWEIG_MACARTHUR,
        vec![100.0, 10.0],
        1000.0,
        1.0,
        1e-8,
    )
}

/// The outcome-map benchmark: Rosenzweig–MacArthur (r = 1, a = 0.02,
/// h = 0.5, e = 0.4) over K from 50 to 1000 and m from 0.05 to 0.35 on a
/// 200 × 200 grid, each long run to t = 2000 from (100, 10). All three
/// outcomes (prey only, stable coexistence, cycles) appear.
pub fn rosenzweig_macarthur_map(simulate: Simulate) -> (Problem, MapRequest) {
    let problem = build(
        "rosenzweig_macarthur",
        &ROSENZWEIG_MACARTHUR,
        vec![100.0, 10.0],
        2000.0,
        1.0,
        1e-6,
    );
    let axis = |param: &str, from: f64, to: f64| AxisSpec {
        param: param.to_string(),
        from,
        to,
        steps: MAP_SIDE,
        spacing: Spacing::Linear,
    };
    let request = MapRequest {
        x: axis("K", 50.0, 1000.0),
        y: axis("m", 0.05, 0.35),
        options: SweepOptions {
            horizon: Some(2000.0),
            simulate,
            ..SweepOptions::default()
        },
        shard: None,
    };
    (problem, request)
}

/// Cells per side of the outcome-map benchmark.
pub const MAP_SIDE: usize = 200;

/// The (row, column) cells of the map benchmark simulated in the
/// side-by-side comparison: a `side` × `side` subgrid spread evenly.
pub fn map_subsample(side: usize) -> Vec<(usize, usize)> {
    let at = |k: usize| k * (MAP_SIDE - 1) / side.max(2).saturating_sub(1);
    (0..side)
        .flat_map(|r| (0..side).map(move |c| (at(r), at(c))))
        .collect()
}
