//! Stochastic runs against published results for birth–death processes.
//!
//! - Linear birth–death (the `exponential` model without immigration):
//!   extinction by time t from n₀ individuals,
//!   P₀(t) = [d(e^{(b−d)t} − 1)/(b·e^{(b−d)t} − d)]^{n₀}, and eventually
//!   (d/b)^{n₀} for b > d (Kendall 1948, Ann. Math. Statist. 19:1; Bailey
//!   1964, The Elements of Stochastic Processes, §8.6), exactly and with
//!   tau-leaping at a size where leaps are taken.
//! - Pure death: N(t) ~ Binomial(n₀, e^{−dt}) (Bailey 1964, §8.5).
//! - Immigration–death from zero: N(t) ~ Poisson((I/d)(1 − e^{−dt})),
//!   stationary Poisson(I/d) (Bailey 1964, §8.7).
//! - Large populations: the ensemble mean follows the ODE ([`solve`]) to
//!   within its standard error plus 1% (the deviation of the mean is of
//!   order 1/K relative; Kurtz 1970, J. Appl. Probab. 7:49; van Kampen 2007,
//!   Stochastic Processes in Physics and Chemistry, ch. X).
//! - Reintroduction rows: a founder lineage of the linear process dies out
//!   independently of the others (the branching property; Kendall 1948), so
//!   releases of n₁ at 0 and n₂ at τ fail by T with probability
//!   p(T)^{n₁}·p(T − τ)^{n₂}.
//! - Environmental noise: the log multipliers recovered from a large run
//!   have the stated standard deviation and lag-one autocorrelation of a
//!   stationary AR(1) process (Box & Jenkins 1976, Time Series Analysis,
//!   §3.2.4).
//!
//! Every Monte Carlo estimate must lie within 3 standard errors of the
//! reference, at fixed seeds.

mod common;

use common::problem;
use tussock_core::events::EventSpec;
use tussock_core::stochastic::{
    establishment, run_ensemble, Ensemble, EnsembleOptions, EnsembleSummary, EnvironmentalNoise,
    EstablishmentRequest, Method, RunStop, StochasticOptions,
};
use tussock_core::{solve, Problem};

/// |estimate − expected| ≤ 3 standard errors + `allowance` (a stated
/// bias bound, zero for exact results).
fn check(what: &str, estimate: f64, expected: f64, standard_error: f64, allowance: f64) {
    let err = (estimate - expected).abs();
    assert!(
        err <= 3.0 * standard_error + allowance,
        "{what}: estimate {estimate}, expected {expected}, off by {err:.4e} \
         ({:.2} standard errors of {standard_error:.3e}, allowance {allowance:.3e})",
        err / standard_error
    );
}

fn options(runs: u64, seed: u64, method: Method) -> EnsembleOptions {
    EnsembleOptions {
        runs,
        seed,
        simulation: StochasticOptions {
            method,
            ..StochasticOptions::default()
        },
        ..EnsembleOptions::default()
    }
}

fn summary(problem: &Problem, options: &EnsembleOptions) -> EnsembleSummary {
    run_ensemble(problem, options, &mut |_, _| true).expect("valid ensemble")
}

/// Kendall's single-lineage extinction probability by time t.
fn lineage_extinct_by(b: f64, d: f64, t: f64) -> f64 {
    if b == d {
        return b * t / (1.0 + b * t);
    }
    let g = ((b - d) * t).exp();
    d * (g - 1.0) / (b * g - d)
}

fn birth_death(b: f64, d: f64, n0: f64, t_end: f64, step: f64) -> Problem {
    problem("exponential", &[("b", b), ("d", d)], &[n0], t_end, step)
}

/// Extinction by each grid time of `summary` against Kendall's P₀(t).
fn check_extinction_curve(label: &str, s: &EnsembleSummary, b: f64, d: f64, n0: f64) {
    let curve = &s.extinction_by_time[0];
    let runs = s.runs as f64;
    assert_eq!(s.runs, s.requested, "{label}: every run finished");
    for (k, &t) in s.times.iter().enumerate().skip(1) {
        let expected = lineage_extinct_by(b, d, t).powf(n0);
        let se = (expected * (1.0 - expected) / runs).sqrt().max(0.5 / runs);
        check(
            &format!("{label}: P0({t})"),
            curve.probability[k],
            expected,
            se,
            0.0,
        );
    }
}

