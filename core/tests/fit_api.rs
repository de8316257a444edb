//! The fitting API as the browser worker will use it: cancelling keeps the
//! best fit so far, seeds make runs repeatable, results survive a JSON round
//! trip, fitted values go back into the scenario. The likelihood terms are
//! checked against their textbook closed forms: Poisson P(y; μ) = μ^y e^{−μ}/y!
//! and the negative binomial P(0; μ, k) = (k/(k+μ))^k, P(1) = μ (k/(k+μ))^(k+1)
//! (Hilbe 2011, Negative Binomial Regression, eq. 8.4 form).

use tussock_core::data::{CountData, CountSeries};
use tussock_core::fit::{
    fit, fit_quietly, negative_binomial_ln_pmf, poisson_ln_pmf, FitRequest, FitResult, FitStop,
};
use tussock_core::{models, Scenario};

fn setup() -> (Scenario, CountData) {
    let spec = models::find("logistic").unwrap();
    let mut scenario = Scenario::with_defaults(spec, vec![10.0], 10.0);
    scenario.params.insert("b".into(), 0.4);
    scenario.params.insert("d".into(), 0.0);
    scenario.params.insert("K".into(), 300.0);
    // N(t) = 500·10·e^{0.5t}/(500 + 10(e^{0.5t} − 1)) (Verhulst 1838), rounded.
    let times: Vec<f64> = (0..=12).map(|t| t as f64).collect();
    let counts = times
        .iter()
        .map(|&t| {
            let g = (0.5 * t).exp();
            Some((5000.0 * g / (500.0 + 10.0 * (g - 1.0))).round())
        })
        .collect();
    let data = CountData {
        times,
        series: vec![CountSeries {
            species: 0,
            column: "N".into(),
            counts,
        }],
    };
    (scenario, data)
}

fn request() -> FitRequest {
    let mut r = FitRequest::new(&["b", "K"]);
    r.starts = 5;
    r.seed = 3;
    r
}

fn check(what: &str, ok: bool) {
    assert!(ok, "{what}");
}

#[test]
fn stopping_keeps_the_best_fit_so_far_marked_partial() {
    let (scenario, data) = setup();
    let problem = request()
        .validate(&scenario.validate().unwrap(), &data)
        .unwrap();
    let mut calls = Vec::new();
    let result = fit(&problem, &mut |done, total| {
        calls.push((done, total));
        done < 2
    });
    check("stopped after two starts", calls == [(1, 9), (2, 9)]);
    check(
        "cancelled",
        result.stop == FitStop::Cancelled && result.partial,
    );
    check("two starts kept", result.starts.len() == 2);
    check(
        "an estimate",
        (result.estimates[1].value - 500.0).abs() < 10.0,
    );
    check(
        "no intervals",
        result.estimates.iter().all(|e| e.ci == [None, None]),
    );
    check(
        "a warning says so",
        result
            .warnings
            .iter()
            .any(|w| w.message.starts_with("stopped before the end")),
    );
}

#[test]
fn the_same_seed_repeats_and_results_round_trip_through_json() {
    let (scenario, data) = setup();
    let problem = request()
        .validate(&scenario.validate().unwrap(), &data)
        .unwrap();
    let a = fit_quietly(&problem);
    let b = fit_quietly(&problem);
    check("repeatable", a == b);
    let json = serde_json::to_string(&a).unwrap();
    let back: FitResult = serde_json::from_str(&json).unwrap();
    check("round trip", back == a);
    let request_json = serde_json::to_string(&request()).unwrap();
    check(
        "request round trip",
        serde_json::from_str::<FitRequest>(&request_json).unwrap() == request(),
    );
    let fitted = a.apply_to(&scenario);
    check(
        "fitted values in the scenario",
        fitted.params["K"] == a.estimates[1].value && fitted.params["b"] == a.estimates[0].value,
    );
}

#[test]
fn likelihood_terms_match_their_closed_forms() {
    let cases: &[(&str, f64, f64)] = &[
        (
            "Poisson P(3; 2)",
            poisson_ln_pmf(3.0, 2.0),
            (8.0 * (-2.0f64).exp() / 6.0).ln(),
        ),
        ("Poisson P(0; 4)", poisson_ln_pmf(0.0, 4.0), -4.0),
        (
            "NB P(0; 3, 2)",
            negative_binomial_ln_pmf(0.0, 3.0, 2.0),
            2.0 * (2.0f64 / 5.0).ln(),
        ),
        (
            "NB P(1; 3, 2)",
            negative_binomial_ln_pmf(1.0, 3.0, 2.0),
            (3.0 * (2.0f64 / 5.0).powi(3)).ln(),
        ),
    ];
    for (what, got, want) in cases {
        check(
            &format!("{what}: {got} vs {want}"),
            (got - want).abs() < 1e-12 * want.abs().max(1.0),
        );
    }
}
