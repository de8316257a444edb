//! What a model does, beyond one run: equilibria and their stability,
//! nullclines for the phase plane, and the long-run behaviour found by
//! simulation after transients.

use std::collections::HashMap;

use serde::{Deserialize, Serialize};

use crate::model::{Jacobian, ModelSpec, Outcome, Params, State};
use crate::scenario::Problem;
use crate::solve::{per_capita_rates, solve_with, SolverOptions, StopReason};

/// Linear stability class of an equilibrium, from its eigenvalues.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub enum Stability {
    #[serde(rename = "stable node")]
    StableNode,
    #[serde(rename = "unstable node")]
    UnstableNode,
    #[serde(rename = "stable spiral")]
    StableSpiral,
    #[serde(rename = "unstable spiral")]
    UnstableSpiral,
    #[serde(rename = "saddle")]
    Saddle,
    #[serde(rename = "center")]
    Center,
    #[serde(rename = "non-hyperbolic")]
    NonHyperbolic,
}

impl Stability {
    pub fn label(self) -> &'static str {
        match self {
            Stability::StableNode => "stable node",
            Stability::UnstableNode => "unstable node",
            Stability::StableSpiral => "stable spiral",
            Stability::UnstableSpiral => "unstable spiral",
            Stability::Saddle => "saddle",
            Stability::Center => "center",
            Stability::NonHyperbolic => "non-hyperbolic",
        }
    }

    pub fn is_stable(self) -> bool {
        matches!(self, Stability::StableNode | Stability::StableSpiral)
    }
}

/// An eigenvalue as (real part, imaginary part).
pub type Eigenvalue = (f64, f64);

/// One equilibrium with its linear stability.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Equilibrium {
    /// Densities in state order (one per species).
    pub state: Vec<f64>,
    pub eigenvalues: Vec<Eigenvalue>,
    pub stability: Stability,
    /// All densities non-negative.
    pub feasible: bool,
}

/// Eigenvalues of the Jacobian restricted to the first `n` species, in
/// closed form for 1×1 and 2×2 matrices; sorted by real part, descending.
pub fn eigenvalues(j: &Jacobian, n: usize) -> Vec<Eigenvalue> {
    if n == 1 {
        return vec![(j[(0, 0)], 0.0)];
    }
    let tr = j[(0, 0)] + j[(1, 1)];
    let det = j[(0, 0)] * j[(1, 1)] - j[(0, 1)] * j[(1, 0)];
    let disc = tr * tr / 4.0 - det;
    if disc < 0.0 {
        let im = (-disc).sqrt();
        vec![(tr / 2.0, im), (tr / 2.0, -im)]
    } else {
        // Stable form of the quadratic roots.
        let s = disc.sqrt();
        let big = tr / 2.0 + if tr >= 0.0 { s } else { -s };
        let small = if big != 0.0 { det / big } else { 0.0 };
        let (a, b) = if big >= small {
            (big, small)
        } else {
            (small, big)
        };
        vec![(a, 0.0), (b, 0.0)]
    }
}

/// Classify eigenvalues; `scale` is the size of the Jacobian's entries, so
/// that "zero" means zero relative to the problem.
pub fn classify(eigs: &[Eigenvalue], scale: f64) -> Stability {
    let eps = 1e-9 * scale.max(1e-12);
    let complex = eigs.iter().any(|e| e.1.abs() > eps);
    if complex {
        let re = eigs[0].0;
        return if re.abs() <= eps {
            Stability::Center
        } else if re < 0.0 {
            Stability::StableSpiral
        } else {
            Stability::UnstableSpiral
        };
    }
    if eigs.iter().any(|e| e.0.abs() <= eps) {
        return Stability::NonHyperbolic;
    }
    let negative = eigs.iter().filter(|e| e.0 < 0.0).count();
    if negative == eigs.len() {
        Stability::StableNode
    } else if negative == 0 {
        Stability::UnstableNode
    } else {
        Stability::Saddle
    }
}

fn norm(x: &State, n: usize) -> f64 {
    (0..n).map(|i| x[i] * x[i]).sum::<f64>().sqrt()
}

