//! The workbench's state and the edits a user can make to it.
//!
//! Pure logic, no web APIs: every edit goes through [`Workbench::apply`],
//! which keeps the text the user typed, validates it through the core, and
//! re-simulates only when a value really changed. Bad input leaves the last
//! good result on screen and records a message for the field.

use std::collections::BTreeMap;
use std::rc::Rc;

use tussock_core::data::CountData;
use tussock_core::events::EventSpec;
pub use tussock_core::run::Run;
use tussock_core::scenario::ThresholdSpec;
use tussock_core::scenario::{SavedFit, Studies, Variant, MAX_VARIANTS};
use tussock_core::{models, Problem, Scenario, State};

use crate::jobs::{Outcome, Task, TaskKind, Update};

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
    /// Add an event to the schedule.
    AddEvent,
    DeleteEvent {
        index: usize,
    },
    SetEventKind {
        index: usize,
        key: String,
    },
    SetEventSpecies {
        index: usize,
        species: usize,
    },
    /// Text typed into a number of event `index`.
    SetEvent {
        index: usize,
        which: EventField,
        text: String,
    },
    /// Text typed into a threshold (empty for none).
    SetThreshold {
        which: ThresholdField,
        text: String,
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
    /// Show another part of the page.
    SetView {
        view: View,
    },
    /// A job was sent to a worker at `now` (milliseconds).
    JobStarted {
        id: u64,
        task: Task,
        now: f64,
    },
    /// A worker reported on a job.
    JobUpdate {
        kind: TaskKind,
        update: Box<Update>,
        now: f64,
    },
    /// The user stopped a job: keep what came back, marked partial.
    JobCancelled {
        kind: TaskKind,
    },
    /// Set several parameters at once (a point clicked on a sweep) and
    /// show the workbench.
    SetParams {
        values: Vec<(String, f64)>,
    },
    /// Put the last fit's estimates into the scenario.
    UseFitted,
    /// Take a scenario a study proposes (the planner's release added to
    /// the schedule), say so, and show the workbench.
    Adopt {
        scenario: Box<Scenario>,
        message: String,
    },
    /// Keep imported counts with the scenario (None clears them).
    SetData {
        data: Option<CountData>,
        source: String,
    },
    /// Keep the current setup as a named variant.
    SaveVariant {
        name: String,
    },
    DeleteVariant {
        index: usize,
    },
    /// Make a variant's setup the current one (the variants stay).
    LoadVariant {
        index: usize,
    },
}

/// The parts of the page, one question each.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum View {
    /// Simulate one scenario: time series, phase plane, analysis.
    #[default]
    Workbench,
    /// The smallest release that meets a goal.
    Planner,
    /// Named alternatives side by side.
    Variants,
    /// Parameters swept: bifurcations and outcome maps.
    Sweep,
    /// The model fitted to census counts.
    Fit,
    /// Stochastic runs: extinction and establishment risk.
    Chance,
    /// One printable page of everything.
    Report,
}

impl View {
    pub const ALL: [View; 7] = [
        View::Workbench,
        View::Planner,
        View::Variants,
        View::Sweep,
        View::Fit,
        View::Chance,
        View::Report,
    ];

    pub fn label(self) -> &'static str {
        match self {
            View::Workbench => "Simulate",
            View::Planner => "Plan a release",
            View::Variants => "Compare variants",
            View::Sweep => "Sweep parameters",
            View::Fit => "Fit to counts",
            View::Chance => "Chance and risk",
            View::Report => "Report",
        }
    }

    /// Stable id for the page (tests, anchors).
    pub fn key(self) -> &'static str {
        match self {
            View::Workbench => "simulate",
            View::Planner => "plan",
            View::Variants => "variants",
            View::Sweep => "sweep",
            View::Fit => "fit",
            View::Chance => "chance",
            View::Report => "report",
        }
    }
}

/// Where a job stands.
#[derive(Clone, Debug, PartialEq)]
pub enum JobStatus {
    Running,
    Finished,
    /// Stopped by the user; the outcome (if any) is partial.
    Cancelled,
    Failed(String),
}

/// A job sent to a worker and what has come back.
#[derive(Clone, Debug)]
pub struct JobSlot {
    pub id: u64,
    pub task: Task,
    /// The scenario the job ran on (results go stale when it changes).
    pub scenario: Scenario,
    pub started_ms: f64,
    pub updated_ms: f64,
    pub done: u64,
    pub total: u64,
    pub status: JobStatus,
    /// The latest result, partial while running.
    pub outcome: Option<Rc<Outcome>>,
}

