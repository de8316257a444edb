//! Outcome maps against analytic results, and every classification rule
//! against simulation of the same cells.
//!
//! - Competition: the four outcomes follow the invasion inequalities
//!   K1 ≷ α12·K2 and K2 ≷ α21·K1 (Gause 1934; e.g. Gotelli 2008, A Primer of
//!   Ecology, ch. 8).
//! - Rosenzweig–MacArthur (type II): the predator persists when K > N* =
//!   m/(a (e − m h)); the equilibrium is stable below K_H = (e + m h)/(a h
//!   (e − m h)) and cycles above it (Rosenzweig 1971; e.g. Kot 2001,
//!   Elements of Mathematical Ecology, ch. 9).

mod common;

use common::problem;
use tussock_core::sweep::map::{sweep_map, MapRequest, OutcomeClass, OutcomeMap, Rule, Shard};
use tussock_core::sweep::{AxisSpec, Simulate, Spacing, SweepOptions};
use tussock_core::Problem;

/// The one place the tests call the map: (x axis, y axis, options).
fn check(
    problem: &Problem,
    x: (&str, f64, f64, usize),
    y: (&str, f64, f64, usize),
    options: SweepOptions,
    shard: Option<Shard>,
) -> OutcomeMap {
    let axis = |(param, from, to, steps): (&str, f64, f64, usize)| AxisSpec {
        param: param.to_string(),
        from,
        to,
        steps,
        spacing: Spacing::Linear,
    };
    let request = MapRequest {
        x: axis(x),
        y: axis(y),
        options,
        shard,
    };
    sweep_map(problem, &request, &mut |_, _| true).expect("a valid map")
}

fn theory() -> SweepOptions {
    SweepOptions::default()
}

fn simulated() -> SweepOptions {
    SweepOptions {
        simulate: Simulate::Always,
        ..SweepOptions::default()
    }
}

fn competition(k1: f64, k2: f64, a12: f64, a21: f64) -> Problem {
    problem(
        "competition",
        &[
            ("r1", 0.8),
            ("r2", 0.5),
            ("K1", k1),
            ("K2", k2),
            ("alpha12", a12),
            ("alpha21", a21),
        ],
        &[20.0, 20.0],
        50.0,
        0.5,
    )
}

/// Gause's verdict from the inequalities.
fn gause(k1: f64, k2: f64, a12: f64, a21: f64) -> OutcomeClass {
    match (k1 > a12 * k2, k2 > a21 * k1) {
        (true, true) => OutcomeClass::Coexistence,
        (true, false) => OutcomeClass::OnlySpecies1,
        (false, true) => OutcomeClass::OnlySpecies2,
        (false, false) => OutcomeClass::FounderControl,
    }
}

/// Every cell whose neighbours (8 around) share its analytic class must
/// have that class; returns how many cells were checked per class.
fn agrees_away_from_boundaries(
    map: &OutcomeMap,
    expected: impl Fn(f64, f64) -> OutcomeClass,
) -> Vec<(OutcomeClass, usize)> {
    let rows = &map.rows;
    let mut counts: Vec<(OutcomeClass, usize)> = Vec::new();
    for r in 1..rows.len() - 1 {
        for c in 1..rows[r].cells.len() - 1 {
            let cell = &rows[r].cells[c];
            let want = expected(cell.x, cell.y);
            let interior = (r - 1..=r + 1).all(|rr| {
                (c - 1..=c + 1).all(|cc| {
                    let n = &rows[rr].cells[cc];
                    expected(n.x, n.y) == want
                })
            });
            if !interior {
                continue;
            }
            assert_eq!(
                cell.class, want,
                "cell x = {}, y = {}: {cell:?}",
                cell.x, cell.y
            );
            match counts.iter_mut().find(|(k, _)| *k == want) {
                Some((_, n)) => *n += 1,
                None => counts.push((want, 1)),
            }
        }
    }
    counts
}

