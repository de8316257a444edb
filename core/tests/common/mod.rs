//! Helpers shared by the reference tests: build problems from tables.

#![allow(dead_code)]

use tussock_core::{models, Problem, Scenario};

/// A validated problem for `model` with `params` (symbol, value), tight
/// tolerances unless given.
pub fn problem(
    model: &str,
    params: &[(&str, f64)],
    initial: &[f64],
    t_end: f64,
    output_step: f64,
) -> Problem {
    scenario(model, params, initial, t_end, output_step)
        .validate()
        .unwrap_or_else(|e| panic!("invalid test scenario: {e}"))
}

pub fn scenario(
    model: &str,
    params: &[(&str, f64)],
    initial: &[f64],
    t_end: f64,
    output_step: f64,
) -> Scenario {
    let spec = models::find(model).unwrap_or_else(|| panic!("no model {model}"));
    let mut s = Scenario::with_defaults(spec, initial.to_vec(), t_end);
    for (k, v) in params {
        s.params.insert(k.to_string(), *v);
    }
    s.output_step = Some(output_step);
    s.rtol = Some(1e-10);
    s.atol = Some(1e-10);
    s
}

/// |computed − expected| ≤ rel·|expected| + abs, with a message that shows
/// where and by how much.
pub fn assert_close(what: &str, computed: f64, expected: f64, rel: f64, abs: f64) {
    let err = (computed - expected).abs();
    assert!(
        err <= rel * expected.abs() + abs,
        "{what}: computed {computed}, expected {expected} (error {err:e})"
    );
}
