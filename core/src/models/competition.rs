//! Lotka–Volterra competition between two species (Lotka 1925; Volterra
//! 1926; tested by Gause 1934).
//!
//! State order: species 1, species 2.
//!
//! dN1/dt = r1 N1 (1 − (N1 + α12 N2)/K1)
//! dN2/dt = r2 N2 (1 − (N2 + α21 N1)/K2)
//!
//! Demographic events for stochastic runs (each changes one species by one
//! individual; the rates sum back to the equations above):
//! - births of species i: r_i·N_i (+1);
//! - crowding deaths of species i: r_i·N_i·(N_i + α_ij·N_j)/K_i (−1), so
//!   crowding by either species acts through deaths.

use crate::model::{
    BoundaryCurve, Channel, ChannelKind, Group, Guarantees, Jacobian, ModelSpec, Outcome,
    ParamSpec, Params, Propensities, State, Unit,
};

pub const R1: usize = 0;
pub const R2: usize = 1;
pub const K1: usize = 2;
pub const K2: usize = 3;
pub const ALPHA12: usize = 4;
pub const ALPHA21: usize = 5;

pub static SPEC: ModelSpec = ModelSpec {
    key: "competition",
    title: "Lotka–Volterra competition",
    group: Group::Competition,
    summary: "Two species each grow logistically and each crowds the other by its competition coefficient.",
    equations: "dN1/dt = r1·N1·(1 − (N1 + α12·N2)/K1)\ndN2/dt = r2·N2·(1 − (N2 + α21·N1)/K2)",
    species: &["species 1", "species 2"],
    default_initial: &[20.0, 20.0],
    params: &[
        ParamSpec::new("r1", "growth rate of species 1", Unit::PerTime, 0.8, (0.0, 100.0), "Per-capita growth rate of species 1 when rare and alone."),
        ParamSpec::new("r2", "growth rate of species 2", Unit::PerTime, 0.5, (0.0, 100.0), "Per-capita growth rate of species 2 when rare and alone."),
        ParamSpec::new("K1", "carrying capacity of species 1", Unit::Individuals, 600.0, (1e-9, 1e12), "Density species 1 settles at when alone."),
        ParamSpec::new("K2", "carrying capacity of species 2", Unit::Individuals, 400.0, (1e-9, 1e12), "Density species 2 settles at when alone."),
        ParamSpec::new("alpha12", "effect of species 2 on species 1", Unit::Dimensionless, 0.6, (0.0, 100.0), "How many individuals of species 1 one individual of species 2 counts as, for species 1's crowding."),
        ParamSpec::new("alpha21", "effect of species 1 on species 2", Unit::Dimensionless, 0.9, (0.0, 100.0), "How many individuals of species 2 one individual of species 1 counts as, for species 2's crowding."),
    ],
    choice: None,
    rhs,
    jacobian,
    equilibria,
    outcome,
    check: super::no_check,
    guarantees,
    boundaries: &[
        BoundaryCurve {
            key: "species_1_invades",
            label: "K1 = α12·K2: beyond it species 1 can invade species 2",
            level: |p| Some(p[K1] - p[ALPHA12] * p[K2]),
        },
        BoundaryCurve {
            key: "species_2_invades",
            label: "K2 = α21·K1: beyond it species 2 can invade species 1",
            level: |p| Some(p[K2] - p[ALPHA21] * p[K1]),
        },
    ],
    channels: &[
        Channel::new("births of species 1", ChannelKind::Birth, [1, 0]),
        Channel::new("deaths of species 1", ChannelKind::Death, [-1, 0]),
        Channel::new("births of species 2", ChannelKind::Birth, [0, 1]),
        Channel::new("deaths of species 2", ChannelKind::Death, [0, -1]),
    ],
    propensities,
};

