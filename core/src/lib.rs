//! Tussock's core: population models and the numerics that run them.
//!
//! The core is pure: no IO, no web, no plotting, no clocks and no unseeded
//! randomness. It builds for the native target and for `wasm32-unknown-unknown`.
//!
//! The flow is problem → solve → result:
//! a [`scenario::Scenario`] (raw, as read from JSON) is validated into a
//! [`scenario::Problem`]; [`solve::solve`] integrates it and returns a
//! [`solve::Trajectory`] that always says why it stopped.

pub mod analysis;
pub mod bench_problems;
pub mod data;
pub mod events;
pub mod fit;
pub mod metrics;
pub mod model;
pub mod models;
pub mod plan;
pub mod run;
pub mod scenario;
pub mod solve;
pub mod stochastic;
pub mod sweep;

pub use model::{Group, ModelSpec, ParamSpec, Params, State, Unit};
pub use scenario::{Problem, Scenario, ScenarioError};
pub use solve::{solve, solve_with, SolverOptions, StepStats, StopReason, Trajectory};
