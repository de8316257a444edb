//! Ensemble mechanics: reproducibility, batching, partial results, stop
//! reasons and option checks; the interval and quantile formulas against
//! published worked examples (the scipy cross-check in
//! tests/python/test_ensemble.py covers them more widely).

mod common;

use common::problem;
use tussock_core::stochastic::stats::{quantile_sorted, wilson};
use tussock_core::stochastic::{
    establishment, run_ensemble, Ensemble, EnsembleOptions, EnsembleSummary, EnvironmentalNoise,
    EstablishmentPlan, EstablishmentRequest, Method, StochasticOptions,
};
use tussock_core::Problem;

/// What a case should give: the summary as JSON, or an error message part.
enum Expect<'a> {
    SameAs(String),
    Different(String),
    ErrorContaining(&'a str),
}

fn json(summary: &EnsembleSummary) -> String {
    serde_json::to_string(summary).unwrap()
}

/// Run an ensemble in batches (run ranges [start, end), added in the order given, each
/// batch into its own accumulator, then merged whole or, every other batch, its runs
/// taken out and added as a worker's would be) and compare.
fn check(p: &Problem, options: &EnsembleOptions, batches: &[(u64, u64)], expect: Expect) {
    let result = Ensemble::new(p, options).map(|ensemble| {
        let mut total = ensemble.accumulator();
        for (k, &(start, end)) in batches.iter().enumerate() {
            let mut part = ensemble.accumulator();
            ensemble.run_batch(&mut part, start..end, &mut |_, _| true);
            if k % 2 == 0 {
                assert!(total.merge(part));
            } else {
                total.add_runs(part.take_runs()).unwrap();
                assert_eq!(part.simulated(), 0);
            }
        }
        json(&total.summary())
    });
    match (result, expect) {
        (Ok(got), Expect::SameAs(want)) => assert!(got == want, "summaries differ"),
        (Ok(got), Expect::Different(other)) => assert!(got != other, "summaries agree"),
        (Err(e), Expect::ErrorContaining(part)) => {
            assert!(e.to_string().contains(part), "{e} lacks {part:?}")
        }
        (Ok(_), Expect::ErrorContaining(part)) => panic!("accepted; expected {part:?}"),
        (Err(e), _) => panic!("rejected: {e}"),
    }
}

fn predator_prey() -> Problem {
    problem(
        "rosenzweig_macarthur",
        &[
            ("r", 0.5),
            ("K", 300.0),
            ("a", 0.01),
            ("h", 0.5),
            ("e", 0.3),
            ("m", 0.1),
        ],
        &[80.0, 6.0],
        60.0,
        1.0,
    )
}

fn options(runs: u64, seed: u64, method: Method) -> EnsembleOptions {
    EnsembleOptions {
        runs,
        seed,
        keep_runs: 3,
        simulation: StochasticOptions {
            method,
            noise: Some(EnvironmentalNoise {
                sd: 0.2,
                autocorrelation: 0.5,
            }),
            ..StochasticOptions::default()
        },
        ..EnsembleOptions::default()
    }
}

#[test]
fn the_summary_depends_on_the_seed_only_not_on_batches_or_order() {
    let p = predator_prey();
    for method in [Method::Exact, Method::Auto, Method::TauLeap] {
        let o = options(60, 42, method);
        let whole = run_ensemble(&p, &o, &mut |_, _| true).unwrap();
        assert_eq!(whole.runs, 60);
        let reference = json(&whole);
        // Common practice for parallel Monte Carlo: per-run streams make
        // the split irrelevant.
        check(&p, &o, &[(0, 60)], Expect::SameAs(reference.clone()));
        check(
            &p,
            &o,
            &[(0, 7), (7, 14), (14, 60)],
            Expect::SameAs(reference.clone()),
        );
        check(
            &p,
            &o,
            &[(53, 60), (20, 53), (0, 20)],
            Expect::SameAs(reference.clone()),
        );
        check(
            &p,
            &options(60, 43, method),
            &[(0, 60)],
            Expect::Different(reference),
        );
    }
}