/// Without harvest the populations stay below their carrying capacities
/// eventually (bounded), and B = 1/(N1·N2) is a Dulac function:
/// div(B·f) = −r1/(K1·N2) − r2/(K2·N1) < 0, so there are no periodic orbits
/// (Bendixson–Dulac; e.g. Hofbauer & Sigmund 1998, Evolutionary Games and
/// Population Dynamics, §3.3; from memory). The four closed-form equilibria
/// are all of them unless 1 − α12·α21 = 0. Both equations have the factor
/// N1 or N2 (per-capita rates linear in the densities).
fn guarantees(p: &Params) -> Guarantees {
    let plain = super::unharvested(p);
    Guarantees {
        bounded: plain,
        no_cycles: plain && p[R1] > 0.0 && p[R2] > 0.0,
        stable_interior_is_global: false,
        closed_forms_complete: plain && (1.0 - p[ALPHA12] * p[ALPHA21]).abs() > 1e-12,
        per_capita_growth: plain,
    }
}

fn rhs(p: &Params, x: &State) -> State {
    let (n1, n2) = (x[0], x[1]);
    State::new(
        p[R1] * n1 * (1.0 - (n1 + p[ALPHA12] * n2) / p[K1]),
        p[R2] * n2 * (1.0 - (n2 + p[ALPHA21] * n1) / p[K2]),
    )
}

fn propensities(p: &Params, x: &State, out: &mut Propensities) {
    let (n1, n2) = (x[0], x[1]);
    *out = [
        p[R1] * n1,
        p[R1] * n1 * (n1 + p[ALPHA12] * n2) / p[K1],
        p[R2] * n2,
        p[R2] * n2 * (n2 + p[ALPHA21] * n1) / p[K2],
        0.0,
        0.0,
        0.0,
        0.0,
    ];
}

fn jacobian(p: &Params, x: &State) -> Jacobian {
    let (n1, n2) = (x[0], x[1]);
    Jacobian::new(
        p[R1] * (1.0 - (2.0 * n1 + p[ALPHA12] * n2) / p[K1]),
        -p[R1] * p[ALPHA12] * n1 / p[K1],
        -p[R2] * p[ALPHA21] * n2 / p[K2],
        p[R2] * (1.0 - (2.0 * n2 + p[ALPHA21] * n1) / p[K2]),
    )
}

fn equilibria(p: &Params) -> Vec<State> {
    let mut out = vec![
        State::zeros(),
        State::new(p[K1], 0.0),
        State::new(0.0, p[K2]),
    ];
    let det = 1.0 - p[ALPHA12] * p[ALPHA21];
    if det.abs() > 1e-12 {
        out.push(State::new(
            (p[K1] - p[ALPHA12] * p[K2]) / det,
            (p[K2] - p[ALPHA21] * p[K1]) / det,
        ));
    }
    out
}

/// The four outcomes from the invasion criteria: species 1 can invade
/// species 2 alone at K2 when K1 > α12·K2, species 2 can invade species 1
/// alone when K2 > α21·K1 (Gause 1934; e.g. Gotelli 2008, A Primer of
/// Ecology, ch. 8).
fn outcome(p: &Params) -> Option<Outcome> {
    let one_invades = p[K1] > p[ALPHA12] * p[K2];
    let two_invades = p[K2] > p[ALPHA21] * p[K1];
    let criteria = format!(
        "K1 = {} {} α12·K2 = {}; K2 = {} {} α21·K1 = {}",
        p[K1],
        if one_invades { ">" } else { "≤" },
        p[ALPHA12] * p[K2],
        p[K2],
        if two_invades { ">" } else { "≤" },
        p[ALPHA21] * p[K1],
    );
    let (kind, verdict) = match (one_invades, two_invades) {
        (true, true) => ("coexistence", "Both species can invade each other when rare: they coexist at a stable equilibrium"),
        (true, false) => ("species_1_excludes_2", "Species 1 can invade but species 2 cannot: species 1 excludes species 2"),
        (false, true) => ("species_2_excludes_1", "Species 2 can invade but species 1 cannot: species 2 excludes species 1"),
        (false, false) => ("founder_control", "Neither species can invade the other: whichever is ahead at the start wins (founder control)"),
    };
    Some(Outcome {
        kind,
        text: format!("{verdict} ({criteria})."),
    })
}
