//! One-population models against their closed-form solutions.
//!
//! - Exponential growth with immigration, N(t) = N0 e^{ρt} + I(e^{ρt} − 1)/ρ,
//!   the solution of a linear first-order ODE (any calculus text; e.g.
//!   Boyce & DiPrima, Elementary Differential Equations, §2.1).
//! - Logistic growth, N(t) = K N0 e^{rt} / (K + N0 (e^{rt} − 1))
//!   (Verhulst 1838; e.g. Gotelli 2008, A Primer of Ecology, eq. 2.2).

mod common;

use common::{assert_close, problem};
use tussock_core::models::{exponential, logistic};
use tussock_core::solve;

#[test]
fn exponential_growth_matches_its_closed_form() {
    // (b, d, immigration, emigration, N0, t_end)
    let cases = [
        (0.5, 0.3, 0.0, 0.0, 10.0, 30.0),
        (0.2, 0.4, 0.0, 0.0, 1000.0, 50.0),
        (0.1, 0.3, 5.0, 0.05, 2.0, 100.0),
        (0.3, 0.1, 12.0, 0.1, 0.0, 40.0),
    ];
    for (b, d, imm, emi, n0, t_end) in cases {
        let p = problem(
            "exponential",
            &[
                ("b", b),
                ("d", d),
                ("immigration", imm),
                ("emigration", emi),
            ],
            &[n0],
            t_end,
            t_end / 50.0,
        );
        let traj = solve(&p);
        assert!(traj.stop.is_finished());
        for (t, x) in traj.times.iter().zip(&traj.states) {
            let expected = exponential::exact(&p.params, n0, *t);
            assert_close(
                &format!("b={b} d={d} I={imm} t={t}"),
                x[0],
                expected,
                1e-8,
                1e-9,
            );
        }
    }
}

#[test]
fn logistic_growth_matches_verhulst() {
    // (b, d, K, N0, t_end): growth from below, decline from above K.
    let cases = [
        (0.6, 0.1, 1000.0, 5.0, 40.0),
        (2.0, 0.5, 50.0, 49.0, 10.0),
        (0.3, 0.2, 1e6, 1.0, 300.0),
        (0.5, 0.0, 200.0, 800.0, 20.0),
    ];
    for (b, d, k, n0, t_end) in cases {
        let p = problem(
            "logistic",
            &[("b", b), ("d", d), ("K", k)],
            &[n0],
            t_end,
            t_end / 100.0,
        );
        let traj = solve(&p);
        assert!(traj.stop.is_finished());
        for (t, x) in traj.times.iter().zip(&traj.states) {
            let expected = logistic::exact(&p.params, n0, *t);
            assert_close(
                &format!("r={} K={k} N0={n0} t={t}", b - d),
                x[0],
                expected,
                1e-8,
                1e-9,
            );
        }
    }
}