#[test]
fn competition_map_follows_the_invasion_inequalities() {
    // K1 × K2 with α12 = 0.8, α21 = 1.25: all four outcomes appear.
    let p = competition(500.0, 500.0, 0.8, 1.25);
    let map = check(
        &p,
        ("K1", 50.0, 1000.0, 40),
        ("K2", 50.0, 1000.0, 40),
        theory(),
        None,
    );
    let counts = agrees_away_from_boundaries(&map, |k1, k2| gause(k1, k2, 0.8, 1.25));
    // α12·α21 = 1 here: no founder control; check the three others appear.
    assert!(counts.len() >= 2, "{counts:?}");
    // α12 × α21: all four.
    let map = check(
        &p,
        ("alpha12", 0.1, 2.0, 40),
        ("alpha21", 0.1, 2.0, 40),
        theory(),
        None,
    );
    let counts = agrees_away_from_boundaries(&map, |a12, a21| gause(500.0, 500.0, a12, a21));
    assert_eq!(counts.len(), 4, "{counts:?}");
    for row in &map.rows {
        for cell in &row.cells {
            assert!(
                matches!(cell.rule, Rule::NoCycles | Rule::AlternativeStableStates),
                "{cell:?}"
            );
        }
    }
}

/// The same, every cell simulated (three starts each): simulation, not
/// eigenvalues, against Gause's inequalities.
#[test]
fn simulated_competition_map_follows_the_invasion_inequalities() {
    let p = competition(500.0, 500.0, 0.8, 1.25);
    let options = SweepOptions {
        horizon: Some(400.0),
        ..simulated()
    };
    let map = check(
        &p,
        ("alpha12", 0.1, 2.0, 12),
        ("alpha21", 0.1, 2.0, 12),
        options,
        None,
    );
    let counts = agrees_away_from_boundaries(&map, |a12, a21| gause(500.0, 500.0, a12, a21));
    assert_eq!(counts.len(), 4, "{counts:?}");
    assert!(map
        .rows
        .iter()
        .flat_map(|r| &r.cells)
        .all(|c| c.rule == Rule::Simulation));
}

fn rm(k: f64, m: f64) -> Problem {
    problem(
        "rosenzweig_macarthur",
        &[
            ("r", 1.0),
            ("K", k),
            ("a", 0.02),
            ("h", 0.5),
            ("e", 0.4),
            ("m", m),
        ],
        &[50.0, 5.0],
        100.0,
        0.5,
    )
}

fn rm_expected(k: f64, m: f64) -> OutcomeClass {
    let (a, h, e) = (0.02, 0.5, 0.4);
    let n_star = m / (a * (e - m * h));
    let k_h = (e + m * h) / (a * h * (e - m * h));
    if k <= n_star {
        OutcomeClass::OnlySpecies1
    } else if k < k_h {
        OutcomeClass::Coexistence
    } else {
        OutcomeClass::LimitCycle
    }
}

#[test]
fn rosenzweig_macarthur_map_follows_persistence_and_hopf_thresholds() {
    let map = check(
        &rm(300.0, 0.3),
        ("K", 20.0, 600.0, 60),
        ("m", 0.05, 0.6, 50),
        theory(),
        None,
    );
    let counts = agrees_away_from_boundaries(&map, rm_expected);
    assert_eq!(counts.len(), 3, "{counts:?}");
    // Nothing needed simulating: type II without harvest is decided by theory.
    for cell in map.rows.iter().flat_map(|r| &r.cells) {
        assert_ne!(cell.rule, Rule::Simulation, "{cell:?}");
    }
    // The boundary curves lie where the formulas put them.
    for line in &map.boundaries {
        for &(k, m) in line.polylines.iter().flatten() {
            let (a, h, e) = (0.02, 0.5, 0.4);
            let want = match line.key.as_str() {
                "predator_persists" => m / (a * (e - m * h)),
                "hopf" => (e + m * h) / (a * h * (e - m * h)),
                other => panic!("unexpected boundary {other}"),
            };
            assert!(
                (k - want).abs() <= 1e-3 * want,
                "{}: K = {k} at m = {m}, formula {want}",
                line.key
            );
        }
    }
    let keys: Vec<&str> = map.boundaries.iter().map(|b| b.key.as_str()).collect();
    assert_eq!(keys, ["predator_persists", "hopf"]);
}

