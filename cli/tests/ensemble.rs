//! `tussock ensemble` and `tussock founders` end to end: the real binary
//! on files. The numbers themselves are checked against published results
//! in core/tests/stochastic.rs and against scipy in
//! tests/python/test_ensemble.py; here: the JSON shape the issue asks for,
//! independence from the thread count, the table, and one-line errors.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn example(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../examples")
        .join(name)
}

fn tussock(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_tussock"))
        .args(args)
        .output()
        .expect("run tussock")
}

/// Run `tussock SUBCOMMAND FILE ARGS…` (ARGS as one string) and check the
/// outcome: Ok(part of stdout) or Err(part of the one-line error).
fn check(subcommand: &str, file: &str, args: &str, expect: Result<&str, &str>) -> String {
    let path = example(file);
    let mut all = vec![subcommand, path.to_str().unwrap()];
    all.extend(args.split_whitespace());
    let out = tussock(&all);
    let stdout = String::from_utf8_lossy(&out.stdout).into_owned();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    match expect {
        Ok(part) => {
            assert!(out.status.success(), "{args}: {stderr}");
            assert!(stdout.contains(part), "{args}: {part:?} not in {stdout}");
        }
        Err(part) => {
            assert!(!out.status.success(), "{args}: accepted");
            assert!(stdout.is_empty(), "{args}: wrote {stdout}");
            assert!(stderr.contains(part), "{args}: {part:?} not in {stderr}");
            assert!(!stderr.contains("panicked"), "{stderr}");
        }
    }
    stdout
}

#[test]
fn ensemble_json_has_the_shape_of_issue_8() {
    let text = check(
        "ensemble",
        "reserve-reintroduction.json",
        "--runs 40 --seed 3 --json --quasi-extinction none,5",
        Ok("\"runs\":40"),
    );
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    assert_eq!(v["runs"], 40);
    let extinction = v["extinction"].as_array().unwrap();
    assert_eq!(extinction.len(), 2);
    assert_eq!(extinction[1]["species"], "reintroduced marten");
    let p = extinction[1]["probability"].as_f64().unwrap();
    let ci: Vec<f64> = serde_json::from_value(extinction[1]["ci"].clone()).unwrap();
    assert!(ci[0] <= p && p <= ci[1]);
    assert_eq!(v["quasi_extinction"].as_array().unwrap().len(), 1);
    assert_eq!(v["quasi_extinction"][0]["level"], 5.0);
    assert!(v["time_to_extinction"]["species"].is_array());
    assert_eq!(v["kept_runs"].as_array().unwrap().len(), 5);
    let times = v["times"].as_array().unwrap().len();
    assert_eq!(v["fan"][0]["median"].as_array().unwrap().len(), times);
    assert_eq!(
        v["deterministic"]["states"][0].as_array().unwrap().len(),
        times
    );
}

#[test]
fn the_thread_count_does_not_change_the_result() {
    for method in ["exact", "tau-leap", "auto"] {
        let args = |threads: u32| {
            format!("--runs 30 --seed 9 --json --method {method} --noise 0.2 --autocorrelation 0.3 --threads {threads}")
        };
        let one = check("ensemble", "greenhouse-mites.json", &args(1), Ok("runs"));
        let two = check("ensemble", "greenhouse-mites.json", &args(2), Ok("runs"));
        assert!(one == two, "{method}: 1 and 2 threads differ");
        let other_seed = check(
            "ensemble",
            "greenhouse-mites.json",
            &args(2).replace("--seed 9", "--seed 10"),
            Ok("runs"),
        );
        assert!(one != other_seed, "{method}: the seed changes nothing");
    }
}

#[test]
fn the_table_reads_as_a_report() {
    check(
        "ensemble",
        "reserve-reintroduction.json",
        "--runs 30 --seed 1",
        Ok("reintroduced marten"),
    );
    check(
        "founders",
        "reserve-reintroduction.json",
        "--founders 5,10 --releases 1,2 --horizon 5 --runs 30 --seed 1",
        Ok("established"),
    );
}

#[test]
fn founders_json_has_one_row_per_combination() {
    let text = check(
        "founders",
        "reserve-reintroduction.json",
        "--founders 4,12 --releases 1,3 --every 0.5 --horizon 5 --runs 25 --seed 2 --json",
        Ok("rows"),
    );
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    let rows = v["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 4);
    assert_eq!(rows[1]["release_sizes"], serde_json::json!([2, 1, 1]));
    assert_eq!(rows[1]["release_times"], serde_json::json!([0.0, 0.5, 1.0]));
    assert_eq!(rows[0]["other"]["species"], "ground-nesting rodent");
}

#[test]
fn bad_requests_get_one_line_errors() {
    let f = "reserve-reintroduction.json";
    for (sub, args, part) in [
        ("ensemble", "--runs 0", "runs: must be between 1"),
        (
            "ensemble",
            "--autocorrelation 0.5",
            "--autocorrelation needs --noise",
        ),
        ("ensemble", "--noise 9", "noise.sd: must be between 0 and 3"),
        (
            "ensemble",
            "--noise 0.1 --autocorrelation 1",
            "noise.autocorrelation",
        ),
        ("ensemble", "--pest-day 5", "economic_threshold"),
        ("ensemble", "--quasi-extinction x", "not a number"),
        ("ensemble", "--method fast", "invalid value 'fast'"),
        (
            "founders",
            "--founders 10 --species 4",
            "species: no species 4",
        ),
        (
            "founders",
            "--founders 10 --releases 3 --every 30",
            "every: 3 releases",
        ),
    ] {
        check(sub, f, args, Err(part));
    }
}
