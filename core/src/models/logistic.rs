//! Logistic growth of one population (Verhulst 1838) with births, deaths,
//! immigration, emigration and an optional strong Allee effect.
//!
//! State: N.
//!
//! dN/dt = (b − d)·N·(1 − N/K)·φ(N) − emigration·N + immigration
//!
//! φ(N) = N/A − 1 when an Allee threshold A > 0 is given (the strong Allee
//! effect of Courchamp, Berec & Gascoigne 2008, Allee Effects in Ecology and
//! Conservation, eq. 2.1 form), else 1.
//!
//! Demographic events for stochastic runs: births (+1), deaths (−1),
//! immigration at the constant rate `immigration` (+1) and emigration
//! emigration·N (−1). With r = b − d, the logistic part splits into
//!
//! - births B₀ = b·N and deaths D₀ = d·N + r·N²/K when r ≥ 0 (crowding
//!   raises deaths);
//! - births B₀ = b·N + |r|·N²/K and deaths D₀ = d·N when r < 0 (the N²
//!   term of a declining logistic is positive, so it goes to births and no
//!   rate is ever negative).
//!
//! Either way B₀ − D₀ = r·N·(1 − N/K). With an Allee threshold A the growth
//! is (B₀ − D₀)·(N/A − 1) = [B₀·N/A + D₀] − [D₀·N/A + B₀], so
//! births = B₀·N/A + D₀ and deaths = D₀·N/A + B₀: both non-negative, and
//! the turnover B₀ + D₀ of the plain logistic is scaled by (1 + N/A).
//! Far below A the per-capita birth and death rates tend to d and b
//! (swapped), so the population declines at rate r; at N = A births equal
//! deaths.

use super::exponential::{BIRTH, DEATH, EMIGRATION_SPEC, IMMIGRATION_SPEC};
use crate::model::{
    Group, Guarantees, Jacobian, ModelSpec, ParamSpec, Params, Propensities, State, Unit,
};

pub const B: usize = 0;
pub const D: usize = 1;
pub const K: usize = 2;
pub const IMMIGRATION: usize = 3;
pub const EMIGRATION: usize = 4;
pub const ALLEE: usize = 5;

pub static SPEC: ModelSpec = ModelSpec {
    key: "logistic",
    title: "Logistic growth",
    group: Group::SinglePopulation,
    summary: "One population whose growth slows to zero at its carrying capacity, with optional immigration, emigration and Allee threshold.",
    equations: "dN/dt = (b − d)·N·(1 − N/K)·φ(N) − emigration·N + immigration\nφ(N) = N/A − 1 with an Allee threshold A, else 1",
    species: &["population"],
    default_initial: &[10.0],
    params: &[
        BIRTH,
        DEATH,
        ParamSpec::new("K", "carrying capacity", Unit::Individuals, 1000.0, (1e-9, 1e12), "Density at which births and deaths balance."),
        IMMIGRATION_SPEC,
        EMIGRATION_SPEC,
        ParamSpec::new("A", "Allee threshold", Unit::Individuals, 0.0, (0.0, 1e12), "Below this density the population declines (strong Allee effect); 0 or absent for none. Needs b > d.").or_default(),
    ],
    choice: None,
    rhs,
    jacobian,
    equilibria,
    outcome: super::no_outcome,
    check,
    guarantees,
    boundaries: &[],
    channels: &super::ONE_POPULATION_CHANNELS,
    propensities,
};

/// One species: no cycles, and bounded by its carrying capacity plus what
/// immigration brings. The quadratic's roots are every equilibrium when
/// r = b − d ≠ 0; with an Allee threshold, 0, A and K are every equilibrium
/// only without immigration and emigration. Every term but immigration has
/// the factor N.
fn guarantees(p: &Params) -> Guarantees {
    let plain = super::unharvested(p);
    let complete = if p[ALLEE] > 0.0 {
        p[IMMIGRATION] == 0.0 && p[EMIGRATION] == 0.0
    } else {
        p[B] != p[D]
    };
    Guarantees {
        bounded: plain,
        no_cycles: true,
        stable_interior_is_global: false,
        closed_forms_complete: plain && complete,
        per_capita_growth: plain && p[IMMIGRATION] == 0.0,
    }
}

