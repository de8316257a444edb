//! The samplers of stochastic runs against the distributions they draw
//! from: Poisson and binomial probabilities from their closed-form mass
//! functions (e.g. Johnson, Kemp & Kotz 2005, Univariate Discrete
//! Distributions, ch. 3 and 4), the standard normal against Φ(1) =
//! 0.841344746 (Abramowitz & Stegun 1964, table 26.1), and randomised
//! rounding against its stated mean.
//!
//! Each estimate from n draws must lie within 4 standard errors of the
//! exact value: with about 60 checks in this file, 3 standard errors would
//! give a false alarm for one seed in six, 4 for one in 250 (Bonferroni).
//! The parameters cover every branch of each sampler.

use tussock_core::stochastic::sampling::RunRng;

const DRAWS: usize = 40_000;

/// |estimate − expected| ≤ 4 standard errors.
fn check(what: &str, estimate: f64, expected: f64, standard_error: f64) {
    let err = (estimate - expected).abs();
    assert!(
        err <= 4.0 * standard_error,
        "{what}: estimate {estimate}, expected {expected}, {:.2} standard errors off",
        err / standard_error
    );
}

/// Mean, variance and P(X ≤ k) of draws against the exact values; `mu4`
/// is the fourth central moment, which sets the standard error of a sample
/// variance: √((μ₄ − σ⁴(n − 3)/(n − 1))/n).
fn check_discrete(
    what: &str,
    draws: &[u64],
    (mean, variance, mu4): (f64, f64, f64),
    cdf_at: &[(u64, f64)],
) {
    let n = draws.len() as f64;
    let m = draws.iter().map(|&k| k as f64).sum::<f64>() / n;
    let v = draws.iter().map(|&k| (k as f64 - m).powi(2)).sum::<f64>() / (n - 1.0);
    check(&format!("{what} mean"), m, mean, (variance / n).sqrt());
    check(
        &format!("{what} variance"),
        v,
        variance,
        ((mu4 - variance * variance * (n - 3.0) / (n - 1.0)) / n).sqrt(),
    );
    for &(k, p) in cdf_at {
        let share = draws.iter().filter(|&&d| d <= k).count() as f64 / n;
        check(
            &format!("{what} P(X ≤ {k})"),
            share,
            p,
            (p * (1.0 - p) / n).sqrt().max(1e-4),
        );
    }
}

fn poisson_cdf(mean: f64, k: u64) -> f64 {
    (0..=k)
        .map(|j| {
            let j = j as f64;
            (j * mean.ln() - mean - libm::lgamma(j + 1.0)).exp()
        })
        .sum()
}

fn binomial_cdf(n: u64, p: f64, k: u64) -> f64 {
    let nf = n as f64;
    (0..=k)
        .map(|j| {
            let j = j as f64;
            (libm::lgamma(nf + 1.0) - libm::lgamma(j + 1.0) - libm::lgamma(nf - j + 1.0)
                + j * p.ln()
                + (nf - j) * (1.0 - p).ln())
            .exp()
        })
        .sum()
}

#[test]
fn poisson_draws_follow_the_poisson_distribution() {
    // Means on both sides of the switch from inversion to PTRS at 10.
    for (i, mean) in [0.3, 4.0, 9.9, 10.0, 37.5, 1000.0, 250_000.0]
        .into_iter()
        .enumerate()
    {
        let mut rng = RunRng::for_run(7, i as u64);
        let draws: Vec<u64> = (0..DRAWS).map(|_| rng.poisson(mean)).collect();
        let sd = mean.sqrt();
        let points: Vec<(u64, f64)> = [-1.0, 0.0, 1.0]
            .iter()
            .map(|z| (mean + z * sd).max(0.0).floor() as u64)
            .map(|k| (k, poisson_cdf(mean, k)))
            .collect();
        // μ₄ = λ(1 + 3λ).
        let moments = (mean, mean, mean * (1.0 + 3.0 * mean));
        check_discrete(&format!("Poisson({mean})"), &draws, moments, &points);
    }
    let mut rng = RunRng::for_run(7, 99);
    assert_eq!(rng.poisson(0.0), 0);
    assert_eq!(rng.poisson(-3.0), 0);
    assert_eq!(rng.poisson(f64::NAN), 0);
}