#[test]
fn linear_birth_death_extinction_by_time_matches_kendall_exactly() {
    // (b, d, n0, horizon, output step)
    let cases = [
        (0.5, 0.4, 3.0, 20.0, 5.0),
        (1.0, 1.0, 2.0, 10.0, 2.0),
        (0.3, 0.6, 5.0, 12.0, 3.0),
    ];
    for (i, (b, d, n0, t_end, step)) in cases.into_iter().enumerate() {
        let p = birth_death(b, d, n0, t_end, step);
        let s = summary(&p, &options(4000, 100 + i as u64, Method::Exact));
        assert_eq!(s.steps.leaps, 0);
        check_extinction_curve(&format!("b={b} d={d} n0={n0} exact"), &s, b, d, n0);
    }
}

#[test]
fn linear_birth_death_extinction_by_time_matches_kendall_when_leaping() {
    // A subcritical process from 2000 individuals: leaps while it is large,
    // critical (exact) events near extinction. P0 passes from 0.03 to 0.87
    // over the checked times.
    let (b, d, n0) = (1.0, 1.1, 2000.0);
    let p = birth_death(b, d, n0, 80.0, 10.0);
    for method in [Method::TauLeap, Method::Auto] {
        let s = summary(&p, &options(2000, 7, method));
        assert!(
            s.steps.leaps > 50 * s.runs,
            "{method:?}: leaping engaged ({:?})",
            s.steps
        );
        check_extinction_curve(&format!("n0=2000 {method:?}"), &s, b, d, n0);
    }
}

#[test]
fn supercritical_birth_death_dies_out_with_probability_d_over_b_to_the_n0() {
    // By t = 12 the process is large or gone: P0(12) = 0.12453 against the
    // limit (d/b)^n0 = 0.125; the difference is the stated allowance.
    let (b, d, n0, t_end): (f64, f64, f64, f64) = (1.0, 0.5, 3.0, 12.0);
    let limit: f64 = (d / b).powf(n0);
    let gap = limit - lineage_extinct_by(b, d, t_end).powf(n0);
    for method in [Method::Exact, Method::Auto] {
        let p = birth_death(b, d, n0, t_end, t_end);
        let s = summary(&p, &options(4000, 3, method));
        let extinct = s.extinction[0].probability.unwrap();
        let se = (limit * (1.0 - limit) / s.runs as f64).sqrt();
        check(&format!("(d/b)^n0 {method:?}"), extinct, limit, se, gap);
    }
}

/// Final populations of every run.
fn finals(p: &Problem, options: &EnsembleOptions) -> Vec<f64> {
    let ensemble = Ensemble::new(p, options).unwrap();
    (0..options.runs)
        .map(|i| {
            let run = ensemble.simulate(i);
            assert_eq!(run.stop, RunStop::Finished);
            run.states.last().unwrap()[0]
        })
        .collect()
}

fn mean_and_variance(values: &[f64]) -> (f64, f64) {
    let n = values.len() as f64;
    let m = values.iter().sum::<f64>() / n;
    let v = values.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (n - 1.0);
    (m, v)
}

/// Mean and variance of final populations against a distribution with
/// the given mean, variance and fourth central moment; `relative_bias`
/// allows a stated bias of both, relative to their values.
fn check_moments(
    label: &str,
    values: &[f64],
    (mean, variance, mu4): (f64, f64, f64),
    relative_bias: f64,
) {
    let n = values.len() as f64;
    let (m, v) = mean_and_variance(values);
    let se_mean = (variance / n).sqrt();
    check(
        &format!("{label} mean"),
        m,
        mean,
        se_mean,
        relative_bias * mean,
    );
    let se_var = ((mu4 - variance * variance * (n - 3.0) / (n - 1.0)) / n).sqrt();
    check(
        &format!("{label} variance"),
        v,
        variance,
        se_var,
        relative_bias * variance,
    );
}

