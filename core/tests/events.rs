//! Interventions and thresholds.
//!
//! - Threshold crossings are located to the solver tolerance: checked on
//!   logistic growth, whose crossing time of a level L has the closed form
//!   t* = ln(L (K − N0) / (N0 (K − L))) / r (Verhulst 1838).
//! - A pulse restarts integration exactly: after a removal of a fraction f
//!   the logistic solution restarts from (1 − f)·N(t⁻) (closed form again).
//! - Bad schedules are rejected with messages naming the event and field.

mod common;

use common::{assert_close, scenario};
use tussock_core::events::EventSpec;
use tussock_core::metrics::metrics;
use tussock_core::models::logistic;
use tussock_core::scenario::ThresholdSpec;
use tussock_core::solve;

fn crossing_time(r: f64, k: f64, n0: f64, level: f64) -> f64 {
    (level * (k - n0) / (n0 * (k - level))).ln() / r
}

#[test]
fn threshold_crossings_match_the_logistic_closed_form() {
    // (b, d, K, N0, level, output_step): coarse and fine grids alike.
    let cases = [
        (0.6, 0.1, 1000.0, 5.0, 100.0, 1.0),
        (0.6, 0.1, 1000.0, 5.0, 999.0, 0.05),
        (2.0, 0.0, 50.0, 1.0, 25.0, 3.0),
    ];
    for (b, d, k, n0, level, step) in cases {
        let mut s = scenario(
            "logistic",
            &[("b", b), ("d", d), ("K", k)],
            &[n0],
            40.0,
            step,
        );
        s.thresholds = Some(ThresholdSpec {
            economic_threshold: Some(level),
            ..ThresholdSpec::default()
        });
        let p = s.validate().unwrap();
        let traj = solve(&p);
        assert_eq!(traj.crossings.len(), 1, "{:?}", traj.crossings);
        let c = traj.crossings[0];
        assert!(c.rising && !c.by_pulse);
        assert_close(
            &format!("crossing of {level}"),
            c.time,
            crossing_time(b - d, k, n0, level),
            1e-8,
            1e-9,
        );
        let m = metrics(&p, &traj);
        let pest = m.pest.unwrap();
        assert_close(
            "first above",
            pest.first_above_threshold.unwrap(),
            c.time,
            0.0,
            0.0,
        );
        assert_eq!(pest.below_threshold_from, None);
        assert_close(
            "time above",
            pest.time_above_threshold,
            40.0 - c.time,
            1e-12,
            1e-9,
        );
    }
}

#[test]
fn a_removal_pulse_restarts_from_the_reduced_density() {
    let (b, d, k, n0) = (0.5, 0.0, 200.0, 10.0);
    let mut s = scenario(
        "logistic",
        &[("b", b), ("d", d), ("K", k)],
        &[n0],
        30.0,
        0.5,
    );
    // 60% removed at t = 10.3 (between output times), then every 7 days twice more.
    s.events = vec![EventSpec {
        time: 10.3,
        species: 0,
        remove_fraction: Some(0.6),
        every: Some(7.0),
        count: Some(3),
        ..EventSpec::default()
    }];
    s.thresholds = Some(ThresholdSpec {
        economic_threshold: Some(100.0),
        ..ThresholdSpec::default()
    });
    let p = s.validate().unwrap();
    let traj = solve(&p);
    assert!(traj.stop.is_finished());
    assert_eq!(traj.pulses.len(), 3);
    // Piecewise closed form.
    let mut t0 = 0.0;
    let mut x0 = n0;
    let mut pulses = vec![10.3, 17.3, 24.3].into_iter().peekable();
    for (t, x) in traj.times.iter().zip(&traj.states) {
        while let Some(&tp) = pulses.peek() {
            if tp > *t {
                break;
            }
            x0 = 0.4 * logistic::exact(&p.params, x0, tp - t0);
            t0 = tp;
            pulses.next();
        }
        let expected = logistic::exact(&p.params, x0, t - t0);
        assert_close(&format!("N({t})"), x[0], expected, 1e-8, 1e-9);
    }
    for (pulse, expected_time) in traj.pulses.iter().zip([10.3, 17.3, 24.3]) {
        assert_eq!(pulse.time, expected_time);
        assert_close(
            "after = 0.4 before",
            pulse.after,
            0.4 * pulse.before,
            1e-15,
            0.0,
        );
    }
    // A pulse that drops the pest below the threshold is a crossing at the pulse time.
    assert!(
        traj.crossings.iter().any(|c| c.by_pulse && !c.rising),
        "{:?}",
        traj.crossings
    );
}

