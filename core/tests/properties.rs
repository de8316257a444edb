//! Property tests over every model in the registry with random valid
//! parameters and states (proptest).
//!
//! - the analytic Jacobian agrees with central finite differences;
//! - every equilibrium returned satisfies f(x*) ≈ 0;
//! - the stability class agrees with the signs of the eigenvalues;
//! - trajectories stay finite and non-negative, or stop with a reason.

use proptest::prelude::*;
use tussock_core::analysis::{self, Stability};
use tussock_core::models::MODELS;
use tussock_core::{solve_with, ModelSpec, Params, SolverOptions, State};

/// Parameters drawn log-uniformly within a decade of each default (and
/// inside the valid range); optional parameters without a finite default
/// are left out half the time.
fn params_for(model: &'static ModelSpec) -> impl Strategy<Value = Params> {
    let n = model.params.len();
    (
        proptest::collection::vec((0.0..1.0f64, any::<bool>()), n),
        0..model.choice.map_or(1, |c| c.options.len()),
    )
        .prop_map(move |(draws, choice)| {
            let mut p = Params::defaults(model);
            p.choice = choice;
            for (i, spec) in model.params.iter().enumerate() {
                let (u, keep_default) = draws[i];
                let centre = if spec.default.is_finite() && spec.default > 0.0 {
                    spec.default
                } else if spec.optional && keep_default {
                    continue;
                } else {
                    // Optional with default 0 or infinity: a moderate value.
                    if spec.symbol == "K" {
                        500.0
                    } else {
                        0.05
                    }
                };
                let lo = (centre / 10.0).max(spec.min.max(1e-12));
                let hi = (centre * 10.0).min(spec.max);
                p[i] = (lo.ln() + u * (hi.ln() - lo.ln())).exp();
            }
            // The logistic Allee threshold needs b > d.
            if model.key == "logistic" && p[5] > 0.0 && p[0] <= p[1] {
                p[5] = 0.0;
            }
            p
        })
}

fn any_model() -> impl Strategy<Value = &'static ModelSpec> {
    proptest::sample::select(MODELS.to_vec())
}

fn state_for(model: &ModelSpec) -> impl Strategy<Value = State> {
    let n = model.n_species();
    (0.01..2000.0f64, 0.01..200.0f64)
        .prop_map(move |(a, b)| State::new(a, if n == 2 { b } else { 0.0 }))
}

fn model_params_state() -> impl Strategy<Value = (&'static ModelSpec, Params, State)> {
    any_model().prop_flat_map(|m| (Just(m), params_for(m), state_for(m)))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn jacobian_matches_finite_differences((model, p, x) in model_params_state()) {
        let n = model.n_species();
        let j = (model.jacobian)(&p, &x);
        for c in 0..n {
            let h = 1e-6 * x[c].abs().max(1e-3);
            let mut up = x;
            let mut down = x;
            up[c] += h;
            down[c] -= h;
            let fd = ((model.rhs)(&p, &up) - (model.rhs)(&p, &down)) / (2.0 * h);
            for r in 0..n {
                let scale = j[(r, c)].abs().max(fd[r].abs()).max(1e-6);
                prop_assert!(
                    (j[(r, c)] - fd[r]).abs() <= 1e-5 * scale + 1e-9,
                    "{} J[{r}][{c}] = {} but finite difference {} at {:?}", model.key, j[(r, c)], fd[r], x
                );
            }
        }
    }

    #[test]
    fn equilibria_are_zeros_of_the_vector_field((model, p, x) in model_params_state()) {
        let n = model.n_species();
        let scale = [x[0].max(1.0), x[1].max(1.0)];
        for eq in analysis::equilibria(model, &p, scale) {
            let s = State::new(eq.state[0], if n == 2 { eq.state[1] } else { 0.0 });
            let f = model.derivative(&p, &s);
            let j = (model.jacobian)(&p, &s);
            let jmax = (0..n).flat_map(|r| (0..n).map(move |c| (r, c))).map(|rc| j[rc].abs()).fold(1.0, f64::max);
            let size = 1.0 + eq.state.iter().map(|v| v.abs()).fold(0.0, f64::max);
            for i in 0..n {
                prop_assert!(f[i].abs() <= 1e-7 * size * jmax, "{}: f = {:?} at {:?}", model.key, f, eq.state);
            }
            // The class agrees with the eigenvalues.
            let res: Vec<f64> = eq.eigenvalues.iter().map(|e| e.0).collect();
            match eq.stability {
                Stability::StableNode | Stability::StableSpiral => prop_assert!(res.iter().all(|&r| r < 0.0)),
                Stability::UnstableNode | Stability::UnstableSpiral => prop_assert!(res.iter().all(|&r| r > 0.0)),
                Stability::Saddle => prop_assert!(res.iter().any(|&r| r > 0.0) && res.iter().any(|&r| r < 0.0)),
                Stability::Center | Stability::NonHyperbolic => {}
            }
            let spiral = matches!(eq.stability, Stability::StableSpiral | Stability::UnstableSpiral | Stability::Center);
            prop_assert_eq!(spiral, eq.eigenvalues.iter().any(|e| e.1 != 0.0));
        }
    }

    #[test]
    fn trajectories_stay_finite_and_non_negative(
        (model, p, x) in model_params_state(),
        harvest in (0.0..5.0f64, 0.0..1.0f64),
    ) {
        let mut p = p;
        p.harvest = State::new(harvest.0, if model.n_species() == 2 { harvest.1 } else { 0.0 });
        let traj = solve_with(model, &p, x, 200.0, 1.0, &SolverOptions::default());
        for s in &traj.states {
            for i in 0..model.n_species() {
                prop_assert!(s[i].is_finite() && s[i] >= 0.0, "{}: {:?}", model.key, s);
            }
        }
        if traj.stop.is_finished() {
            prop_assert_eq!(traj.times.len(), 201);
        }
    }
}

