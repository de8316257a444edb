//! Coverage of the 95% profile-likelihood intervals (Raue et al. 2009,
//! Bioinformatics 25:1923): over many seeded synthetic replicates, the
//! share of intervals that contain the true value must be consistent with
//! 95%.
//!
//! Acceptance band: if intervals cover with probability 0.95, the number
//! covering in R independent replicates is Binomial(R, 0.95). A parameter
//! passes when its count lies in the central 99% of that distribution
//! (computed with statrs' binomial CDF: at most 0.5% below the band, at most
//! 0.5% above), so a correct method fails this test for a given parameter
//! about once in a hundred seeds, and an interval method that really covers
//! 90% or less (or is much too wide) fails it.
//!
//! Data: logistic growth N(t) = K N0 e^{rt} / (K + N0(e^{rt} − 1))
//! (Verhulst 1838) at t = 0, 1, …, 15 with r = 0.5, K = 500, N0 = 10;
//! noise log-normal on count + 1 (the log least-squares model) or Poisson
//! (the Poisson model). b (r = b − d with d = 0), K and init1 estimated.

use rand::rngs::ChaCha8Rng;
use rand::SeedableRng;
use rand_distr::{Distribution, LogNormal, Poisson};
use statrs::distribution::{Binomial, DiscreteCDF};
use tussock_core::data::{CountData, CountSeries};
use tussock_core::fit::{fit_quietly, FitRequest, Objective};
use tussock_core::{models, Scenario};

const TRUTH: [(&str, f64); 3] = [("b", 0.5), ("K", 500.0), ("init1", 10.0)];

/// The central 99% band of Binomial(n, p).
fn band(n: u64, p: f64) -> (u64, u64) {
    let b = Binomial::new(p, n).unwrap();
    let lo = (0..=n).find(|&k| b.cdf(k) > 0.005).unwrap();
    let hi = (0..=n).find(|&k| b.cdf(k) >= 0.995).unwrap();
    (lo, hi)
}

fn check(objective: Objective, replicates: u64, seed: u64) {
    let spec = models::find("logistic").unwrap();
    let mut scenario = Scenario::with_defaults(spec, vec![10.0], 15.0);
    scenario.params.insert("b".into(), 0.7);
    scenario.params.insert("d".into(), 0.0);
    scenario.params.insert("K".into(), 300.0);
    let problem = scenario.validate().unwrap();
    let times: Vec<f64> = (0..=15).map(|i| i as f64).collect();
    let (r, k, n0) = (0.5, 500.0, 10.0);
    let means: Vec<f64> = times
        .iter()
        .map(|&t| k * n0 * (r * t).exp() / (k + n0 * ((r * t).exp() - 1.0)))
        .collect();
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut covered = [0u64; 3];
    for replicate in 0..replicates {
        let counts = means
            .iter()
            .map(|&m| {
                Some(match objective {
                    Objective::Poisson => Poisson::new(m).unwrap().sample(&mut rng),
                    _ => ((m + 1.0) * LogNormal::new(0.0, 0.1).unwrap().sample(&mut rng) - 1.0)
                        .max(0.0),
                })
            })
            .collect();
        let data = CountData {
            times: times.clone(),
            series: vec![CountSeries {
                species: 0,
                column: "N".into(),
                counts,
            }],
        };
        let mut request = FitRequest::new(&["b", "K", "init1"]);
        request.objective = objective;
        request.starts = 2;
        request.seed = replicate;
        for (spec, (lo, hi)) in
            request
                .estimate
                .iter_mut()
                .zip([(0.01, 5.0), (10.0, 1e5), (0.1, 1000.0)])
        {
            spec.lower = Some(lo);
            spec.upper = Some(hi);
        }
        let result = fit_quietly(&request.validate(&problem, &data).unwrap());
        for (i, e) in result.estimates.iter().enumerate() {
            let truth = TRUTH[i].1;
            if let [Some(lo), Some(hi)] = e.ci {
                if lo <= truth && truth <= hi {
                    covered[i] += 1;
                }
            }
        }
    }
    let (lo, hi) = band(replicates, 0.95);
    for (i, &c) in covered.iter().enumerate() {
        println!(
            "{:?}: {} covered {c} of {replicates} (band {lo}..={hi})",
            objective, TRUTH[i].0
        );
        assert!(
            (lo..=hi).contains(&c),
            "{:?}: the 95% interval of {} covered the truth {c} times in {replicates}; a rate consistent with 95% gives {lo} to {hi}",
            objective,
            TRUTH[i].0
        );
    }
}

#[test]
fn log_least_squares_profile_intervals_cover_at_95_percent() {
    check(Objective::LogLeastSquares, 100, 2026);
}

#[test]
fn poisson_profile_intervals_cover_at_95_percent() {
    check(Objective::Poisson, 60, 2027);
}
