//! The workbench's state and the edits a user can make to it.
//!
//! Pure logic, no web APIs: every edit goes through [`Workbench::apply`],
//! which keeps the text the user typed, validates it through the core, and
//! re-simulates only when a value really changed. Bad input leaves the last
//! good result on screen and records a message for the field.

use std::collections::BTreeMap;
use std::rc::Rc;

use tussock_core::analysis::{self, Analysis, Nullcline};
use tussock_core::{models, solve, solve_with, Problem, Scenario, State, Trajectory};

use crate::examples::EXAMPLES;

/// One edit from the user.
#[derive(Clone, Debug, PartialEq)]
pub enum Action {
    /// Text typed into a parameter field, by symbol.
    SetParam {
        symbol: String,
        text: String,
    },
    /// Text typed into the initial density of species `index`.
    SetInitial {
        index: usize,
        text: String,
    },
    /// Text typed into the horizon field.
    SetHorizon {
        text: String,
    },
    /// A new name for species `index`.
    SetSpecies {
        index: usize,
        text: String,
    },
    SetTimeUnit {
        unit: String,
    },
    /// Switch to another model from the catalogue, with its defaults.
    SetModel {
        key: String,
    },
    /// Pick a variant (the functional response) by its key.
    SetChoice {
        key: String,
    },
    /// Load demo scenario `index` of [`EXAMPLES`].
    LoadExample {
        index: usize,
    },
    /// Start another trajectory at this point of the phase plane.
    AddStart {
        x: f64,
        y: f64,
    },
    ClearStarts,
    SetLogScale {
        on: bool,
    },
    /// Go back to the scenario before the last accepted change.
    Undo,
    Redo,
    /// Open a whole scenario (from a file, a link or saved state); `source`
    /// says where from, for the notice.
    Open {
        scenario: Box<Scenario>,
        source: String,
    },
    /// Show a message (e.g. a file that could not be read).
    Notify {
        message: String,
    },
}

/// Most undo steps kept.
pub const MAX_HISTORY: usize = 200;

/// A field of the scenario form, used as the key of texts and messages.
#[derive(Clone, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Field {
    Param(String),
    Initial(usize),
    Horizon,
    Species(usize),
}

/// Most extra trajectories kept on the phase plane.
pub const MAX_STARTS: usize = 12;

/// Everything computed from one accepted scenario.
#[derive(Debug)]
pub struct Run {
    pub problem: Problem,
    pub trajectory: Trajectory,
    pub analysis: Analysis,
    /// Trajectories from the starts the user clicked.
    pub extra: Vec<Trajectory>,
    /// Phase-plane extent: species 0 across, species 1 up.
    pub window: (f64, f64),
    pub nullclines: Vec<Nullcline>,
}

/// Runs are immutable once made, so two are equal when they are the same run;
/// this keeps change detection in components O(1).
impl PartialEq for Run {
    fn eq(&self, other: &Self) -> bool {
        std::ptr::eq(self, other)
    }
}

impl Run {
    /// Solve, analyse and trace everything the charts show.
    pub fn compute(problem: Problem, starts: &[State]) -> Run {
        let trajectory = solve(&problem);
        let analysis = analysis::analyze(&problem);
        let extra: Vec<Trajectory> = starts
            .iter()
            .map(|s| {
                solve_with(
                    problem.model,
                    &problem.params,
                    *s,
                    problem.t_end,
                    problem.output_step,
                    &problem.solver,
                )
            })
            .collect();
        let mut window = (0.0_f64, 0.0_f64);
        for t in std::iter::once(&trajectory).chain(&extra) {
            for s in &t.states {
                window.0 = window.0.max(s[0]);
                window.1 = window.1.max(s[1]);
            }
        }
        let seen = window;
        for e in analysis.equilibria.iter().filter(|e| e.feasible) {
            // Show equilibria near the action, not ones far off the chart.
            if e.state.len() == 2
                && e.state[0] <= 5.0 * seen.0.max(1e-9)
                && e.state[1] <= 5.0 * seen.1.max(1e-9)
            {
                window.0 = window.0.max(e.state[0]);
                window.1 = window.1.max(e.state[1]);
            }
        }
        let window = (pad(window.0), pad(window.1));
        let nullclines =
            analysis::nullclines(problem.model, &problem.params, window.0, window.1, 120);
        Run {
            problem,
            trajectory,
            analysis,
            extra,
            window,
            nullclines,
        }
    }
}

