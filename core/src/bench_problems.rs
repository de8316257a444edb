//! The problems benchmarks measure, defined once so criterion, the
//! side-by-side script and tests agree on them.

use crate::models;
use crate::scenario::{Problem, Scenario};

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

/// Rosenzweig–MacArthur with its defaults over 1000 days, daily output.
pub fn rosenzweig_macarthur_1000_days() -> Problem {
    build(
        "rosenzweig_macarthur",
        &[
            ("r", 1.0),
            ("K", 500.0),
            ("a", 0.02),
            ("h", 0.5),
            ("e", 0.4),
            ("m", 0.3),
        ],
        vec![100.0, 10.0],
        1000.0,
        1.0,
        1e-8,
    )
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
