//! `tussock fit` end to end: the real binary on files. The fitted values are
//! checked against the generating parameters of the counts (Verhulst 1838
//! closed form of the logistic, values rounded to whole counts here); the
//! bad-input messages against the rules of data.rs.

use std::path::PathBuf;
use std::process::{Command, Output};

fn dir() -> PathBuf {
    let d = std::env::temp_dir().join(format!("tussock-cli-fit-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Each call gets its own file: tests run in parallel, and a file rewritten
/// by one test while another's `tussock` reads it would be read half-written.
fn write(name: &str, contents: &str) -> PathBuf {
    use std::sync::atomic::{AtomicUsize, Ordering};
    static NEXT: AtomicUsize = AtomicUsize::new(0);
    let path = dir().join(format!("{}-{name}", NEXT.fetch_add(1, Ordering::Relaxed)));
    std::fs::write(&path, contents).unwrap();
    path
}

fn tussock(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_tussock"))
        .args(args)
        .output()
        .expect("run tussock")
}

const SCENARIO: &str = r#"{"model": "logistic", "params": {"b": 0.4, "d": 0, "K": 300}, "initial": [10], "t_end": 20}"#;

/// Counts of N(t) = 500·10·e^{0.5t}/(500 + 10(e^{0.5t} − 1)), rounded.
fn logistic_counts() -> String {
    let mut s = String::from("day,population\n");
    for t in 0..=16 {
        let g = (0.5 * t as f64).exp();
        let n = 500.0 * 10.0 * g / (500.0 + 10.0 * (g - 1.0));
        s += &format!("{t},{}\n", n.round());
    }
    s
}

/// Run `tussock fit` on a CSV text; (success, stdout, stderr).
fn fit_on(csv: &str, extra: &[&str]) -> (bool, String, String) {
    let scenario = write("logistic.json", SCENARIO);
    let data = write(&format!("d{}.csv", csv.len()), csv);
    let mut args = vec!["fit", scenario.to_str().unwrap(), data.to_str().unwrap()];
    args.extend_from_slice(extra);
    let out = tussock(&args);
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn json_has_estimates_with_intervals_aic_and_warnings() {
    let (ok, out, err) = fit_on(
        &logistic_counts(),
        &[
            "--estimate",
            "b,K,init1",
            "--bounds",
            "b=0.01:5,K=10:1e5",
            "--starts",
            "4",
            "--json",
        ],
    );
    assert!(ok, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    for (name, truth, rel) in [("b", 0.5, 0.02), ("K", 500.0, 0.02), ("init1", 10.0, 0.1)] {
        let e = &v["estimates"][name];
        let value = e["value"].as_f64().unwrap();
        assert!(
            (value - truth).abs() <= rel * truth,
            "{name} = {value}, generated with {truth}"
        );
        let lo = e["ci"][0].as_f64().unwrap();
        let hi = e["ci"][1].as_f64().unwrap();
        assert!(lo < value && value < hi && e["se"].as_f64().unwrap() > 0.0);
    }
    assert_eq!(
        v["estimates"]["b"]["bounds"],
        serde_json::json!([0.01, 5.0])
    );
    assert_eq!(v["n_observations"], 17);
    assert_eq!(v["n_estimated"], 4); // b, K, init1 and σ
    let aic = v["aic"].as_f64().unwrap();
    let aicc = v["aicc"].as_f64().unwrap();
    // AICc − AIC = 2k(k+1)/(n−k−1) = 40/12 (Burnham & Anderson 2002, eq. 2.14).
    assert!((aicc - aic - 40.0 / 12.0).abs() < 1e-9);
    assert!(v["warnings"].is_array());
    assert_eq!(v["objective_kind"], "log_ls");
    assert_eq!(
        v["import"]["mapping"],
        "time: \"day\"; population: \"population\" (by name)"
    );
}

#[test]
fn the_table_names_estimates_and_the_same_seed_repeats_itself() {
    let args = [
        "--estimate",
        "b,K",
        "--starts",
        "3",
        "--seed",
        "9",
        "--no-profiles",
    ];
    let (ok, first, err) = fit_on(&logistic_counts(), &args);
    assert!(ok, "{err}");
    assert!(first.contains("birth rate") && first.contains("carrying capacity"));
    assert!(first.contains("AICc"));
    let (_, second, _) = fit_on(&logistic_counts(), &args);
    // The first line names the data file, which differs between the calls.
    let body = |s: &str| s.lines().skip(1).collect::<Vec<_>>().join("\n");
    assert_eq!(
        body(&first),
        body(&second),
        "a fit with the same seed must repeat exactly"
    );
}

#[test]
fn a_parameter_the_data_cannot_see_is_flagged() {
    // Immigration of 0.001 per day against counts in the hundreds: the data
    // cannot bound it from below (the profile is flat towards 0).
    let (ok, out, err) = fit_on(
        &logistic_counts(),
        &[
            "--estimate",
            "b,K,immigration",
            "--bounds",
            "immigration=0:0.01",
            "--starts",
            "3",
            "--json",
        ],
    );
    assert!(ok, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let warnings: Vec<&str> = v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w.as_str().unwrap())
        .collect();
    assert!(
        warnings.iter().any(|w| w.starts_with("immigration:")),
        "expected a warning about immigration, got {warnings:?}"
    );
}

#[test]
fn save_writes_the_scenario_with_fitted_values() {
    let out_path = dir().join("fitted.json");
    let (ok, _, err) = fit_on(
        &logistic_counts(),
        &[
            "--estimate",
            "b,K",
            "--starts",
            "2",
            "--no-profiles",
            "--save",
            out_path.to_str().unwrap(),
        ],
    );
    assert!(ok, "{err}");
    let saved: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&out_path).unwrap()).unwrap();
    let k = saved["params"]["K"].as_f64().unwrap();
    assert!((k - 500.0).abs() < 25.0, "K = {k}");
    assert_eq!(saved["model"], "logistic");
}

#[test]
fn bad_inputs_get_one_line_errors_and_a_failing_exit() {
    let cases: &[(&str, &[&str], &str)] = &[
        ("", &["--estimate", "b"], "the file is empty"),
        (
            "day,population\n0,5\n",
            &["--estimate", "b"],
            "only one data row (line 2)",
        ),
        (
            "day,population\n0,5\n1,many\n2,7\n",
            &["--estimate", "b"],
            "line 3, column \"population\": \"many\" is not a number",
        ),
        (
            "day,population\n0,5\n1,6\n1,7\n",
            &["--estimate", "b"],
            "line 4, column \"day\": time 1 repeats line 3",
        ),
        (
            "day,population\n0,5\n1,-6\n",
            &["--estimate", "b"],
            "line 3, column \"population\": count -6 is negative",
        ),
        (
            "day,population\n0,5\n1,6\n2,7\n",
            &["--estimate", "q"],
            "estimate: \"q\" is not a parameter of logistic",
        ),
        (
            "day,population\n0,5\n1,6\n2,7\n",
            &["--estimate", "b", "--bounds", "b=1"],
            "--bounds: \"b=1\" is not of the form name=lower:upper",
        ),
        (
            "day,population\n0,5\n1,6\n2,7\n",
            &["--estimate", "b", "--bounds", "b=5:1"],
            "bounds of b: the lower bound must be below the upper",
        ),
        (
            "day,population\n0,5\n1,6\n2,7\n",
            &["--estimate", "b", "--objective", "best"],
            "unknown objective \"best\"",
        ),
        (
            "day,population\n0,5\n1,6\n",
            &["--estimate", "b,K"],
            "too few counts: 2 counts for 3 estimated quantities",
        ),
    ];
    for (csv, args, message) in cases {
        let (ok, _, err) = fit_on(csv, args);
        assert!(!ok, "{csv:?} {args:?} should fail");
        assert!(
            err.contains(message),
            "{csv:?} {args:?}: expected {message:?} in {err:?}"
        );
        assert_eq!(err.trim_end().lines().count(), 1, "one line: {err}");
        assert!(err.starts_with("tussock: "), "{err}");
    }
}