/// Outcomes are shared and immutable: compared by identity.
impl PartialEq for JobSlot {
    fn eq(&self, other: &Self) -> bool {
        self.id == other.id
            && self.done == other.done
            && self.total == other.total
            && self.status == other.status
            && match (&self.outcome, &other.outcome) {
                (Some(a), Some(b)) => Rc::ptr_eq(a, b),
                (None, None) => true,
                _ => false,
            }
    }
}

impl JobSlot {
    pub fn is_running(&self) -> bool {
        self.status == JobStatus::Running
    }

    /// Share done, 0 to 1.
    pub fn fraction(&self) -> f64 {
        if self.total == 0 {
            0.0
        } else {
            (self.done as f64 / self.total as f64).clamp(0.0, 1.0)
        }
    }

    /// Time left, by the pace so far (milliseconds).
    pub fn eta_ms(&self) -> Option<f64> {
        (self.is_running() && self.done > 0 && self.total >= self.done).then(|| {
            let elapsed = (self.updated_ms - self.started_ms).max(0.0);
            elapsed / self.done as f64 * (self.total - self.done) as f64
        })
    }
}

fn slot_scenario(bench: &Workbench, kind: TaskKind) -> Scenario {
    bench
        .jobs
        .get(&kind)
        .map(|s| s.scenario.clone())
        .unwrap_or_else(|| setup_of(&bench.scenario))
}

/// The model setup of a scenario, without what travels with it (data,
/// fit, variants, study settings): what a run depends on.
pub fn setup_of(scenario: &Scenario) -> Scenario {
    let mut s = scenario.clone();
    s.data = None;
    s.fit = None;
    s.variants.clear();
    s.studies = None;
    s
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
    /// A number of event `index` of the schedule.
    Event(usize, EventField),
    Threshold(ThresholdField),
}

/// The numbers of a scheduled event.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum EventField {
    Time,
    Amount,
    Every,
    Count,
    Until,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum ThresholdField {
    Economic,
    InjuryLevel,
    QuasiExtinction(usize),
}

/// What an event does, as offered in the schedule table.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum EventKind {
    Release,
    ReleaseRatio,
    Remove,
    HarvestRate,
    StockingRate,
}

impl EventKind {
    pub const ALL: [EventKind; 5] = [
        EventKind::Release,
        EventKind::ReleaseRatio,
        EventKind::Remove,
        EventKind::HarvestRate,
        EventKind::StockingRate,
    ];

    pub fn key(self) -> &'static str {
        match self {
            EventKind::Release => "add",
            EventKind::ReleaseRatio => "add_ratio",
            EventKind::Remove => "remove_fraction",
            EventKind::HarvestRate => "harvest_rate",
            EventKind::StockingRate => "stocking_rate",
        }
    }

    pub fn label(self) -> &'static str {
        match self {
            EventKind::Release => "release (individuals)",
            EventKind::ReleaseRatio => "release per individual of the other species",
            EventKind::Remove => "remove a fraction (spray, cull, harvest)",
            EventKind::HarvestRate => "harvest at a rate until…",
            EventKind::StockingRate => "stock at a rate until…",
        }
    }

    pub fn from_key(key: &str) -> Option<EventKind> {
        EventKind::ALL.into_iter().find(|k| k.key() == key)
    }

    pub fn of(e: &EventSpec) -> EventKind {
        if e.add_ratio.is_some() {
            EventKind::ReleaseRatio
        } else if e.remove_fraction.is_some() {
            EventKind::Remove
        } else if e.harvest_rate.is_some() {
            EventKind::HarvestRate
        } else if e.stocking_rate.is_some() {
            EventKind::StockingRate
        } else {
            EventKind::Release
        }
    }

    pub fn is_rate(self) -> bool {
        matches!(self, EventKind::HarvestRate | EventKind::StockingRate)
    }
}

/// The amount of an event, whatever its kind.
pub fn event_amount(e: &EventSpec) -> Option<f64> {
    e.add
        .or(e.add_ratio)
        .or(e.remove_fraction)
        .or(e.harvest_rate)
        .or(e.stocking_rate)
}

