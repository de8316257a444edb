//! What a model is: its parameters, its state and its right-hand side.
//!
//! Every model lives in one file under `models/` and is listed once in
//! [`crate::models::MODELS`]. The app's model picker and parameter panel, the
//! CLI help and scenario validation are all generated from that list.

use ode_solvers::{SVector, Vector2};

/// Population densities. Every model in Tussock has at most two species; a
/// one-species model keeps its second component at zero.
pub type State = Vector2<f64>;

/// Jacobian matrix of a two-dimensional model.
pub type Jacobian = nalgebra::Matrix2<f64>;

/// Largest number of parameters any model has.
pub const MAX_PARAMS: usize = 12;

/// Most demographic event channels any model has (see [`ModelSpec::channels`]).
pub const MAX_CHANNELS: usize = 8;

/// Rates of a model's event channels, in the order of [`ModelSpec::channels`];
/// entries past the model's channels are unused.
pub type Propensities = [f64; MAX_CHANNELS];

/// Parameter values of one model, in the order of its [`ModelSpec::params`],
/// the chosen variant (e.g. the functional response) and a constant harvest
/// (positive) or stocking (negative) rate per species, in individuals per
/// time unit. A fixed array keeps evaluations free of heap allocation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Params {
    pub values: SVector<f64, MAX_PARAMS>,
    /// Index into the model's [`ChoiceSpec::options`]; 0 when it has none.
    pub choice: usize,
    pub harvest: State,
}

impl Params {
    /// The defaults of a model.
    pub fn defaults(model: &ModelSpec) -> Params {
        let mut values = SVector::<f64, MAX_PARAMS>::zeros();
        for (i, p) in model.params.iter().enumerate() {
            values[i] = p.default;
        }
        Params {
            values,
            choice: model.choice.map_or(0, |c| c.default),
            harvest: State::zeros(),
        }
    }
}

impl std::ops::Index<usize> for Params {
    type Output = f64;
    fn index(&self, i: usize) -> &f64 {
        &self.values[i]
    }
}

impl std::ops::IndexMut<usize> for Params {
    fn index_mut(&mut self, i: usize) -> &mut f64 {
        &mut self.values[i]
    }
}

/// The question a model answers; the app groups its model picker by it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Group {
    PredatorPrey,
    Competition,
    SinglePopulation,
}

impl Group {
    pub fn label(self) -> &'static str {
        match self {
            Group::PredatorPrey => "Predator and prey",
            Group::Competition => "Two competitors",
            Group::SinglePopulation => "One population",
        }
    }
}

/// Unit of a parameter, written out with the scenario's time unit.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Unit {
    /// per capita per time unit (a rate)
    PerTime,
    /// per individual per time unit (an encounter or attack rate)
    PerIndividualPerTime,
    /// individuals (a density or a carrying capacity)
    Individuals,
    /// individuals per time unit (immigration, harvest)
    IndividualsPerTime,
    /// per individual (an interference coefficient)
    PerIndividual,
    /// a pure number (an efficiency or a competition coefficient)
    Dimensionless,
    /// a duration in time units
    Time,
}

impl Unit {
    /// The unit as shown to a user, e.g. `per day` for [`Unit::PerTime`].
    pub fn label(self, time_unit: &str) -> String {
        let t = singular(time_unit);
        match self {
            Unit::PerTime => format!("per {t}"),
            Unit::PerIndividualPerTime => format!("per individual per {t}"),
            Unit::Individuals => "individuals".to_string(),
            Unit::IndividualsPerTime => format!("individuals per {t}"),
            Unit::PerIndividual => "per individual".to_string(),
            Unit::Dimensionless => "dimensionless".to_string(),
            Unit::Time => time_unit.to_string(),
        }
    }
}

fn singular(time_unit: &str) -> &str {
    time_unit.strip_suffix('s').unwrap_or(time_unit)
}

/// One parameter of a model.
#[derive(Clone, Copy, Debug)]
pub struct ParamSpec {
    /// The key in scenario files: the trade's usual symbol (`r`, `K`, `a`…).
    pub symbol: &'static str,
    /// Plain name (`prey growth rate`).
    pub name: &'static str,
    pub unit: Unit,
    pub default: f64,
    /// Smallest valid value (inclusive).
    pub min: f64,
    /// Largest valid value (inclusive).
    pub max: f64,
    /// One-line explanation for tooltips and CLI help.
    pub help: &'static str,
    /// When true the parameter may be left out of a scenario; it then takes
    /// its default, which may be infinite (e.g. no carrying capacity).
    pub optional: bool,
}