#[test]
fn pure_death_is_binomial() {
    // (n0, d, t): small enough to run exactly, and large enough to leap.
    for (n0, d, t, method) in [
        (100.0, 0.1, 10.0, Method::Exact),
        (20_000.0, 0.1, 10.0, Method::TauLeap),
        (20_000.0, 0.1, 10.0, Method::Auto),
    ] {
        let p = birth_death(0.0, d, n0, t, t);
        let values = finals(&p, &options(3000, 21, method));
        let q = (-d * t).exp();
        let (mean, var) = (n0 * q, n0 * q * (1.0 - q));
        // Binomial μ₄ = npq(1 + 3(n − 2)pq).
        let mu4 = var * (1.0 + 3.0 * (n0 - 2.0) * q * (1.0 - q));
        // Explicit tau-leaping is first-order accurate: a leap multiplies
        // the mean by 1 − dτ instead of e^{−dτ}, with dτ ≤ ε/g = 0.01 here,
        // so after time t the mean is low by at most d·t·(ε/g)/2 relative
        // (weak order one; Rathinam, Petzold, Cao & Gillespie 2005,
        // Multiscale Model. Simul. 4:867).
        let bias = if method == Method::Exact {
            0.0
        } else {
            d * t * (0.03 / 3.0) / 2.0
        };
        check_moments(
            &format!("pure death n0={n0} {method:?}"),
            &values,
            (mean, var, mu4),
            bias,
        );
    }
}

#[test]
fn immigration_death_is_poisson() {
    let (immigration, d) = (10.0, 0.5);
    // From zero at t = 2 (mean 12.64) and near stationarity at t = 30 (20).
    for t in [2.0, 30.0] {
        let p = problem(
            "exponential",
            &[("b", 0.0), ("d", d), ("immigration", immigration)],
            &[0.0],
            t,
            t,
        );
        let values = finals(&p, &options(3000, 5, Method::Exact));
        let lambda = immigration / d * (1.0 - (-d * t).exp());
        // Poisson μ₄ = λ(1 + 3λ).
        check_moments(
            &format!("immigration–death t={t}"),
            &values,
            (lambda, lambda, lambda * (1.0 + 3.0 * lambda)),
            0.0,
        );
        let zero_to_ten = values.iter().filter(|&&v| v <= 10.0).count() as f64 / 3000.0;
        let expected: f64 = (0..=10)
            .map(|k| (k as f64 * lambda.ln() - lambda - libm::lgamma(k as f64 + 1.0)).exp())
            .sum();
        check(
            &format!("immigration–death t={t} P(N ≤ 10)"),
            zero_to_ten,
            expected,
            (expected * (1.0 - expected) / 3000.0).sqrt(),
            0.0,
        );
    }
}

#[test]
fn ensemble_mean_approaches_the_ode_for_large_populations() {
    // Competition towards coexistence near 3000 and 1300 individuals, and
    // logistic growth to K = 20000.
    let cases = [
        (
            problem(
                "competition",
                &[
                    ("r1", 0.8),
                    ("r2", 0.5),
                    ("K1", 6000.0),
                    ("K2", 4000.0),
                    ("alpha12", 0.6),
                    ("alpha21", 0.9),
                ],
                &[300.0, 300.0],
                30.0,
                3.0,
            ),
            Method::Auto,
        ),
        (
            problem(
                "logistic",
                &[("b", 0.9), ("d", 0.2), ("K", 20_000.0)],
                &[1000.0],
                20.0,
                2.0,
            ),
            Method::TauLeap,
        ),
    ];
    for (p, method) in cases {
        let opts = EnsembleOptions {
            max_intervals: 10,
            ..options(200, 9, method)
        };
        let ensemble = Ensemble::new(&p, &opts).unwrap();
        let runs: Vec<_> = (0..opts.runs).map(|i| ensemble.simulate(i)).collect();
        let ode = solve(&{
            let mut q = p.clone();
            q.output_step = p.t_end / 10.0;
            q
        });
        for i in 0..p.model.n_species() {
            for (k, t) in ensemble.times().iter().enumerate() {
                let values: Vec<f64> = runs.iter().map(|r| r.states[k][i]).collect();
                let (mean, var) = mean_and_variance(&values);
                let expected = ode.states[k][i];
                check(
                    &format!("{} species {i} at t = {t} ({method:?})", p.model.key),
                    mean,
                    expected,
                    (var / values.len() as f64).sqrt(),
                    0.01 * expected,
                );
            }
        }
    }
}

