//! `tussock sweep` end to end: the real binary on scenario files.
//!
//! Reference values: Rosenzweig–MacArthur's Hopf threshold
//! K_H = (e + m h)/(a h (e − m h)) (Rosenzweig 1971; e.g. Kot 2001,
//! Elements of Mathematical Ecology, ch. 9) and competition's invasion
//! inequalities (Gause 1934; e.g. Gotelli 2008, A Primer of Ecology, ch. 8).

use std::path::PathBuf;
use std::process::{Command, Output};

/// A scenario file in a fresh directory.
fn scenario(name: &str, json: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("tussock-sweep-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    std::fs::write(&path, json).unwrap();
    path
}

const RM: &str = r#"{"format": 1, "model": "rosenzweig_macarthur", "params": {"r": 1, "K": 300, "a": 0.02, "h": 0.5, "e": 0.4, "m": 0.3}, "initial": [100, 10], "t_end": 100}"#;
const COMPETITION: &str = r#"{"format": 1, "model": "competition", "params": {"r1": 0.8, "r2": 0.5, "K1": 500, "K2": 500, "alpha12": 0.8, "alpha21": 1.2}, "initial": [20, 20], "t_end": 50}"#;

/// The one place the tests run the binary: `tussock sweep FILE ARGS…`.
fn check(file: &PathBuf, args: &str) -> Output {
    Command::new(env!("CARGO_BIN_EXE_tussock"))
        .arg("sweep")
        .arg(file)
        .args(args.split_whitespace())
        .output()
        .expect("run tussock")
}

fn json(out: &Output) -> serde_json::Value {
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("JSON on stdout")
}

#[test]
fn line_sweep_json_has_points_long_runs_and_the_hopf_point() {
    let file = scenario("rm.json", RM);
    let v = json(&check(
        &file,
        "--param K --from 100 --to 500 --steps 41 --horizon 400 --json",
    ));
    let points = v["points"].as_array().unwrap();
    assert_eq!(points.len(), 41);
    for p in points {
        assert!(p["value"].is_f64());
        assert!(!p["equilibria"].as_array().unwrap().is_empty());
        let e = &p["equilibria"][0];
        assert!(
            e["state"].is_array()
                && e["eigenvalues"].is_array()
                && e["stability"].is_string()
                && e["branch"].is_u64()
        );
        assert!(p["long_run"]["kind"].is_string());
        assert_eq!(p["long_run"]["min"].as_array().unwrap().len(), 2);
        assert_eq!(p["long_run"]["max"].as_array().unwrap().len(), 2);
    }
    let hopf: Vec<f64> = v["bifurcations"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|b| b["kind"] == "hopf")
        .map(|b| b["value"].as_f64().unwrap())
        .collect();
    let k_h = (0.4 + 0.3 * 0.5) / (0.02 * 0.5 * (0.4 - 0.3 * 0.5));
    assert_eq!(hopf.len(), 1, "{}", v["bifurcations"]);
    assert!((hopf[0] - k_h).abs() <= 0.005 * k_h, "{} vs {k_h}", hopf[0]);
    assert_eq!(v["partial"], false);
}

#[test]
fn results_do_not_depend_on_the_number_of_threads() {
    let file = scenario("rm-threads.json", RM);
    let args = "--param K --from 40 --to 600 --steps 8 --param2 m --from2 0.1 --to2 0.5 --steps2 5 --horizon 300 --simulate-all --json";
    let one = check(&file, &format!("{args} --threads 1"));
    let two = check(&file, &format!("{args} --threads 2"));
    assert!(one.status.success() && two.status.success());
    assert_eq!(one.stdout, two.stdout);
    let line = "--param K --from 40 --to 600 --steps 15 --horizon 300 --json";
    assert_eq!(
        check(&file, &format!("{line} --threads 1")).stdout,
        check(&file, &format!("{line} --threads 3")).stdout
    );
}

#[test]
fn map_json_classes_follow_the_invasion_inequalities() {
    let file = scenario("competition.json", COMPETITION);
    let v = json(&check(&file, "--param alpha12 --from 0.1 --to 2 --steps 20 --param2 alpha21 --from2 0.1 --to2 2 --steps2 20 --json"));
    assert_eq!(v["x"]["param"], "alpha12");
    assert_eq!(v["y"]["values"].as_array().unwrap().len(), 20);
    let rows = v["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 20);
    let mut checked = 0;
    for row in rows {
        for cell in row["cells"].as_array().unwrap() {
            let (a12, a21) = (cell["x"].as_f64().unwrap(), cell["y"].as_f64().unwrap());
            // Cells clear of the lines (more than one grid step, 0.1).
            let (m1, m2) = (500.0 - a12 * 500.0, 500.0 - a21 * 500.0);
            if m1.abs() < 0.1 * 500.0 || m2.abs() < 0.1 * 500.0 {
                continue;
            }
            let expected = match (m1 > 0.0, m2 > 0.0) {
                (true, true) => "coexistence",
                (true, false) => "only_species_1",
                (false, true) => "only_species_2",
                (false, false) => "founder_control",
            };
            assert_eq!(cell["class"], expected, "{cell}");
            checked += 1;
        }
    }
    assert!(checked > 200, "{checked}");
    let keys: Vec<&str> = v["boundaries"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| b["key"].as_str().unwrap())
        .collect();
    assert_eq!(keys, ["species_1_invades", "species_2_invades"]);
}

#[test]
fn shards_merge_into_the_whole_map() {
    let file = scenario("competition-shards.json", COMPETITION);
    let args = "--param K1 --from 100 --to 900 --steps 7 --param2 K2 --from2 100 --to2 900 --steps2 8 --json";
    let whole = json(&check(&file, args));
    let mut parts = Vec::new();
    for i in 1..=3 {
        let out = check(&file, &format!("{args} --shard {i}/3"));
        let part = json(&out);
        assert!(part["rows"]
            .as_array()
            .unwrap()
            .iter()
            .all(|r| r["index"].as_u64().unwrap() % 3 == i - 1));
        let path = file.with_file_name(format!("shard-{i}.json"));
        std::fs::write(&path, &out.stdout).unwrap();
        parts.push(path);
    }
    let merged = Command::new(env!("CARGO_BIN_EXE_tussock"))
        .args(["sweep", "--json", "--merge"])
        .args(&parts)
        .output()
        .unwrap();
    assert_eq!(json(&merged), whole);
}

#[test]
fn csv_has_one_row_per_record() {
    let file = scenario("competition-csv.json", COMPETITION);
    let out = check(
        &file,
        "--param K1 --from 100 --to 900 --steps 3 --param2 K2 --from2 100 --to2 900 --steps2 2",
    );
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(
        lines[0],
        "K1,K2,class,rule,attractors,cycle_min,cycle_max,reason"
    );
    assert_eq!(lines.len(), 1 + 6);
    let rm = scenario("rm-csv.json", RM);
    let out = check(&rm, "--param K --from 100 --to 500 --steps 5 --horizon 300");
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.starts_with("K,record,branch,label,prey,predator,prey max,predator max\n"),
        "{text}"
    );
    assert_eq!(text.lines().filter(|l| l.contains(",long_run,")).count(), 5);
    assert_eq!(text.lines().filter(|l| l.contains(",hopf,")).count(), 1);
}

#[test]
fn bad_requests_get_one_line_errors_naming_the_flag() {
    let file = scenario("rm-bad.json", RM);
    let cases = [
        (
            "--param q --from 1 --to 2",
            "--param: rosenzweig_macarthur has no parameter \"q\"",
        ),
        (
            "--param m --from 0 --to 2 --log",
            "--from: log spacing needs positive ends",
        ),
        (
            "--param K --from 0 --to 2",
            "--from: K must be > 0 and ≤ 1e12, got 0",
        ),
        (
            "--param K --from 10 --to 20 --steps 0",
            "--steps: must be 1 to",
        ),
        (
            "--param K --from 10 --to 20 --param2 m --from2 0.1 --to2 0.2 --steps2 301",
            "--steps2: must be 1 to 300",
        ),
        (
            "--param K --from 10 --to 20 --param2 m --from2 0.1 --to2 0.2 --shard 4/3",
            "shard: must be i/n",
        ),
        (
            "--param K --from 10 --to 20 --shard 1/2",
            "--shard splits a map's rows",
        ),
        ("--param K --from 10", "give --from and --to for K"),
        (
            "--param K --from 10 --to 20 --param2 m --from2 -1 --to2 0.2",
            "--from2: m must be 0 to 100, got -1",
        ),
    ];
    for (args, expected) in cases {
        let out = check(&file, args);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(!out.status.success(), "{args}");
        assert_eq!(stderr.lines().count(), 1, "{args}: {stderr}");
        assert!(
            stderr.contains(expected),
            "{args}: expected {expected:?}, got {stderr}"
        );
        assert!(!stderr.contains("panicked"));
    }
}