#[test]
fn a_stopped_batch_keeps_its_runs_and_says_partial() {
    let p = predator_prey();
    let o = options(50, 1, Method::Auto);
    let ensemble = Ensemble::new(&p, &o).unwrap();
    let mut acc = ensemble.accumulator();
    let mut calls = 0;
    let complete = ensemble.run_batch(&mut acc, 0..50, &mut |done, total| {
        calls += 1;
        assert_eq!(total, 50);
        done < 12
    });
    assert!(!complete);
    assert_eq!(calls, 12);
    // An accumulator of another ensemble is refused, not mixed in.
    let other = problem("exponential", &[("b", 0.1), ("d", 0.1)], &[5.0], 10.0, 1.0);
    let foreign = Ensemble::new(&other, &o).unwrap();
    let mut foreign_acc = foreign.accumulator();
    foreign.run_batch(&mut foreign_acc, 0..3, &mut |_, _| true);
    assert!(!acc.merge(foreign_acc.clone()));
    let refused = acc.add_runs(foreign_acc.take_runs()).unwrap_err();
    assert!(refused.contains("another ensemble"), "{refused}");
    // Runs damaged on the way (a value lost) are refused, nothing added.
    let mut mine = ensemble.accumulator();
    ensemble.run_batch(&mut mine, 20..23, &mut |_, _| true);
    let mut sent = serde_json::to_value(mine.take_runs()).unwrap();
    sent["values"].as_array_mut().unwrap().pop();
    let damaged = serde_json::from_value(sent).unwrap();
    let refused = acc.add_runs(damaged).unwrap_err();
    assert!(refused.contains("finished runs"), "{refused}");
    assert_eq!(acc.simulated(), 12);
    acc.add(&foreign.simulate(4));
    let s = acc.summary();
    assert!(s.partial);
    assert_eq!((s.simulated, s.requested), (12, 50));
    assert_eq!(
        s.kept_runs.iter().map(|k| k.run).collect::<Vec<_>>(),
        [0, 1, 2]
    );
}

#[test]
fn runs_that_stop_early_are_counted_and_listed_not_summarised() {
    // Too many events: a step limit of 100 on a large population.
    let big = problem(
        "logistic",
        &[("b", 1.0), ("d", 0.1), ("K", 1e6)],
        &[1e5],
        10.0,
        1.0,
    );
    let mut o = options(5, 1, Method::Exact);
    o.simulation.max_steps = 100;
    let s = run_ensemble(&big, &o, &mut |_, _| true).unwrap();
    assert_eq!((s.runs, s.stops.too_many_steps), (0, 5));
    assert_eq!(s.failures.len(), 5);
    assert_eq!(s.extinction[0].probability, None);
    assert!(s.fan[0].median.is_empty());
    // Blow-up: unlimited growth past the scenario's blow-up level (1e15).
    let boom = problem("exponential", &[("b", 5.0), ("d", 0.0)], &[1e11], 10.0, 1.0);
    let s = run_ensemble(&boom, &options(3, 1, Method::Auto), &mut |_, _| true).unwrap();
    assert_eq!((s.runs, s.stops.blew_up), (0, 3));
    assert!(serde_json::to_string(&s).is_ok());
}

#[test]
fn bad_options_are_refused_with_the_field_named() {
    let p = predator_prey();
    let with = |f: &dyn Fn(&mut EnsembleOptions)| {
        let mut o = options(10, 1, Method::Auto);
        f(&mut o);
        o
    };
    let cases: Vec<(EnsembleOptions, &str)> = vec![
        (with(&|o| o.runs = 0), "runs: must be between 1"),
        (
            with(&|o| {
                o.simulation.noise = Some(EnvironmentalNoise {
                    sd: -1.0,
                    autocorrelation: 0.0,
                })
            }),
            "noise.sd",
        ),
        (
            with(&|o| {
                o.simulation.noise = Some(EnvironmentalNoise {
                    sd: 0.1,
                    autocorrelation: 1.0,
                })
            }),
            "noise.autocorrelation",
        ),
        (
            with(&|o| o.simulation.tau_leap.epsilon = f64::NAN),
            "tau_leap.epsilon",
        ),
        (with(&|o| o.simulation.max_steps = 0), "max_steps"),
        (with(&|o| o.pest_day = Some(5.0)), "economic_threshold"),
        (
            with(&|o| o.quasi_extinction = Some([Some(f64::INFINITY), None])),
            "quasi_extinction[0]",
        ),
        (with(&|o| o.histogram_bins = 0), "histogram_bins"),
        (with(&|o| o.max_intervals = 0), "max_intervals"),
    ];
    for (o, part) in cases {
        check(&p, &o, &[], Expect::ErrorContaining(part));
    }
    let request = |f: &dyn Fn(&mut EstablishmentRequest)| {
        let mut r = EstablishmentRequest {
            runs: 10,
            ..EstablishmentRequest::default()
        };
        f(&mut r);
        EstablishmentPlan::new(&p, &r)
            .map(|_| ())
            .map_err(|e| e.to_string())
    };
    for (result, part) in [
        (request(&|r| r.species = 2), "species: no species 2"),
        (request(&|r| r.founders = vec![]), "founders"),
        (request(&|r| r.founders = vec![0]), "founders: each must be"),
        (request(&|r| r.releases = vec![0]), "releases"),
        (
            request(&|r| r.every = 0.0),
            "every: must be a positive interval",
        ),
        (request(&|r| r.horizon = Some(1e9)), "horizon"),
        (request(&|r| r.level = -1.0), "level"),
        (
            request(&|r| {
                r.releases = vec![100];
                r.every = 1.0
            }),
            "every: 100 releases",
        ),
        (
            request(&|r| {
                r.founders = vec![2];
                r.releases = vec![5]
            }),
            "fewer founders than releases",
        ),
    ] {
        let e = result.expect_err(part);
        assert!(e.contains(part), "{e} lacks {part:?}");
    }
}