#[test]
fn founder_rows_match_independent_lineages() {
    // b = 0.6, d = 0.5: a single founder's lineage is gone by T = 20 with
    // probability 0.7734 (the limit d/b is 0.833).
    let (b, d, horizon, gap) = (0.6, 0.5, 20.0, 2.0);
    let p = birth_death(b, d, 0.0, horizon, 1.0);
    let request = EstablishmentRequest {
        species: 0,
        founders: vec![1, 4, 12],
        releases: vec![1, 2],
        every: gap,
        runs: 3000,
        seed: 17,
        simulation: StochasticOptions {
            method: Method::Exact,
            ..StochasticOptions::default()
        },
        ..EstablishmentRequest::default()
    };
    let table = establishment(&p, &request, &mut |_, _| true).unwrap();
    // 1 founder cannot be split in two: five rows.
    assert_eq!(table.rows.len(), 5);
    for row in &table.rows {
        let fail_now = lineage_extinct_by(b, d, horizon);
        let fail_later = lineage_extinct_by(b, d, horizon - gap);
        let sizes = &row.release_sizes;
        let mut failure = fail_now.powf(sizes[0] as f64);
        if sizes.len() == 2 {
            failure *= fail_later.powf(sizes[1] as f64);
        }
        let expected = 1.0 - failure;
        let se = (expected * (1.0 - expected) / row.runs as f64).sqrt();
        check(
            &format!("{} founders in {:?}", row.founders, row.release_sizes),
            row.probability.unwrap(),
            expected,
            se,
            0.0,
        );
        let (lo, hi) = (row.ci.unwrap()[0], row.ci.unwrap()[1]);
        assert!(lo <= row.probability.unwrap() && row.probability.unwrap() <= hi);
    }
}

#[test]
fn pulses_remove_binomially_and_release_whole_individuals_with_the_right_mean() {
    // No births or deaths: only the pulses change the population.
    let mut scenario = common::scenario(
        "exponential",
        &[("b", 0.0), ("d", 0.0)],
        &[1000.0],
        3.0,
        1.0,
    );
    scenario.events = vec![
        EventSpec {
            time: 1.0,
            species: 0,
            remove_fraction: Some(0.3),
            ..EventSpec::default()
        },
        EventSpec {
            time: 2.0,
            species: 0,
            add: Some(10.4),
            ..EventSpec::default()
        },
    ];
    let p = scenario.validate().unwrap();
    let values = finals(&p, &options(4000, 2, Method::Exact));
    // 1000 − Binomial(1000, 0.3) + (10 or 11 with P(11) = 0.4):
    // mean 710.4, variance 210 + 0.24.
    let variance = 210.0 + 0.24;
    let mu4_binomial = 210.0 * (1.0 + 3.0 * 998.0 * 0.21);
    // μ₄ of a sum of independent parts: μ₄(X) + μ₄(Y) + 6σ²(X)σ²(Y).
    let mu4 = mu4_binomial + 0.24 * (1.0 - 3.0 * 0.24) + 6.0 * 210.0 * 0.24;
    check_moments(
        "remove 30% then add 10.4",
        &values,
        (710.4, variance, mu4),
        0.0,
    );
    assert!(values.iter().all(|v| v.fract() == 0.0));
}

#[test]
fn environmental_noise_has_the_stated_sd_and_autocorrelation() {
    // Births b·m_k and deaths d with d = b: over a time unit a large
    // population changes by the factor exp(b·m_k − d), so
    // ln m_k = ln((ln(N(k+1)/N(k)) + d)/b) recovers σ z_k − σ²/2.
    let (b, d, sd, rho, years) = (0.5, 0.5, 0.3, 0.6, 400usize);
    let p = birth_death(b, d, 1.0e6, years as f64, 1.0);
    let opts = EnsembleOptions {
        max_intervals: years,
        simulation: StochasticOptions {
            method: Method::TauLeap,
            noise: Some(EnvironmentalNoise {
                sd,
                autocorrelation: rho,
            }),
            ..StochasticOptions::default()
        },
        ..options(1, 31, Method::TauLeap)
    };
    let ensemble = Ensemble::new(&p, &opts).unwrap();
    let run = ensemble.simulate(0);
    assert_eq!(run.stop, RunStop::Finished);
    let logs: Vec<f64> = run
        .states
        .windows(2)
        .map(|w| (((w[1][0] / w[0][0]).ln() + d) / b).ln())
        .collect();
    let n = logs.len() as f64;
    let (mean, var) = mean_and_variance(&logs);
    // The stationary AR(1) mean is −σ²/2; its standard error is inflated by
    // (1 + ρ)/(1 − ρ) from the autocorrelation.
    check(
        "mean of ln m",
        mean,
        -sd * sd / 2.0,
        (sd * sd / n * (1.0 + rho) / (1.0 - rho)).sqrt(),
        0.0,
    );
    // Standard error of a sample SD of an AR(1) series ≈ σ√((1 + ρ²)/(2n(1 − ρ²))).
    check(
        "sd of ln m",
        var.sqrt(),
        sd,
        sd * ((1.0 + rho * rho) / (2.0 * n * (1.0 - rho * rho))).sqrt(),
        0.0,
    );
    let lag1 = logs
        .windows(2)
        .map(|w| (w[0] - mean) * (w[1] - mean))
        .sum::<f64>()
        / ((n - 1.0) * var);
    // Standard error of the lag-one autocorrelation ≈ √((1 − ρ²)/n)
    // (Bartlett 1946).
    check(
        "lag-one autocorrelation",
        lag1,
        rho,
        ((1.0 - rho * rho) / n).sqrt(),
        0.0,
    );
}