#[test]
fn competition_boundary_lines_are_the_invasion_lines() {
    let (a12, a21) = (0.8, 1.25);
    let map = check(
        &competition(500.0, 500.0, a12, a21),
        ("K1", 50.0, 1000.0, 5),
        ("K2", 50.0, 1000.0, 5),
        theory(),
        None,
    );
    assert_eq!(map.boundaries.len(), 2);
    for line in &map.boundaries {
        let points: Vec<&(f64, f64)> = line.polylines.iter().flatten().collect();
        assert!(points.len() > 10, "{}", line.key);
        for &&(k1, k2) in &points {
            let residual = match line.key.as_str() {
                "species_1_invades" => k1 - a12 * k2,
                _ => k2 - a21 * k1,
            };
            // Linear in each axis: marching squares is exact up to rounding.
            assert!(
                residual.abs() <= 1e-9 * k1.max(k2),
                "{}: ({k1}, {k2})",
                line.key
            );
        }
    }
}

/// One cell with theory, and the same cell simulated from three starts.
fn theory_and_simulation(
    p: &Problem,
    x: (&str, f64),
    y: (&str, f64),
) -> (tussock_core::sweep::map::MapCell, OutcomeClass) {
    let one = |options| {
        check(p, (x.0, x.1, x.1, 1), (y.0, y.1, y.1, 1), options, None).rows[0].cells[0].clone()
    };
    let decided = one(theory());
    let sim = one(SweepOptions {
        horizon: Some(3000.0),
        ..simulated()
    });
    (decided, sim.class)
}

