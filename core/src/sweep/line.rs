//! One-parameter sweeps: bifurcation diagrams.
//!
//! For each value: every equilibrium found with its eigenvalues and
//! stability, tagged with a branch number so a chart can join the same
//! equilibrium across values (solid where stable, dashed where not), and
//! the long-run minimum and maximum of each species after transients.
//!
//! Branches: each equilibrium is matched to one of the previous value's by
//! its support (which species are exactly zero) and its distance to the
//! branch's linear extrapolation; unmatched ones start new branches.
//!
//! Bifurcations, between adjacent values on a branch feasible at one of
//! them (λ the eigenvalues of the Jacobian there):
//! - a real eigenvalue crosses zero (det J, or λ for one species, changes
//!   sign): **transcritical** (another branch crossing it there is named as
//!   its partner; branches exchange stability);
//! - det J > 0 at both and the trace changes sign (a complex pair's real
//!   part crosses zero): **Hopf**;
//! - two branches of the same support end (or begin) together and no root
//!   remains near them: **saddle-node** (they collide and vanish).
//!
//! Each is located by bisection on the parameter until the bracket is at
//! most [`SweepOptions::bifurcation_rtol`] of the value, following the
//! branch with Newton's method from the bracket's states.

use serde::{Deserialize, Serialize};

use super::{checked, point_equilibria, scale_at, Axis, AxisSpec, AxisValues, Progress};
use super::{SweepError, SweepOptions};
use crate::analysis::{long_run_horizon, long_run_over, refine_equilibrium, Equilibrium, LongRun};
use crate::model::{ModelSpec, Params, State};
use crate::scenario::Problem;

/// Most values on one axis of a line sweep.
pub const MAX_LINE_STEPS: usize = 100_000;

/// A one-parameter sweep as requested.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LineRequest {
    pub axis: AxisSpec,
    #[serde(default)]
    pub options: SweepOptions,
}

/// An equilibrium at one value, with the branch it continues.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct BranchEquilibrium {
    #[serde(flatten)]
    pub equilibrium: Equilibrium,
    /// Same number = same equilibrium followed across values.
    pub branch: usize,
}

/// Everything computed at one value.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct LinePoint {
    pub index: usize,
    pub value: f64,
    pub equilibria: Vec<BranchEquilibrium>,
    /// From the scenario's initial densities; `None` when the point failed.
    pub long_run: Option<LongRun>,
    /// Why nothing could be computed here (parameters the model refuses).
    pub failure: Option<String>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum BifurcationKind {
    Hopf,
    Transcritical,
    SaddleNode,
}

/// Where stability changes.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Bifurcation {
    pub kind: BifurcationKind,
    pub value: f64,
    /// The branch it happens on (for a saddle-node, the first of the two).
    pub branch: usize,
    /// The branch that crosses it (transcritical) or collides with it
    /// (saddle-node), when found.
    pub partner: Option<usize>,
    /// The equilibrium at the located value.
    pub state: Vec<f64>,
    /// Width of the final bracket relative to the value.
    pub precision: f64,
    /// Indices of the two sweep points it lies between.
    pub between: (usize, usize),
}

/// The result of a line sweep.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct LineSweep {
    pub axis: AxisValues,
    /// In axis order; a stopped sweep holds the points done so far.
    pub points: Vec<LinePoint>,
    pub bifurcations: Vec<Bifurcation>,
    /// Stopped before every point was computed.
    pub partial: bool,
    /// Indices of the points that failed (see their `failure`).
    pub failed: Vec<usize>,
}

/// A checked line sweep whose points can be computed one at a time (in a
/// worker, or in parallel) and assembled by [`LinePlan::finish`].
#[derive(Clone, Debug)]
pub struct LinePlan {
    pub problem: Problem,
    pub axis: Axis,
    pub options: SweepOptions,
}

