//! Two-parameter outcome maps.
//!
//! Each cell of the grid gets an [`OutcomeClass`] and the [`Rule`] that
//! decided it. Theory decides where it can, from the feasible equilibria
//! (non-negative densities), their eigenvalues and what the model
//! guarantees ([`crate::model::Guarantees`]); the rules, tried in order:
//!
//! 0. The model refuses the parameters → `unresolved` ([`Rule::Refused`]).
//! 1. A feasible equilibrium is non-hyperbolic (an eigenvalue with zero
//!    real part) → linear analysis cannot decide: simulate.
//! 2. [`Rule::AlternativeStableStates`]: two or more locally stable
//!    feasible equilibria with different survivors → `founder_control`
//!    (each attracts the starts near it, so the outcome depends on the
//!    initial densities; holds for any model).
//! 3. [`Rule::OneSpeciesFlow`] (one species, complete closed forms): the
//!    flow on the line is monotone between equilibria, so from positive
//!    starts the reachable ends are the stable equilibria, zero when the
//!    growth at zero is negative (zero absorbs), and unbounded growth when
//!    the growth above the largest equilibrium is positive; one kind of end
//!    gives its class, several give `founder_control`.
//! 4. Two species, the model bounded (dissipative, axes invariant), and
//!    exactly one stable feasible equilibrium E:
//!    - [`Rule::NoCycles`]: the model has no periodic orbits (Dulac), so
//!      by Poincaré–Bendixson orbits end at equilibria, and all but E are
//!      saddles or sources (hyperbolic) → E's class;
//!    - [`Rule::NoInteriorEquilibrium`]: no feasible equilibrium with both
//!      species present, so no periodic orbit with both present (one would
//!      have to enclose an equilibrium, by index theory) → E's class;
//!    - [`Rule::GlobalInteriorStability`]: E has both species and the model
//!      guarantees a stable interior equilibrium is global → `coexistence`.
//! 5. [`Rule::PoincareBendixson`]: two species, bounded, no stable feasible
//!    equilibrium, exactly one feasible interior equilibrium and it is a
//!    source (both eigenvalues with positive real part), the origin (if an
//!    equilibrium) not stable and every one-species equilibrium invadable
//!    by the absent species (its eigenvalue across the axis positive):
//!    then the boundary repels (Butler, Freedman & Waltman 1986, Proc. AMS
//!    96:425, uniform persistence), and by Poincaré–Bendixson every orbit
//!    with both present tends to a periodic orbit → `limit_cycle`.
//! 6. Otherwise [`Rule::Simulation`]: long runs (as `tussock analyze`)
//!    from the scenario's initial densities and, for two species, from
//!    each species with a head start ((S1, S2/100) and (S1/100, S2), S the
//!    equilibrium search scale; a common-practice heuristic for finding
//!    both outcomes of founder control): equal classes give that class,
//!    different ones `founder_control`, a failed run `unresolved`.
//!
//! Survivors of an equilibrium or a long run give the class: none →
//! `extinct`, one → `only_species_1` / `only_species_2`, both →
//! `coexistence`; a long run that keeps cycling → `limit_cycle`, one that
//! grows without bound → `unbounded`. For one-species models
//! `only_species_1` means the population persists.

use serde::{Deserialize, Serialize};

use super::{checked, point_equilibria, scale_at, Axis, AxisSpec, AxisValues, Progress};
use super::{Simulate, SweepError, SweepOptions};
use crate::analysis::{long_run_horizon, long_run_over, Equilibrium, LongRun, LongRunKind};
use crate::model::{ModelSpec, Params, State};
use crate::scenario::Problem;

/// Most values on one axis of a map.
pub const MAX_MAP_STEPS: usize = 300;

/// Resolution of the grid the boundary curves are traced on.
pub const BOUNDARY_RESOLUTION: usize = 256;

