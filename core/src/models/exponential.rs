//! Exponential growth of one population with births, deaths, immigration
//! and emigration (Malthus 1798; the linear birth–death–immigration model).
//!
//! State: N.
//!
//! dN/dt = (b − d − emigration)·N + immigration
//!
//! Demographic events for stochastic runs (the linear
//! birth–death–immigration–emigration process; Kendall 1948; Bailey 1964,
//! The Elements of Stochastic Processes, ch. 8): births b·N (+1), deaths
//! d·N (−1), immigration at the constant rate `immigration` (+1),
//! emigration emigration·N (−1).

use crate::model::{
    Group, Guarantees, Jacobian, ModelSpec, ParamSpec, Params, Propensities, State, Unit,
};

pub const B: usize = 0;
pub const D: usize = 1;
pub const IMMIGRATION: usize = 2;
pub const EMIGRATION: usize = 3;

/// Births, deaths and movement shared by the one-population models.
pub(super) const BIRTH: ParamSpec = ParamSpec::new(
    "b",
    "birth rate",
    Unit::PerTime,
    0.5,
    (0.0, 100.0),
    "Per-capita births per time unit.",
);
pub(super) const DEATH: ParamSpec = ParamSpec::new(
    "d",
    "death rate",
    Unit::PerTime,
    0.3,
    (0.0, 100.0),
    "Per-capita deaths per time unit; r = b − d.",
);
pub(super) const IMMIGRATION_SPEC: ParamSpec = ParamSpec::new(
    "immigration",
    "immigration",
    Unit::IndividualsPerTime,
    0.0,
    (0.0, 1e9),
    "Individuals arriving from outside per time unit, whatever the density.",
)
.or_default();
pub(super) const EMIGRATION_SPEC: ParamSpec = ParamSpec::new(
    "emigration",
    "emigration rate",
    Unit::PerTime,
    0.0,
    (0.0, 100.0),
    "Per-capita rate of leaving the population.",
)
.or_default();

pub static SPEC: ModelSpec = ModelSpec {
    key: "exponential",
    title: "Exponential growth",
    group: Group::SinglePopulation,
    summary: "One population whose births and deaths are proportional to its size, with constant immigration and per-capita emigration.",
    equations: "dN/dt = (b − d − emigration)·N + immigration",
    species: &["population"],
    default_initial: &[10.0],
    params: &[BIRTH, DEATH, IMMIGRATION_SPEC, EMIGRATION_SPEC],
    choice: None,
    rhs,
    jacobian,
    equilibria,
    outcome: super::no_outcome,
    check: super::no_check,
    guarantees,
    boundaries: &[],
    channels: &super::ONE_POPULATION_CHANNELS,
    propensities,
};

/// One species: no cycles. Bounded when the net rate is negative; the one
/// closed-form equilibrium is the only one unless the net rate is zero.
/// Every term but immigration has the factor N.
fn guarantees(p: &Params) -> Guarantees {
    let plain = super::unharvested(p);
    Guarantees {
        bounded: plain && net_rate(p) < 0.0,
        no_cycles: true,
        stable_interior_is_global: false,
        closed_forms_complete: plain && net_rate(p) != 0.0,
        per_capita_growth: plain && p[IMMIGRATION] == 0.0,
    }
}

fn net_rate(p: &Params) -> f64 {
    p[B] - p[D] - p[EMIGRATION]
}

fn rhs(p: &Params, x: &State) -> State {
    State::new(net_rate(p) * x[0] + p[IMMIGRATION], 0.0)
}

fn propensities(p: &Params, x: &State, out: &mut Propensities) {
    let n = x[0];
    *out = [
        p[B] * n,
        p[D] * n,
        p[IMMIGRATION],
        p[EMIGRATION] * n,
        0.0,
        0.0,
        0.0,
        0.0,
    ];
}

fn jacobian(p: &Params, _x: &State) -> Jacobian {
    Jacobian::new(net_rate(p), 0.0, 0.0, 0.0)
}

/// N* = immigration / (d + emigration − b) when that is a real balance.
fn equilibria(p: &Params) -> Vec<State> {
    let rate = net_rate(p);
    if rate == 0.0 {
        return if p[IMMIGRATION] == 0.0 {
            vec![State::zeros()]
        } else {
            vec![]
        };
    }
    vec![State::new(-p[IMMIGRATION] / rate, 0.0)]
}

/// Closed form N(t) = N0 e^{ρt} + I (e^{ρt} − 1)/ρ with ρ = b − d − emigration.
pub fn exact(p: &Params, n0: f64, t: f64) -> f64 {
    let rho = net_rate(p);
    if rho == 0.0 {
        return n0 + p[IMMIGRATION] * t;
    }
    n0 * (rho * t).exp() + p[IMMIGRATION] * ((rho * t).exp() - 1.0) / rho
}