impl LineRequest {
    pub fn plan(&self, problem: &Problem) -> Result<LinePlan, SweepError> {
        self.options.check()?;
        let axis = self.axis.validate(problem.model, "axis", MAX_LINE_STEPS)?;
        Ok(LinePlan {
            problem: problem.clone(),
            axis,
            options: self.options,
        })
    }
}

impl LinePlan {
    /// Number of points.
    pub fn len(&self) -> usize {
        self.axis.values.len()
    }

    pub fn is_empty(&self) -> bool {
        self.axis.values.is_empty()
    }

    fn params_at(&self, value: f64) -> Result<Params, String> {
        checked(
            self.problem.model,
            self.axis.set(&self.problem.params, value),
        )
    }

    /// Equilibria and long run at point `index` (branches are assigned by
    /// [`LinePlan::finish`]). An index past the end gives a failed point.
    pub fn point(&self, index: usize) -> LinePoint {
        let value = self.axis.values.get(index).copied().unwrap_or(f64::NAN);
        let model = self.problem.model;
        let failed = |failure: String| LinePoint {
            index,
            value,
            equilibria: Vec::new(),
            long_run: None,
            failure: Some(failure),
        };
        if !value.is_finite() {
            return failed(format!("no point {index} (the sweep has {})", self.len()));
        }
        let p = match self.params_at(value) {
            Ok(p) => p,
            Err(reason) => return failed(reason),
        };
        let scale = scale_at(model, &p, &self.problem.initial);
        let equilibria = point_equilibria(model, &p, scale);
        let horizon = self
            .options
            .horizon
            .unwrap_or_else(|| long_run_horizon(&equilibria, self.problem.t_end));
        let long_run = long_run_over(
            model,
            &p,
            self.problem.initial,
            horizon,
            &self.problem.solver,
            self.options.samples,
        );
        LinePoint {
            index,
            value,
            equilibria: equilibria
                .into_iter()
                .map(|equilibrium| BranchEquilibrium {
                    equilibrium,
                    branch: 0,
                })
                .collect(),
            long_run: Some(long_run),
            failure: None,
        }
    }

    /// Assemble computed points (any order, any subset; a subset is
    /// reported as partial): branches assigned, bifurcations located.
    pub fn finish(&self, mut points: Vec<LinePoint>, partial: bool) -> LineSweep {
        points.sort_by_key(|p| p.index);
        points.dedup_by_key(|p| p.index);
        let complete =
            points.len() == self.len() && points.iter().enumerate().all(|(i, p)| p.index == i);
        assign_branches(&mut points);
        let bifurcations = self.bifurcations(&points);
        let failed = points
            .iter()
            .filter(|p| p.failure.is_some())
            .map(|p| p.index)
            .collect();
        LineSweep {
            axis: self.axis.report(),
            points,
            bifurcations,
            partial: partial || !complete,
            failed,
        }
    }

