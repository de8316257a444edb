//! Lotka–Volterra predator–prey against its known closed-form properties.
//!
//! Sources:
//! - the first integral V = e·a·N − m·ln N + a·P − r·ln P is constant along
//!   solutions of the model without carrying capacity (Lotka 1925, Elements
//!   of Physical Biology; Volterra 1926; in Murray 2002, Mathematical Biology
//!   I, §3.1);
//! - small oscillations about (m/(e·a), r/a) have period 2π/√(r·m)
//!   (linearisation, same sources).

use tussock_core::models::lotka_volterra::{A, E, M, R};
use tussock_core::{models, solve, Params, Scenario, State};

fn problem(
    params: [f64; 4],
    initial: [f64; 2],
    t_end: f64,
    output_step: f64,
) -> tussock_core::Problem {
    let mut s = Scenario::with_defaults(
        models::find("lotka_volterra").unwrap(),
        initial.to_vec(),
        t_end,
    );
    for (symbol, v) in ["r", "a", "e", "m"].iter().zip(params) {
        s.params.insert(symbol.to_string(), v);
    }
    s.output_step = Some(output_step);
    s.rtol = Some(1e-11);
    s.atol = Some(1e-11);
    s.validate().expect("valid scenario")
}

fn first_integral(p: &Params, x: &State) -> f64 {
    p[E] * p[A] * x[0] - p[M] * x[0].ln() + p[A] * x[1] - p[R] * x[1].ln()
}

#[test]
fn first_integral_is_conserved_over_fifty_periods() {
    // (r, a, e, m), initial densities.
    let cases: [([f64; 4], [f64; 2]); 3] = [
        ([0.3, 0.02, 0.25, 0.2], [60.0, 5.0]),
        ([1.0, 0.1, 0.5, 0.5], [5.0, 2.0]),
        ([2.0, 0.01, 0.1, 1.5], [3000.0, 150.0]),
    ];
    for (params, initial) in cases {
        let period = 2.0 * std::f64::consts::PI / (params[0] * params[3]).sqrt();
        let p = problem(params, initial, 50.0 * period, period / 20.0);
        let traj = solve(&p);
        assert!(traj.stop.is_finished(), "{:?}", traj.stop);
        let v0 = first_integral(&p.params, &traj.states[0]);
        for (t, x) in traj.times.iter().zip(&traj.states) {
            let drift = ((first_integral(&p.params, x) - v0) / v0).abs();
            assert!(
                drift <= 1e-6,
                "params {params:?}: relative drift {drift:e} at t = {t}"
            );
        }
    }
}

#[test]
fn small_oscillations_have_period_two_pi_over_root_rm() {
    let cases: [[f64; 4]; 3] = [
        [0.3, 0.02, 0.25, 0.2],
        [1.0, 0.1, 0.5, 0.5],
        [0.8, 0.05, 0.3, 0.1],
    ];
    for params in cases {
        let [r, a, e, m] = params;
        let (n_star, p_star) = (m / (e * a), r / a);
        // Start 0.1% away from the equilibrium: small oscillations.
        let expected = 2.0 * std::f64::consts::PI / (r * m).sqrt();
        let p = problem(
            params,
            [n_star * 1.001, p_star],
            20.0 * expected,
            expected / 400.0,
        );
        let traj = solve(&p);
        // Times where prey rises through N*, linearly interpolated.
        let mut crossings = Vec::new();
        for w in traj.times.windows(2).zip(traj.states.windows(2)) {
            let ((t0, t1), (x0, x1)) = ((w.0[0], w.0[1]), (w.1[0][0], w.1[1][0]));
            if x0 < n_star && x1 >= n_star {
                crossings.push(t0 + (n_star - x0) / (x1 - x0) * (t1 - t0));
            }
        }
        assert!(crossings.len() >= 10, "too few cycles");
        let measured =
            (crossings[crossings.len() - 1] - crossings[0]) / (crossings.len() - 1) as f64;
        let rel = (measured - expected).abs() / expected;
        assert!(
            rel < 1e-4,
            "params {params:?}: period {measured} vs {expected} (rel {rel:e})"
        );
    }
}
