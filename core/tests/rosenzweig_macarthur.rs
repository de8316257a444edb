//! Rosenzweig–MacArthur against its published formulas.
//!
//! - Interior equilibrium with a type II response: N* = m / (a (e − m h)),
//!   P* = (r/a)(1 − N*/K)(1 + a h N*) (Rosenzweig & MacArthur 1963; e.g.
//!   Kot 2001, Elements of Mathematical Ecology, ch. 9; from memory).
//! - Hopf threshold K_H = (e + m h) / (a h (e − m h)): the interior point is
//!   stable for K < K_H and gives way to a limit cycle above it, the
//!   "paradox of enrichment" (Rosenzweig 1971, Science 171:385).

mod common;

use common::{assert_close, problem};
use tussock_core::analysis::{analyze, LongRunKind, Stability};
use tussock_core::models::rosenzweig_macarthur::{hopf_threshold, interior_prey};

/// (r, a, h, e, m)
const SETS: [[f64; 5]; 4] = [
    [1.0, 0.02, 0.5, 0.4, 0.3],
    [0.5, 0.1, 0.2, 0.6, 0.5],
    [2.0, 0.005, 1.0, 0.3, 0.1],
    [1.2, 0.01, 0.05, 0.05, 0.4],
];

fn rm(set: [f64; 5], k: f64, initial: [f64; 2]) -> tussock_core::Problem {
    let [r, a, h, e, m] = set;
    problem(
        "rosenzweig_macarthur",
        &[("r", r), ("K", k), ("a", a), ("h", h), ("e", e), ("m", m)],
        &initial,
        100.0,
        0.5,
    )
}

/// The equilibrium with both species present.
fn interior(found: &tussock_core::analysis::Analysis) -> &tussock_core::analysis::Equilibrium {
    found
        .equilibria
        .iter()
        .find(|eq| eq.state.iter().all(|&x| x > 0.0))
        .expect("an interior equilibrium")
}

fn k_hopf(set: [f64; 5]) -> f64 {
    let [_, a, h, e, m] = set;
    (e + m * h) / (a * h * (e - m * h))
}

#[test]
fn interior_equilibrium_matches_the_formula() {
    for set in SETS {
        let [r, a, h, e, m] = set;
        let k = 0.8 * k_hopf(set);
        let p = rm(set, k, [k / 2.0, 1.0]);
        let n_star = m / (a * (e - m * h));
        let p_star = r / a * (1.0 - n_star / k) * (1.0 + a * h * n_star);
        assert_close(
            "N* (core formula)",
            interior_prey(&p.params).unwrap(),
            n_star,
            1e-12,
            0.0,
        );
        let found = analyze(&p);
        let interior = interior(&found);
        assert_close("N*", interior.state[0], n_star, 1e-9, 0.0);
        assert_close("P*", interior.state[1], p_star, 1e-9, 0.0);
        assert_close(
            "K_H",
            hopf_threshold(&p.params).unwrap(),
            k_hopf(set),
            1e-12,
            0.0,
        );
    }
}

#[test]
fn paradox_of_enrichment_stable_below_the_threshold_cycling_above() {
    for set in SETS {
        let kh = k_hopf(set);
        for (factor, stable) in [(0.7, true), (1.5, false)] {
            let k = factor * kh;
            let n_star = interior_prey(&rm(set, k, [1.0, 1.0]).params).unwrap();
            let p = rm(set, k, [n_star * 1.2, 1.0]);
            let found = analyze(&p);
            let interior = interior(&found);
            if stable {
                assert!(
                    interior.stability.is_stable(),
                    "{set:?} K = {k}: {:?}",
                    interior.stability
                );
                assert_eq!(
                    found.long_run.kind,
                    LongRunKind::Equilibrium,
                    "{set:?} K = {k}"
                );
                assert_eq!(
                    found.outcome.as_ref().map(|o| o.kind),
                    Some("stable_equilibrium")
                );
            } else {
                assert!(
                    matches!(
                        interior.stability,
                        Stability::UnstableSpiral | Stability::UnstableNode
                    ),
                    "{set:?} K = {k}: {:?}",
                    interior.stability
                );
                assert_eq!(found.long_run.kind, LongRunKind::Cycle, "{set:?} K = {k}");
                assert!(found.long_run.period.unwrap() > 0.0);
                // The cycle surrounds the unstable point.
                assert!(
                    found.long_run.min[0] < interior.state[0]
                        && interior.state[0] < found.long_run.max[0]
                );
                assert_eq!(found.outcome.as_ref().map(|o| o.kind), Some("limit_cycle"));
            }
        }
    }
}

#[test]
fn eigenvalues_cross_the_imaginary_axis_at_the_hopf_threshold() {
    for set in SETS {
        let kh = k_hopf(set);
        let re_at = |k: f64| {
            let p = rm(set, k, [1.0, 1.0]);
            let found = analyze(&p);
            interior(&found).eigenvalues[0].0
        };
        assert!(re_at(kh * 0.999) < 0.0, "{set:?}");
        assert!(re_at(kh * 1.001) > 0.0, "{set:?}");
    }
}
