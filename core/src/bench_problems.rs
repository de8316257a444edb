//! The problems benchmarks measure, defined once so criterion, the
//! side-by-side script and tests agree on them.

use crate::models;
use crate::scenario::{Problem, Scenario};
use crate::stochastic::{EnsembleOptions, Method, StochasticOptions};
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

/// True parameters of [`rosenzweig_macarthur_fit`].
pub const RM_FIT_TRUTH: [(&str, f64); 6] = [
    ("r", 1.0),
    ("K", 500.0),
    ("a", 0.02),
    ("h", 0.5),
    ("e", 0.4),
    ("m", 0.3),
];

/// The fit benchmark: Rosenzweig–MacArthur (type II) from (100, 10), prey
/// and predator counted every 3 days from day 3 to day 60 (40 counts), with
/// multiplicative log-normal noise (sd 0.1 on the log scale, seed 7);
/// all six parameters estimated on bounds ÷10…×10 around the truth by
/// least squares on ln(count + 1) from 8 starts, starting from a scenario
/// whose values are off by a factor 1.5.
pub fn rosenzweig_macarthur_fit() -> (Problem, crate::data::CountData, crate::fit::FitRequest) {
    use rand::{RngExt, SeedableRng};
    let truth = build(
        "rosenzweig_macarthur",
        &RM_FIT_TRUTH,
        vec![100.0, 10.0],
        60.0,
        3.0,
        1e-10,
    );
    let run = crate::solve::solve(&truth);
    let mut rng = rand::rngs::ChaCha8Rng::seed_from_u64(7);
    let mut normal = || {
        // Box–Muller.
        let u1: f64 = rng.random::<f64>().max(1e-300);
        let u2: f64 = rng.random();
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    };
    let times: Vec<f64> = run.times[1..].to_vec();
    let mut series = Vec::new();
    for species in 0..2 {
        let counts = run.states[1..]
            .iter()
            .map(|s| Some(((s[species] + 1.0) * (0.1 * normal()).exp() - 1.0).max(0.0)))
            .collect();
        series.push(crate::data::CountSeries {
            species,
            column: ["prey", "predator"][species].to_string(),
            counts,
        });
    }
    let data = crate::data::CountData { times, series };
    let off: Vec<(&str, f64)> = RM_FIT_TRUTH.iter().map(|&(k, v)| (k, v * 1.5)).collect();
    let problem = build(
        "rosenzweig_macarthur",
        &off,
        vec![100.0, 10.0],
        60.0,
        1.0,
        1e-6,
    );
    let mut request = crate::fit::FitRequest::new(&["r", "K", "a", "h", "e", "m"]);
    for (spec, &(_, v)) in request.estimate.iter_mut().zip(&RM_FIT_TRUTH) {
        spec.lower = Some(v / 10.0);
        spec.upper = Some(v * 10.0);
    }
    request.starts = 8;
    request.seed = 1;
    request.profiles = false;
    (problem, data, request)
}

/// A Rosenzweig–MacArthur case with about 1,000 individuals over 365 days
/// for the stochastic ensemble benchmark (invented values): r = 0.2, K =
/// 1000, a = 0.001, h = 0.5, e = 0.2, m = 0.1 per day; a stable equilibrium
/// near 667 prey and 89 predators (K is below the Hopf threshold 3333),
/// started at 800 prey and 100 predators; about 285 events a day.
pub fn rosenzweig_macarthur_365_days() -> Problem {
    build(
        "rosenzweig_macarthur",
        &[
            ("r", 0.2),
            ("K", 1000.0),
            ("a", 0.001),
            ("h", 0.5),
            ("e", 0.2),
            ("m", 0.1),
        ],
        vec![800.0, 100.0],
        365.0,
        1.0,
        1e-8,
    )
}

/// The ensemble benchmarks' settings for [`rosenzweig_macarthur_365_days`]:
/// 1,000 runs from seed 1 with `method`.
pub fn thousand_runs(method: Method) -> EnsembleOptions {
    EnsembleOptions {
        runs: 1000,
        seed: 1,
        simulation: StochasticOptions {
            method,
            ..StochasticOptions::default()
        },
        ..EnsembleOptions::default()
    }
}
