//! Time one planner evaluation (release build), for profiling.
use tussock_core::plan::{evaluate, Goal, PlanRequest, SizeUnit};
fn main() {
    let text = std::fs::read_to_string(
        std::env::args()
            .nth(1)
            .unwrap_or("examples/greenhouse-plan.json".into()),
    )
    .unwrap();
    let p = tussock_core::Scenario::from_json(&text)
        .unwrap()
        .validate()
        .unwrap();
    let req = PlanRequest {
        goal: Goal::PestBelowThreshold {
            by: 28.0,
            until: 90.0,
        },
        species: 1,
        unit: SizeUnit::RatioToOther,
        max_size: 1.0,
        times: vec![7.0],
        counts: vec![1],
        every: 7.0,
        curve_points: 24,
    };
    let start = std::time::Instant::now();
    let e = evaluate(&p, &req, 7.0, 1, 0.1);
    println!("{:?} in {:?}", e, start.elapsed());
    let start = std::time::Instant::now();
    let t = tussock_core::solve(&p);
    println!(
        "plain solve {:?}: {:?} crossings {}",
        start.elapsed(),
        t.stats,
        t.crossings.len()
    );
}
