//! Rosenzweig–MacArthur against its published formulas.
//!
//! - Interior equilibrium with a type II response: N* = m / (a (e − m h)),
//!   P* = (r/a)(1 − N*/K)(1 + a h N*) (Rosenzweig & MacArthur 1963; e.g.
//!   Kot 2001, Elements of Mathematical Ecology, ch. 9; from memory).
//! - Hopf threshold K_H = (e + m h) / (a h (e − m h)): the interior point is
//!   stable for K < K_H and gives way to a limit cycle above it, the
//!   "paradox of enrichment" (Rosenzweig 1971, Science 171:385).
//! - However far above K_H, the cycle keeps both species: the positive
//!   quadrant is invariant, so densities never reach zero in finite time
//!   (Rosenzweig 1971 above; the cycle exists and is unique for every
//!   K > K_H, Cheng 1981, SIAM J. Math. Anal. 12:541), though its troughs
//!   get ever deeper (prey below 1e-40 at K = 500 in the greenhouse
//!   example, by scipy's LSODA in tests/python/test_scipy_deep_cycles.py).

mod common;

use common::{assert_close, problem};
use tussock_core::analysis::{analyze, LongRun, LongRunKind, Stability};
use tussock_core::models::rosenzweig_macarthur::{hopf_threshold, interior_prey};
use tussock_core::sweep::line::{sweep_line, LineRequest};
use tussock_core::sweep::map::{sweep_map, MapRequest, OutcomeClass};
use tussock_core::sweep::{AxisSpec, Simulate, Spacing, SweepOptions};
use tussock_core::Scenario;

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

/// The greenhouse example (spider mite and predatory mite) with its
/// carrying capacity set to `k`, and its own solver settings.
fn greenhouse(k: f64) -> tussock_core::Problem {
    let path = format!(
        "{}/../examples/greenhouse-mites.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(path).expect("the greenhouse example");
    let mut s = Scenario::from_json(&text).expect("a valid example");
    s.params.insert("K".to_string(), k);
    s.validate().expect("a valid example")
}

/// A cycle with both species present, however deep its troughs.
fn assert_cycle_with_both(what: &str, lr: &LongRun) {
    assert_eq!(lr.kind, LongRunKind::Cycle, "{what}: {lr:?}");
    assert_eq!(lr.extinct, [false, false], "{what}: {lr:?}");
    assert!(lr.period.is_some_and(|p| p > 0.0), "{what}: {lr:?}");
    for i in 0..2 {
        assert!(
            lr.min[i] > 0.0 && lr.min[i] < lr.max[i],
            "{what}: species {i} {lr:?}"
        );
    }
}

/// Strong enrichment: at K = 500 and 1000 the greenhouse cycle dips below
/// 1e-40 prey, far under any solver tolerance (at K = 5000 below the
/// smallest f64, 2.2e-308, which is then reported); analysis and sweeps
/// must still see a cycle with both species, with positive minima.
#[test]
fn deep_troughs_of_strongly_enriched_cycles_are_not_extinction() {
    for k in [420.0, 500.0, 1000.0, 5000.0] {
        let found = analyze(&greenhouse(k));
        assert_cycle_with_both(&format!("analyze K = {k}"), &found.long_run);
        assert!(found.long_run.min[0] < 1e-30, "{:?}", found.long_run);
    }
    let axis = AxisSpec {
        param: "K".to_string(),
        from: 500.0,
        to: 1000.0,
        steps: 2,
        spacing: Spacing::Linear,
    };
    let line = LineRequest {
        axis: axis.clone(),
        options: SweepOptions::default(),
    };
    let sweep = sweep_line(&greenhouse(150.0), &line, &mut |_, _| true).expect("a valid sweep");
    for point in &sweep.points {
        let lr = point.long_run.as_ref().expect("a long run");
        assert_cycle_with_both(&format!("sweep K = {}", point.value), lr);
    }
    // An outcome map that simulates every cell (theory alone already says
    // limit cycle here, by Poincaré–Bendixson).
    let map = MapRequest {
        x: axis,
        y: AxisSpec {
            param: "m".to_string(),
            from: 0.1,
            to: 0.1,
            steps: 1,
            spacing: Spacing::Linear,
        },
        options: SweepOptions {
            simulate: Simulate::Always,
            ..SweepOptions::default()
        },
        shard: None,
    };
    let map = sweep_map(&greenhouse(150.0), &map, &mut |_, _| true).expect("a valid map");
    for cell in &map.rows[0].cells {
        assert_eq!(
            cell.class,
            OutcomeClass::LimitCycle,
            "K = {}: {cell:?}",
            cell.x
        );
        let cycle = cell.cycle.as_ref().expect("the cycle's range");
        assert!(cycle.min.iter().all(|&m| m > 0.0), "{cycle:?}");
    }
}

/// The long run switches from a stable equilibrium with both species to a
/// cycle with both exactly at K_H = 1/(a h) + 2 m/(a (e − m h)) (Rosenzweig
/// 1971), and stays a cycle with both for every K above it.
#[test]
fn greenhouse_classification_switches_at_the_hopf_formula() {
    let (a, h, e, m) = (0.08, 0.1, 0.3, 0.1);
    let kh = 1.0 / (a * h) + 2.0 * m / (a * (e - m * h));
    assert_close("K_H", kh, 133.62, 1e-4, 0.0);
    assert_close(
        "K_H (core)",
        hopf_threshold(&greenhouse(150.0).params).unwrap(),
        kh,
        1e-12,
        0.0,
    );
    for factor in [0.8, 0.9, 1.1, 1.5, 2.0, 3.0, 4.0, 6.0, 8.0] {
        let k = factor * kh;
        let lr = analyze(&greenhouse(k)).long_run;
        if k < kh {
            assert_eq!(lr.kind, LongRunKind::Equilibrium, "K = {k}: {lr:?}");
            assert_eq!(lr.extinct, [false, false], "K = {k}: {lr:?}");
        } else {
            assert_cycle_with_both(&format!("K = {k}"), &lr);
        }
    }
}