fn jacobian_scale(j: &Jacobian, n: usize) -> f64 {
    let mut m: f64 = 0.0;
    for r in 0..n {
        for c in 0..n {
            m = m.max(j[(r, c)].abs());
        }
    }
    m
}

/// Newton's method on dx/dt = 0 from `start`; None if it does not converge
/// to a root (residual within 1e-8 relative to the state and Jacobian).
pub fn refine_equilibrium(model: &ModelSpec, p: &Params, start: State) -> Option<State> {
    newton(model, p, start, model.n_species())
}

fn newton(model: &ModelSpec, p: &Params, start: State, n: usize) -> Option<State> {
    let mut x = start;
    for _ in 0..100 {
        let f = model.derivative(p, &x);
        if (0..n).all(|i| f[i] == 0.0) {
            // Exactly a root (possibly where the Jacobian is singular).
            break;
        }
        let j = (model.jacobian)(p, &x);
        let step = if n == 1 {
            if j[(0, 0)] == 0.0 {
                return None;
            }
            State::new(f[0] / j[(0, 0)], 0.0)
        } else {
            j.try_inverse()? * f
        };
        if !step.iter().all(|v| v.is_finite()) {
            return None;
        }
        x -= step;
        if norm(&step, n) <= 1e-13 * (1.0 + norm(&x, n)) {
            break;
        }
    }
    let f = model.derivative(p, &x);
    let j = (model.jacobian)(p, &x);
    let tol = 1e-8 * (1.0 + norm(&x, n)) * jacobian_scale(&j, n).max(1.0);
    (norm(&f, n) <= tol && x.iter().all(|v| v.is_finite())).then_some(x)
}

/// All equilibria found: the model's closed forms (when there is no
/// harvest), then Newton's method from a grid of starts over
/// [0, 2·scale] in each species, deduplicated. Feasible ones come first.
pub fn equilibria(model: &ModelSpec, p: &Params, scale: [f64; 2]) -> Vec<Equilibrium> {
    let n = model.n_species();
    let mut starts: Vec<State> = (model.equilibria)(p);
    const STEPS: usize = 12;
    let grid: Vec<f64> = (0..=STEPS).map(|i| 2.0 * i as f64 / STEPS as f64).collect();
    for &u in &grid {
        if n == 1 {
            starts.push(State::new(u * scale[0], 0.0));
        } else {
            for &v in &grid {
                starts.push(State::new(u * scale[0], v * scale[1]));
            }
        }
    }
    let roots = starts.into_iter().filter_map(|s| newton(model, p, s, n));
    equilibria_at(model, p, roots, scale)
}

/// Equilibria at known roots of dx/dt = 0 (closed forms, or Newton's
/// results): rounding noise near the axes tidied to zero, duplicates
/// dropped, each classified by its eigenvalues. Feasible ones come first.
pub fn equilibria_at(
    model: &ModelSpec,
    p: &Params,
    roots: impl IntoIterator<Item = State>,
    scale: [f64; 2],
) -> Vec<Equilibrium> {
    let n = model.n_species();
    let mut found: Vec<State> = Vec::new();
    for mut x in roots {
        if !x.iter().all(|v| v.is_finite()) {
            continue;
        }
        for i in 0..n {
            // Tidy rounding noise around the axes.
            if x[i].abs() <= 1e-12 * (1.0 + scale[i]) {
                x[i] = 0.0;
            }
        }
        let duplicate = found
            .iter()
            .any(|y| norm(&(y - x), n) <= 1e-7 * (1.0 + norm(&x, n)));
        if !duplicate {
            found.push(x);
        }
    }
    let mut out: Vec<Equilibrium> = found
        .into_iter()
        .map(|x| {
            let j = (model.jacobian)(p, &x);
            let eigs = eigenvalues(&j, n);
            Equilibrium {
                state: (0..n).map(|i| x[i]).collect(),
                stability: classify(&eigs, jacobian_scale(&j, n)),
                eigenvalues: eigs,
                feasible: (0..n).all(|i| x[i] >= 0.0),
            }
        })
        .collect();
    out.sort_by(|a, b| {
        b.feasible.cmp(&a.feasible).then_with(|| {
            a.state
                .iter()
                .sum::<f64>()
                .total_cmp(&b.state.iter().sum::<f64>())
        })
    });
    out
}

