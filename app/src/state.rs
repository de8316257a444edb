//! The workbench's state and the edits a user can make to it.
//!
//! Pure logic, no web APIs: every edit goes through [`Workbench::apply`],
//! which keeps the text the user typed, validates it through the core, and
//! re-simulates only when a value really changed. Bad input leaves the last
//! good result on screen and records a message for the field.

use std::collections::BTreeMap;
use std::rc::Rc;

use tussock_core::{solve, Problem, Scenario, Trajectory};

/// One edit from the user.
#[derive(Clone, Debug, PartialEq)]
pub enum Action {
    /// Text typed into a parameter field, by symbol.
    SetParam { symbol: String, text: String },
    /// Text typed into the initial density of species `index`.
    SetInitial { index: usize, text: String },
    /// Text typed into the horizon field.
    SetHorizon { text: String },
}

/// A field of the scenario form, used as the key of texts and messages.
#[derive(Clone, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Field {
    Param(String),
    Initial(usize),
    Horizon,
}

/// The last good run: the problem that produced it and its trajectory.
#[derive(Debug)]
pub struct Run {
    pub problem: Problem,
    pub trajectory: Trajectory,
}

/// Runs are immutable once made, so two are equal when they are the same run;
/// this keeps change detection in components O(1).
impl PartialEq for Run {
    fn eq(&self, other: &Self) -> bool {
        std::ptr::eq(self, other)
    }
}

#[derive(Clone, Debug)]
pub struct Workbench {
    /// The scenario as last accepted.
    pub scenario: Scenario,
    /// Result of the accepted scenario; shared with the charts.
    pub run: Rc<Run>,
    /// What the user typed, for fields that differ from the accepted value.
    pub texts: BTreeMap<Field, String>,
    /// A message for each field whose text was rejected.
    pub errors: BTreeMap<Field, String>,
    /// Number of simulations done, for tests and diagnostics.
    pub n_solves: u64,
}

impl PartialEq for Workbench {
    fn eq(&self, other: &Self) -> bool {
        Rc::ptr_eq(&self.run, &other.run)
            && self.texts == other.texts
            && self.errors == other.errors
    }
}

/// The scenario the app opens with: an invented greenhouse case.
pub fn starting_scenario() -> Scenario {
    let text = include_str!("../../examples/greenhouse-mites.json");
    // The file is part of the build and checked by a test below.
    Scenario::from_json(text).unwrap_or_else(|_| {
        Scenario::with_defaults(tussock_core::models::MODELS[0], vec![60.0, 5.0], 120.0)
    })
}

impl Workbench {
    /// A workbench showing `scenario`, or an error if it is invalid.
    pub fn new(scenario: Scenario) -> Result<Workbench, tussock_core::ScenarioError> {
        let problem = scenario.validate()?;
        let trajectory = solve(&problem);
        Ok(Workbench {
            scenario,
            run: Rc::new(Run {
                problem,
                trajectory,
            }),
            texts: BTreeMap::new(),
            errors: BTreeMap::new(),
            n_solves: 1,
        })
    }

    /// The text to show in a field: what the user typed, else the value.
    pub fn text(&self, field: &Field) -> String {
        if let Some(t) = self.texts.get(field) {
            return t.clone();
        }
        match field {
            Field::Param(symbol) => self
                .scenario
                .params
                .get(symbol)
                .map(|v| format_number(*v))
                .unwrap_or_default(),
            Field::Initial(i) => self
                .scenario
                .initial
                .get(*i)
                .map(|v| format_number(*v))
                .unwrap_or_default(),
            Field::Horizon => format_number(self.scenario.t_end),
        }
    }

    pub fn error(&self, field: &Field) -> Option<&str> {
        self.errors.get(field).map(String::as_str)
    }

    /// Apply one edit and return the new state.
    pub fn apply(&self, action: Action) -> Workbench {
        let mut next = self.clone();
        let (field, text) = match &action {
            Action::SetParam { symbol, text } => (Field::Param(symbol.clone()), text.clone()),
            Action::SetInitial { index, text } => (Field::Initial(*index), text.clone()),
            Action::SetHorizon { text } => (Field::Horizon, text.clone()),
        };
        next.texts.insert(field.clone(), text.clone());
        let candidate = match edited(&self.scenario, &field, &text) {
            Ok(c) => c,
            Err(message) => {
                next.errors.insert(field, message);
                return next;
            }
        };
        if candidate == self.scenario {
            // Same value (e.g. "0.30" after "0.3"): nothing to recompute.
            next.errors.remove(&field);
            return next;
        }
        match candidate.validate() {
            Ok(problem) => {
                next.errors.remove(&field);
                let trajectory = solve(&problem);
                next.run = Rc::new(Run {
                    problem,
                    trajectory,
                });
                next.scenario = candidate;
                next.n_solves += 1;
            }
            Err(e) => {
                next.errors.insert(field, strip_path(&e.to_string()));
            }
        }
        next
    }
}