/// A two-parameter map as requested: `x` varies along a row, `y` from row
/// to row.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MapRequest {
    pub x: AxisSpec,
    pub y: AxisSpec,
    #[serde(default)]
    pub options: SweepOptions,
    /// Compute only this share of the rows.
    #[serde(default)]
    pub shard: Option<Shard>,
}

/// Shard `index` of `count` (1-based): the rows whose index r satisfies
/// r mod count = index − 1 (strided, so expensive regions spread evenly).
/// The shards' rows together are the whole grid; merge them with
/// [`OutcomeMap::merge`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    pub index: usize,
    pub count: usize,
}

impl Shard {
    pub fn holds(&self, row: usize) -> bool {
        self.count > 0 && row % self.count == self.index.wrapping_sub(1)
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub enum OutcomeClass {
    /// Every species dies out.
    #[serde(rename = "extinct")]
    Extinct,
    #[serde(rename = "only_species_1")]
    OnlySpecies1,
    #[serde(rename = "only_species_2")]
    OnlySpecies2,
    /// Both persist at a stable equilibrium.
    #[serde(rename = "coexistence")]
    Coexistence,
    #[serde(rename = "limit_cycle")]
    LimitCycle,
    /// The outcome depends on the initial densities.
    #[serde(rename = "founder_control")]
    FounderControl,
    #[serde(rename = "unbounded")]
    Unbounded,
    /// Neither theory nor simulation could decide; see the cell's reason.
    #[serde(rename = "unresolved")]
    Unresolved,
}

/// Which rule decided a cell (see the module documentation).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Rule {
    Refused,
    AlternativeStableStates,
    OneSpeciesFlow,
    NoCycles,
    NoInteriorEquilibrium,
    GlobalInteriorStability,
    PoincareBendixson,
    Simulation,
}

/// Range of a cycle seen in simulation.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CycleExtent {
    pub min: Vec<f64>,
    pub max: Vec<f64>,
    pub period: Option<f64>,
}

/// One cell: what a hover shows.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct MapCell {
    /// Parameter values.
    pub x: f64,
    pub y: f64,
    pub class: OutcomeClass,
    pub rule: Rule,
    /// The stable feasible equilibria (the attracting states; several for
    /// founder control). For simulated cells, where the runs settled.
    pub attractors: Vec<Vec<f64>>,
    /// The cycle's range, when a simulation saw one.
    pub cycle: Option<CycleExtent>,
    /// Why a cell was simulated or is unresolved.
    pub reason: Option<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct MapRow {
    /// Row number (index into the y axis).
    pub index: usize,
    pub y: f64,
    /// One cell per x value, in order.
    pub cells: Vec<MapCell>,
}

/// An analytic boundary traced in the map's plane, in parameter values.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct BoundaryLine {
    pub key: String,
    pub label: String,
    /// Polylines of (x, y) parameter values.
    pub polylines: Vec<Vec<(f64, f64)>>,
}

/// The result of a map (or of one shard of it).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct OutcomeMap {
    pub x: AxisValues,
    pub y: AxisValues,
    /// Rows computed, by increasing index.
    pub rows: Vec<MapRow>,
    pub boundaries: Vec<BoundaryLine>,
    /// Stopped before every row (of the shard) was computed.
    pub partial: bool,
    pub shard: Option<Shard>,
}

/// A checked map whose rows can be computed one at a time (in a worker,
/// or in parallel) and assembled by [`MapPlan::finish`].
#[derive(Clone, Debug)]
pub struct MapPlan {
    pub problem: Problem,
    pub x: Axis,
    pub y: Axis,
    pub options: SweepOptions,
    pub shard: Option<Shard>,
}

impl MapRequest {
    pub fn plan(&self, problem: &Problem) -> Result<MapPlan, SweepError> {
        self.options.check()?;
        let x = self.x.validate(problem.model, "x", MAX_MAP_STEPS)?;
        let y = self.y.validate(problem.model, "y", MAX_MAP_STEPS)?;
        if x.param == y.param {
            return Err(super::invalid(
                "y.param",
                format!("must differ from x.param ({})", x.param),
            ));
        }
        if let Some(s) = self.shard {
            if s.count == 0 || s.index == 0 || s.index > s.count {
                return Err(super::invalid(
                    "shard",
                    format!("must be i/n with 1 ≤ i ≤ n, got {}/{}", s.index, s.count),
                ));
            }
        }
        Ok(MapPlan {
            problem: problem.clone(),
            x,
            y,
            options: self.options,
            shard: self.shard,
        })
    }
}