/// A nullcline: where one species' growth is zero, as polylines.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Nullcline {
    pub species: usize,
    pub polylines: Vec<Vec<(f64, f64)>>,
}

/// Nullclines of a two-species model over [0, x_max] × [0, y_max], traced
/// by marching squares on an `resolution`² grid. A species whose growth
/// vanishes at zero density (x_i = 0) gets that axis as a nullcline and its
/// per-capita growth traced for the rest.
pub fn nullclines(
    model: &ModelSpec,
    p: &Params,
    x_max: f64,
    y_max: f64,
    resolution: usize,
) -> Vec<Nullcline> {
    if model.n_species() < 2 || !(x_max > 0.0 && y_max > 0.0) {
        return Vec::new();
    }
    let res = resolution.clamp(8, 1000);
    (0..2)
        .map(|i| {
            // Does growth of species i vanish on its own axis?
            let on_axis = (0..=4).all(|k| {
                let other = k as f64 / 4.0 * if i == 0 { y_max } else { x_max };
                let x = if i == 0 {
                    State::new(0.0, other)
                } else {
                    State::new(other, 0.0)
                };
                model.derivative(p, &x)[i] == 0.0
            });
            let field = |x: f64, y: f64| {
                let s = State::new(x, y);
                let f = model.derivative(p, &s)[i];
                if on_axis {
                    f / s[i]
                } else {
                    f
                }
            };
            // Start just off the axes so per-capita growth is defined.
            let x0 = x_max * 1e-9;
            let y0 = y_max * 1e-9;
            let mut polylines = march(&field, (x0, x_max), (y0, y_max), res);
            if on_axis {
                polylines.push(if i == 0 {
                    vec![(0.0, 0.0), (0.0, y_max)]
                } else {
                    vec![(0.0, 0.0), (x_max, 0.0)]
                });
            }
            Nullcline {
                species: i,
                polylines,
            }
        })
        .collect()
}