/// A named variant of a model chosen in the scenario, such as the
/// functional response of a predator.
#[derive(Debug)]
pub struct ChoiceSpec {
    /// Key in scenario files (`functional_response`).
    pub key: &'static str,
    pub name: &'static str,
    /// (key in scenario files, label shown to users).
    pub options: &'static [(&'static str, &'static str)],
    pub default: usize,
}

/// A model-specific verdict on the long-run outcome, found from the
/// parameters alone (e.g. invasion criteria of competition).
#[derive(Clone, Debug, PartialEq)]
pub struct Outcome {
    /// Stable key (`coexistence`, `species_1_excludes_2`, …).
    pub kind: &'static str,
    /// The verdict and the criteria behind it, in plain words.
    pub text: String,
}

/// What theory guarantees about a model's long-run behaviour at given
/// parameters, beyond what the eigenvalues of its equilibria say. Outcome
/// maps use it to classify cells without simulating (see
/// [`crate::sweep::map`]), the solver to choose its coordinates (see
/// [`crate::solve`](mod@crate::solve)); every `true` must rest on a
/// published argument or the form of the equations, named in the model's
/// file. All `false` (the [`Default`]) is always safe: the cell is then
/// simulated, the run integrated in densities.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Guarantees {
    /// Every orbit from non-negative densities stays bounded (the model is
    /// dissipative), and each species' axis is invariant (no harvest or
    /// immigration pushes a population off zero or through it).
    pub bounded: bool,
    /// No periodic orbit exists at non-negative densities (a Dulac
    /// function, a competitive planar system, or one species).
    pub no_cycles: bool,
    /// A locally stable equilibrium with both species present attracts
    /// every orbit that starts with both present (a Lyapunov function or a
    /// global-stability theorem).
    pub stable_interior_is_global: bool,
    /// [`ModelSpec::equilibria`] lists every equilibrium, so no search is
    /// needed.
    pub closed_forms_complete: bool,
    /// Each species grows in proportion to itself: dx_i/dt = x_i·g_i(x)
    /// with per-capita rates g_i finite at non-negative densities (no
    /// immigration, harvest or stocking). A species at zero then stays
    /// there and a positive one never reaches zero in finite time, however
    /// deep it falls.
    pub per_capita_growth: bool,
}

/// A curve in parameter space where a model's outcome changes, known in
/// closed form: the zero set of `level` (e.g. K1 − α12·K2 for competition).
/// Outcome maps trace it in the plane of the two parameters swept.
#[derive(Debug)]
pub struct BoundaryCurve {
    /// Stable key (`species_1_invades`, `hopf`, …).
    pub key: &'static str,
    /// What crossing it means, in plain words.
    pub label: &'static str,
    /// The curve is where this is zero; `None` where it is undefined.
    pub level: fn(&Params) -> Option<f64>,
}

/// What kind of demographic event a channel is. Environmental noise in
/// stochastic runs multiplies the rates of [`ChannelKind::Birth`] channels.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ChannelKind {
    /// Reproduction (including a predator's conversion of prey into young).
    Birth,
    /// Death other than by predation (background or crowding).
    Death,
    /// A prey individual eaten.
    Predation,
    /// An individual arriving from outside.
    Immigration,
    /// An individual leaving.
    Emigration,
}

/// One demographic event of a model for stochastic runs: in one event the
/// state changes by `change` (whole individuals). Its rate (propensity, in
/// events per time unit) is computed by [`ModelSpec::propensities`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Channel {
    /// Plain name (`prey births`).
    pub name: &'static str,
    pub kind: ChannelKind,
    /// Change of each species in one event, in state order.
    pub change: [i8; 2],
}

impl Channel {
    pub const fn new(name: &'static str, kind: ChannelKind, change: [i8; 2]) -> Channel {
        Channel { name, kind, change }
    }
}