fn set_event_amount(e: &mut EventSpec, kind: EventKind, amount: Option<f64>) {
    e.add = None;
    e.add_ratio = None;
    e.ratio_to = None;
    e.remove_fraction = None;
    e.harvest_rate = None;
    e.stocking_rate = None;
    let slot = match kind {
        EventKind::Release => &mut e.add,
        EventKind::ReleaseRatio => &mut e.add_ratio,
        EventKind::Remove => &mut e.remove_fraction,
        EventKind::HarvestRate => &mut e.harvest_rate,
        EventKind::StockingRate => &mut e.stocking_rate,
    };
    *slot = amount;
}

/// Most extra trajectories kept on the phase plane.
pub const MAX_STARTS: usize = 12;

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
    pub view: View,
    /// The last job of each kind.
    pub jobs: BTreeMap<TaskKind, JobSlot>,
}

impl PartialEq for Workbench {
    fn eq(&self, other: &Self) -> bool {
        Rc::ptr_eq(&self.run, &other.run)
            && self.scenario == other.scenario
            && self.view == other.view
            && self.jobs == other.jobs
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
            view: View::default(),
            jobs: BTreeMap::new(),
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
            Field::Event(i, which) => {
                let Some(e) = self.scenario.events.get(*i) else {
                    return String::new();
                };
                let value = match which {
                    EventField::Time => Some(e.time),
                    EventField::Amount => event_amount(e),
                    EventField::Every => e.every,
                    EventField::Count => e.count.map(f64::from),
                    EventField::Until => e.until,
                };
                value.map(format_number).unwrap_or_default()
            }
            Field::Threshold(which) => {
                let t = self.scenario.thresholds.clone().unwrap_or_default();
                let value = match which {
                    ThresholdField::Economic => t.economic_threshold,
                    ThresholdField::InjuryLevel => t.economic_injury_level,
                    ThresholdField::QuasiExtinction(i) => t
                        .quasi_extinction
                        .and_then(|q| q.get(*i).copied().flatten()),
                };
                value.map(format_number).unwrap_or_default()
            }
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
            Action::SetEvent { index, which, text } => {
                self.edit_field(Field::Event(index, which), text)
            }
            Action::SetThreshold { which, text } => self.edit_field(Field::Threshold(which), text),
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
                    // Counts and variants stay; settings that name the old
                    // model's parameters and its fit do not.
                    s.data = self.scenario.data.clone();
                    s.variants = self.scenario.variants.clone();
                    s.studies = self.scenario.studies.clone().map(|st| Studies {
                        line: None,
                        map: None,
                        fit: None,
                        ..st
                    });
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
                    if !Rc::ptr_eq(&next.run, &self.run) {
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
            Action::AddEvent => {
                let mut s = self.scenario.clone();
                let n = self.run.problem.model.n_species();
                let time = (self.scenario.t_end / 4.0).round().max(0.0);
                s.events.push(EventSpec {
                    time,
                    species: n - 1,
                    add: Some(10.0),
                    ..EventSpec::default()
                });
                self.replace(s, false)
            }
            Action::DeleteEvent { index } => {
                let mut s = self.scenario.clone();
                if index >= s.events.len() {
                    return self.clone();
                }
                s.events.remove(index);
                let mut next = self.replace(s, false);
                // Texts and messages of later rows would shift: drop them.
                next.texts.retain(|f, _| !matches!(f, Field::Event(..)));
                next.errors.retain(|f, _| !matches!(f, Field::Event(..)));
                next
            }
            Action::SetEventKind { index, key } => {
                let (Some(kind), Some(_)) =
                    (EventKind::from_key(&key), self.scenario.events.get(index))
                else {
                    return self.clone();
                };
                let mut s = self.scenario.clone();
                let e = &mut s.events[index];
                let amount = match kind {
                    EventKind::Remove => event_amount(e).map(|a| a.min(1.0)).or(Some(0.5)),
                    EventKind::ReleaseRatio => Some(0.1),
                    _ => event_amount(e).or(Some(10.0)),
                };
                set_event_amount(e, kind, amount);
                if kind.is_rate() {
                    e.every = None;
                    e.count = None;
                    e.until = Some(e.until.unwrap_or((e.time + 7.0).min(s.t_end)));
                } else {
                    e.until = None;
                }
                self.texts_cleared_for_event(index).replace(s, false)
            }
            Action::SetEventSpecies { index, species } => {
                let mut s = self.scenario.clone();
                match s.events.get_mut(index) {
                    Some(e) if species < self.run.problem.model.n_species() => e.species = species,
                    _ => return self.clone(),
                }
                self.replace(s, false)
            }
            Action::Undo => self.step_back(),
            Action::Redo => self.step_forward(),
            Action::Open { scenario, source } => {
                let mut next = self.replace(*scenario, true);
                next.notice = Some(if Rc::ptr_eq(&next.run, &self.run) {
                    format!("Could not open {source}: the scenario is not valid.")
                } else {
                    format!("Opened {source}.")
                });
                next
            }
            Action::Notify { message } => {
                let mut next = self.clone();
                next.notice = Some(message);
                next
            }
            Action::SetView { view } => {
                let mut next = self.clone();
                next.view = view;
                next
            }
            Action::JobStarted { id, task, now } => self.job_started(id, task, now),
            Action::JobUpdate { kind, update, now } => self.job_update(kind, *update, now),
            Action::JobCancelled { kind } => {
                let mut next = self.clone();
                if let Some(slot) = next.jobs.get_mut(&kind).filter(|s| s.is_running()) {
                    slot.status = JobStatus::Cancelled;
                    if let Some(outcome) = &slot.outcome {
                        let mut kept = (**outcome).clone();
                        kept.mark_partial();
                        slot.outcome = Some(Rc::new(kept));
                    }
                }
                next
            }
            Action::SetParams { values } => {
                let mut s = self.scenario.clone();
                for (symbol, value) in values {
                    s.params.insert(symbol, value);
                }
                let mut next = self.replace(s, false);
                if !Rc::ptr_eq(&next.run, &self.run) {
                    next.view = View::Workbench;
                }
                next
            }
            Action::Adopt { scenario, message } => {
                let mut next = self.replace(*scenario, false);
                if next.scenario != self.scenario {
                    next.notice = Some(message);
                    next.view = View::Workbench;
                }
                next
            }
            Action::UseFitted => match &self.scenario.fit {
                Some(saved) => {
                    let mut next = self.replace(saved.result.apply_to(&self.scenario), false);
                    if !Rc::ptr_eq(&next.run, &self.run) {
                        next.notice = Some("The fitted values are now the scenario's (Undo brings the old ones back).".into());
                    }
                    next
                }
                None => self.clone(),
            },
            Action::SetData { data, source } => {
                let mut s = self.scenario.clone();
                let message = match &data {
                    Some(d) => format!(
                        "Kept {} counts at {} times from {source} with the scenario.",
                        d.n_observations(),
                        d.times.len()
                    ),
                    None => "The imported counts were removed (Undo brings them back).".into(),
                };
                s.data = data;
                let mut next = self.replace(s, false);
                if next.scenario != self.scenario {
                    next.notice = Some(message);
                }
                next
            }
            Action::SaveVariant { name } => {
                let name = name.trim().to_string();
                let mut next = self.clone();
                if name.is_empty() {
                    next.notice = Some("Give the variant a name.".into());
                    return next;
                }
                if self.scenario.variants.len() >= MAX_VARIANTS {
                    next.notice = Some(format!(
                        "At most {MAX_VARIANTS} variants are kept: delete one first."
                    ));
                    return next;
                }
                let mut s = self.scenario.clone();
                s.variants.push(Variant {
                    name,
                    scenario: Box::new(setup_of(&self.scenario)),
                });
                self.replace(s, false)
            }
            Action::DeleteVariant { index } => {
                if index >= self.scenario.variants.len() {
                    return self.clone();
                }
                let mut s = self.scenario.clone();
                s.variants.remove(index);
                self.replace(s, false)
            }
            Action::LoadVariant { index } => {
                let Some(v) = self.scenario.variants.get(index) else {
                    return self.clone();
                };
                let mut s = (*v.scenario).clone();
                s.data = self.scenario.data.clone();
                s.fit = self.scenario.fit.clone();
                s.variants = self.scenario.variants.clone();
                s.studies = self.scenario.studies.clone();
                let mut next = self.replace(s, true);
                next.notice = Some(format!("Now showing the variant \"{}\".", v.name));
                next
            }
        }
    }