fn check(p: &Params) -> Result<(), (&'static str, String)> {
    if p[ALLEE] > 0.0 && p[B] <= p[D] {
        return Err((
            "A",
            format!(
                "an Allee threshold needs births to exceed deaths (b = {} ≤ d = {})",
                p[B], p[D]
            ),
        ));
    }
    Ok(())
}

fn growth_and_slope(p: &Params, n: f64) -> (f64, f64) {
    let r = p[B] - p[D];
    let u = n * (1.0 - n / p[K]);
    let du = 1.0 - 2.0 * n / p[K];
    if p[ALLEE] > 0.0 {
        let v = n / p[ALLEE] - 1.0;
        (r * u * v, r * (du * v + u / p[ALLEE]))
    } else {
        (r * u, r * du)
    }
}

fn rhs(p: &Params, x: &State) -> State {
    let (g, _) = growth_and_slope(p, x[0]);
    State::new(g - p[EMIGRATION] * x[0] + p[IMMIGRATION], 0.0)
}

/// Births and deaths of the logistic part, split as in the module notes.
fn births_and_deaths(p: &Params, n: f64) -> (f64, f64) {
    let crowding = (p[B] - p[D]) * n * n / p[K];
    let (b0, d0) = if crowding >= 0.0 {
        (p[B] * n, p[D] * n + crowding)
    } else {
        (p[B] * n - crowding, p[D] * n)
    };
    if p[ALLEE] > 0.0 {
        let phi = n / p[ALLEE];
        (b0 * phi + d0, d0 * phi + b0)
    } else {
        (b0, d0)
    }
}

fn propensities(p: &Params, x: &State, out: &mut Propensities) {
    let n = x[0];
    let (births, deaths) = births_and_deaths(p, n);
    *out = [
        births,
        deaths,
        p[IMMIGRATION],
        p[EMIGRATION] * n,
        0.0,
        0.0,
        0.0,
        0.0,
    ];
}

fn jacobian(p: &Params, x: &State) -> Jacobian {
    let (_, slope) = growth_and_slope(p, x[0]);
    Jacobian::new(slope - p[EMIGRATION], 0.0, 0.0, 0.0)
}

/// Roots of −(r/K)N² + (r − emigration)N + immigration = 0 without an Allee
/// threshold; with one, the analysis finds them numerically.
fn equilibria(p: &Params) -> Vec<State> {
    if p[ALLEE] > 0.0 {
        return vec![
            State::zeros(),
            State::new(p[ALLEE], 0.0),
            State::new(p[K], 0.0),
        ];
    }
    let r = p[B] - p[D];
    let (qa, qb, qc) = (-r / p[K], r - p[EMIGRATION], p[IMMIGRATION]);
    if qa == 0.0 {
        return if qb != 0.0 {
            vec![State::new(-qc / qb, 0.0)]
        } else {
            vec![State::zeros()]
        };
    }
    let disc = qb * qb - 4.0 * qa * qc;
    if disc < 0.0 {
        return vec![];
    }
    let s = disc.sqrt();
    vec![
        State::new((-qb + s) / (2.0 * qa), 0.0),
        State::new((-qb - s) / (2.0 * qa), 0.0),
    ]
}

/// Closed form of the plain logistic (no immigration, emigration or Allee
/// effect): N(t) = K N0 e^{rt} / (K + N0 (e^{rt} − 1)) (Verhulst 1838).
pub fn exact(p: &Params, n0: f64, t: f64) -> f64 {
    let r = p[B] - p[D];
    let g = (r * t).exp();
    p[K] * n0 * g / (p[K] + n0 * (g - 1.0))
}
