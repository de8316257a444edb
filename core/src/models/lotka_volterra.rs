//! Lotka–Volterra predator–prey model (Lotka 1925; Volterra 1926), with an
//! optional prey carrying capacity.
//!
//! State order: prey N, predator P.
//!
//! dN/dt = r N (1 − N/K) − a N P
//! dP/dt = e a N P − m P
//!
//! Leaving `K` out (infinite) gives the classical neutrally stable cycles.
//!
//! Demographic events for stochastic runs (each changes one species by one
//! individual; the rates sum back to the equations above):
//! - prey births r·N (+1 prey);
//! - prey crowding deaths r·N²/K (−1 prey; none without K);
//! - predation a·N·P (−1 prey);
//! - predator births e·a·N·P (+1 predator), a separate event from the
//!   predation that feeds it, so any efficiency e is allowed;
//! - predator deaths m·P (−1 predator).

use crate::model::{
    BoundaryCurve, Group, Guarantees, Jacobian, ModelSpec, ParamSpec, Params, Propensities, State,
    Unit,
};

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
    default_initial: &[60.0, 5.0],
    params: &[
        ParamSpec::new("r", "prey growth rate", Unit::PerTime, 0.3, (0.0, 100.0), "Per-capita growth rate of the prey without predators."),
        ParamSpec::new("a", "attack rate", Unit::PerIndividualPerTime, 0.02, (0.0, 100.0), "Prey killed per predator per prey individual per time unit."),
        ParamSpec::new("e", "conversion efficiency", Unit::Dimensionless, 0.25, (0.0, 10.0), "New predators produced per prey eaten."),
        ParamSpec::new("m", "predator mortality", Unit::PerTime, 0.2, (0.0, 100.0), "Per-capita death rate of predators."),
        ParamSpec::new("K", "prey carrying capacity", Unit::Individuals, f64::INFINITY, (1e-9, f64::INFINITY), "Prey density at which prey growth stops; leave out for unlimited growth.").or_default(),
    ],
    choice: None,
    rhs,
    jacobian,
    equilibria,
    outcome: super::no_outcome,
    check: super::no_check,
    guarantees,
    boundaries: &[BoundaryCurve {
        key: "predator_persists",
        label: "K = m/(e·a): above it the predator can persist",
        level: |p| (p[K].is_finite() && p[E] * p[A] > 0.0).then(|| p[K] - p[M] / (p[E] * p[A])),
    }],
    channels: &super::PREDATOR_PREY_CHANNELS,
    propensities,
};

/// With a finite K and no harvest the model is dissipative, and
/// B = 1/(N·P) is a Dulac function: div(B·f) = −r/(K·P) < 0, so there are
/// no periodic orbits (Bendixson–Dulac; e.g. Kot 2001, Elements of
/// Mathematical Ecology, §6; from memory). Without K the neutral cycles of
/// the classical model remain and nothing is guaranteed. Both equations
/// have the factor N or P (per-capita rates linear in the densities).
fn guarantees(p: &Params) -> Guarantees {
    let plain = super::unharvested(p);
    let limited = plain && p[K].is_finite();
    Guarantees {
        bounded: limited,
        no_cycles: limited && p[R] > 0.0,
        stable_interior_is_global: false,
        closed_forms_complete: plain && p[E] * p[A] > 0.0,
        per_capita_growth: plain,
    }
}

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

/// (0, 0), (K, 0) when K is finite, and the interior point
/// N* = m/(e·a), P* = (r/a)(1 − N*/K).
fn equilibria(p: &Params) -> Vec<State> {
    let mut out = vec![State::zeros()];
    if p[K].is_finite() {
        out.push(State::new(p[K], 0.0));
    }
    if p[E] * p[A] > 0.0 && p[A] > 0.0 {
        let n = p[M] / (p[E] * p[A]);
        out.push(State::new(n, p[R] / p[A] * (1.0 - n / p[K])));
    }
    out
}

fn propensities(p: &Params, x: &State, out: &mut Propensities) {
    let (n, pred) = (x[0], x[1]);
    let predation = p[A] * n * pred;
    *out = [
        p[R] * n,
        p[R] * n * n / p[K],
        predation,
        p[E] * predation,
        p[M] * pred,
        0.0,
        0.0,
        0.0,
    ];
}