    /// Bifurcations between computed points, sorted by value.
    ///
    /// A branch is compared between successive points where it is
    /// hyperbolic, at most two indices apart, so a value landing exactly on
    /// a bifurcation (where the eigenvalue is zero, or two equilibria
    /// coincide) does not hide it.
    pub fn bifurcations(&self, points: &[LinePoint]) -> Vec<Bifurcation> {
        let n = self.problem.model.n_species();
        let mut by_branch: std::collections::BTreeMap<usize, Vec<(usize, &Equilibrium)>> =
            Default::default();
        for (k, point) in points.iter().enumerate() {
            for e in &point.equilibria {
                by_branch
                    .entry(e.branch)
                    .or_default()
                    .push((k, &e.equilibrium));
            }
        }
        let mut crossings: Vec<Bifurcation> = Vec::new();
        for (&branch, seen) in &by_branch {
            let usable: Vec<&(usize, &Equilibrium)> =
                seen.iter().filter(|(_, e)| !degenerate(e)).collect();
            for w in usable.windows(2) {
                let (&(ka, qa), &(kb, qb)) = (w[0], w[1]);
                let (a, b) = (&points[ka], &points[kb]);
                if b.index > a.index + 2
                    || points[ka..=kb].iter().any(|p| p.failure.is_some())
                    || !(qa.feasible || qb.feasible)
                {
                    continue;
                }
                let (det_a, tr_a) = det_trace(qa, n);
                let (det_b, tr_b) = det_trace(qb, n);
                let kind = if det_a * det_b < 0.0 {
                    BifurcationKind::Transcritical
                } else if n == 2 && det_a > 0.0 && det_b > 0.0 && tr_a * tr_b < 0.0 {
                    BifurcationKind::Hopf
                } else {
                    continue;
                };
                if let Some(mut found) = self.locate_on_branch(kind, (a, qa), (b, qb), branch) {
                    // A zero eigenvalue at the very end of a branch is the
                    // fold where it meets another and both vanish (at a
                    // grid value on the fold they were merged into one).
                    let ends = |k: usize, step: isize, value: f64| {
                        let beyond = k.checked_add_signed(step).and_then(|j| points.get(j));
                        (found.value - value).abs() <= 1e-6 * value.abs().max(1e-300)
                            && beyond.is_some_and(|p| {
                                p.failure.is_none()
                                    && p.index.abs_diff(points[k].index) == 1
                                    && !p.equilibria.iter().any(|e| e.branch == branch)
                            })
                    };
                    if kind == BifurcationKind::Transcritical
                        && (ends(kb, 1, b.value) || ends(ka, -1, a.value))
                    {
                        found.kind = BifurcationKind::SaddleNode;
                    }
                    crossings.push(found);
                }
            }
        }
        // Partners of transcritical points: another branch crossing at the
        // same value and state. Report each pair once.
        let mut out = Vec::new();
        let mut taken = vec![false; crossings.len()];
        for i in 0..crossings.len() {
            if taken[i] {
                continue;
            }
            if crossings[i].kind == BifurcationKind::Transcritical {
                for j in (i + 1)..crossings.len() {
                    if !taken[j]
                        && crossings[j].kind == BifurcationKind::Transcritical
                        && close(&crossings[i], &crossings[j])
                    {
                        taken[j] = true;
                        crossings[i].partner = Some(crossings[j].branch);
                        break;
                    }
                }
            }
            out.push(crossings[i].clone());
        }
        for w in points.windows(2) {
            let (a, b) = (&w[0], &w[1]);
            if b.index == a.index + 1 && a.failure.is_none() && b.failure.is_none() {
                self.folds(a, b, &mut out);
            }
        }
        out.sort_by(|x, y| x.value.total_cmp(&y.value));
        out
    }

    /// Saddle-nodes between adjacent points: two branches of the same
    /// support that end after `a` (or begin at `b`) with no root left near
    /// them; or one branch that ends where it is non-hyperbolic (a value
    /// exactly at the fold, where the two roots coincide).
    fn folds(&self, a: &LinePoint, b: &LinePoint, out: &mut Vec<Bifurcation>) {
        for (here, there, ending) in [(a, b, true), (b, a, false)] {
            let lone: Vec<&BranchEquilibrium> = here
                .equilibria
                .iter()
                .filter(|e| !there.equilibria.iter().any(|f| f.branch == e.branch))
                .collect();
            let mut used = vec![false; lone.len()];
            for i in 0..lone.len() {
                if used[i] {
                    continue;
                }
                let partner = (i + 1..lone.len())
                    .filter(|&j| {
                        !used[j] && support(&lone[j].equilibrium) == support(&lone[i].equilibrium)
                    })
                    .min_by(|&j, &k| {
                        distance(&lone[i].equilibrium.state, &lone[j].equilibrium.state).total_cmp(
                            &distance(&lone[i].equilibrium.state, &lone[k].equilibrium.state),
                        )
                    });
                let e1 = &lone[i].equilibrium;
                let (e2, partner_branch) = match partner {
                    Some(j) => (&lone[j].equilibrium, Some(lone[j].branch)),
                    None if degenerate(e1) => (e1, None),
                    None => continue,
                };
                if !(e1.feasible || e2.feasible) {
                    continue;
                }
                let (exists_at, gone_at) = if ending { (a, b) } else { (b, a) };
                if let Some(mut found) = self.locate_fold(e1, e2, exists_at.value, gone_at.value) {
                    used[i] = true;
                    if let Some(j) = partner {
                        used[j] = true;
                    }
                    found.branch = lone[i].branch;
                    found.partner = partner_branch;
                    found.between = (a.index, b.index);
                    out.push(found);
                }
            }
        }
    }