/// Marching squares for the zero level of `f`, segments joined into
/// polylines through shared cell edges.
pub(crate) fn march(
    f: &dyn Fn(f64, f64) -> f64,
    (x0, x1): (f64, f64),
    (y0, y1): (f64, f64),
    n: usize,
) -> Vec<Vec<(f64, f64)>> {
    let xs: Vec<f64> = (0..=n)
        .map(|i| x0 + (x1 - x0) * i as f64 / n as f64)
        .collect();
    let ys: Vec<f64> = (0..=n)
        .map(|j| y0 + (y1 - y0) * j as f64 / n as f64)
        .collect();
    let mut values = vec![0.0; (n + 1) * (n + 1)];
    for j in 0..=n {
        for i in 0..=n {
            let v = f(xs[i], ys[j]);
            values[j * (n + 1) + i] = v;
        }
    }
    let val = |i: usize, j: usize| values[j * (n + 1) + i];
    // Edge ids: horizontal edge from node (i, j) is 2·k, vertical is 2·k + 1.
    let node = |i: usize, j: usize| j * (n + 1) + i;
    let crossing = |edge: usize| -> Option<(f64, f64)> {
        let k = edge / 2;
        let (i, j) = (k % (n + 1), k / (n + 1));
        let (i2, j2) = if edge % 2 == 0 {
            (i + 1, j)
        } else {
            (i, j + 1)
        };
        let (a, b) = (val(i, j), val(i2, j2));
        // Undefined (non-finite) corners cut nothing.
        if !(a.is_finite() && b.is_finite()) || (a > 0.0) == (b > 0.0) {
            return None;
        }
        let t = a / (a - b);
        Some((xs[i] + t * (xs[i2] - xs[i]), ys[j] + t * (ys[j2] - ys[j])))
    };
    let mut segments: Vec<(usize, usize)> = Vec::new();
    for j in 0..n {
        for i in 0..n {
            let edges = [
                2 * node(i, j),
                2 * node(i + 1, j) + 1,
                2 * node(i, j + 1),
                2 * node(i, j) + 1,
            ];
            let cut: Vec<usize> = edges
                .iter()
                .copied()
                .filter(|&e| crossing(e).is_some())
                .collect();
            match cut.len() {
                2 => segments.push((cut[0], cut[1])),
                // Saddle cell: pair edges by the sign of the centre.
                4 => {
                    let centre =
                        (val(i, j) + val(i + 1, j) + val(i, j + 1) + val(i + 1, j + 1)) / 4.0;
                    if (centre > 0.0) == (val(i, j) > 0.0) {
                        segments.push((edges[0], edges[1]));
                        segments.push((edges[2], edges[3]));
                    } else {
                        segments.push((edges[0], edges[3]));
                        segments.push((edges[1], edges[2]));
                    }
                }
                _ => {}
            }
        }
    }
    // Join segments into polylines.
    let mut by_edge: HashMap<usize, Vec<usize>> = HashMap::new();
    for (s, &(a, b)) in segments.iter().enumerate() {
        by_edge.entry(a).or_default().push(s);
        by_edge.entry(b).or_default().push(s);
    }
    let mut used = vec![false; segments.len()];
    let mut lines = Vec::new();
    for start in 0..segments.len() {
        if used[start] {
            continue;
        }
        used[start] = true;
        let (a, b) = segments[start];
        let mut chain = std::collections::VecDeque::from([a, b]);
        for forward in [true, false] {
            loop {
                let end = if forward {
                    *chain.back().unwrap_or(&a)
                } else {
                    *chain.front().unwrap_or(&a)
                };
                let next = by_edge
                    .get(&end)
                    .and_then(|list| list.iter().copied().find(|&s| !used[s]));
                let Some(s) = next else { break };
                used[s] = true;
                let (p, q) = segments[s];
                let other = if p == end { q } else { p };
                if forward {
                    chain.push_back(other);
                } else {
                    chain.push_front(other);
                }
            }
        }
        lines.push(chain.into_iter().filter_map(crossing).collect());
    }
    lines
}

/// What the populations do in the long run.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LongRunKind {
    Equilibrium,
    Cycle,
    Extinction,
    Unbounded,
    /// The simulation stopped early for a reason other than growth.
    Failed,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct LongRun {
    pub kind: LongRunKind,
    /// Period of the cycle, in time units.
    pub period: Option<f64>,
    /// Smallest and largest density of each species after transients.
    pub min: Vec<f64>,
    pub max: Vec<f64>,
    /// Which species died out: zero at the end of the window, or falling
    /// at a steady per-capita rate (see [`long_run_over`]).
    pub extinct: Vec<bool>,
    /// The window examined, in time units.
    pub window: (f64, f64),
    pub stop: StopReason,
}

/// Simulate long enough for transients to fade (see [`long_run_horizon`]),
/// then read the last quarter (or more; see [`long_run_over`]).
pub fn long_run(problem: &Problem, equilibria: &[Equilibrium]) -> LongRun {
    let t_end = long_run_horizon(equilibria, problem.t_end);
    long_run_over(
        problem.model,
        &problem.params,
        problem.initial,
        t_end,
        &problem.solver,
        LONG_RUN_SAMPLES,
    )
}

/// Output points in the window [`long_run`] reads.
pub const LONG_RUN_SAMPLES: usize = 10_000;

/// How long to simulate for transients to fade: at least `at_least`, 200
/// of the slowest oscillation time scales of the feasible equilibria and 20
/// of the slowest decay time scales of the stable ones, at most 1e5 time
/// units.
pub fn long_run_horizon(equilibria: &[Equilibrium], at_least: f64) -> f64 {
    // Time scales: oscillation (1/|λ|) at the feasible equilibria, and
    // decay (1/|Re λ|) towards the stable ones, long near a Hopf point.
    let eigs: Vec<(f64, f64)> = equilibria
        .iter()
        .filter(|e| e.feasible)
        .flat_map(|e| e.eigenvalues.iter().copied())
        .collect();
    let stable_eigs: Vec<(f64, f64)> = equilibria
        .iter()
        .filter(|e| e.feasible && e.stability.is_stable())
        .flat_map(|e| e.eigenvalues.iter().copied())
        .collect();
    let slowest_turn = eigs
        .iter()
        .map(|&(re, im)| (re * re + im * im).sqrt())
        .filter(|&m| m > 1e-9)
        .fold(f64::INFINITY, f64::min);
    let slowest_decay = stable_eigs
        .iter()
        .map(|e| e.0.abs())
        .filter(|&r| r > 1e-9)
        .fold(f64::INFINITY, f64::min);
    let horizon = [200.0 / slowest_turn, 20.0 / slowest_decay]
        .into_iter()
        .filter(|t| t.is_finite())
        .fold(0.0, f64::max);
    horizon.max(at_least).min(1e5)
}