    fn job_started(&self, id: u64, task: Task, now: f64) -> Workbench {
        let mut next = self.clone();
        // Remember what was asked, so a reopened file asks the same again.
        let studies = next.scenario.studies.get_or_insert_with(Studies::default);
        match &task {
            Task::Plan { request } => studies.plan = Some(request.clone()),
            Task::Line { request } => studies.line = Some(request.clone()),
            Task::Map { request } => studies.map = Some(request.clone()),
            Task::Fit { request, .. } => studies.fit = Some(request.clone()),
            Task::Ensemble { options } => studies.ensemble = Some(options.clone()),
            Task::Founders { request } => studies.founders = Some(request.clone()),
        }
        next.jobs.insert(
            task.kind(),
            JobSlot {
                id,
                scenario: setup_of(&self.scenario),
                task,
                started_ms: now,
                updated_ms: now,
                done: 0,
                total: 0,
                status: JobStatus::Running,
                outcome: None,
            },
        );
        next
    }

    fn job_update(&self, kind: TaskKind, update: Update, now: f64) -> Workbench {
        let mut next = self.clone();
        let Some(slot) = next.jobs.get_mut(&kind) else {
            return next;
        };
        // Id 0: the worker could not say which job (it failed to decode or
        // died); it concerns the job it was running.
        let id_of = |id: u64| id == slot.id || id == 0;
        if !slot.is_running() {
            return next;
        }
        slot.updated_ms = now;
        let mut saved_fit = None;
        match update {
            Update::Ready => {}
            Update::Progress { id, done, total } if id_of(id) => {
                slot.done = done;
                slot.total = total;
            }
            Update::Partial { id, outcome } if id_of(id) => {
                let mut merged = slot
                    .outcome
                    .as_deref()
                    .cloned()
                    .unwrap_or_else(|| outcome.clone());
                if slot.outcome.is_some() {
                    merged.absorb(outcome);
                }
                slot.outcome = Some(Rc::new(merged));
            }
            Update::Done { id, outcome } if id_of(id) => {
                slot.done = slot.total.max(slot.done);
                slot.status = JobStatus::Finished;
                if let (Outcome::Fit(result), Task::Fit { request, .. }) = (&outcome, &slot.task) {
                    saved_fit = Some(SavedFit {
                        request: request.clone(),
                        result: result.clone(),
                    });
                }
                slot.outcome = Some(Rc::new(outcome));
            }
            Update::Failed { id, message } if id_of(id) => {
                slot.status = JobStatus::Failed(message);
            }
            _ => {}
        }
        if let Some(fit) = saved_fit {
            // The fit travels with the scenario it was made for.
            if setup_of(&next.scenario) == slot_scenario(&next, kind) {
                next.scenario.fit = Some(fit);
            }
        }
        next
    }

