//! The release planner against an answer the test finds on its own: a
//! bisection over full simulations of the scenario with the release written
//! into its events list, judged from the raw trajectory.

mod common;

use common::{assert_close, scenario};
use tussock_core::events::EventSpec;
use tussock_core::plan::{plan, Goal, PlanError, PlanRequest, SizeUnit};
use tussock_core::scenario::ThresholdSpec;
use tussock_core::{solve, Scenario};

const ET: f64 = 40.0;

/// A pest growing logistically, with a predator released into it.
fn base() -> Scenario {
    let mut s = scenario(
        "lotka_volterra",
        &[
            ("r", 0.4),
            ("a", 0.02),
            ("e", 0.3),
            ("m", 0.15),
            ("K", 300.0),
        ],
        &[20.0, 0.0],
        40.0,
        0.1,
    );
    s.thresholds = Some(ThresholdSpec {
        economic_threshold: Some(ET),
        ..ThresholdSpec::default()
    });
    s
}

/// Is the pest below ET over [by, until] after one release of `size`
/// predators at `time`? Judged on the output grid, independently of the
/// planner's margin.
fn goal_met(size: f64, time: f64, by: f64, until: f64) -> bool {
    let mut s = base();
    s.events = vec![EventSpec {
        time,
        species: 1,
        add: Some(size),
        ..EventSpec::default()
    }];
    let traj = solve(&s.validate().unwrap());
    traj.times
        .iter()
        .zip(&traj.states)
        .filter(|(t, _)| **t >= by && **t <= until)
        .all(|(_, x)| x[0] < ET)
}

fn independent_smallest(time: f64, by: f64, until: f64, max: f64) -> f64 {
    assert!(goal_met(max, time, by, until) && !goal_met(0.0, time, by, until));
    let (mut lo, mut hi) = (0.0, max);
    while hi - lo > 1e-7 * max {
        let mid = 0.5 * (lo + hi);
        if goal_met(mid, time, by, until) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    hi
}

#[test]
fn smallest_release_matches_an_independent_bisection() {
    let (time, by, until, max) = (5.0, 12.0, 16.0, 200.0);
    let expected = independent_smallest(time, by, until, max);
    let problem = base().validate().unwrap();
    let request = PlanRequest {
        goal: Goal::PestBelowThreshold { by, until },
        species: 1,
        unit: SizeUnit::Individuals,
        max_size: max,
        times: vec![time],
        counts: vec![1],
        every: 7.0,
        curve_points: 24,
    };
    let result = plan(&problem, &request).unwrap();
    let row = &result.rows[0];
    assert!(!row.non_monotone && !row.at_lower_bound, "{row:?}");
    // Grid-judged and crossing-judged answers agree to the output resolution.
    assert_close(
        "smallest release",
        row.smallest.unwrap(),
        expected,
        2e-3,
        0.0,
    );
    assert_eq!(result.best, Some(0));
    // The response curve is monotone here: margins rise with size.
    assert!(
        row.curve
            .windows(2)
            .all(|w| w[1].margin >= w[0].margin - 1e-9),
        "{:?}",
        row.curve
    );
}

#[test]
fn a_ratio_release_scales_with_the_prey_at_release_time() {
    let (time, by, until) = (5.0, 12.0, 16.0);
    let problem = base().validate().unwrap();
    let absolute = independent_smallest(time, by, until, 200.0);
    // Pest density at the release time, without predators: logistic.
    let n = 300.0 * 20.0 * (0.4f64 * time).exp() / (300.0 + 20.0 * ((0.4f64 * time).exp() - 1.0));
    let request = PlanRequest {
        goal: Goal::PestBelowThreshold { by, until },
        species: 1,
        unit: SizeUnit::RatioToOther,
        max_size: 2.0,
        times: vec![time],
        counts: vec![1],
        every: 7.0,
        curve_points: 24,
    };
    let result = plan(&problem, &request).unwrap();
    assert_close(
        "ratio × prey = absolute",
        result.rows[0].smallest.unwrap() * n,
        absolute,
        2e-3,
        0.0,
    );
}

#[test]
fn an_unreachable_goal_says_so_and_bad_requests_are_refused() {
    let problem = base().validate().unwrap();
    let mut request = PlanRequest {
        goal: Goal::PestBelowThreshold {
            by: 5.5,
            until: 6.0,
        },
        species: 1,
        unit: SizeUnit::Individuals,
        max_size: 0.5,
        times: vec![5.0],
        counts: vec![1],
        every: 7.0,
        curve_points: 8,
    };
    let result = plan(&problem, &request).unwrap();
    assert_eq!(result.rows[0].smallest, None);
    assert_eq!(result.best, None);
    request.times = vec![99.0];
    assert!(
        matches!(plan(&problem, &request), Err(PlanError::Invalid(m)) if m.contains("outside"))
    );
    let mut no_threshold = base();
    no_threshold.thresholds = None;
    request.times = vec![5.0];
    assert_eq!(
        plan(&no_threshold.validate().unwrap(), &request),
        Err(PlanError::NoThreshold)
    );
}
