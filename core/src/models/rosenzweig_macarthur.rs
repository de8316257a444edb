//! Rosenzweig–MacArthur predator–prey model (Rosenzweig & MacArthur 1963):
//! logistic prey and a predator with a saturating functional response.
//!
//! State order: prey N, predator P.
//!
//! dN/dt = r N (1 − N/K) − f(N, P) P
//! dP/dt = e f(N, P) P − m P
//!
//! with the functional response f chosen in the scenario
//! (`functional_response`):
//! - `holling_i`: f = a N (Holling 1959, type I)
//! - `holling_ii`: f = a N / (1 + a h N) (type II, the default)
//! - `holling_iii`: f = a N² / (1 + a h N²) (type III, sigmoid)
//! - `beddington_deangelis`: f = a N / (1 + a h N + c P) (Beddington 1975;
//!   DeAngelis et al. 1975; predator interference c)
//!
//! Demographic events for stochastic runs (each changes one species by one
//! individual; the rates sum back to the equations above):
//! - prey births r·N (+1 prey);
//! - prey crowding deaths r·N²/K (−1 prey);
//! - predation f(N, P)·P (−1 prey);
//! - predator births e·f(N, P)·P (+1 predator), separate from the predation
//!   that feeds it;
//! - predator deaths m·P (−1 predator).

use crate::model::{
    BoundaryCurve, ChoiceSpec, Group, Guarantees, Jacobian, ModelSpec, Outcome, ParamSpec, Params,
    Propensities, State, Unit,
};

pub const R: usize = 0;
pub const K: usize = 1;
pub const A: usize = 2;
pub const H: usize = 3;
pub const E: usize = 4;
pub const M: usize = 5;
pub const C: usize = 6;

pub const HOLLING_I: usize = 0;
pub const HOLLING_II: usize = 1;
pub const HOLLING_III: usize = 2;
pub const BEDDINGTON_DEANGELIS: usize = 3;

static RESPONSE: ChoiceSpec = ChoiceSpec {
    key: "functional_response",
    name: "functional response",
    options: &[
        ("holling_i", "Holling type I (linear)"),
        ("holling_ii", "Holling type II (saturating)"),
        ("holling_iii", "Holling type III (sigmoid)"),
        (
            "beddington_deangelis",
            "Beddington–DeAngelis (predator interference)",
        ),
    ],
    default: HOLLING_II,
};

pub static SPEC: ModelSpec = ModelSpec {
    key: "rosenzweig_macarthur",
    title: "Rosenzweig–MacArthur predator–prey",
    group: Group::PredatorPrey,
    summary: "Prey grow logistically; each predator's kill rate saturates with prey density because handling prey takes time.",
    equations: "dN/dt = r·N·(1 − N/K) − f(N,P)·P\ndP/dt = e·f(N,P)·P − m·P\nf = a·N/(1 + a·h·N) (type II)",
    species: &["prey", "predator"],
    default_initial: &[100.0, 10.0],
    params: &[
        ParamSpec::new("r", "prey growth rate", Unit::PerTime, 1.0, (0.0, 100.0), "Per-capita growth rate of the prey at low density without predators."),
        ParamSpec::new("K", "prey carrying capacity", Unit::Individuals, 500.0, (1e-9, 1e12), "Prey density at which prey growth stops."),
        ParamSpec::new("a", "attack rate", Unit::PerIndividualPerTime, 0.02, (0.0, 100.0), "Prey found and attacked per predator per prey individual per time unit."),
        ParamSpec::new("h", "handling time", Unit::Time, 0.5, (0.0, 1e6), "Time a predator spends on each prey caught; 1/h is its largest kill rate."),
        ParamSpec::new("e", "conversion efficiency", Unit::Dimensionless, 0.4, (0.0, 10.0), "New predators produced per prey eaten."),
        ParamSpec::new("m", "predator mortality", Unit::PerTime, 0.3, (0.0, 100.0), "Per-capita death rate of predators."),
        ParamSpec::new("c", "predator interference", Unit::PerIndividual, 0.0, (0.0, 100.0), "How much predators hinder each other's hunting (Beddington–DeAngelis only).").or_default(),
    ],
    choice: Some(&RESPONSE),
    rhs,
    jacobian,
    equilibria,
    outcome,
    check: super::no_check,
    guarantees,
    boundaries: &[
        BoundaryCurve {
            key: "predator_persists",
            label: "K = N*: above it the predator can persist",
            level: |p| interior_prey(p).map(|n| p[K] - n),
        },
        BoundaryCurve {
            key: "hopf",
            label: "K = K_H: above it the equilibrium gives way to cycles (Hopf)",
            level: |p| hopf_threshold(p).map(|k_h| p[K] - k_h),
        },
    ],
    channels: &super::PREDATOR_PREY_CHANNELS,
    propensities,
};

/// Without harvest the model is dissipative (prey below K eventually, and
/// e·N + P bounded). Type I is Lotka–Volterra with logistic prey: no cycles
/// by the Dulac function 1/(N·P). Type II: a locally stable interior
/// equilibrium is globally stable in the interior (Hsu 1978, Math. Biosci.
/// 39:1–10; the limit cycle above K_H is unique, Cheng 1981, SIAM J. Math.
/// Anal. 12:541). Types I–III have one interior prey density at most, so
/// their closed forms are complete; Beddington–DeAngelis needs a search.
/// Both equations have the factor N or P, with per-capita rates finite at
/// non-negative densities (1 + a h N + c P ≥ 1).
fn guarantees(p: &Params) -> Guarantees {
    let plain = super::unharvested(p);
    Guarantees {
        bounded: plain,
        no_cycles: plain && p.choice == HOLLING_I && p[R] > 0.0,
        stable_interior_is_global: plain && p.choice == HOLLING_II,
        closed_forms_complete: plain && p.choice != BEDDINGTON_DEANGELIS,
        per_capita_growth: plain,
    }
}