#[test]
fn pest_under_threshold_and_quasi_extinction_match_the_binomial() {
    // Pure death from 100 with d = 0.1: N(10) ~ Binomial(100, e^{−1}), and
    // a decreasing population is below a level by t exactly when N(t) is.
    let mut scenario = common::scenario(
        "exponential",
        &[("b", 0.0), ("d", 0.1)],
        &[100.0],
        20.0,
        1.0,
    );
    scenario.thresholds = Some(tussock_core::scenario::ThresholdSpec {
        economic_threshold: Some(40.0),
        quasi_extinction: Some(vec![Some(30.0)]),
        ..Default::default()
    });
    let p = scenario.validate().unwrap();
    let opts = EnsembleOptions {
        pest_day: Some(10.0),
        ..options(4000, 8, Method::Exact)
    };
    let s = summary(&p, &opts);
    let q = (-1.0f64).exp();
    let binomial_cdf = |k: u64| -> f64 {
        (0..=k)
            .map(|j| {
                let j = j as f64;
                (libm::lgamma(101.0) - libm::lgamma(j + 1.0) - libm::lgamma(101.0 - j)
                    + j * q.ln()
                    + (100.0 - j) * (1.0 - q).ln())
                .exp()
            })
            .sum()
    };
    let runs = s.runs as f64;
    let below = s.pest_below_threshold.as_ref().unwrap();
    let expected = binomial_cdf(39);
    check(
        "P(N(10) < 40)",
        below.probability.unwrap(),
        expected,
        (expected * (1.0 - expected) / runs).sqrt(),
        0.0,
    );
    let curve = &s.quasi_extinction_by_time[0];
    let k10 = s.times.iter().position(|&t| t == 10.0).unwrap();
    let expected = binomial_cdf(29);
    check(
        "P(quasi-extinct (< 30) by 10)",
        curve.probability[k10],
        expected,
        (expected * (1.0 - expected) / runs).sqrt(),
        0.0,
    );
}

#[test]
fn scheduled_harvest_and_stocking_rates_are_poisson_streams() {
    // No births or deaths. Harvest of 10 a day from day 1 to 5 removes a
    // Poisson(40) number (the population never runs out), stocking of 6 a
    // day from day 2 to 7 adds a Poisson(30) number: N(8) = 1000 − X + Y,
    // mean 990, variance 70 (independent Poisson streams; e.g. Bailey 1964,
    // §7.2).
    let mut scenario = common::scenario(
        "exponential",
        &[("b", 0.0), ("d", 0.0)],
        &[1000.0],
        8.0,
        1.0,
    );
    scenario.events = vec![
        EventSpec {
            time: 1.0,
            species: 0,
            harvest_rate: Some(10.0),
            until: Some(5.0),
            ..EventSpec::default()
        },
        EventSpec {
            time: 2.0,
            species: 0,
            stocking_rate: Some(6.0),
            until: Some(7.0),
            ..EventSpec::default()
        },
    ];
    let p = scenario.validate().unwrap();
    for method in [Method::Exact, Method::TauLeap] {
        let values = finals(&p, &options(4000, 6, method));
        // μ₄ of a sum of independent parts: λ₁(1 + 3λ₁) + λ₂(1 + 3λ₂) + 6λ₁λ₂.
        let mu4 = 40.0 * 121.0 + 30.0 * 91.0 + 6.0 * 40.0 * 30.0;
        // Constant rates: a Poisson leap is exact here, so no allowance.
        check_moments(
            &format!("harvest and stocking {method:?}"),
            &values,
            (990.0, 70.0, mu4),
            0.0,
        );
    }
    // An individual run on demand comes on the summary grid.
    let ensemble = Ensemble::new(&p, &options(1, 6, Method::Exact)).unwrap();
    let run = ensemble.individual_run(0);
    assert_eq!(run.states[0].len(), ensemble.times().len());
    assert_eq!(run.states[0][0], 1000.0);
}