impl yew::Reducible for Workbench {
    type Action = Action;
    fn reduce(self: Rc<Self>, action: Action) -> Rc<Self> {
        Rc::new(self.apply(action))
    }
}

/// The scenario with one field set from text, or a message if the text is
/// not a number.
fn edited(scenario: &Scenario, field: &Field, text: &str) -> Result<Scenario, String> {
    let mut s = scenario.clone();
    let trimmed = text.trim();
    if trimmed.is_empty() {
        if let Field::Param(symbol) = field {
            let optional = tussock_core::models::find(&s.model)
                .and_then(|m| m.params.iter().find(|p| p.symbol == symbol))
                .is_some_and(|p| p.optional);
            if optional {
                s.params.remove(symbol);
                return Ok(s);
            }
        }
        return Err("enter a number".to_string());
    }
    let value = parse_number(trimmed)?;
    match field {
        Field::Param(symbol) => {
            s.params.insert(symbol.clone(), value);
        }
        Field::Initial(i) => match s.initial.get_mut(*i) {
            Some(slot) => *slot = value,
            None => return Err("no such species".to_string()),
        },
        Field::Horizon => s.t_end = value,
    }
    Ok(s)
}

/// Parse a number as typed by a user: a decimal comma is accepted.
pub fn parse_number(text: &str) -> Result<f64, String> {
    let normalized = text.trim().replace(',', ".");
    match normalized.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err("enter a finite number".to_string()),
        Err(_) => Err(format!("\"{}\" is not a number", text.trim())),
    }
}

/// Drop the `params.K: ` prefix of a core message; the field is already
/// beside it on screen.
fn strip_path(message: &str) -> String {
    match message.split_once(": ") {
        Some((path, rest)) if !path.contains(' ') => rest.to_string(),
        _ => message.to_string(),
    }
}

/// A number for a form field: short, exact enough to round-trip typical
/// inputs.
pub fn format_number(v: f64) -> String {
    if v.is_infinite() {
        return String::new();
    }
    let s = format!("{v}");
    if s.len() <= 12 {
        s
    } else {
        format!("{v:.6e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn bench() -> Workbench {
        Workbench::new(starting_scenario()).expect("starting scenario is valid")
    }

    fn set(symbol: &str, text: &str) -> Action {
        Action::SetParam {
            symbol: symbol.to_string(),
            text: text.to_string(),
        }
    }

    #[test]
    fn starting_scenario_file_is_valid() {
        let text = include_str!("../../examples/greenhouse-mites.json");
        Scenario::from_json(text).unwrap().validate().unwrap();
    }

    #[test]
    fn a_changed_value_resimulates() {
        let b = bench();
        let next = b.apply(set("r", "0.5"));
        assert_eq!(next.n_solves, 2);
        assert_ne!(next.run.trajectory.states, b.run.trajectory.states);
        assert_eq!(next.error(&Field::Param("r".into())), None);
    }

    #[test]
    fn the_same_value_typed_differently_does_not_resimulate() {
        let b = bench();
        let next = b.apply(set("r", "0.30"));
        assert_eq!(next.n_solves, 1);
        assert!(Rc::ptr_eq(&next.run, &b.run));
    }

    #[test]
    fn bad_input_keeps_the_last_good_run_and_says_why() {
        let b = bench();
        for (text, expected) in [
            ("", "enter a number"),
            ("abc", "\"abc\" is not a number"),
            ("-1", "must be ≥ 0, got -1"),
            ("1e400", "enter a finite number"),
            ("1e9", "must be ≤ 100, got 1000000000"),
        ] {
            let next = b.apply(set("r", text));
            assert!(Rc::ptr_eq(&next.run, &b.run), "{text}");
            assert_eq!(
                next.error(&Field::Param("r".into())),
                Some(expected),
                "{text}"
            );
            assert_eq!(next.text(&Field::Param("r".into())), text);
        }
    }

    #[test]
    fn decimal_comma_is_accepted() {
        let next = bench().apply(set("r", "0,5"));
        assert_eq!(next.scenario.params["r"], 0.5);
    }

    #[test]
    fn clearing_an_optional_parameter_removes_it() {
        let next = bench().apply(set("K", ""));
        assert!(!next.scenario.params.contains_key("K"));
        assert_eq!(next.n_solves, 2);
    }

    #[test]
    fn fixing_a_field_clears_its_message() {
        let next = bench().apply(set("m", "x")).apply(set("m", "0.25"));
        assert_eq!(next.error(&Field::Param("m".into())), None);
        assert_eq!(next.scenario.params["m"], 0.25);
    }

    #[test]
    fn horizon_and_initial_densities_are_edited_and_checked() {
        let b = bench();
        let longer = b.apply(Action::SetHorizon { text: "200".into() });
        assert_eq!(longer.run.trajectory.times.last().copied(), Some(200.0));
        let bad = b.apply(Action::SetInitial {
            index: 1,
            text: "-3".into(),
        });
        assert_eq!(bad.error(&Field::Initial(1)), Some("must be ≥ 0, got -3"));
    }
}