#[test]
fn wilson_intervals_match_newcombes_worked_examples() {
    // Newcombe 1998, Statistics in Medicine 17:857, Table I, method 3
    // (score interval without continuity correction), to 4 decimals (from
    // memory; tests/python checks against scipy too).
    for (count, runs, lo, hi) in [
        (81, 263, 0.2553, 0.3662),
        (15, 148, 0.0624, 0.1605),
        (0, 20, 0.0, 0.1611),
        (1, 29, 0.0061, 0.1718),
    ] {
        let w = wilson(count, runs).unwrap();
        assert!(
            (w.ci[0] - lo).abs() < 6e-5 && (w.ci[1] - hi).abs() < 6e-5,
            "{count}/{runs}: {:?}, published [{lo}, {hi}]",
            w.ci
        );
    }
    assert!(wilson(0, 0).is_none());
    assert!(wilson(5, 4).is_none());
}

#[test]
fn quantiles_interpolate_between_order_statistics() {
    // numpy.percentile's documented example: the median of
    // [[10, 7, 4], [3, 2, 1]] is 3.5 (linear interpolation, Hyndman & Fan
    // 1996 definition 7); quartiles of 1..=4 are 1.75 and 3.25.
    assert_eq!(
        quantile_sorted(&[1.0, 2.0, 3.0, 4.0, 7.0, 10.0], 0.5),
        Some(3.5)
    );
    assert_eq!(quantile_sorted(&[1.0, 2.0, 3.0, 4.0], 0.25), Some(1.75));
    assert_eq!(quantile_sorted(&[1.0, 2.0, 3.0, 4.0], 0.75), Some(3.25));
    assert_eq!(quantile_sorted(&[], 0.5), None);
}

#[test]
fn founder_tallies_merge_in_any_order_and_refuse_what_does_not_fit() {
    let p = predator_prey();
    let request = EstablishmentRequest {
        species: 1,
        founders: vec![2, 6],
        releases: vec![1, 2],
        runs: 40,
        seed: 5,
        ..EstablishmentRequest::default()
    };
    let whole = establishment(&p, &request, &mut |_, _| true).unwrap();
    let plan = EstablishmentPlan::new(&p, &request).unwrap();
    // Each row in three chunks, the last first, each sent as JSON as a
    // worker would send it.
    let tallies: Vec<_> = (0..plan.rows())
        .map(|row| {
            let mut tally = plan.tally(row);
            for runs in [27..40, 0..9, 9..27] {
                let mut part = plan.tally(row);
                plan.run_chunk(&mut part, runs, &mut |_, _| true);
                let sent = serde_json::to_string(&part).unwrap();
                tally.merge(serde_json::from_str(&sent).unwrap()).unwrap();
            }
            tally
        })
        .collect();
    assert_eq!(plan.table(&tallies), whole);

    let mut first = plan.tally(0);
    plan.run_chunk(&mut first, 0..5, &mut |_, _| true);
    let mut second = plan.tally(1);
    plan.run_chunk(&mut second, 0..5, &mut |_, _| true);
    let refused = first.clone().merge(second).unwrap_err();
    assert!(refused.contains("row 1 cannot join row 0"), "{refused}");
    let mut damaged = serde_json::to_value(&first).unwrap();
    damaged["at_horizon"].as_array_mut().unwrap().pop();
    let mut kept = plan.tally(0);
    let refused = kept
        .merge(serde_json::from_value(damaged).unwrap())
        .unwrap_err();
    assert!(refused.contains("do not add up"), "{refused}");
    assert_eq!(kept.simulated(), 0);
}
