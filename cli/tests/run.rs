//! `tussock run` end to end: the real binary on files.

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

/// Write `contents` to a fresh file and run `tussock run` on it; returns
/// (exit success, stdout, stderr).
fn run_on(contents: &[u8]) -> (bool, String, String) {
    let dir = std::env::temp_dir().join(format!("tussock-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    // One file per call: tests run in parallel and must not share files.
    static NEXT: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);
    let n = NEXT.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let file = dir.join(format!("s{n}.json"));
    std::fs::write(&file, contents).unwrap();
    let out = tussock(&["run", file.to_str().unwrap()]);
    let _ = std::fs::remove_file(&file);
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn run_writes_csv_with_header_and_one_row_per_output_time() {
    let out = tussock(&["run", example("greenhouse-mites.json").to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "t,spider mite,predatory mite");
    // t_end 120 with output_step 0.25: times 0, 0.25, …, 120.
    assert_eq!(lines.len(), 1 + 481);
    assert_eq!(lines[1], "0,20,1");
    let last: Vec<f64> = lines[481].split(',').map(|v| v.parse().unwrap()).collect();
    assert_eq!(last[0], 120.0);
    assert!(last[1] > 0.0 && last[2] > 0.0);
}

#[test]
fn run_json_reports_stop_reason_and_step_statistics() {
    let out = tussock(&[
        "run",
        "--json",
        example("greenhouse-mites.json").to_str().unwrap(),
    ]);
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["stop"]["kind"], "finished");
    assert_eq!(v["times"].as_array().unwrap().len(), 481);
    assert!(v["stats"]["accepted_steps"].as_u64().unwrap() > 10);
}

#[test]
fn bad_files_get_one_line_errors_and_a_failing_exit() {
    let cases: &[(&[u8], &str)] = &[
        (b"", "not a valid scenario file"),
        (b"{", "not a valid scenario file"),
        (b"\xff\xfe\x00garbage", "not a text file"),
        (b"[1, 2, 3]", "not a valid scenario file"),
        (br#"{"model": "nope", "initial": [1], "t_end": 1}"#, "unknown model \"nope\""),
        (br#"{"model": "lotka_volterra", "params": {"r": 0.3, "a": 0.02, "e": 0.25, "m": 0.2, "K": -5}, "initial": [1, 1], "t_end": 10}"#, "params.K: must be > 0, got -5"),
        (br#"{"model": "lotka_volterra", "params": {"r": 0.3, "a": 0.02, "e": 0.25, "m": 0.2, "q": 1}, "initial": [1, 1], "t_end": 10}"#, "params.q: not a parameter"),
        (br#"{"model": "lotka_volterra", "params": {"r": 0.3, "a": 0.02, "e": 0.25, "m": 0.2}, "initial": [1], "t_end": 10}"#, "initial: lotka_volterra needs 2 initial densities"),
        (br#"{"model": "lotka_volterra", "params": {"r": 0.3, "a": 0.02, "e": 0.25, "m": 0.2}, "initial": [1, 1], "t_end": -1}"#, "t_end: must be a positive number"),
        (br#"{"model": "lotka_volterra", "params": {"r": 0.3, "a": 0.02, "e": 0.25, "m": 0.2}, "initial": [1, 1], "t_end": 10, "colour": 3}"#, "unknown field `colour`"),
        (br#"{"format": 99, "model": "lotka_volterra", "initial": [1, 1], "t_end": 10}"#, "newer than this build reads"),
    ];
    for (contents, expected) in cases {
        let (ok, stdout, stderr) = run_on(contents);
        let shown = String::from_utf8_lossy(contents);
        assert!(!ok, "accepted {shown}");
        assert!(stdout.is_empty(), "wrote output for {shown}");
        assert_eq!(
            stderr.lines().count(),
            1,
            "not one line for {shown}: {stderr}"
        );
        assert!(stderr.starts_with("tussock: "), "{stderr}");
        assert!(
            stderr.contains(expected),
            "for {shown} expected {expected:?}, got {stderr}"
        );
        assert!(!stderr.contains("panicked"), "{stderr}");
    }
}

#[test]
fn a_missing_file_is_named_in_the_error() {
    let out = tussock(&["run", "/nonexistent/scenario.json"]);
    assert!(!out.status.success());
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("cannot read /nonexistent/scenario.json"),
        "{stderr}"
    );
}

/// `tussock plan FILE ARGS…` with the arguments given as one string.
fn plan_on(file: &str, args: &str) -> Output {
    let path = example(file);
    let mut all = vec!["plan", path.to_str().unwrap()];
    all.extend(args.split_whitespace());
    tussock(&all)
}

#[test]
fn plan_reports_the_smallest_release_and_refuses_bad_requests() {
    let file = "greenhouse-plan.json";
    let out = plan_on(
        file,
        "--goal pest-below --by 28 --until 90 --ratio --max 1 --times 7 --counts 1,2 --json",
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["plan"]["rows"].as_array().unwrap().len(), 2);
    assert_eq!(v["goal"]["kind"], "pest_below_threshold");
    let table = plan_on(file, "--goal pest-below --by 28 --max 1 --ratio");
    let text = String::from_utf8_lossy(&table.stdout);
    assert!(text.contains("common practice"), "{text}");
    let bad = plan_on(file, "--goal pest-below --by 28 --max -1");
    assert!(!bad.status.success());
    assert!(String::from_utf8_lossy(&bad.stderr)
        .contains("the largest release must be a positive number"));
    let no_et = plan_on("reserve-reintroduction.json", "--goal pest-below --max 5");
    assert!(String::from_utf8_lossy(&no_et.stderr).contains("economic threshold"));
}