/// Longest window [`long_run_over`] reads, in time units, unless asked
/// for a longer one.
pub const LONGEST_WINDOW: f64 = 1e5;

/// The long-run behaviour from `initial`: integrate to 3/4 of `t_end`
/// without keeping output, then read the last quarter from `samples` even
/// output points. Tolerances are tightened to at least rtol 1e-8, atol
/// 1e-10; deep troughs stay positive (see
/// [`crate::solve`](mod@crate::solve)).
///
/// A cycle: the species with the widest relative range crosses its mean
/// upwards at least three times, its range is over 1e-3 of its maximum
/// and does not shrink from the first half to the second. Otherwise the
/// window is calm when every species' per-capita rate is steady (the same,
/// to 1%, three quarters of the way through and at the end) and none rises
/// (ln x gaining over 1e-3 a quarter of the window at its rate at the
/// end); then a species is extinct when it still falls (losing over 1e-3),
/// as one does once the others have settled without it. A species at zero
/// at the end is extinct too. In the trough of a cycle some species rises,
/// so however deep the trough it is not an extinction.
///
/// A window that shows neither a cycle, nor damped oscillations (three
/// upward crossings), nor calm is too short to tell (a cycle slower than
/// it, or a trough longer than it): it is doubled at the same spacing, up
/// to [`LONGEST_WINDOW`].
pub fn long_run_over(
    model: &ModelSpec,
    params: &Params,
    initial: State,
    t_end: f64,
    solver: &SolverOptions,
    samples: usize,
) -> LongRun {
    let n = model.n_species();
    let options = SolverOptions {
        rtol: solver.rtol.min(1e-8),
        atol: solver.atol.min(1e-10),
        ..*solver
    };
    let from = 0.75 * t_end;
    let mut window = t_end - from;
    let step = window / samples.max(8) as f64;
    // Transients: a few output points only (the system is autonomous, so
    // each stretch is integrated from its own t = 0).
    let transient = solve_with(model, params, initial, from, from / 64.0, &options);
    let mut stop = transient.stop;
    let mut tail: Vec<(f64, State)> = Vec::new();
    let mut reading = None;
    if let (true, Some(&start)) = (stop.is_finished(), transient.states.last()) {
        tail.push((from, start));
        let mut length = window;
        loop {
            let (t0, x0) = tail[tail.len() - 1];
            let more = solve_with(model, params, x0, length, step, &options);
            let times = more.times.iter().map(|t| t0 + t);
            tail.extend(times.zip(more.states.iter().copied()).skip(1));
            stop = more.stop;
            if !stop.is_finished() || tail.len() < 8 {
                break;
            }
            let r = read_window(model, params, &tail);
            let longer = r.too_short && 2.0 * window <= LONGEST_WINDOW;
            reading = Some(r);
            if !longer {
                break;
            }
            length = window;
            window *= 2.0;
        }
    }
    let mut min = vec![f64::INFINITY; n];
    let mut max = vec![f64::NEG_INFINITY; n];
    for (_, s) in &tail {
        for i in 0..n {
            min[i] = min[i].min(s[i]);
            max[i] = max[i].max(s[i]);
        }
    }
    let (kind, period, extinct) = match (stop, reading) {
        (StopReason::BlewUp { .. }, _) => (LongRunKind::Unbounded, None, vec![false; n]),
        (StopReason::Finished, Some(r)) => (r.kind, r.period, r.extinct),
        _ => (LongRunKind::Failed, None, vec![false; n]),
    };
    LongRun {
        kind,
        period,
        min,
        max,
        extinct,
        window: (from, from + window),
        stop,
    }
}