impl MapPlan {
    /// Row indices this plan computes (all, or its shard's), in order.
    pub fn rows(&self) -> Vec<usize> {
        (0..self.y.values.len())
            .filter(|&r| self.shard.is_none_or(|s| s.holds(r)))
            .collect()
    }

    /// Cells per row.
    pub fn row_len(&self) -> usize {
        self.x.values.len()
    }

    /// Compute row `index` (any index of the grid, shard or not; an index
    /// past the end gives an empty row).
    pub fn row(&self, index: usize) -> MapRow {
        let y = self.y.values.get(index).copied().unwrap_or(f64::NAN);
        let cells = if y.is_finite() {
            self.x.values.iter().map(|&x| self.cell(x, y)).collect()
        } else {
            Vec::new()
        };
        MapRow { index, y, cells }
    }

    /// Classify the cell at parameter values (x, y).
    pub fn cell(&self, x: f64, y: f64) -> MapCell {
        let model = self.problem.model;
        let p = self.y.set(&self.x.set(&self.problem.params, x), y);
        let decided = match checked(model, p) {
            Err(reason) => Decided {
                class: OutcomeClass::Unresolved,
                rule: Rule::Refused,
                attractors: Vec::new(),
                cycle: None,
                reason: Some(reason),
            },
            Ok(p) => self.classify(&p),
        };
        MapCell {
            x,
            y,
            class: decided.class,
            rule: decided.rule,
            attractors: decided.attractors,
            cycle: decided.cycle,
            reason: decided.reason,
        }
    }

    /// The cell at (x, y) for a hover or a click: classified as in the
    /// map, and also simulated when theory decided it, so its cycle's range
    /// and where runs settle are known (theory's class and rule are kept).
    pub fn cell_detail(&self, x: f64, y: f64) -> MapCell {
        let mut cell = self.cell(x, y);
        if matches!(cell.rule, Rule::Simulation | Rule::Refused) {
            return cell;
        }
        let model = self.problem.model;
        let p = self.y.set(&self.x.set(&self.problem.params, x), y);
        let scale = scale_at(model, &p, &self.problem.initial);
        let equilibria = point_equilibria(model, &p, scale);
        let simulated = self.simulate(&p, &equilibria, scale, String::new());
        cell.cycle = simulated.cycle;
        if cell.class == OutcomeClass::LimitCycle {
            cell.attractors = simulated.attractors;
        }
        cell
    }

    fn classify(&self, p: &Params) -> Decided {
        let model = self.problem.model;
        let scale = scale_at(model, p, &self.problem.initial);
        let equilibria = point_equilibria(model, p, scale);
        let theory = match self.options.simulate {
            Simulate::WhenUndecided => by_theory(model, p, &equilibria),
            Simulate::Always => Err("every cell simulated (as asked)".to_string()),
        };
        match theory {
            Ok(decided) => decided,
            Err(why) => self.simulate(p, &equilibria, scale, why),
        }
    }