#[test]
fn binomial_draws_follow_the_binomial_distribution() {
    // Inversion (n·p < 10), BTRS, and p > 1/2 by symmetry.
    let cases: [(u64, f64); 7] = [
        (20, 0.3),
        (1000, 0.005),
        (1000, 0.3),
        (1000, 0.8),
        (57, 0.5),
        (2_000_000, 0.25),
        (5, 0.99),
    ];
    for (i, (n, p)) in cases.into_iter().enumerate() {
        let mut rng = RunRng::for_run(11, i as u64);
        let draws: Vec<u64> = (0..DRAWS).map(|_| rng.binomial(n, p)).collect();
        assert!(draws.iter().all(|&k| k <= n));
        let mean = n as f64 * p;
        let variance = mean * (1.0 - p);
        let sd = variance.sqrt();
        let points: Vec<(u64, f64)> = [-1.0, 0.0, 1.0]
            .iter()
            .map(|z| ((mean + z * sd).max(0.0).floor() as u64).min(n))
            .map(|k| (k, binomial_cdf(n, p, k)))
            .collect();
        // μ₄ = npq(1 + 3(n − 2)pq).
        let mu4 = variance * (1.0 + 3.0 * (n as f64 - 2.0) * p * (1.0 - p));
        check_discrete(
            &format!("Binomial({n}, {p})"),
            &draws,
            (mean, variance, mu4),
            &points,
        );
    }
    let mut rng = RunRng::for_run(11, 99);
    assert_eq!(rng.binomial(0, 0.5), 0);
    assert_eq!(rng.binomial(40, 0.0), 0);
    assert_eq!(rng.binomial(40, 1.0), 40);
}

#[test]
fn normal_draws_have_mean_zero_variance_one_and_the_tabulated_cdf() {
    let mut rng = RunRng::for_run(3, 0);
    let draws: Vec<f64> = (0..DRAWS).map(|_| rng.standard_normal()).collect();
    let n = DRAWS as f64;
    let mean = draws.iter().sum::<f64>() / n;
    let variance = draws.iter().map(|z| (z - mean).powi(2)).sum::<f64>() / (n - 1.0);
    check("normal mean", mean, 0.0, (1.0 / n).sqrt());
    check("normal variance", variance, 1.0, (2.0 / n).sqrt());
    let below_one = draws.iter().filter(|&&z| z <= 1.0).count() as f64 / n;
    let phi_1 = 0.841_344_746;
    check("Φ(1)", below_one, phi_1, (phi_1 * (1.0 - phi_1) / n).sqrt());
}

#[test]
fn randomised_rounding_keeps_the_mean_and_whole_numbers() {
    let mut rng = RunRng::for_run(5, 0);
    for x in [0.25, 10.4, 99.5] {
        let draws: Vec<f64> = (0..DRAWS).map(|_| rng.round_stochastic(x)).collect();
        assert!(draws
            .iter()
            .all(|&v| v == x.floor() || v == x.floor() + 1.0));
        let up = x - x.floor();
        let mean = draws.iter().sum::<f64>() / DRAWS as f64;
        // A Bernoulli(up) part: standard error √(up(1 − up)/n).
        check(
            &format!("rounding {x}"),
            mean,
            x,
            (up * (1.0 - up) / DRAWS as f64).sqrt(),
        );
    }
    assert_eq!(rng.round_stochastic(12.0), 12.0);
}

#[test]
fn a_run_generator_depends_only_on_seed_and_run() {
    let draw = |seed, run| {
        let mut rng = RunRng::for_run(seed, run);
        (0..4).map(|_| rng.next_u64()).collect::<Vec<_>>()
    };
    assert_eq!(draw(1, 5), draw(1, 5));
    assert_ne!(draw(1, 5), draw(1, 6));
    assert_ne!(draw(1, 5), draw(2, 5));
}

#[test]
fn exponential_draws_follow_the_exponential_distribution() {
    // P(X ≤ x) = 1 − e^{−x}, at points in the top layers, the middle, a
    // wedge-heavy region and the tail beyond the ziggurat's r = 7.697.
    let draws_n = 400_000;
    let mut rng = RunRng::for_run(13, 0);
    let draws: Vec<f64> = (0..draws_n).map(|_| rng.standard_exponential()).collect();
    let n = draws_n as f64;
    let mean = draws.iter().sum::<f64>() / n;
    let variance = draws.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
    check("exponential mean", mean, 1.0, (1.0 / n).sqrt());
    // μ₄ = 9 for the unit exponential.
    check(
        "exponential variance",
        variance,
        1.0,
        ((9.0 - 1.0) / n).sqrt(),
    );
    for x in [0.01f64, 0.1, 0.5, 1.0, 2.5, 5.0, 7.0, 8.0, 10.0] {
        let share = draws.iter().filter(|&&d| d <= x).count() as f64 / n;
        let p: f64 = 1.0 - (-x).exp();
        check(
            &format!("exponential P(X ≤ {x})"),
            share,
            p,
            (p * (1.0 - p) / n).sqrt().max(1.0 / n),
        );
    }
    assert!(draws.iter().all(|&d| d.is_finite() && d >= 0.0));
}