/// What a window of a long run shows.
struct Reading {
    kind: LongRunKind,
    period: Option<f64>,
    extinct: Vec<bool>,
    /// It shows neither a cycle, nor damped oscillations, nor a calm
    /// state: a longer window may tell.
    too_short: bool,
}

/// Read a finished long run from its window (at least 8 points), as
/// [`long_run_over`] describes.
fn read_window(model: &ModelSpec, params: &Params, tail: &[(f64, State)]) -> Reading {
    let n = model.n_species();
    let last = tail.len() - 1;
    let range = |part: &[(f64, State)], i: usize| {
        part.iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), (_, s)| {
                (lo.min(s[i]), hi.max(s[i]))
            })
    };
    let width = |part: &[(f64, State)], i: usize| {
        let (lo, hi) = range(part, i);
        hi - lo
    };
    // Changes of ln x over a quarter of the window at the per-capita rates
    // three quarters of the way through and at the end (the model's rates:
    // exact however deep a density, unlike differences of densities).
    let quarter = (tail[last].0 - tail[0].0) / 4.0;
    let [before, end] =
        [3 * last / 4, last].map(|k| per_capita_rates(model, params, &tail[k].1) * quarter);
    // Every rate steady and none rising: nothing will change.
    let calm = (0..n)
        .all(|i| (end[i] - before[i]).abs() <= 0.01 * before[i].abs() + 1e-6 && end[i] <= 1e-3);
    let extinct: Vec<bool> = (0..n)
        .map(|i| tail[last].1[i] == 0.0 || (calm && end[i] < -1e-3))
        .collect();
    let reading = |kind, period, too_short| Reading {
        kind,
        period,
        extinct: extinct.clone(),
        too_short,
    };
    // Still growing fast at the end: unbounded.
    let growing = (0..n).any(|i| {
        let (first, now) = (tail[0].1[i], tail[last].1[i]);
        now > 1e3 * first.max(1.0) && tail.windows(2).all(|w| w[1].1[i] >= w[0].1[i])
    });
    if growing {
        return reading(LongRunKind::Unbounded, None, false);
    }
    let relative = |i: usize| width(tail, i) / range(tail, i).1.max(1e-300);
    let oscillating = (0..n)
        .max_by(|&a, &b| relative(a).total_cmp(&relative(b)))
        .and_then(|i| {
            let mean = tail.iter().map(|(_, s)| s[i]).sum::<f64>() / tail.len() as f64;
            let ups: Vec<f64> = tail
                .windows(2)
                .filter(|w| w[0].1[i] < mean && w[1].1[i] >= mean)
                .map(|w| {
                    let (t0, t1, a, b) = (w[0].0, w[1].0, w[0].1[i], w[1].1[i]);
                    t0 + (mean - a) / (b - a) * (t1 - t0)
                })
                .collect();
            (ups.len() >= 3).then_some((i, ups))
        });
    if let Some((i, ups)) = &oscillating {
        let half = tail.len() / 2;
        let (early, late) = (width(&tail[..half], *i), width(&tail[half..], *i));
        if relative(*i) > 1e-3 && late > 0.9 * early {
            let period = (ups[ups.len() - 1] - ups[0]) / (ups.len() - 1) as f64;
            return reading(LongRunKind::Cycle, Some(period), false);
        }
    }
    let kind = if extinct.iter().any(|&e| e) {
        LongRunKind::Extinction
    } else {
        LongRunKind::Equilibrium
    };
    reading(kind, None, oscillating.is_none() && !calm)
}

/// Everything `tussock analyze` reports.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Analysis {
    pub equilibria: Vec<Equilibrium>,
    pub outcome: Option<OutcomeReport>,
    pub long_run: LongRun,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct OutcomeReport {
    pub kind: &'static str,
    pub text: String,
}

impl From<Outcome> for OutcomeReport {
    fn from(o: Outcome) -> Self {
        OutcomeReport {
            kind: o.kind,
            text: o.text,
        }
    }
}