fn pad(max: f64) -> f64 {
    if max > 0.0 && max.is_finite() {
        max * 1.08
    } else {
        1.0
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
    /// Extra starting points on the phase plane.
    pub starts: Vec<State>,
    pub log_scale: bool,
    /// The demo last loaded, while it is unchanged.
    pub example: Option<usize>,
    /// Number of simulations done, for tests and diagnostics.
    pub n_solves: u64,
    /// Scenarios before the current one, oldest first, for undo.
    pub history: Vec<Scenario>,
    /// Scenarios undone, for redo.
    pub future: Vec<Scenario>,
    /// The field of the last accepted edit: typing into one field makes
    /// one undo step, not one per key.
    pub last_edit: Option<Field>,
    /// A message for the user about the last open, save or link.
    pub notice: Option<String>,
}

impl PartialEq for Workbench {
    fn eq(&self, other: &Self) -> bool {
        Rc::ptr_eq(&self.run, &other.run)
            && self.texts == other.texts
            && self.errors == other.errors
            && self.log_scale == other.log_scale
            && self.example == other.example
            && self.notice == other.notice
            && self.history.len() == other.history.len()
            && self.future.len() == other.future.len()
    }
}

/// The scenario the app opens with: the first demo.
pub fn starting_scenario() -> Scenario {
    EXAMPLES[0].scenario().unwrap_or_else(|| {
        let model = models::MODELS[0];
        Scenario::with_defaults(model, model.default_initial.to_vec(), 100.0)
    })
}

impl Workbench {
    /// A workbench showing `scenario`, or an error if it is invalid.
    pub fn new(scenario: Scenario) -> Result<Workbench, tussock_core::ScenarioError> {
        let problem = scenario.validate()?;
        Ok(Workbench {
            scenario,
            run: Rc::new(Run::compute(problem, &[])),
            texts: BTreeMap::new(),
            errors: BTreeMap::new(),
            starts: Vec::new(),
            log_scale: false,
            example: None,
            n_solves: 1,
            history: Vec::new(),
            future: Vec::new(),
            last_edit: None,
            notice: None,
        })
    }

    /// The workbench the page opens with.
    pub fn starting() -> Workbench {
        let mut b = Workbench::new(starting_scenario()).unwrap_or_else(|_| {
            let model = models::MODELS[0];
            let s = Scenario::with_defaults(model, model.default_initial.to_vec(), 100.0);
            Workbench::new(s).unwrap_or_else(|e| unreachable!("model defaults are valid: {e}"))
        });
        b.example = Some(0);
        b
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
            Field::Species(i) => self
                .run
                .problem
                .species
                .get(*i)
                .cloned()
                .unwrap_or_default(),
        }
    }

    pub fn error(&self, field: &Field) -> Option<&str> {
        self.errors.get(field).map(String::as_str)
    }

    /// Apply one edit and return the new state.
    pub fn apply(&self, action: Action) -> Workbench {
        match action {
            Action::SetParam { symbol, text } => self.edit_field(Field::Param(symbol), text),
            Action::SetInitial { index, text } => self.edit_field(Field::Initial(index), text),
            Action::SetHorizon { text } => self.edit_field(Field::Horizon, text),
            Action::SetSpecies { index, text } => self.edit_field(Field::Species(index), text),
            Action::SetTimeUnit { unit } => {
                let mut s = self.scenario.clone();
                s.time_unit = Some(unit);
                self.replace(s, false)
            }
            Action::SetModel { key } => match models::find(&key) {
                Some(model) if model.key != self.scenario.model => {
                    let mut s = Scenario::with_defaults(
                        model,
                        model.default_initial.to_vec(),
                        self.scenario.t_end,
                    );
                    s.time_unit = self.scenario.time_unit.clone();
                    s.output_step = None;
                    self.replace(s, true)
                }
                _ => self.clone(),
            },
            Action::SetChoice { key } => {
                let mut s = self.scenario.clone();
                s.functional_response = Some(key);
                self.replace(s, false)
            }
            Action::LoadExample { index } => match EXAMPLES.get(index).and_then(|e| e.scenario()) {
                Some(s) => {
                    let mut next = self.replace(s, true);
                    if !next.errors.contains_key(&Field::Horizon) {
                        next.example = Some(index);
                    }
                    next
                }
                None => self.clone(),
            },
            Action::AddStart { x, y } => {
                if !(x.is_finite() && y.is_finite() && x >= 0.0 && y >= 0.0)
                    || self.run.problem.model.n_species() < 2
                {
                    return self.clone();
                }
                let mut next = self.clone();
                next.starts.push(State::new(x, y));
                if next.starts.len() > MAX_STARTS {
                    next.starts.remove(0);
                }
                next.recompute(self.run.problem.clone());
                next
            }
            Action::ClearStarts => {
                if self.starts.is_empty() {
                    return self.clone();
                }
                let mut next = self.clone();
                next.starts.clear();
                next.recompute(self.run.problem.clone());
                next
            }
            Action::SetLogScale { on } => {
                let mut next = self.clone();
                next.log_scale = on;
                next
            }
            Action::Undo => self.step_back(),
            Action::Redo => self.step_forward(),
            Action::Open { scenario, source } => {
                let mut next = self.replace(*scenario, true);
                if next.errors.is_empty() {
                    next.notice = Some(format!("Opened {source}."));
                } else {
                    next.errors.clear();
                    next.notice = Some(format!(
                        "Could not open {source}: the scenario is not valid."
                    ));
                }
                next
            }
            Action::Notify { message } => {
                let mut next = self.clone();
                next.notice = Some(message);
                next
            }
        }
    }

    fn step_back(&self) -> Workbench {
        let Some(previous) = self.history.last().cloned() else {
            return self.clone();
        };
        let mut next = self.restore(previous);
        next.history.pop();
        next.future.push(self.scenario.clone());
        next
    }

    fn step_forward(&self) -> Workbench {
        let Some(later) = self.future.last().cloned() else {
            return self.clone();
        };
        let mut next = self.restore(later);
        next.future.pop();
        next.history.push(self.scenario.clone());
        next
    }

    /// Show a scenario from the undo or redo list (valid when it was kept).
    fn restore(&self, scenario: Scenario) -> Workbench {
        let mut next = self.clone();
        if let Ok(problem) = scenario.validate() {
            next.texts.clear();
            next.errors.clear();
            next.scenario = scenario;
            next.example = None;
            next.last_edit = None;
            next.recompute(problem);
        }
        next
    }

    /// Record the current scenario for undo before accepting a new one.
    fn remember(&mut self, previous: &Scenario, field: Option<Field>) {
        let same_field = field.is_some() && field == self.last_edit;
        if !same_field {
            self.history.push(previous.clone());
            if self.history.len() > MAX_HISTORY {
                self.history.remove(0);
            }
        }
        self.future.clear();
        self.last_edit = field;
        self.notice = None;
    }

    fn recompute(&mut self, problem: Problem) {
        self.run = Rc::new(Run::compute(problem, &self.starts));
        self.n_solves += 1;
    }

    /// Accept a whole new scenario (a model switch, an example, a choice).
    /// `fresh` clears typed texts, messages and extra trajectories.
    fn replace(&self, scenario: Scenario, fresh: bool) -> Workbench {
        let mut next = self.clone();
        match scenario.validate() {
            Ok(problem) => {
                if fresh {
                    next.texts.clear();
                    next.errors.clear();
                    next.starts.clear();
                }
                next.remember(&self.scenario, None);
                next.scenario = scenario;
                next.example = None;
                next.recompute(problem);
            }
            Err(e) => {
                // Only reachable through a bad built-in file; say so on the
                // horizon field rather than lose the current run.
                next.errors.insert(Field::Horizon, e.to_string());
            }
        }
        next
    }

    fn edit_field(&self, field: Field, text: String) -> Workbench {
        let mut next = self.clone();
        next.texts.insert(field.clone(), text.clone());
        let candidate = match edited(&self.scenario, &self.run.problem, &field, &text) {
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
                next.remember(&self.scenario, Some(field.clone()));
                next.scenario = candidate;
                next.example = None;
                next.recompute(problem);
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
/// not usable.
fn edited(
    scenario: &Scenario,
    problem: &Problem,
    field: &Field,
    text: &str,
) -> Result<Scenario, String> {
    let mut s = scenario.clone();
    if let Field::Species(i) = field {
        let mut names = problem.species.clone();
        match names.get_mut(*i) {
            Some(slot) => *slot = text.trim().to_string(),
            None => return Err("no such species".to_string()),
        }
        s.species = Some(names);
        return Ok(s);
    }
    let trimmed = text.trim();
    if trimmed.is_empty() {
        if let Field::Param(symbol) = field {
            let optional = problem
                .model
                .params
                .iter()
                .any(|p| p.symbol == symbol && p.optional);
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
        Field::Horizon => {
            s.t_end = value;
            // Keep about the same output resolution.
            s.output_step = None;
        }
        Field::Species(_) => {}
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
        Workbench::starting()
    }

    fn set(symbol: &str, text: &str) -> Action {
        Action::SetParam {
            symbol: symbol.to_string(),
            text: text.to_string(),
        }
    }

    #[test]
    fn a_changed_value_resimulates() {
        let b = bench();
        let next = b.apply(set("r", "0.5"));
        assert_eq!(next.n_solves, 2);
        assert_ne!(next.run.trajectory.states, b.run.trajectory.states);
        assert_eq!(next.error(&Field::Param("r".into())), None);
        assert_eq!(next.example, None, "an edited demo is no longer the demo");
    }

    #[test]
    fn the_same_value_typed_differently_does_not_resimulate() {
        let b = bench();
        let next = b.apply(set("r", "0.250"));
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
        let b = bench().apply(Action::SetModel {
            key: "lotka_volterra".into(),
        });
        let with_k = b.apply(set("K", "300"));
        let without = with_k.apply(set("K", ""));
        assert!(!without.scenario.params.contains_key("K"));
        assert_eq!(without.n_solves, with_k.n_solves + 1);
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

    #[test]
    fn every_model_can_be_chosen_and_runs() {
        let mut b = bench();
        for model in models::MODELS {
            b = b.apply(Action::SetModel {
                key: model.key.into(),
            });
            assert_eq!(b.run.problem.model.key, model.key);
            assert!(b.run.trajectory.stop.is_finished(), "{}", model.key);
            assert!(!b.run.analysis.equilibria.is_empty(), "{}", model.key);
            assert_eq!(b.run.problem.species.len(), model.n_species());
        }
    }

    #[test]
    fn every_functional_response_can_be_chosen() {
        let mut b = bench();
        let choice = b
            .run
            .problem
            .model
            .choice
            .expect("the demo model has a choice");
        for (i, (key, _)) in choice.options.iter().enumerate() {
            b = b.apply(Action::SetChoice {
                key: key.to_string(),
            });
            assert_eq!(b.run.problem.params.choice, i);
        }
    }

    #[test]
    fn species_names_are_validated() {
        let b = bench();
        let named = b.apply(Action::SetSpecies {
            index: 0,
            text: "thrips".into(),
        });
        assert_eq!(named.run.problem.species[0], "thrips");
        let empty = b.apply(Action::SetSpecies {
            index: 0,
            text: "  ".into(),
        });
        assert_eq!(empty.error(&Field::Species(0)), Some("must not be empty"));
        assert_eq!(empty.run.problem.species[0], "spider mite");
    }

    #[test]
    fn clicked_starts_add_trajectories_and_clear() {
        let b = bench()
            .apply(Action::AddStart { x: 50.0, y: 5.0 })
            .apply(Action::AddStart { x: 10.0, y: 2.0 });
        assert_eq!(b.run.extra.len(), 2);
        assert_eq!(b.run.extra[0].states[0][0], 50.0);
        // A parameter change keeps them, recomputed.
        let changed = b.apply(set("r", "0.3"));
        assert_eq!(changed.run.extra.len(), 2);
        let cleared = changed.apply(Action::ClearStarts);
        assert!(cleared.run.extra.is_empty());
        // Nonsense clicks are ignored.
        let same = cleared.apply(Action::AddStart {
            x: f64::NAN,
            y: 1.0,
        });
        assert!(Rc::ptr_eq(&same.run, &cleared.run));
    }

    #[test]
    fn undo_and_redo_walk_through_accepted_changes() {
        let b = bench();
        let original = b.scenario.clone();
        // Typing 0.3 then 0.35 into one field is one undo step.
        let typed = b.apply(set("r", "0.3")).apply(set("r", "0.35"));
        let switched = typed.apply(Action::SetModel {
            key: "competition".into(),
        });
        assert_eq!(switched.history.len(), 2);
        let back = switched.apply(Action::Undo);
        assert_eq!(back.scenario.params["r"], 0.35);
        let back2 = back.apply(Action::Undo);
        assert_eq!(back2.scenario, original);
        assert!(back2.history.is_empty());
        assert_eq!(
            back2.apply(Action::Undo).scenario,
            original,
            "nothing more to undo"
        );
        let forward = back2.apply(Action::Redo).apply(Action::Redo);
        assert_eq!(forward.scenario.model, "competition");
        // A new edit after undo clears the redo list.
        let branched = back.apply(set("m", "0.2"));
        assert!(branched.future.is_empty());
        // Rejected input makes no undo step.
        assert_eq!(b.apply(set("r", "abc")).history.len(), 0);
    }

    #[test]
    fn opening_a_scenario_says_where_from_and_is_undoable() {
        let b = bench();
        let s = crate::examples::EXAMPLES[1].scenario().unwrap();
        let opened = b.apply(Action::Open {
            scenario: Box::new(s),
            source: "plan.json".into(),
        });
        assert_eq!(opened.notice.as_deref(), Some("Opened plan.json."));
        assert_eq!(opened.apply(Action::Undo).scenario, b.scenario);
        let mut bad = crate::examples::EXAMPLES[1].scenario().unwrap();
        bad.t_end = -1.0;
        let refused = b.apply(Action::Open {
            scenario: Box::new(bad),
            source: "bad.json".into(),
        });
        assert!(refused.notice.unwrap().contains("not valid"));
        assert!(Rc::ptr_eq(&refused.run, &b.run));
    }

    #[test]
    fn examples_load_and_are_marked() {
        let b = bench().apply(Action::LoadExample { index: 2 });
        assert_eq!(b.example, Some(2));
        assert_eq!(b.run.problem.model.key, "competition");
        let outcome = b
            .run
            .analysis
            .outcome
            .as_ref()
            .expect("competition has a verdict");
        assert_eq!(outcome.kind, "species_1_excludes_2");
    }
}