    /// Follow a branch between two points and bisect on the sign of det J
    /// (transcritical) or of the trace (Hopf).
    fn locate_on_branch(
        &self,
        kind: BifurcationKind,
        (a, qa): (&LinePoint, &Equilibrium),
        (b, qb): (&LinePoint, &Equilibrium),
        branch: usize,
    ) -> Option<Bifurcation> {
        let model = self.problem.model;
        let n = model.n_species();
        let test = |q: (f64, f64)| match kind {
            BifurcationKind::Hopf => q.1,
            _ => q.0,
        };
        let (mut lo, mut hi) = (a.value, b.value);
        let (mut x_lo, mut x_hi) = (to_state(&qa.state), to_state(&qb.state));
        let mut g_lo = test(det_trace(qa, n));
        for _ in 0..200 {
            if (hi - lo).abs() <= self.options.bifurcation_rtol * lo.abs().max(hi.abs()) {
                break;
            }
            let mid = 0.5 * (lo + hi);
            let p = self.params_at(mid).ok()?;
            let guess = 0.5 * (x_lo + x_hi);
            let x = refine_equilibrium(model, &p, guess)?;
            // Stay on the branch: the root must lie between its neighbours.
            let span = (x_hi - x_lo).norm() + 1e-9 * (1.0 + guess.norm());
            if (x - guess).norm() > span {
                return None;
            }
            let g = test(det_trace_at(model, &p, &x));
            if g == 0.0 {
                lo = mid;
                hi = mid;
                x_lo = x;
                x_hi = x;
                break;
            }
            if (g < 0.0) == (g_lo < 0.0) {
                lo = mid;
                x_lo = x;
                g_lo = g;
            } else {
                hi = mid;
                x_hi = x;
            }
        }
        let value = 0.5 * (lo + hi);
        let state = 0.5 * (x_lo + x_hi);
        Some(Bifurcation {
            kind,
            value,
            branch,
            partner: None,
            state: (0..n).map(|i| state[i]).collect(),
            precision: (hi - lo).abs() / value.abs().max(f64::MIN_POSITIVE),
            between: (a.index, b.index),
        })
    }