/// (name, scenario, x, y, expected class, expected rule)
type RuleCase = (
    &'static str,
    Problem,
    (&'static str, f64),
    (&'static str, f64),
    OutcomeClass,
    Rule,
);

/// Each theory rule on cells where it applies, against simulation.
#[test]
fn every_rule_agrees_with_simulation() {
    let logistic = |params: &[(&str, f64)]| problem("logistic", params, &[30.0], 100.0, 1.0);
    let exponential = |params: &[(&str, f64)]| problem("exponential", params, &[30.0], 100.0, 1.0);
    let cases: Vec<RuleCase> = vec![
        // Dulac: competition without cycles, one stable equilibrium.
        (
            "coexistence",
            competition(500.0, 500.0, 0.5, 0.5),
            ("K1", 500.0),
            ("K2", 400.0),
            OutcomeClass::Coexistence,
            Rule::NoCycles,
        ),
        (
            "exclusion",
            competition(500.0, 500.0, 0.5, 1.5),
            ("K1", 500.0),
            ("K2", 400.0),
            OutcomeClass::OnlySpecies1,
            Rule::NoCycles,
        ),
        // Two stable one-species states: founder control.
        (
            "founder",
            competition(500.0, 500.0, 1.5, 1.4),
            ("K1", 500.0),
            ("K2", 500.0),
            OutcomeClass::FounderControl,
            Rule::AlternativeStableStates,
        ),
        // No interior equilibrium: K below N* = 50.
        (
            "prey only",
            rm(300.0, 0.3),
            ("K", 40.0),
            ("m", 0.3),
            OutcomeClass::OnlySpecies1,
            Rule::NoInteriorEquilibrium,
        ),
        // Hsu (1978): stable interior point of type II is global (N* = 50, K_H = 220).
        (
            "stable",
            rm(300.0, 0.3),
            ("K", 150.0),
            ("m", 0.3),
            OutcomeClass::Coexistence,
            Rule::GlobalInteriorStability,
        ),
        // Poincaré–Bendixson with a repelling boundary.
        (
            "cycle",
            rm(300.0, 0.3),
            ("K", 400.0),
            ("m", 0.3),
            OutcomeClass::LimitCycle,
            Rule::PoincareBendixson,
        ),
        // One species: flows between equilibria.
        (
            "logistic persists",
            logistic(&[("b", 0.5), ("d", 0.1), ("K", 500.0)]),
            ("K", 500.0),
            ("b", 0.5),
            OutcomeClass::OnlySpecies1,
            Rule::OneSpeciesFlow,
        ),
        (
            "exponential declines",
            exponential(&[("b", 0.1), ("d", 0.3)]),
            ("b", 0.1),
            ("d", 0.3),
            OutcomeClass::Extinct,
            Rule::OneSpeciesFlow,
        ),
        (
            "exponential grows",
            exponential(&[("b", 0.5), ("d", 0.3)]),
            ("b", 0.5),
            ("d", 0.3),
            OutcomeClass::Unbounded,
            Rule::OneSpeciesFlow,
        ),
        (
            "immigration holds",
            exponential(&[("b", 0.1), ("d", 0.3), ("immigration", 2.0)]),
            ("b", 0.1),
            ("d", 0.3),
            OutcomeClass::OnlySpecies1,
            Rule::OneSpeciesFlow,
        ),
        // Allee effect: extinction below A, K above it.
        (
            "allee",
            logistic(&[("b", 0.5), ("d", 0.1), ("K", 500.0), ("A", 40.0)]),
            ("K", 500.0),
            ("A", 40.0),
            OutcomeClass::FounderControl,
            Rule::AlternativeStableStates,
        ),
    ];
    for (name, p, x, y, class, rule) in cases {
        let (decided, simulated) = theory_and_simulation(&p, x, y);
        assert_eq!(
            (decided.class, decided.rule),
            (class, rule),
            "{name}: {decided:?}"
        );
        if name == "allee" {
            // One start cannot show both outcomes of one species; the
            // simulation of the scenario's start (30 < A) dies out.
            assert_eq!(simulated, OutcomeClass::Extinct, "{name}");
        } else {
            assert_eq!(simulated, class, "{name}: simulation disagrees");
        }
    }
}

/// A hover on a cycle cell decided by theory also gets the cycle's range,
/// which surrounds the unstable equilibrium (N* = 50 for m = 0.3;
/// Rosenzweig 1971).
#[test]
fn cell_detail_adds_the_cycle_range_to_a_theory_cell() {
    let p = rm(300.0, 0.3);
    let request = MapRequest {
        x: AxisSpec {
            param: "K".into(),
            from: 100.0,
            to: 400.0,
            steps: 4,
            spacing: Spacing::Linear,
        },
        y: AxisSpec {
            param: "m".into(),
            from: 0.3,
            to: 0.3,
            steps: 1,
            spacing: Spacing::Linear,
        },
        options: theory(),
        shard: None,
    };
    let plan = request.plan(&p).unwrap();
    let cell = plan.cell_detail(400.0, 0.3);
    assert_eq!(
        (cell.class, cell.rule),
        (OutcomeClass::LimitCycle, Rule::PoincareBendixson)
    );
    let cycle = cell.cycle.expect("a simulated cycle");
    assert!(cycle.min[0] < 50.0 && 50.0 < cycle.max[0], "{cycle:?}");
    assert!(cycle.period.unwrap() > 0.0);
    assert_eq!(
        plan.cell(400.0, 0.3).cycle,
        None,
        "the map itself does not simulate it"
    );
}

/// Cells theory cannot decide are simulated, and say why.
#[test]
fn undecided_cells_are_simulated_with_a_reason() {
    // Beddington–DeAngelis: no closed-form interior point, no global-stability guarantee.
    let mut s = common::scenario(
        "rosenzweig_macarthur",
        &[
            ("r", 1.0),
            ("K", 300.0),
            ("a", 0.02),
            ("h", 0.5),
            ("e", 0.4),
            ("m", 0.3),
            ("c", 0.05),
        ],
        &[50.0, 5.0],
        100.0,
        0.5,
    );
    s.functional_response = Some("beddington_deangelis".into());
    let p = s.validate().unwrap();
    let map = check(
        &p,
        ("K", 300.0, 300.0, 1),
        ("c", 0.05, 0.05, 1),
        theory(),
        None,
    );
    let cell = &map.rows[0].cells[0];
    assert_eq!(cell.rule, Rule::Simulation);
    assert!(
        cell.reason
            .as_deref()
            .is_some_and(|r| r.contains("cycle is not excluded") || r.contains("conditions")),
        "{cell:?}"
    );
    // Sanity: the long-run analysis of the same scenario agrees.
    let analysis = tussock_core::analysis::analyze(&p);
    let expected = match analysis.long_run.kind {
        tussock_core::analysis::LongRunKind::Cycle => OutcomeClass::LimitCycle,
        _ => OutcomeClass::Coexistence,
    };
    assert_eq!(cell.class, expected, "{cell:?}");
    // Parameters the model refuses: Allee threshold with b ≤ d.
    let p = problem(
        "logistic",
        &[("b", 0.5), ("d", 0.1), ("K", 500.0), ("A", 40.0)],
        &[100.0],
        100.0,
        1.0,
    );
    let map = check(
        &p,
        ("b", 0.05, 0.5, 4),
        ("K", 500.0, 500.0, 1),
        theory(),
        None,
    );
    let first = &map.rows[0].cells[0];
    assert_eq!(
        (first.class, first.rule),
        (OutcomeClass::Unresolved, Rule::Refused)
    );
    assert!(
        first.reason.as_deref().unwrap().starts_with("params.A:"),
        "{first:?}"
    );
}

#[test]
fn shards_together_are_the_whole_map() {
    let p = competition(500.0, 500.0, 0.8, 1.25);
    let x = ("alpha12", 0.1, 2.0, 9);
    let y = ("alpha21", 0.1, 2.0, 10);
    let whole = check(&p, x, y, theory(), None);
    let parts: Vec<OutcomeMap> = (1..=3)
        .map(|i| check(&p, x, y, theory(), Some(Shard { index: i, count: 3 })))
        .collect();
    assert!(parts.iter().all(|s| !s.partial && s.rows.len() < 10));
    let merged = OutcomeMap::merge(parts).unwrap();
    assert_eq!(merged, whole);
    // A shard missing: partial. Twice the same shard: refused.
    let two: Vec<OutcomeMap> = (1..=2)
        .map(|i| check(&p, x, y, theory(), Some(Shard { index: i, count: 3 })))
        .collect();
    assert!(OutcomeMap::merge(two).unwrap().partial);
    let again = check(&p, x, y, theory(), Some(Shard { index: 1, count: 3 }));
    assert!(OutcomeMap::merge(vec![again.clone(), again]).is_err());
}

#[test]
fn stopping_keeps_whole_rows_and_marks_the_map_partial() {
    let p = rm(300.0, 0.3);
    let request = MapRequest {
        x: AxisSpec {
            param: "K".into(),
            from: 100.0,
            to: 500.0,
            steps: 7,
            spacing: Spacing::Linear,
        },
        y: AxisSpec {
            param: "m".into(),
            from: 0.1,
            to: 0.5,
            steps: 6,
            spacing: Spacing::Linear,
        },
        options: theory(),
        shard: None,
    };
    let mut seen = Vec::new();
    let map = sweep_map(&p, &request, &mut |done, total| {
        seen.push((done, total));
        done < 14
    })
    .unwrap();
    assert_eq!(seen, [(7, 42), (14, 42)], "no work after the stop");
    assert!(map.partial);
    assert_eq!(map.rows.len(), 2);
    let bad = MapRequest {
        shard: Some(Shard { index: 4, count: 3 }),
        ..request.clone()
    };
    assert!(sweep_map(&p, &bad, &mut |_, _| true)
        .unwrap_err()
        .to_string()
        .starts_with("shard:"));
    let same = MapRequest {
        y: request.x.clone(),
        ..request
    };
    assert!(sweep_map(&p, &same, &mut |_, _| true)
        .unwrap_err()
        .to_string()
        .starts_with("y.param:"));
}