/// A density scale per species for searching equilibria: twice the largest
/// of the initial density, the closed-form equilibria and 1.
pub fn search_scale(problem: &Problem) -> [f64; 2] {
    search_scale_for(problem.model, &problem.params, &problem.initial)
}

/// [`search_scale`] for a model at `params` from `initial`.
pub fn search_scale_for(model: &ModelSpec, params: &Params, initial: &State) -> [f64; 2] {
    let mut scale = [1.0_f64, 1.0_f64];
    let closed = (model.equilibria)(params);
    for i in 0..model.n_species() {
        scale[i] = scale[i].max(initial[i]);
        for e in &closed {
            if e[i].is_finite() {
                scale[i] = scale[i].max(e[i].abs());
            }
        }
    }
    scale
}

/// Equilibria, the model's verdict and the long-run behaviour of a problem.
pub fn analyze(problem: &Problem) -> Analysis {
    if problem.schedule.is_empty() {
        analyze_after(problem, None)
    } else {
        analyze_after(problem, Some(&crate::solve::solve(problem)))
    }
}

/// [`analyze`] for a caller that has already solved the problem: with
/// interventions, the long run follows on from the state they leave at the
/// horizon (a release of an absent predator, say).
pub fn analyze_after(problem: &Problem, solved: Option<&crate::solve::Trajectory>) -> Analysis {
    let equilibria = equilibria(problem.model, &problem.params, search_scale(problem));
    let last = solved
        .filter(|_| !problem.schedule.is_empty())
        .and_then(|t| t.states.last());
    let long_run = match last {
        None => long_run(problem, &equilibria),
        Some(state) => {
            let mut continued = problem.clone();
            continued.initial = *state;
            long_run(&continued, &equilibria)
        }
    };
    let outcome = if problem.params.harvest.iter().all(|&h| h == 0.0) {
        (problem.model.outcome)(&problem.params).map(OutcomeReport::from)
    } else {
        None
    };
    Analysis {
        equilibria,
        outcome,
        long_run,
    }
}

/// One sentence on an equilibrium for a user, e.g. "spider mite 4.3 and
/// predatory mite 27.1: stable spiral; nearby states return through damped
/// oscillations of period ≈ 25.1 days."
pub fn describe_equilibrium(eq: &Equilibrium, species: &[String], time_unit: &str) -> String {
    let values: Vec<String> = eq
        .state
        .iter()
        .zip(species)
        .map(|(v, s)| format!("{s} {}", round_sig(*v, 4)))
        .collect();
    let period = eq
        .eigenvalues
        .first()
        .filter(|e| e.1 != 0.0)
        .map(|e| 2.0 * std::f64::consts::PI / e.1.abs());
    let period_text = period
        .map(|p| format!(" of period ≈ {} {time_unit}", round_sig(p, 3)))
        .unwrap_or_default();
    let meaning = match eq.stability {
        Stability::StableNode => "nearby states return without oscillating".to_string(),
        Stability::StableSpiral => {
            format!("nearby states return through damped oscillations{period_text}")
        }
        Stability::UnstableNode => "nearby states move away from it".to_string(),
        Stability::UnstableSpiral => {
            format!("nearby states spiral away in growing oscillations{period_text}")
        }
        Stability::Saddle => {
            "approached along one direction and left along another, it divides outcomes".to_string()
        }
        Stability::Center => format!("neutral cycles{period_text} surround it (linear analysis)"),
        Stability::NonHyperbolic => {
            "linear analysis cannot decide its stability (an eigenvalue is zero)".to_string()
        }
    };
    let joined = values.join(" and ");
    let infeasible = if eq.feasible {
        ""
    } else {
        " Not reachable: a density is negative."
    };
    format!("{joined}: {}; {meaning}.{infeasible}", eq.stability.label())
}

/// `v` rounded to `digits` significant digits, without trailing zeros.
pub fn round_sig(v: f64, digits: i32) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let magnitude = v.abs().log10().floor() as i32;
    let decimals = (digits - 1 - magnitude).max(0) as usize;
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}