    fn simulate(
        &self,
        p: &Params,
        equilibria: &[Equilibrium],
        scale: [f64; 2],
        why: String,
    ) -> Decided {
        let model = self.problem.model;
        let n = model.n_species();
        let horizon = self
            .options
            .horizon
            .unwrap_or_else(|| long_run_horizon(equilibria, self.problem.t_end));
        let mut starts = vec![self.problem.initial];
        if n == 2 {
            starts.push(State::new(scale[0], 0.01 * scale[1]));
            starts.push(State::new(0.01 * scale[0], scale[1]));
        }
        let runs: Vec<LongRun> = starts
            .iter()
            .map(|&s| {
                long_run_over(
                    model,
                    p,
                    s,
                    horizon,
                    &self.problem.solver,
                    self.options.samples,
                )
            })
            .collect();
        let mut classes = Vec::new();
        for run in &runs {
            match class_of_run(run, n) {
                Some(c) => classes.push(c),
                None => {
                    return Decided {
                        class: OutcomeClass::Unresolved,
                        rule: Rule::Simulation,
                        attractors: Vec::new(),
                        cycle: None,
                        reason: Some(format!(
                            "{why}; a simulation failed: {}",
                            run.stop
                                .describe(&self.problem.species, &self.problem.time_unit)
                        )),
                    }
                }
            }
        }
        let first = classes[0];
        let class = if classes.iter().all(|&c| c == first) {
            first
        } else {
            OutcomeClass::FounderControl
        };
        let cycle = runs
            .iter()
            .find(|r| r.kind == LongRunKind::Cycle)
            .map(|r| CycleExtent {
                min: r.min.clone(),
                max: r.max.clone(),
                period: r.period,
            });
        let mut attractors: Vec<Vec<f64>> = Vec::new();
        for r in runs.iter().filter(|r| r.kind != LongRunKind::Cycle) {
            let settled: Vec<f64> = r.max.clone();
            if !attractors.iter().any(|a| close_states(a, &settled)) {
                attractors.push(settled);
            }
        }
        Decided {
            class,
            rule: Rule::Simulation,
            attractors,
            cycle,
            reason: Some(why),
        }
    }

    /// Assemble computed rows (any order; missing rows make it partial)
    /// with the boundary curves.
    pub fn finish(&self, mut rows: Vec<MapRow>, partial: bool) -> OutcomeMap {
        rows.sort_by_key(|r| r.index);
        rows.dedup_by_key(|r| r.index);
        let expected = self.rows();
        let complete =
            rows.len() == expected.len() && rows.iter().zip(&expected).all(|(r, &e)| r.index == e);
        OutcomeMap {
            x: self.x.report(),
            y: self.y.report(),
            rows,
            boundaries: self.boundaries(),
            partial: partial || !complete,
            shard: self.shard,
        }
    }

    /// The model's analytic boundary curves traced in this map's plane by
    /// marching squares on a [`BOUNDARY_RESOLUTION`]² grid (in the axes'
    /// spacing); curves that do not cross the map are left out.
    pub fn boundaries(&self) -> Vec<BoundaryLine> {
        let model = self.problem.model;
        let base = self.problem.params;
        model
            .boundaries
            .iter()
            .filter_map(|curve| {
                let level = |u: f64, v: f64| {
                    let p = self.y.set(&self.x.set(&base, self.x.at(u)), self.y.at(v));
                    (curve.level)(&p)
                        .filter(|l| l.is_finite())
                        .unwrap_or(f64::NAN)
                };
                let polylines: Vec<Vec<(f64, f64)>> =
                    crate::analysis::march(&level, (0.0, 1.0), (0.0, 1.0), BOUNDARY_RESOLUTION)
                        .into_iter()
                        .filter(|line| line.len() >= 2)
                        .map(|line| {
                            line.into_iter()
                                .map(|(u, v)| (self.x.at(u), self.y.at(v)))
                                .collect()
                        })
                        .collect();
                (!polylines.is_empty()).then(|| BoundaryLine {
                    key: curve.key.to_string(),
                    label: curve.label.to_string(),
                    polylines,
                })
            })
            .collect()
    }
}

