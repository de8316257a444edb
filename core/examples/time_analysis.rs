//! Time `analyze` on the example scenarios (release build).
fn main() {
    for f in [
        "greenhouse-mites",
        "reserve-reintroduction",
        "microcosm-competition",
    ] {
        let text = std::fs::read_to_string(format!("examples/{f}.json")).unwrap();
        let p = tussock_core::Scenario::from_json(&text)
            .unwrap()
            .validate()
            .unwrap();
        let start = std::time::Instant::now();
        let a = tussock_core::analysis::analyze(&p);
        let t1 = start.elapsed();
        let start = std::time::Instant::now();
        let _ = tussock_core::solve(&p);
        let t2 = start.elapsed();
        let start = std::time::Instant::now();
        let _ = tussock_core::analysis::nullclines(p.model, &p.params, 200.0, 50.0, 120);
        let t3 = start.elapsed();
        println!(
            "{f}: analyze {t1:?} ({:?}, window {:?}), solve {t2:?}, nullclines {t3:?}",
            a.long_run.kind, a.long_run.window
        );
    }
}