/// Σ change × rate over a model's event channels, the drift of its
/// stochastic process.
fn channel_drift(model: &ModelSpec, p: &Params, x: &State) -> (State, Vec<f64>) {
    let mut rates = [0.0; tussock_core::model::MAX_CHANNELS];
    (model.propensities)(p, x, &mut rates);
    let mut drift = State::zeros();
    for (channel, rate) in model.channels.iter().zip(rates) {
        drift[0] += f64::from(channel.change[0]) * rate;
        drift[1] += f64::from(channel.change[1]) * rate;
    }
    (drift, rates[..model.channels.len()].to_vec())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(500))]

    /// The stochastic process and the ODE are the same model: its mean
    /// change per unit time, Σ change × propensity, equals the right-hand
    /// side at every state (the defining property of the event
    /// description; e.g. Gillespie 1977, J. Phys. Chem. 81:2340, and the
    /// deterministic limit of Kurtz 1970). Every rate is finite and
    /// non-negative, and every change moves one species by one individual.
    #[test]
    fn event_channels_sum_to_the_right_hand_side(
        (model, p, x) in model_params_state(),
        whole in any::<bool>(),
    ) {
        let x = if whole { x.map(f64::round) } else { x };
        let (drift, rates) = channel_drift(model, &p, &x);
        let f = (model.rhs)(&p, &x);
        let scale = rates.iter().fold(1e-12, |m, r| m + r.abs());
        for i in 0..model.n_species() {
            prop_assert!(
                (drift[i] - f[i]).abs() <= 1e-12 * scale,
                "{}: species {i}: Σ change × rate = {} but rhs = {} at {:?}", model.key, drift[i], f[i], x
            );
        }
        prop_assert!(!model.channels.is_empty() && model.channels.len() <= tussock_core::model::MAX_CHANNELS);
        for (channel, rate) in model.channels.iter().zip(&rates) {
            prop_assert!(rate.is_finite() && *rate >= 0.0, "{}: {} has rate {rate} at {:?}", model.key, channel.name, x);
            let moved: i32 = channel.change.iter().map(|c| i32::from(c.abs())).sum();
            prop_assert_eq!(moved, 1, "{}: {} changes {:?}", model.key, channel.name, channel.change);
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    /// With harvest (positive) or stocking (negative) the stochastic
    /// process adds a removal or addition channel; at states of one
    /// individual or more its expected change is still the ODE's derivative
    /// with harvest (the solver's right-hand side, cross-checked against
    /// scipy in tests/python).
    #[test]
    fn expected_change_with_harvest_is_the_ode_derivative(
        (model, p, x) in model_params_state(),
        harvest in (-5.0..5.0f64, -5.0..5.0f64),
    ) {
        let n = model.n_species();
        let mut problem = tussock_core::Scenario::with_defaults(
            model,
            model.default_initial.to_vec(),
            10.0,
        )
        .validate()
        .unwrap();
        let mut p = p;
        p.harvest = State::new(harvest.0, if n == 2 { harvest.1 } else { 0.0 });
        problem.params = p;
        let x = x.map(|v| v.round().max(1.0));
        let x = State::new(x[0], if n == 2 { x[1] } else { 0.0 });
        let drift = tussock_core::stochastic::expected_change(&problem, 0.0, &x);
        let f = model.derivative(&p, &x);
        for i in 0..n {
            let scale = 1.0 + f[i].abs() + x[i] * 10.0;
            prop_assert!((drift[i] - f[i]).abs() <= 1e-9 * scale,
                "{}: species {i}: {} vs {} at {:?}", model.key, drift[i], f[i], x);
        }
    }
}
