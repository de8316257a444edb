//! Timings of the outcome-map benchmark as JSON, for bench/side_by_side.py:
//! `cargo run --release -p tussock-core --example time_sweep`.
//!
//! Prints the whole 200 × 200 map's time (theory first, single thread),
//! its class counts, and per-cell times with every cell simulated on the
//! subsample the script also runs in scipy, with those cells' parameters.

use std::time::Instant;

use tussock_core::bench_problems::{map_subsample, rosenzweig_macarthur_map};
use tussock_core::sweep::map::sweep_map;
use tussock_core::sweep::Simulate;

fn main() {
    let (problem, request) = rosenzweig_macarthur_map(Simulate::WhenUndecided);
    let mut rounds = Vec::new();
    let mut map = None;
    for _ in 0..5 {
        let start = Instant::now();
        map = sweep_map(&problem, &request, &mut |_, _| true).ok();
        rounds.push(start.elapsed().as_secs_f64());
    }
    rounds.sort_by(f64::total_cmp);
    let map = map.expect("a valid map");
    let mut counts: Vec<(String, usize)> = Vec::new();
    let mut simulated_cells = 0;
    for cell in map.rows.iter().flat_map(|r| &r.cells) {
        let key = serde_json::to_value(cell.class)
            .unwrap()
            .as_str()
            .unwrap_or("?")
            .to_string();
        match counts.iter_mut().find(|(k, _)| *k == key) {
            Some((_, n)) => *n += 1,
            None => counts.push((key, 1)),
        }
        if cell.reason.is_some() {
            simulated_cells += 1;
        }
    }

    let (problem, request) = rosenzweig_macarthur_map(Simulate::Always);
    let plan = request.plan(&problem).expect("a valid map");
    let cells = map_subsample(4);
    let mut per_cell = Vec::new();
    let mut subsample = Vec::new();
    for _ in 0..3 {
        let start = Instant::now();
        subsample.clear();
        for &(r, c) in &cells {
            let (x, y) = (plan.x.values[c], plan.y.values[r]);
            let cell = plan.cell(x, y);
            let class = serde_json::to_value(cell.class).unwrap();
            subsample.push(serde_json::json!({"K": x, "m": y, "class": class}));
        }
        per_cell.push(start.elapsed().as_secs_f64() / cells.len() as f64);
    }
    per_cell.sort_by(f64::total_cmp);
    println!(
        "{}",
        serde_json::json!({
            "map_seconds": rounds[rounds.len() / 2],
            "cells": map.rows.len() * map.x.values.len(),
            "simulated_cells": simulated_cells,
            "counts": counts,
            "simulated_seconds_per_cell": per_cell[per_cell.len() / 2],
            "starts_per_simulated_cell": 3,
            "subsample": subsample,
            "params": {"r": 1.0, "a": 0.02, "h": 0.5, "e": 0.4, "initial": [100.0, 10.0], "t_end": 2000.0},
        })
    );
}
