//! Lotka–Volterra predator–prey model (Lotka 1925; Volterra 1926), with an
//! optional prey carrying capacity.
//!
//! State order: prey N, predator P.
//!
//! dN/dt = r N (1 − N/K) − a N P
//! dP/dt = e a N P − m P
//!
//! Leaving `K` out (infinite) gives the classical neutrally stable cycles.

use crate::model::{Group, Jacobian, ModelSpec, ParamSpec, Params, State, Unit};

pub const R: usize = 0;
pub const A: usize = 1;
pub const E: usize = 2;
pub const M: usize = 3;
pub const K: usize = 4;

pub static SPEC: ModelSpec = ModelSpec {
    key: "lotka_volterra",
    title: "Lotka–Volterra predator–prey",
    group: Group::PredatorPrey,
    summary: "Prey grow exponentially (or logistically with K); predators eat prey in proportion to encounters and die at a constant rate.",
    equations: "dN/dt = r·N·(1 − N/K) − a·N·P\ndP/dt = e·a·N·P − m·P",
    species: &["prey", "predator"],
    params: &[
        ParamSpec {
            symbol: "r",
            name: "prey growth rate",
            unit: Unit::PerTime,
            default: 0.3,
            min: 0.0,
            max: 100.0,
            help: "Per-capita growth rate of the prey without predators.",
            optional: false,
        },
        ParamSpec {
            symbol: "a",
            name: "attack rate",
            unit: Unit::PerIndividualPerTime,
            default: 0.02,
            min: 0.0,
            max: 100.0,
            help: "Prey killed per predator per prey individual per time unit.",
            optional: false,
        },
        ParamSpec {
            symbol: "e",
            name: "conversion efficiency",
            unit: Unit::Dimensionless,
            default: 0.25,
            min: 0.0,
            max: 10.0,
            help: "New predators produced per prey eaten.",
            optional: false,
        },
        ParamSpec {
            symbol: "m",
            name: "predator mortality",
            unit: Unit::PerTime,
            default: 0.2,
            min: 0.0,
            max: 100.0,
            help: "Per-capita death rate of predators.",
            optional: false,
        },
        ParamSpec {
            symbol: "K",
            name: "prey carrying capacity",
            unit: Unit::Individuals,
            default: f64::INFINITY,
            min: 1e-9,
            max: f64::INFINITY,
            help: "Prey density at which prey growth stops; leave out for unlimited growth.",
            optional: true,
        },
    ],
    rhs,
    jacobian,
};

fn rhs(p: &Params, x: &State) -> State {
    let (n, pred) = (x[0], x[1]);
    let predation = p[A] * n * pred;
    State::new(
        p[R] * n * (1.0 - n / p[K]) - predation,
        p[E] * predation - p[M] * pred,
    )
}

fn jacobian(p: &Params, x: &State) -> Jacobian {
    let (n, pred) = (x[0], x[1]);
    Jacobian::new(
        p[R] * (1.0 - 2.0 * n / p[K]) - p[A] * pred,
        -p[A] * n,
        p[E] * p[A] * pred,
        p[E] * p[A] * n - p[M],
    )
}
