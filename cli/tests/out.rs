//! `--out DIR` end to end: the real binary writes the tables as CSV and the
//! figures as SVG. Row counts are checked against the scenario (t_end /
//! output_step + 1 output times) or against the same run's JSON on stdout;
//! figures must parse as XML and name the species they show.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn example(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../examples")
        .join(name)
}

/// A fresh, empty directory for one test: tests run in parallel and must
/// not share files.
fn fresh(test: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("tussock-out-{}-{test}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// `tussock ARGS…` (ARGS as one string, split on spaces) with `--out DIR`.
fn tussock(args: &str, out: &Path) -> Output {
    let out = Command::new(env!("CARGO_BIN_EXE_tussock"))
        .args(args.split_whitespace())
        .arg("--out")
        .arg(out)
        .output()
        .expect("run tussock");
    assert!(
        out.status.success(),
        "{args}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

/// One CSV line split into fields (RFC 4180 quotes).
fn fields(line: &str) -> Vec<String> {
    let (mut cells, mut cell, mut quoted) = (Vec::new(), String::new(), false);
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match (c, quoted) {
            ('"', true) if chars.peek() == Some(&'"') => {
                cell.push('"');
                chars.next();
            }
            ('"', _) => quoted = !quoted,
            (',', false) => cells.push(std::mem::take(&mut cell)),
            _ => cell.push(c),
        }
    }
    cells.push(cell);
    cells
}

/// A CSV file as (header, rows); every row has the header's width.
fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    let mut lines = text.lines();
    let header = fields(lines.next().expect("a header"));
    let rows: Vec<Vec<String>> = lines.map(fields).collect();
    for row in &rows {
        assert_eq!(row.len(), header.len(), "{}: {row:?}", path.display());
    }
    (header, rows)
}

/// Check that an SVG file parses as XML and that its text mentions each
/// of `names`.
fn check_svg(path: &Path, names: &[&str]) {
    let text = std::fs::read_to_string(path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    let doc = roxmltree::Document::parse(&text)
        .unwrap_or_else(|e| panic!("{} is not XML: {e}", path.display()));
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let words: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .collect();
    for name in names {
        assert!(
            words.iter().any(|w| w.contains(name)),
            "{name:?} not in {}: {words:?}",
            path.display()
        );
    }
}

/// Exactly the files named, each reported once on stderr.
fn check_files(dir: &Path, out: &Output, names: &[&str]) {
    let mut found: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    found.sort();
    let mut wanted: Vec<String> = names.iter().map(|s| s.to_string()).collect();
    wanted.sort();
    assert_eq!(found, wanted);
    let stderr = String::from_utf8_lossy(&out.stderr);
    for name in names {
        let line = format!("tussock: wrote {}", dir.join(name).display());
        assert_eq!(
            stderr.lines().filter(|l| *l == line).count(),
            1,
            "{line:?} not in {stderr}"
        );
    }
}

fn scenario_number(file: &Path, key: &str) -> f64 {
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(file).unwrap()).unwrap();
    v[key].as_f64().unwrap()
}

#[test]
fn run_writes_the_trajectory_and_both_workbench_figures() {
    let file = example("greenhouse-mites.json");
    let dir = fresh("run").join("made/by/run");
    let out = tussock(&format!("run {}", file.display()), &dir);
    check_files(
        &dir,
        &out,
        &["trajectory.csv", "time-series.svg", "phase-plane.svg"],
    );
    let (header, rows) = read_csv(&dir.join("trajectory.csv"));
    assert_eq!(header, ["t", "spider mite", "predatory mite"]);
    let steps = scenario_number(&file, "t_end") / scenario_number(&file, "output_step");
    assert_eq!(rows.len(), steps.round() as usize + 1);
    // The file holds what stdout holds: the CSV output is unchanged.
    let written = std::fs::read_to_string(dir.join("trajectory.csv")).unwrap();
    assert_eq!(written, String::from_utf8_lossy(&out.stdout));
    for figure in ["time-series.svg", "phase-plane.svg"] {
        check_svg(&dir.join(figure), &["spider mite", "predatory mite"]);
    }
}

#[test]
fn one_species_gets_no_phase_plane() {
    let dir = fresh("one-species");
    let file = dir.join("logistic.json");
    std::fs::write(
        &file,
        r#"{"model": "logistic", "params": {"b": 0.5, "d": 0.1, "K": 80}, "initial": [3], "t_end": 12, "output_step": 0.5, "species": ["moss"]}"#,
    )
    .unwrap();
    let figures = dir.join("figures");
    let out = tussock(&format!("run --json {}", file.display()), &figures);
    check_files(&figures, &out, &["trajectory.csv", "time-series.svg"]);
    let (header, rows) = read_csv(&figures.join("trajectory.csv"));
    assert_eq!(header, ["t", "moss"]);
    assert_eq!(rows.len(), 12 * 2 + 1);
    check_svg(&figures.join("time-series.svg"), &["moss"]);
    // stdout is still the JSON asked for.
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["times"].as_array().unwrap().len(), rows.len());
}

#[test]
fn line_sweep_writes_its_table_and_a_diagram_per_species() {
    let dir = fresh("line");
    let file = example("microcosm-competition.json");
    let out = tussock(
        &format!(
            "sweep {} --param K1 --from 100 --to 900 --steps 9 --threads 1 --json",
            file.display()
        ),
        &dir,
    );
    check_files(
        &dir,
        &out,
        &[
            "one-parameter-sweep.csv",
            "bifurcation-green-alga.svg",
            "bifurcation-diatom.svg",
        ],
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let equilibria: usize = v["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["equilibria"].as_array().unwrap().len())
        .sum();
    let (header, rows) = read_csv(&dir.join("one-parameter-sweep.csv"));
    assert_eq!(header[..4], ["K1", "branch", "stability", "feasible"]);
    assert!(header.contains(&"diatom long-run max".to_string()));
    assert_eq!(rows.len(), equilibria);
    check_svg(
        &dir.join("bifurcation-green-alga.svg"),
        &["green alga", "K1"],
    );
    check_svg(&dir.join("bifurcation-diatom.svg"), &["diatom", "K1"]);
}

#[test]
fn outcome_map_writes_a_cell_per_row_and_the_map() {
    let dir = fresh("map");
    let file = example("microcosm-competition.json");
    let out = tussock(
        &format!(
            "sweep {} --param K1 --from 100 --to 900 --steps 6 --param2 K2 --from2 100 --to2 900 --steps2 4 --threads 1",
            file.display()
        ),
        &dir,
    );
    check_files(&dir, &out, &["outcome-map.csv", "outcome-map.svg"]);
    let (header, rows) = read_csv(&dir.join("outcome-map.csv"));
    assert_eq!(header, ["K1", "K2", "outcome", "class"]);
    assert_eq!(rows.len(), 6 * 4);
    // K1 large and K2 small: the alga wins (Gause's criteria).
    let near = |cell: &str, v: f64| (cell.parse::<f64>().unwrap() - v).abs() < 1e-9;
    let corner = rows
        .iter()
        .find(|r| near(&r[0], 900.0) && near(&r[1], 100.0))
        .unwrap();
    assert_eq!(corner[2], "only green alga");
    check_svg(&dir.join("outcome-map.svg"), &["K1", "K2"]);
}

#[test]
fn ensemble_writes_the_summary_fans_and_extinction_chart() {
    let dir = fresh("ensemble");
    let file = example("reserve-reintroduction.json");
    let out = tussock(
        &format!(
            "ensemble {} --runs 30 --seed 4 --intervals 40 --threads 1 --json",
            file.display()
        ),
        &dir,
    );
    let (prey, predator) = ("ground-nesting rodent", "reintroduced marten");
    check_files(
        &dir,
        &out,
        &[
            "ensemble-summary.csv",
            "fan-ground-nesting-rodent.svg",
            "fan-reintroduced-marten.svg",
            "extinction.svg",
        ],
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let (header, rows) = read_csv(&dir.join("ensemble-summary.csv"));
    assert_eq!(header.len(), 1 + 2 * 6 + 2);
    assert_eq!(header[0], "t");
    assert_eq!(header[3], format!("{prey} median"));
    assert_eq!(header[14], format!("{predator} extinct by t"));
    assert_eq!(rows.len(), v["times"].as_array().unwrap().len());
    check_svg(&dir.join("fan-ground-nesting-rodent.svg"), &[prey]);
    check_svg(&dir.join("fan-reintroduced-marten.svg"), &[predator]);
    check_svg(&dir.join("extinction.svg"), &[prey, predator]);
}

#[test]
fn founders_and_plan_write_their_tables_and_figures() {
    let dir = fresh("founders");
    let file = example("reserve-reintroduction.json");
    let out = tussock(
        &format!(
            "founders {} --runs 10 --founders 4,8,16 --releases 1,2 --horizon 5 --threads 1",
            file.display()
        ),
        &dir,
    );
    check_files(&dir, &out, &["founders.csv", "establishment.svg"]);
    let (header, rows) = read_csv(&dir.join("founders.csv"));
    assert_eq!(header[..4], ["founders", "releases", "runs", "established"]);
    assert_eq!(rows.len(), 3 * 2);
    check_svg(&dir.join("establishment.svg"), &["reintroduced marten"]);

    let dir = fresh("plan");
    let file = example("greenhouse-plan.json");
    let out = tussock(
        &format!(
            "plan {} --goal pest-below --by 28 --until 90 --ratio --max 1 --times 7 --counts 1,2 --curve-points 8 --json",
            file.display()
        ),
        &dir,
    );
    check_files(
        &dir,
        &out,
        &[
            "release-plan.csv",
            "release-response.svg",
            "release-timing.svg",
        ],
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let points: usize = v["plan"]["rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["curve"].as_array().unwrap().len())
        .sum();
    let (header, rows) = read_csv(&dir.join("release-plan.csv"));
    assert_eq!(header[0], "first_release");
    assert_eq!(rows.len(), points);
    check_svg(&dir.join("release-response.svg"), &["predatory mite"]);
    check_svg(&dir.join("release-timing.svg"), &["predatory mite"]);
}

#[test]
fn fit_writes_estimates_the_fitted_model_against_counts_and_residuals() {
    let dir = fresh("fit");
    let scenario = dir.join("logistic.json");
    std::fs::write(
        &scenario,
        r#"{"model": "logistic", "params": {"b": 0.4, "d": 0, "K": 300}, "initial": [10], "t_end": 20, "output_step": 0.5, "species": ["duckweed"]}"#,
    )
    .unwrap();
    // Counts of the logistic N(t) = 500·10·e^{0.5t}/(500 + 10(e^{0.5t} − 1)).
    let mut counts = String::from("day,duckweed\n");
    for t in 0..=16 {
        let g = (0.5 * t as f64).exp();
        counts += &format!(
            "{t},{}\n",
            (5000.0 * g / (500.0 + 10.0 * (g - 1.0))).round()
        );
    }
    let data = dir.join("counts.csv");
    std::fs::write(&data, counts).unwrap();
    let figures = dir.join("figures");
    let out = tussock(
        &format!(
            "fit {} {} --estimate b,K --no-profiles",
            scenario.display(),
            data.display()
        ),
        &figures,
    );
    check_files(
        &figures,
        &out,
        &[
            "fit-estimates.csv",
            "fitted-trajectory.csv",
            "fitted-vs-counts.svg",
            "fit-residuals.svg",
        ],
    );
    let (header, rows) = read_csv(&figures.join("fit-estimates.csv"));
    assert_eq!(header[..3], ["name", "label", "estimate"]);
    let names: Vec<&str> = rows.iter().map(|r| r[0].as_str()).collect();
    assert_eq!(names, ["b", "K"]);
    let k: f64 = rows[1][2].parse().unwrap();
    assert!((k - 500.0).abs() < 10.0, "K = {k}");
    // The fitted model's trajectory: K is reached by the end.
    let (header, rows) = read_csv(&figures.join("fitted-trajectory.csv"));
    assert_eq!(header, ["t", "duckweed"]);
    assert_eq!(rows.len(), 20 * 2 + 1);
    let last: f64 = rows.last().unwrap()[1].parse().unwrap();
    assert!((last - k).abs() < 0.05 * k, "{last} vs K {k}");
    check_svg(
        &figures.join("fitted-vs-counts.svg"),
        &["duckweed", "duckweed counted"],
    );
    check_svg(&figures.join("fit-residuals.svg"), &["duckweed"]);
}

#[test]
fn an_out_path_that_cannot_be_made_is_a_one_line_error() {
    let dir = fresh("bad");
    let file = dir.join("a-file");
    std::fs::write(&file, "not a directory").unwrap();
    let bad = file.join("figures");
    let mites = example("greenhouse-mites.json");
    let reserve = example("reserve-reintroduction.json");
    let cases = [
        format!("run {}", mites.display()),
        format!(
            "sweep {} --param K --from 1 --to 2 --steps 2",
            mites.display()
        ),
        format!("ensemble {} --runs 2", reserve.display()),
        format!("founders {} --runs 2 --founders 4", reserve.display()),
        format!("plan {} --goal persist --max 5", reserve.display()),
    ];
    for args in &cases {
        let out = Command::new(env!("CARGO_BIN_EXE_tussock"))
            .args(args.split_whitespace())
            .arg("--out")
            .arg(&bad)
            .output()
            .expect("run tussock");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(!out.status.success(), "{args}: accepted");
        assert!(out.stdout.is_empty(), "{args}: wrote output");
        assert_eq!(stderr.lines().count(), 1, "{args}: {stderr}");
        assert!(
            stderr.starts_with(&format!("tussock: --out: cannot create {}", bad.display())),
            "{args}: {stderr}"
        );
        assert!(!stderr.contains("panicked"), "{args}: {stderr}");
    }
    // A regular file is not a directory either.
    let out = Command::new(env!("CARGO_BIN_EXE_tussock"))
        .args(["run", mites.to_str().unwrap(), "--out"])
        .arg(&file)
        .output()
        .expect("run tussock");
    assert!(!out.status.success());
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot create"));
    assert_eq!(std::fs::read_to_string(&file).unwrap(), "not a directory");
}