/// f(N, P) and its partial derivatives ∂f/∂N, ∂f/∂P.
fn response(p: &Params, n: f64, pred: f64) -> (f64, f64, f64) {
    let (a, h) = (p[A], p[H]);
    match p.choice {
        HOLLING_I => (a * n, a, 0.0),
        HOLLING_III => {
            let d = 1.0 + a * h * n * n;
            (a * n * n / d, 2.0 * a * n / (d * d), 0.0)
        }
        BEDDINGTON_DEANGELIS => {
            let d = 1.0 + a * h * n + p[C] * pred;
            (
                a * n / d,
                a * (1.0 + p[C] * pred) / (d * d),
                -a * p[C] * n / (d * d),
            )
        }
        _ => {
            let d = 1.0 + a * h * n;
            (a * n / d, a / (d * d), 0.0)
        }
    }
}

fn rhs(p: &Params, x: &State) -> State {
    let (n, pred) = (x[0], x[1]);
    let (f, _, _) = response(p, n, pred);
    State::new(
        p[R] * n * (1.0 - n / p[K]) - f * pred,
        p[E] * f * pred - p[M] * pred,
    )
}

fn propensities(p: &Params, x: &State, out: &mut Propensities) {
    let (n, pred) = (x[0], x[1]);
    let (f, _, _) = response(p, n, pred);
    let predation = f * pred;
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

fn jacobian(p: &Params, x: &State) -> Jacobian {
    let (n, pred) = (x[0], x[1]);
    let (f, f_n, f_p) = response(p, n, pred);
    Jacobian::new(
        p[R] * (1.0 - 2.0 * n / p[K]) - f_n * pred,
        -(f + f_p * pred),
        p[E] * f_n * pred,
        p[E] * (f + f_p * pred) - p[M],
    )
}

/// Prey density where the predator's growth balances its deaths,
/// e·f(N*) = m, for the responses with a closed form.
pub fn interior_prey(p: &Params) -> Option<f64> {
    let (a, h, e, m) = (p[A], p[H], p[E], p[M]);
    if a <= 0.0 || e <= 0.0 {
        return None;
    }
    match p.choice {
        HOLLING_I => Some(m / (e * a)),
        HOLLING_II => (e > m * h).then(|| m / (a * (e - m * h))),
        HOLLING_III => (e > m * h).then(|| (m / (a * (e - m * h))).sqrt()),
        _ => None,
    }
}

/// The carrying capacity at which the interior equilibrium of the type II
/// model loses stability through a Hopf bifurcation:
/// K_H = (e + m h) / (a h (e − m h)) (Rosenzweig 1971; e.g. Kot 2001,
/// Elements of Mathematical Ecology, §9). None when h = 0 or e ≤ m h.
pub fn hopf_threshold(p: &Params) -> Option<f64> {
    let (a, h, e, m) = (p[A], p[H], p[E], p[M]);
    (p.choice == HOLLING_II && a > 0.0 && h > 0.0 && e > m * h)
        .then(|| (e + m * h) / (a * h * (e - m * h)))
}

fn equilibria(p: &Params) -> Vec<State> {
    let mut out = vec![State::zeros(), State::new(p[K], 0.0)];
    if let Some(n) = interior_prey(p) {
        let (f, _, _) = response(p, n, 0.0);
        if f > 0.0 {
            out.push(State::new(n, p[R] * n * (1.0 - n / p[K]) / f));
        }
    }
    out
}

fn outcome(p: &Params) -> Option<Outcome> {
    if p.choice != HOLLING_II {
        return None;
    }
    let Some(n_star) = interior_prey(p) else {
        return Some(Outcome {
            kind: "predator_cannot_persist",
            text: format!(
                "The predator cannot persist at any prey density: even at full kill rate it converts too little (e = {} ≤ m·h = {}).",
                p[E],
                p[M] * p[H]
            ),
        });
    };
    if n_star >= p[K] {
        return Some(Outcome {
            kind: "predator_cannot_persist",
            text: format!(
                "The predator needs {n_star:.4} prey to replace itself, more than the carrying capacity K = {}: it dies out.",
                p[K]
            ),
        });
    }
    let k_h = hopf_threshold(p)?;
    let ratio = p[K] / k_h;
    let text = if p[K] < k_h {
        format!(
            "K = {} is below the Hopf threshold K_H = {k_h:.4} ({:.0}% of it): predator and prey settle to a stable equilibrium.",
            p[K],
            ratio * 100.0
        )
    } else {
        format!(
            "K = {} is above the Hopf threshold K_H = {k_h:.4} ({ratio:.2}× it): the equilibrium is unstable and the populations cycle (paradox of enrichment).",
            p[K]
        )
    };
    Some(Outcome {
        kind: if p[K] < k_h {
            "stable_equilibrium"
        } else {
            "limit_cycle"
        },
        text,
    })
}