    /// Two equilibria present at `exists_at` and absent at `gone_at`:
    /// bisect on whether a root remains near them.
    fn locate_fold(
        &self,
        e1: &Equilibrium,
        e2: &Equilibrium,
        exists_at: f64,
        gone_at: f64,
    ) -> Option<Bifurcation> {
        let model = self.problem.model;
        let n = model.n_species();
        let mut pair = (to_state(&e1.state), to_state(&e2.state));
        // Roots near the pair at `value`, if any: Newton from each and from
        // their midpoint, kept when within twice their separation.
        let near = |value: f64, pair: (State, State)| -> Option<(State, State)> {
            let p = self.params_at(value).ok()?;
            let centre = 0.5 * (pair.0 + pair.1);
            let reach = 2.0 * (pair.0 - pair.1).norm() + 1e-9 * (1.0 + centre.norm());
            let roots: Vec<State> = [pair.0, pair.1, centre]
                .into_iter()
                .filter_map(|s| refine_equilibrium(model, &p, s))
                .filter(|x| (x - centre).norm() <= reach)
                .collect();
            let first = *roots.first()?;
            let second = roots
                .iter()
                .copied()
                .max_by(|x, y| (x - first).norm().total_cmp(&(y - first).norm()))
                .unwrap_or(first);
            Some((first, second))
        };
        if near(gone_at, pair).is_some() {
            // A root remains: the search missed it, not a fold.
            return None;
        }
        let (mut yes, mut no) = (exists_at, gone_at);
        for _ in 0..200 {
            if (no - yes).abs() <= self.options.bifurcation_rtol * yes.abs().max(no.abs()) {
                break;
            }
            let mid = 0.5 * (yes + no);
            match near(mid, pair) {
                Some((x, y)) => {
                    yes = mid;
                    if (x - y).norm() > 0.0 {
                        pair = (x, y);
                    } else {
                        // One root found: the pair has nearly merged.
                        pair = (x, x + 0.5 * (pair.0 - pair.1));
                    }
                }
                None => no = mid,
            }
        }
        let value = 0.5 * (yes + no);
        let state = 0.5 * (pair.0 + pair.1);
        Some(Bifurcation {
            kind: BifurcationKind::SaddleNode,
            value,
            branch: 0,
            partner: None,
            state: (0..n).map(|i| state[i]).collect(),
            precision: (no - yes).abs() / value.abs().max(f64::MIN_POSITIVE),
            between: (0, 0),
        })
    }
}

/// Two transcritical points at the same value and state.
fn close(a: &Bifurcation, b: &Bifurcation) -> bool {
    let scale = 1.0 + a.state.iter().map(|v| v.abs()).fold(0.0, f64::max);
    (a.value - b.value).abs() <= 1e-6 * a.value.abs().max(b.value.abs())
        && distance(&a.state, &b.state) <= 1e-4 * scale
}

fn to_state(v: &[f64]) -> State {
    State::new(
        v.first().copied().unwrap_or(0.0),
        v.get(1).copied().unwrap_or(0.0),
    )
}

fn distance(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y) * (x - y))
        .sum::<f64>()
        .sqrt()
}

/// An equilibrium at a bifurcation: an eigenvalue with zero real part.
fn degenerate(e: &Equilibrium) -> bool {
    matches!(
        e.stability,
        crate::analysis::Stability::NonHyperbolic | crate::analysis::Stability::Center
    )
}

/// Which species are exactly zero.
fn support(e: &Equilibrium) -> Vec<bool> {
    e.state.iter().map(|&x| x == 0.0).collect()
}

/// (det J, trace J) from the eigenvalues; for one species (λ, λ).
fn det_trace(e: &Equilibrium, n: usize) -> (f64, f64) {
    match (n, e.eigenvalues.as_slice()) {
        (2, [(re1, im1), (re2, _)]) => {
            if *im1 != 0.0 {
                (re1 * re1 + im1 * im1, 2.0 * re1)
            } else {
                (re1 * re2, re1 + re2)
            }
        }
        (_, [(re, _), ..]) => (*re, *re),
        _ => (0.0, 0.0),
    }
}

fn det_trace_at(model: &ModelSpec, p: &Params, x: &State) -> (f64, f64) {
    let j = (model.jacobian)(p, x);
    if model.n_species() == 1 {
        (j[(0, 0)], j[(0, 0)])
    } else {
        (
            j[(0, 0)] * j[(1, 1)] - j[(0, 1)] * j[(1, 0)],
            j[(0, 0)] + j[(1, 1)],
        )
    }
}