impl OutcomeMap {
    /// Join shards of one map (same axes): their rows together, checked to
    /// be disjoint. The result is partial unless every row is present and
    /// no shard was partial.
    pub fn merge(parts: Vec<OutcomeMap>) -> Result<OutcomeMap, SweepError> {
        let mut parts = parts.into_iter();
        let Some(mut whole) = parts.next() else {
            return Err(super::invalid("shards", "nothing to merge"));
        };
        for part in parts {
            if part.x != whole.x || part.y != whole.y {
                return Err(super::invalid(
                    "shards",
                    "the shards are of different maps (their axes differ)",
                ));
            }
            whole.partial |= part.partial;
            whole.rows.extend(part.rows);
        }
        whole.rows.sort_by_key(|r| r.index);
        for w in whole.rows.windows(2) {
            if w[0].index == w[1].index {
                return Err(super::invalid(
                    "shards",
                    format!("row {} appears in more than one shard", w[0].index),
                ));
            }
        }
        let complete = whole.rows.len() == whole.y.values.len();
        whole.partial = whole.partial || !complete;
        whole.shard = None;
        Ok(whole)
    }
}

/// A whole map in one call, row by row, telling `progress` the cells done
/// after each row; when it returns false the map stops and the rows done
/// so far are returned, marked partial.
pub fn sweep_map(
    problem: &Problem,
    request: &MapRequest,
    progress: Progress,
) -> Result<OutcomeMap, SweepError> {
    let plan = request.plan(problem)?;
    let rows = plan.rows();
    let per_row = plan.row_len();
    let total = rows.len() * per_row;
    let mut done = Vec::with_capacity(rows.len());
    let mut stopped = false;
    for (k, &r) in rows.iter().enumerate() {
        done.push(plan.row(r));
        if !progress((k + 1) * per_row, total) {
            stopped = k + 1 < rows.len();
            break;
        }
    }
    Ok(plan.finish(done, stopped))
}

/// A decided cell without its coordinates.
struct Decided {
    class: OutcomeClass,
    rule: Rule,
    attractors: Vec<Vec<f64>>,
    cycle: Option<CycleExtent>,
    reason: Option<String>,
}

fn close_states(a: &[f64], b: &[f64]) -> bool {
    a.iter()
        .zip(b)
        .all(|(x, y)| (x - y).abs() <= 1e-3 * (1.0 + x.abs().max(y.abs())))
}

/// The class of an equilibrium by its survivors.
fn class_of_survivors(alive: &[bool]) -> OutcomeClass {
    match alive {
        [true, true] => OutcomeClass::Coexistence,
        [true, false] | [true] => OutcomeClass::OnlySpecies1,
        [false, true] => OutcomeClass::OnlySpecies2,
        _ => OutcomeClass::Extinct,
    }
}

fn class_of_equilibrium(e: &Equilibrium) -> OutcomeClass {
    let alive: Vec<bool> = e.state.iter().map(|&x| x > 0.0).collect();
    class_of_survivors(&alive)
}

/// The class a long run shows; `None` when it failed.
fn class_of_run(run: &LongRun, n: usize) -> Option<OutcomeClass> {
    match run.kind {
        LongRunKind::Cycle => Some(OutcomeClass::LimitCycle),
        LongRunKind::Unbounded => Some(OutcomeClass::Unbounded),
        LongRunKind::Failed => None,
        LongRunKind::Equilibrium | LongRunKind::Extinction => {
            let alive: Vec<bool> = (0..n)
                .map(|i| !run.extinct.get(i).copied().unwrap_or(true))
                .collect();
            Some(class_of_survivors(&alive))
        }
    }
}

fn decided(class: OutcomeClass, rule: Rule, attractors: &[&Equilibrium]) -> Decided {
    Decided {
        class,
        rule,
        attractors: attractors.iter().map(|e| e.state.clone()).collect(),
        cycle: None,
        reason: None,
    }
}