/// Everything Tussock knows about one model.
#[derive(Debug)]
pub struct ModelSpec {
    /// Key in scenario files (`lotka_volterra`).
    pub key: &'static str,
    /// Title shown to users.
    pub title: &'static str,
    pub group: Group,
    /// One sentence on what the model describes.
    pub summary: &'static str,
    /// The equations, as plain text.
    pub equations: &'static str,
    /// Default names of the species in state order; its length is the
    /// number of species.
    pub species: &'static [&'static str],
    /// Starting densities offered when a user picks the model.
    pub default_initial: &'static [f64],
    pub params: &'static [ParamSpec],
    pub choice: Option<&'static ChoiceSpec>,
    /// Right-hand side dx/dt at state `x` without harvest; the solver
    /// evaluates it at non-negative states only, analysis anywhere.
    pub rhs: fn(&Params, &State) -> State,
    /// Analytic Jacobian of [`ModelSpec::rhs`] (harvest is constant, so it
    /// is also the Jacobian with harvest).
    pub jacobian: fn(&Params, &State) -> Jacobian,
    /// Closed-form equilibria of the model without harvest, feasible or
    /// not; the analysis refines them and searches for more.
    pub equilibria: fn(&Params) -> Vec<State>,
    /// Verdict from the parameters alone, where the model has one.
    pub outcome: fn(&Params) -> Option<Outcome>,
    /// Checks across parameters that single ranges cannot express; an
    /// error names the parameter's symbol and the reason.
    pub check: fn(&Params) -> Result<(), (&'static str, String)>,
    /// What theory guarantees at these parameters (outcome maps).
    pub guarantees: fn(&Params) -> Guarantees,
    /// Outcome boundaries known in closed form (outcome-map overlays).
    pub boundaries: &'static [BoundaryCurve],
    /// Demographic events for stochastic runs (births, deaths, predation,
    /// immigration, emigration), at most [`MAX_CHANNELS`]. Harvest and
    /// stocking are added by the stochastic engine, not listed here.
    pub channels: &'static [Channel],
    /// Rates of [`ModelSpec::channels`] at state `x`, written in the same
    /// order. Rates are finite and non-negative at non-negative states, and
    /// Σ change × rate equals [`ModelSpec::rhs`] (checked by property tests).
    pub propensities: fn(&Params, &State, &mut Propensities),
}

impl ParamSpec {
    /// A required parameter valid in `[min, max]`.
    pub const fn new(
        symbol: &'static str,
        name: &'static str,
        unit: Unit,
        default: f64,
        (min, max): (f64, f64),
        help: &'static str,
    ) -> ParamSpec {
        ParamSpec {
            symbol,
            name,
            unit,
            default,
            min,
            max,
            help,
            optional: false,
        }
    }

    /// The same parameter, but one a scenario may leave out.
    pub const fn or_default(self) -> ParamSpec {
        ParamSpec {
            optional: true,
            ..self
        }
    }

    /// The valid range in words: `0 to 100`, `> 0`, `≥ 1`, `> 0 and ≤ 1e12`.
    pub fn range_text(&self) -> String {
        let positive = self.min > 0.0 && self.min < 1e-6;
        let low = if positive {
            "> 0".to_string()
        } else {
            format!("≥ {}", compact(self.min))
        };
        match (self.max.is_infinite(), positive) {
            (true, _) => low,
            (false, true) => format!("> 0 and ≤ {}", compact(self.max)),
            (false, false) => format!("{} to {}", compact(self.min), compact(self.max)),
        }
    }
}

/// A number written short: `100`, `0.5`, `1e12`.
fn compact(v: f64) -> String {
    if v != 0.0 && v.abs() >= 1e6 {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

impl ModelSpec {
    pub fn n_species(&self) -> usize {
        self.species.len()
    }

    /// dx/dt including the constant harvest or stocking.
    pub fn derivative(&self, p: &Params, x: &State) -> State {
        let mut dx = (self.rhs)(p, x);
        for i in 0..self.n_species() {
            dx[i] -= p.harvest[i];
        }
        dx
    }

    /// Index of a parameter by its symbol.
    pub fn param_index(&self, symbol: &str) -> Option<usize> {
        self.params.iter().position(|p| p.symbol == symbol)
    }
}