    /// Whether a job's result was computed for another setup than the
    /// current one.
    pub fn is_stale(&self, kind: TaskKind) -> bool {
        self.jobs
            .get(&kind)
            .is_some_and(|slot| slot.scenario != setup_of(&self.scenario))
    }

    fn texts_cleared_for_event(&self, index: usize) -> Workbench {
        let mut next = self.clone();
        next.texts
            .retain(|f, _| !matches!(f, Field::Event(i, _) if *i == index));
        next.errors
            .retain(|f, _| !matches!(f, Field::Event(i, _) if *i == index));
        next
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
                let same_setup = setup_of(&scenario) == setup_of(&self.scenario);
                next.scenario = scenario;
                if !same_setup || fresh {
                    next.example = None;
                    next.recompute(problem);
                }
            }
            Err(e) => {
                // Keep the current run and say why nothing changed.
                next.notice = Some(format!("Not changed: {e}"));
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
                let message = e.to_string();
                let text = if path_belongs_to(&message, &field) {
                    strip_path(&message)
                } else {
                    message
                };
                next.errors.insert(field, text);
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
    let optional_number = || -> Result<Option<f64>, String> {
        if trimmed.is_empty() {
            Ok(None)
        } else {
            parse_number(trimmed).map(Some)
        }
    };
    if let Field::Threshold(which) = field {
        let value = optional_number()?;
        let mut t = s.thresholds.clone().unwrap_or_default();
        match which {
            ThresholdField::Economic => t.economic_threshold = value,
            ThresholdField::InjuryLevel => t.economic_injury_level = value,
            ThresholdField::QuasiExtinction(i) => {
                let n = problem.model.n_species();
                let mut q = t.quasi_extinction.clone().unwrap_or_else(|| vec![None; n]);
                q.resize(n, None);
                if let Some(slot) = q.get_mut(*i) {
                    *slot = value;
                }
                t.quasi_extinction = q.iter().any(Option::is_some).then_some(q);
            }
        }
        let empty = ThresholdSpec {
            pest: t.pest,
            ..ThresholdSpec::default()
        };
        s.thresholds = (t != empty || t.pest.is_some()).then_some(t);
        return Ok(s);
    }
    if let Field::Event(i, which) = field {
        let Some(e) = s.events.get_mut(*i) else {
            return Err("no such event".to_string());
        };
        match which {
            EventField::Time => e.time = optional_number()?.ok_or("enter a time")?,
            EventField::Amount => {
                let kind = EventKind::of(e);
                set_event_amount(e, kind, Some(optional_number()?.ok_or("enter an amount")?));
            }
            EventField::Every => e.every = optional_number()?,
            EventField::Count => {
                e.count = match optional_number()? {
                    None => None,
                    Some(c) if c >= 1.0 && c.fract() == 0.0 && c <= 10_000.0 => Some(c as u32),
                    Some(c) => {
                        return Err(format!("must be a whole number from 1 to 10000, got {c}"))
                    }
                }
            }
            EventField::Until => e.until = optional_number()?,
        }
        return Ok(s);
    }
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
        Field::Species(_) | Field::Event(..) | Field::Threshold(_) => {}
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

/// Whether a core message (`path: reason`) is about this field.
fn path_belongs_to(message: &str, field: &Field) -> bool {
    let path = message.split_once(": ").map_or("", |(p, _)| p);
    match field {
        Field::Param(symbol) => path == format!("params.{symbol}"),
        Field::Initial(i) => path == format!("initial[{i}]"),
        Field::Horizon => path == "t_end" || path == "output_step",
        Field::Species(i) => path == format!("species[{i}]") || path == "species",
        Field::Event(i, _) => path.starts_with(&format!("events[{i}]")),
        Field::Threshold(_) => path.starts_with("thresholds"),
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

    fn event_text(index: usize, which: EventField, text: &str) -> Action {
        Action::SetEvent {
            index,
            which,
            text: text.to_string(),
        }
    }

    #[test]
    fn the_schedule_is_edited_and_checked_row_by_row() {
        let b = bench().apply(Action::AddEvent);
        assert_eq!(b.scenario.events.len(), 1);
        assert_eq!(b.run.trajectory.pulses.len(), 1);
        let repeated = b
            .apply(event_text(0, EventField::Every, "7"))
            .apply(event_text(0, EventField::Count, "3"));
        assert_eq!(repeated.run.trajectory.pulses.len(), 3);
        let late = repeated.apply(event_text(0, EventField::Time, "500"));
        assert_eq!(
            late.error(&Field::Event(0, EventField::Time)),
            Some("500 is past the horizon (120)")
        );
        assert_eq!(
            late.run.trajectory.pulses.len(),
            3,
            "the last good run stays"
        );
        let spray = repeated.apply(Action::SetEventKind {
            index: 0,
            key: "remove_fraction".into(),
        });
        let too_much = spray.apply(event_text(0, EventField::Amount, "1.5"));
        assert_eq!(
            too_much.error(&Field::Event(0, EventField::Amount)),
            Some("must be between 0 and 1, got 1.5")
        );
        let rate = spray.apply(Action::SetEventKind {
            index: 0,
            key: "harvest_rate".into(),
        });
        assert!(rate.scenario.events[0].until.is_some() && rate.scenario.events[0].every.is_none());
        let gone = rate.apply(Action::DeleteEvent { index: 0 });
        assert!(gone.scenario.events.is_empty());
        assert_eq!(gone.apply(Action::Undo).scenario.events.len(), 1);
        // A shorter horizon that strands an event says so on the horizon field.
        let stranded = repeated.apply(Action::SetHorizon { text: "20".into() });
        assert!(stranded
            .error(&Field::Horizon)
            .unwrap()
            .starts_with("events[0].time"));
    }

    #[test]
    fn thresholds_are_set_cleared_and_checked() {
        let b = bench();
        let set_t = |b: &Workbench, which, text: &str| {
            b.apply(Action::SetThreshold {
                which,
                text: text.to_string(),
            })
        };
        let with = set_t(&b, ThresholdField::Economic, "10");
        assert_eq!(with.run.problem.thresholds.economic_threshold, Some(10.0));
        assert!(!with.run.trajectory.crossings.is_empty());
        let bad = set_t(&with, ThresholdField::InjuryLevel, "5");
        assert!(bad
            .error(&Field::Threshold(ThresholdField::InjuryLevel))
            .is_some());
        let cleared = set_t(&with, ThresholdField::Economic, "");
        assert_eq!(cleared.scenario.thresholds, None);
        let quasi = set_t(&b, ThresholdField::QuasiExtinction(1), "0.5");
        assert_eq!(
            quasi.run.problem.thresholds.quasi_extinction,
            [None, Some(0.5)]
        );
    }

    #[test]
    fn examples_load_and_are_marked() {
        let b = bench().apply(Action::LoadExample { index: 3 });
        assert_eq!(b.example, Some(3));
        assert_eq!(b.run.problem.model.key, "competition");
        let outcome = b
            .run
            .analysis
            .outcome
            .as_ref()
            .expect("competition has a verdict");
        assert_eq!(outcome.kind, "species_1_excludes_2");
    }

    fn fit_task(b: &Workbench) -> Task {
        let data = CountData {
            times: vec![0.0, 10.0, 20.0, 30.0],
            series: vec![tussock_core::data::CountSeries {
                species: 0,
                column: "prey".into(),
                counts: vec![Some(20.0), Some(60.0), Some(90.0), Some(40.0)],
            }],
        };
        let _ = b;
        Task::Fit {
            data,
            request: tussock_core::fit::FitRequest::new(&["K"]),
        }
    }

    #[test]
    fn a_job_runs_streams_and_finishes_with_a_time_left_estimate() {
        let b = bench();
        let job = crate::jobs::Job {
            id: 11,
            scenario: b.scenario.clone(),
            task: Task::Ensemble {
                options: tussock_core::stochastic::EnsembleOptions {
                    runs: 40,
                    seed: 3,
                    ..Default::default()
                },
            },
        };
        let kind = job.task.kind();
        let mut b = b.apply(Action::JobStarted {
            id: 11,
            task: job.task.clone(),
            now: 1000.0,
        });
        assert!(b.jobs[&kind].is_running());
        assert!(b.scenario.studies.as_ref().unwrap().ensemble.is_some());
        let mut clock = 1000.0;
        crate::jobs::run(&job, &|| 0.0, &mut |update| {
            clock += 100.0;
            b = b.apply(Action::JobUpdate {
                kind,
                update: Box::new(update),
                now: clock,
            });
            if b.jobs[&kind].is_running() && b.jobs[&kind].done > 0 {
                assert!(b.jobs[&kind].eta_ms().is_some_and(|t| t >= 0.0));
            }
            true
        });
        let slot = &b.jobs[&kind];
        assert_eq!(slot.status, JobStatus::Finished);
        assert!(!slot.outcome.as_ref().unwrap().is_partial());
        assert_eq!(slot.fraction(), 1.0);
        assert!(!b.is_stale(kind));
        let changed = b.apply(set("K", "200"));
        assert!(
            changed.is_stale(kind),
            "results of another setup are marked stale"
        );
    }

    #[test]
    fn cancelling_keeps_the_partial_result_marked_partial() {
        let b = bench();
        let task = Task::Ensemble {
            options: tussock_core::stochastic::EnsembleOptions {
                runs: 400,
                seed: 3,
                ..Default::default()
            },
        };
        let job = crate::jobs::Job {
            id: 12,
            scenario: b.scenario.clone(),
            task: task.clone(),
        };
        let kind = task.kind();
        let mut b = b.apply(Action::JobStarted {
            id: 12,
            task,
            now: 0.0,
        });
        let mut n = 0;
        let clock = std::cell::Cell::new(0.0);
        crate::jobs::run(
            &job,
            &|| {
                clock.set(clock.get() + 1000.0);
                clock.get()
            },
            &mut |update| {
                // A terminated worker sends nothing more.
                if n < 8 {
                    b = b.apply(Action::JobUpdate {
                        kind,
                        update: Box::new(update),
                        now: 1.0,
                    });
                }
                n += 1;
                n < 8
            },
        );
        let b = b.apply(Action::JobCancelled { kind });
        let slot = &b.jobs[&kind];
        assert_eq!(slot.status, JobStatus::Cancelled);
        assert!(slot.outcome.as_ref().expect("partial kept").is_partial());
        // A late message from the terminated worker changes nothing.
        let late = b.apply(Action::JobUpdate {
            kind,
            update: Box::new(Update::Failed {
                id: 12,
                message: "x".into(),
            }),
            now: 2.0,
        });
        assert_eq!(late.jobs[&kind].status, JobStatus::Cancelled);
    }

    #[test]
    fn a_finished_fit_travels_with_the_scenario_and_can_be_used() {
        let b = Workbench::new(
            Scenario::from_json(r#"{"model": "logistic", "params": {"b": 0.5, "d": 0.1, "K": 80}, "initial": [20], "t_end": 30}"#).unwrap(),
        )
        .unwrap();
        let task = fit_task(&b);
        let job = crate::jobs::Job {
            id: 5,
            scenario: b.scenario.clone(),
            task: task.clone(),
        };
        let mut b = b.apply(Action::JobStarted {
            id: 5,
            task,
            now: 0.0,
        });
        let outcome = crate::jobs::run_to_end(&job).unwrap();
        b = b.apply(Action::JobUpdate {
            kind: TaskKind::Fit,
            update: Box::new(Update::Done { id: 5, outcome }),
            now: 1.0,
        });
        let fitted_k = b.scenario.fit.as_ref().expect("fit kept").result.estimates[0].value;
        let solves = b.n_solves;
        let used = b.apply(Action::UseFitted);
        assert!(used.n_solves > solves);
        assert_eq!(used.scenario.params["K"], fitted_k);
        assert_ne!(fitted_k, 80.0);
        assert!(used.apply(Action::Undo).scenario.params == b.scenario.params);
    }

    #[test]
    fn counts_and_variants_travel_without_re_simulating() {
        let b = bench();
        let Task::Fit { data, .. } = fit_task(&b) else {
            unreachable!()
        };
        let with = b.apply(Action::SetData {
            data: Some(data),
            source: "a paste".into(),
        });
        assert!(with.scenario.data.is_some());
        assert_eq!(with.n_solves, b.n_solves, "data alone does not re-simulate");
        assert!(with.notice.as_deref().unwrap().contains("4 counts"));
        let saved = with.apply(Action::SaveVariant {
            name: "as is".into(),
        });
        assert_eq!(saved.scenario.variants.len(), 1);
        assert_eq!(saved.n_solves, b.n_solves);
        let unnamed = saved.apply(Action::SaveVariant { name: " ".into() });
        assert_eq!(unnamed.scenario.variants.len(), 1);
        let changed = saved.apply(set("K", "300"));
        let back = changed.apply(Action::LoadVariant { index: 0 });
        assert_eq!(back.scenario.params, saved.scenario.params);
        assert_eq!(back.scenario.variants.len(), 1);
        assert!(back.scenario.data.is_some());
        let mut full = saved.clone();
        for i in 0..MAX_VARIANTS {
            full = full.apply(Action::SaveVariant {
                name: format!("v{i}"),
            });
        }
        assert_eq!(full.scenario.variants.len(), MAX_VARIANTS);
        assert!(full.notice.as_deref().unwrap().contains("At most"));
        let fewer = full.apply(Action::DeleteVariant { index: 0 });
        assert_eq!(fewer.scenario.variants.len(), MAX_VARIANTS - 1);
        // Switching model keeps counts and variants.
        let other = saved.apply(Action::SetModel {
            key: "lotka_volterra".into(),
        });
        assert!(other.scenario.data.is_some() && other.scenario.variants.len() == 1);
    }

    #[test]
    fn a_point_picked_on_a_sweep_loads_into_the_workbench() {
        let mut b = bench();
        b.view = View::Sweep;
        let picked = b.apply(Action::SetParams {
            values: vec![("K".into(), 90.0), ("m".into(), 0.2)],
        });
        assert_eq!(picked.view, View::Workbench);
        assert_eq!(picked.scenario.params["K"], 90.0);
        assert_eq!(picked.run.problem.params[1], 90.0);
        let bad = b.apply(Action::SetParams {
            values: vec![("K".into(), -1.0)],
        });
        assert_eq!(bad.view, View::Sweep);
        assert!(bad.notice.as_deref().unwrap().contains("params.K"));
    }
}
