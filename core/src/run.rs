//! Everything computed from one accepted scenario, as the workbench and the
//! command line's figures show it: the trajectory, the analysis, trajectories
//! from extra starting points, the phase-plane window and its nullclines,
//! and the planning metrics.

use crate::analysis::{self, Analysis, Nullcline};
use crate::metrics::{metrics, Metrics};
use crate::model::State;
use crate::scenario::Problem;
use crate::solve::{solve, solve_with, Trajectory};

/// Nullcline grid resolution (cells per side) for the phase plane.
pub const NULLCLINE_RESOLUTION: usize = 120;

#[derive(Debug)]
pub struct Run {
    pub problem: Problem,
    pub trajectory: Trajectory,
    pub analysis: Analysis,
    /// Trajectories from extra starting points (clicked on the phase plane).
    pub extra: Vec<Trajectory>,
    /// Phase-plane extent: species 0 across, species 1 up.
    pub window: (f64, f64),
    pub nullclines: Vec<Nullcline>,
    pub metrics: Metrics,
}

/// Runs are immutable once made, so two are equal when they are the same
/// run; this keeps change detection in the app's components O(1).
impl PartialEq for Run {
    fn eq(&self, other: &Self) -> bool {
        std::ptr::eq(self, other)
    }
}

impl Run {
    /// Solve, analyse and trace everything the charts show.
    pub fn compute(problem: Problem, starts: &[State]) -> Run {
        let trajectory = solve(&problem);
        let analysis = analysis::analyze_after(&problem, Some(&trajectory));
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
        let nullclines = analysis::nullclines(
            problem.model,
            &problem.params,
            window.0,
            window.1,
            NULLCLINE_RESOLUTION,
        );
        let metrics = metrics(&problem, &trajectory);
        Run {
            metrics,
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
