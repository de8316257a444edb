//! Lotka–Volterra competition: the four outcomes and their inequalities
//! (Gause 1934; e.g. Gotelli 2008, A Primer of Ecology, ch. 8), and a
//! worked example from a textbook.

mod common;

use common::{assert_close, problem};
use tussock_core::analysis::{analyze, LongRunKind, Stability};

fn competition(p: [f64; 6], initial: [f64; 2]) -> tussock_core::Problem {
    let [r1, r2, k1, k2, a12, a21] = p;
    problem(
        "competition",
        &[
            ("r1", r1),
            ("r2", r2),
            ("K1", k1),
            ("K2", k2),
            ("alpha12", a12),
            ("alpha21", a21),
        ],
        &initial,
        50.0,
        0.5,
    )
}

#[test]
fn the_four_outcomes_follow_the_invasion_inequalities() {
    // (params r1, r2, K1, K2, α12, α21), expected verdict, survivors from a
    // start where both are rare.
    let cases: [([f64; 6], &str, [bool; 2]); 4] = [
        (
            [0.8, 0.5, 600.0, 400.0, 0.5, 0.4],
            "coexistence",
            [true, true],
        ),
        (
            [0.8, 0.5, 600.0, 400.0, 0.6, 0.9],
            "species_1_excludes_2",
            [true, false],
        ),
        (
            [0.8, 0.5, 300.0, 400.0, 1.2, 0.5],
            "species_2_excludes_1",
            [false, true],
        ),
        (
            [0.8, 0.5, 500.0, 500.0, 1.5, 1.4],
            "founder_control",
            [true, false],
        ),
    ];
    for (params, verdict, survivors) in cases {
        // For founder control, give species 1 the head start.
        let p = competition(params, [30.0, 10.0]);
        let found = analyze(&p);
        assert_eq!(
            found.outcome.as_ref().map(|o| o.kind),
            Some(verdict),
            "{params:?}"
        );
        let alive: Vec<bool> = found.long_run.extinct.iter().map(|e| !e).collect();
        assert_eq!(
            alive, survivors,
            "{params:?}: long run {:?}",
            found.long_run
        );
        if verdict == "coexistence" {
            let [_, _, k1, k2, a12, a21] = params;
            let det = 1.0 - a12 * a21;
            assert_close(
                "N1*",
                found.long_run.max[0],
                (k1 - a12 * k2) / det,
                1e-6,
                0.0,
            );
            assert_close(
                "N2*",
                found.long_run.max[1],
                (k2 - a21 * k1) / det,
                1e-6,
                0.0,
            );
        }
    }
    // Founder control: the other head start flips the winner.
    let p = competition([0.8, 0.5, 500.0, 500.0, 1.5, 1.4], [10.0, 30.0]);
    assert_eq!(analyze(&p).long_run.extinct, vec![true, false]);
}

/// Strogatz (2015), Nonlinear Dynamics and Chaos, 2nd ed., Example 6.4.1
/// ("rabbits versus sheep", from memory): ẋ = x(3 − x − 2y), ẏ = y(2 − x − y),
/// i.e. r1 = 3, K1 = 3, α12 = 2, r2 = 2, K2 = 2, α21 = 1. Fixed points:
/// (0,0) unstable node with λ = 3, 2; (0,2) stable node with λ = −1, −2;
/// (3,0) stable node with λ = −3, −1; (1,1) saddle with λ = −1 ± √2.
#[test]
fn strogatz_rabbits_versus_sheep() {
    let p = competition([3.0, 2.0, 3.0, 2.0, 2.0, 1.0], [0.5, 0.5]);
    let found = analyze(&p);
    let expected: [([f64; 2], Stability, [f64; 2]); 4] = [
        ([0.0, 0.0], Stability::UnstableNode, [3.0, 2.0]),
        ([0.0, 2.0], Stability::StableNode, [-1.0, -2.0]),
        ([3.0, 0.0], Stability::StableNode, [-1.0, -3.0]),
        (
            [1.0, 1.0],
            Stability::Saddle,
            [
                -1.0 + std::f64::consts::SQRT_2,
                -1.0 - std::f64::consts::SQRT_2,
            ],
        ),
    ];
    assert_eq!(found.equilibria.iter().filter(|e| e.feasible).count(), 4);
    for (state, stability, eigs) in expected {
        let eq = found
            .equilibria
            .iter()
            .find(|e| (e.state[0] - state[0]).abs() < 1e-9 && (e.state[1] - state[1]).abs() < 1e-9)
            .unwrap_or_else(|| panic!("no equilibrium at {state:?}: {:?}", found.equilibria));
        assert_eq!(eq.stability, stability, "{state:?}");
        for (got, want) in eq.eigenvalues.iter().zip(eigs) {
            assert_close(
                &format!("eigenvalue at {state:?}"),
                got.0,
                want,
                1e-12,
                1e-12,
            );
            assert_eq!(got.1, 0.0);
        }
    }
    assert_eq!(found.outcome.unwrap().kind, "founder_control");
}

#[test]
fn long_run_kind_of_a_coexisting_pair_is_equilibrium() {
    let p = competition([0.8, 0.5, 600.0, 400.0, 0.5, 0.4], [5.0, 5.0]);
    assert_eq!(analyze(&p).long_run.kind, LongRunKind::Equilibrium);
}