#[test]
fn bad_schedules_are_rejected_naming_the_event_and_field() {
    let ok = EventSpec {
        time: 5.0,
        species: 1,
        add: Some(10.0),
        ..EventSpec::default()
    };
    let cases: Vec<(EventSpec, &str)> = vec![
        (
            EventSpec {
                time: -1.0,
                ..ok.clone()
            },
            "events[0].time: must be a time ≥ 0, got -1",
        ),
        (
            EventSpec {
                time: 500.0,
                ..ok.clone()
            },
            "events[0].time: 500 is past the horizon (100)",
        ),
        (
            EventSpec {
                species: 2,
                ..ok.clone()
            },
            "events[0].species: no species 2 (this model has 2: 0 = prey, 1 = predator)",
        ),
        (
            EventSpec {
                add: None,
                remove_fraction: Some(1.5),
                ..ok.clone()
            },
            "events[0].remove_fraction: must be between 0 and 1, got 1.5",
        ),
        (
            EventSpec {
                add: Some(-3.0),
                ..ok.clone()
            },
            "events[0].add: must be a number of individuals ≥ 0, got -3",
        ),
        (
            EventSpec {
                remove_fraction: Some(0.5),
                ..ok.clone()
            },
            "events[0]: give exactly one of add, add_ratio, remove_fraction, harvest_rate, stocking_rate",
        ),
        (
            EventSpec {
                every: Some(0.0),
                ..ok.clone()
            },
            "events[0].every: must be a positive interval, got 0",
        ),
        (
            EventSpec {
                count: Some(3),
                ..ok.clone()
            },
            "events[0].count: 3 repeats need a spacing (every)",
        ),
        (
            EventSpec {
                add: None,
                harvest_rate: Some(2.0),
                ..ok.clone()
            },
            "events[0].until: a rate needs an end time (until)",
        ),
        (
            EventSpec {
                add: None,
                harvest_rate: Some(2.0),
                until: Some(3.0),
                ..ok.clone()
            },
            "events[0].until: must be after time (5), got 3",
        ),
    ];
    for (event, expected) in cases {
        let mut s = scenario("lotka_volterra", &[], &[10.0, 2.0], 100.0, 1.0);
        s.events = vec![event];
        let err = s.validate().expect_err(expected).to_string();
        assert_eq!(err, expected);
    }
}

#[test]
fn a_harvest_rate_over_an_interval_matches_the_closed_form() {
    // Exponential growth with a constant harvest H over [5, 15):
    // dN/dt = ρN − H has N(t) = (N0 − H/ρ) e^{ρt} + H/ρ (linear ODE).
    let rho: f64 = 0.2;
    let h = 3.0;
    let mut s = scenario("exponential", &[("b", 0.3), ("d", 0.1)], &[20.0], 25.0, 0.5);
    s.events = vec![EventSpec {
        time: 5.0,
        species: 0,
        harvest_rate: Some(h),
        until: Some(15.0),
        ..EventSpec::default()
    }];
    let p = s.validate().unwrap();
    let traj = solve(&p);
    let n5 = 20.0 * (rho * 5.0).exp();
    let n15 = (n5 - h / rho) * (rho * 10.0).exp() + h / rho;
    for (t, x) in traj.times.iter().zip(&traj.states) {
        let expected = if *t <= 5.0 {
            20.0 * (rho * t).exp()
        } else if *t <= 15.0 {
            (n5 - h / rho) * (rho * (t - 5.0)).exp() + h / rho
        } else {
            n15 * (rho * (t - 15.0)).exp()
        };
        assert_close(&format!("N({t})"), x[0], expected, 1e-8, 1e-9);
    }
}