/// Rules 1–5 of the module documentation; `Err` says why theory cannot
/// decide.
fn by_theory(model: &ModelSpec, p: &Params, equilibria: &[Equilibrium]) -> Result<Decided, String> {
    use crate::analysis::Stability::{Center, NonHyperbolic, UnstableNode, UnstableSpiral};
    let n = model.n_species();
    let feasible: Vec<&Equilibrium> = equilibria.iter().filter(|e| e.feasible).collect();
    if feasible
        .iter()
        .any(|e| matches!(e.stability, NonHyperbolic | Center))
    {
        return Err("a feasible equilibrium is non-hyperbolic".to_string());
    }
    let stable: Vec<&Equilibrium> = feasible
        .iter()
        .copied()
        .filter(|e| e.stability.is_stable())
        .collect();
    let mut classes: Vec<OutcomeClass> = stable.iter().map(|e| class_of_equilibrium(e)).collect();
    classes.sort_by_key(|c| *c as u8);
    classes.dedup();
    if classes.len() >= 2 {
        return Ok(decided(
            OutcomeClass::FounderControl,
            Rule::AlternativeStableStates,
            &stable,
        ));
    }
    let guarantees = (model.guarantees)(p);
    if n == 1 {
        if !guarantees.closed_forms_complete {
            return Err("the equilibria may be incomplete (no closed form)".to_string());
        }
        return Ok(one_species(model, p, &feasible, &stable));
    }
    if !guarantees.bounded {
        return Err("the model is not known to stay bounded here".to_string());
    }
    let interior: Vec<&Equilibrium> = feasible
        .iter()
        .copied()
        .filter(|e| e.state.iter().all(|&x| x > 0.0))
        .collect();
    if let [only] = stable.as_slice() {
        let class = class_of_equilibrium(only);
        if guarantees.no_cycles {
            return Ok(decided(class, Rule::NoCycles, &stable));
        }
        if interior.is_empty() {
            return Ok(decided(class, Rule::NoInteriorEquilibrium, &stable));
        }
        if class == OutcomeClass::Coexistence && guarantees.stable_interior_is_global {
            return Ok(decided(class, Rule::GlobalInteriorStability, &stable));
        }
        return Err("one stable equilibrium, but a cycle is not excluded".to_string());
    }
    if stable.is_empty() {
        if let [source] = interior.as_slice() {
            let boundary_repels = feasible
                .iter()
                .filter(|e| !e.state.iter().all(|&x| x > 0.0))
                .all(|e| {
                    let x = State::new(e.state[0], e.state[1]);
                    let j = (model.jacobian)(p, &x);
                    match (e.state[0] == 0.0, e.state[1] == 0.0) {
                        (true, true) => true, // not stable (checked above)
                        (true, false) => j[(0, 0)] > 0.0,
                        (false, true) => j[(1, 1)] > 0.0,
                        (false, false) => false,
                    }
                });
            if matches!(source.stability, UnstableNode | UnstableSpiral) && boundary_repels {
                return Ok(decided(
                    OutcomeClass::LimitCycle,
                    Rule::PoincareBendixson,
                    &[],
                ));
            }
        }
        return Err("no stable equilibrium, and the conditions for a limit cycle fail".to_string());
    }
    Err("several stable equilibria with the same survivors".to_string())
}

/// Rule 3: the ends a one-species flow reaches from positive starts.
fn one_species(
    model: &ModelSpec,
    p: &Params,
    feasible: &[&Equilibrium],
    stable: &[&Equilibrium],
) -> Decided {
    let growth_at_zero = model.derivative(p, &State::zeros())[0];
    let mut ends: Vec<OutcomeClass> = stable.iter().map(|e| class_of_equilibrium(e)).collect();
    let zero_is_equilibrium = feasible.iter().any(|e| e.state[0] == 0.0);
    if !zero_is_equilibrium && growth_at_zero < 0.0 {
        ends.push(OutcomeClass::Extinct);
    }
    let top = feasible
        .iter()
        .max_by(|a, b| a.state[0].total_cmp(&b.state[0]));
    let grows_above = match top {
        Some(e) => !e.stability.is_stable(),
        None => growth_at_zero > 0.0,
    };
    if grows_above {
        ends.push(OutcomeClass::Unbounded);
    }
    ends.sort_by_key(|c| *c as u8);
    ends.dedup();
    let class = match ends.as_slice() {
        [one] => *one,
        [] => OutcomeClass::Unresolved,
        _ => OutcomeClass::FounderControl,
    };
    decided(class, Rule::OneSpeciesFlow, stable)
}