/// Give each equilibrium a branch number: matched to the previous point's
/// equilibria of the same support by distance to each branch's linear
/// extrapolation (greedy, nearest first, within half the state's size);
/// then, for the rest, to branches missing at the previous point only
/// (two equilibria that coincide exactly at a grid value are one there);
/// the rest start new branches.
pub fn assign_branches(points: &mut [LinePoint]) {
    let mut next = 0usize;
    for k in 0..points.len() {
        // (tier, branch, predicted state, support): tier 0 from the
        // previous point, tier 1 from the one before when missing since.
        let mut prior: Vec<(u8, usize, Vec<f64>, Vec<bool>)> = Vec::new();
        let consecutive = |k: usize, back: usize| {
            k >= back && (0..back).all(|s| points[k - s - 1].index + 1 == points[k - s].index)
        };
        for (tier, back) in [(0u8, 1usize), (1, 2)] {
            if !consecutive(k, back) {
                continue;
            }
            let last = &points[k - back];
            let before = consecutive(k, back + 1).then(|| &points[k - back - 1]);
            for e in &last.equilibria {
                if tier == 1
                    && points[k - 1]
                        .equilibria
                        .iter()
                        .any(|f| f.branch == e.branch)
                {
                    continue;
                }
                prior.push((
                    tier,
                    e.branch,
                    extrapolate(e, last.value, before, points[k].value),
                    support(&e.equilibrium),
                ));
            }
        }
        let current = &mut points[k].equilibria;
        let mut pairs: Vec<(u8, f64, usize, usize)> = Vec::new();
        for (i, e) in current.iter().enumerate() {
            for (j, (tier, _, predicted, sup)) in prior.iter().enumerate() {
                if *sup != support(&e.equilibrium) {
                    continue;
                }
                let largest = |v: &[f64]| v.iter().map(|x| x.abs()).fold(0.0, f64::max);
                let size = 1.0 + largest(&e.equilibrium.state) + largest(predicted);
                let d = distance(&e.equilibrium.state, predicted) / size;
                if d <= 0.5 {
                    pairs.push((*tier, d, i, j));
                }
            }
        }
        pairs.sort_by(|a, b| a.0.cmp(&b.0).then(a.1.total_cmp(&b.1)));
        let mut assigned = vec![None; current.len()];
        let mut used = vec![false; prior.len()];
        for (_, _, i, j) in pairs {
            if assigned[i].is_none() && !used[j] {
                assigned[i] = Some(prior[j].1);
                used[j] = true;
            }
        }
        for (e, a) in current.iter_mut().zip(assigned) {
            e.branch = a.unwrap_or_else(|| {
                next += 1;
                next - 1
            });
            next = next.max(e.branch + 1);
        }
    }
}

/// Where branch `e` (seen at `value`) should be at `target`: linear
/// extrapolation from its state at the point `before`, if it was there.
fn extrapolate(
    e: &BranchEquilibrium,
    value: f64,
    before: Option<&LinePoint>,
    target: f64,
) -> Vec<f64> {
    let x1 = &e.equilibrium.state;
    let earlier = before.and_then(|b| {
        b.equilibria
            .iter()
            .find(|f| f.branch == e.branch)
            .map(|f| (b.value, &f.equilibrium.state))
    });
    match earlier {
        Some((v0, x0)) if value != v0 => {
            let t = (target - value) / (value - v0);
            x1.iter().zip(x0).map(|(x, x0)| x + t * (x - x0)).collect()
        }
        _ => x1.clone(),
    }
}

/// A whole line sweep in one call, point by point in axis order, telling
/// `progress` after each point; when it returns false the sweep stops and
/// the points done so far are returned, marked partial.
pub fn sweep_line(
    problem: &Problem,
    request: &LineRequest,
    progress: Progress,
) -> Result<LineSweep, SweepError> {
    let plan = request.plan(problem)?;
    let total = plan.len();
    let mut points = Vec::with_capacity(total);
    let mut stopped = false;
    for index in 0..total {
        points.push(plan.point(index));
        if !progress(index + 1, total) {
            stopped = index + 1 < total;
            break;
        }
    }
    Ok(plan.finish(points, stopped))
}
