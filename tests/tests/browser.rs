//! The app in a real browser: headless Chromium driven through ChromeDriver
//! (the harness is in `src/lib.rs`).
//!
//! These tests need the release build in `dist/` (or `TUSSOCK_DIST`) and
//! Debian's chromium and chromium-driver; `scripts/test` provides both and runs
//! them with `--ignored`. Screenshots go to `tests/artifacts/`.

use std::time::{Duration, Instant};

use fantoccini::Locator;
use serde_json::json;
use tussock_tests::{dist_dir, Browser};

const CHARTS: [&str; 2] = ["chart-time", "chart-phase"];

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn page_loads_and_draws_both_charts_without_console_errors() {
    let b = Browser::start().await;
    b.open_app().await;
    for id in CHARTS {
        let (ink, _) = b.canvas(id).await;
        assert!(ink > 1000, "{id} is blank ({ink} non-white pixels)");
    }
    b.screenshot("loaded").await;
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn changing_a_parameter_redraws_both_charts() {
    let b = Browser::start().await;
    b.open_app().await;
    let before = [b.canvas(CHARTS[0]).await, b.canvas(CHARTS[1]).await];
    b.type_into("#param-r", "0.6").await;
    let after = [b.canvas(CHARTS[0]).await, b.canvas(CHARTS[1]).await];
    for i in 0..2 {
        assert_ne!(before[i].1, after[i].1, "{} did not change", CHARTS[i]);
        assert!(after[i].0 > 1000, "{} is blank after the change", CHARTS[i]);
    }
    b.screenshot("after-change").await;
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn bad_input_shows_a_message_and_keeps_the_charts() {
    let b = Browser::start().await;
    b.open_app().await;
    let before = [b.canvas(CHARTS[0]).await, b.canvas(CHARTS[1]).await];
    for (text, expected) in [
        ("abc", "is not a number"),
        ("-2", "must be ≥ 0"),
        ("", "enter a number"),
    ] {
        b.type_into("#param-m", text).await;
        let message = b.text_of("#param-m-message").await;
        assert!(
            message.contains(expected),
            "for {text:?} the message was {message:?}"
        );
        let after = [b.canvas(CHARTS[0]).await, b.canvas(CHARTS[1]).await];
        assert_eq!(before, after, "charts changed on bad input {text:?}");
    }
    b.screenshot("bad-input").await;
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn every_demo_and_every_model_draws_without_errors() {
    let b = Browser::start().await;
    b.open_app().await;
    for (i, expected) in [
        (0, "Hopf threshold"),
        (1, "Hopf threshold"),
        (2, "Hopf threshold"),
        (3, "excludes"),
    ] {
        b.select("#example", &i.to_string()).await;
        let verdict = b.text_of("#verdict").await;
        assert!(verdict.contains(expected), "demo {i}: verdict {verdict:?}");
        for id in CHARTS {
            assert!(b.canvas(id).await.0 > 1000, "demo {i}: {id} is blank");
        }
        b.client
            .execute(
                "document.getElementById('chart-time').scrollIntoView()",
                vec![],
            )
            .await
            .expect("scroll to the charts");
        b.screenshot(&format!("demo-{i}")).await;
    }
    for key in [
        "lotka_volterra",
        "rosenzweig_macarthur",
        "competition",
        "logistic",
        "exponential",
    ] {
        b.select("#model", key).await;
        assert!(
            b.canvas("chart-time").await.0 > 1000,
            "{key}: time series blank"
        );
        let long_run = b.text_of("#long-run").await;
        assert!(!long_run.is_empty(), "{key}: no long-run sentence");
    }
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn a_parameter_that_flips_stability_changes_the_analysis() {
    let b = Browser::start().await;
    b.open_app().await;
    let before = b.text_of("#verdict").await;
    assert!(before.contains("above the Hopf threshold"), "{before}");
    b.type_into("#param-K", "100").await;
    let after = b.text_of("#verdict").await;
    assert!(after.contains("below the Hopf threshold"), "{after}");
    let equilibria = b.text_of("#equilibria").await;
    assert!(
        equilibria.contains("stable spiral") || equilibria.contains("stable node"),
        "{equilibria}"
    );
    b.screenshot("stabilised").await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn the_slider_moves_the_value_and_redraws() {
    let b = Browser::start().await;
    b.open_app().await;
    let before = b.canvas("chart-time").await;
    b.client
        .execute(
            "const s = document.querySelector('#param-r ~ .slider'); s.value = '700'; s.dispatchEvent(new Event('input', {bubbles: true}));",
            vec![],
        )
        .await
        .expect("move the slider");
    b.settle().await;
    let field = b.client.find(Locator::Css("#param-r")).await.unwrap();
    let value: f64 = field
        .prop("value")
        .await
        .unwrap()
        .unwrap_or_default()
        .parse()
        .unwrap_or(0.0);
    assert!(value > 0.25, "slider left r at {value}");
    assert_ne!(
        before.1,
        b.canvas("chart-time").await.1,
        "no redraw after the slider moved"
    );
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn clicking_the_phase_plane_adds_trajectories_and_the_button_clears_them() {
    let b = Browser::start().await;
    b.open_app().await;
    let before = b.canvas("chart-phase").await;
    b.click_at("#chart-phase", 0.6, 0.4).await;
    b.click_at("#chart-phase", 0.3, 0.7).await;
    let label = b.text_of("#clear-trajectories").await;
    assert!(label.contains("(2)"), "{label}");
    let with = b.canvas("chart-phase").await;
    assert_ne!(before.1, with.1, "phase plane unchanged after clicks");
    b.screenshot("clicked").await;
    b.client
        .find(Locator::Css("#clear-trajectories"))
        .await
        .unwrap()
        .click()
        .await
        .unwrap();
    b.settle().await;
    assert!(b.text_of("#clear-trajectories").await.contains("(0)"));
    assert_eq!(
        before.1,
        b.canvas("chart-phase").await.1,
        "clearing did not restore the plane"
    );
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn work_survives_a_reload_travels_in_a_link_and_undoes() {
    let b = Browser::start().await;
    b.open_app().await;
    b.type_into("#param-K", "123").await;
    // Autosave: a reload brings the edit back.
    b.client.refresh().await.expect("reload");
    b.wait_for_app().await;
    assert_eq!(b.value_of("#param-K").await, "123");
    assert!(b.text_of("#notice").await.contains("last session"));
    // Undo returns to the example the page opened with.
    b.client
        .find(Locator::Css("#undo"))
        .await
        .unwrap()
        .click()
        .await
        .unwrap();
    b.settle().await;
    assert_eq!(b.value_of("#param-K").await, "150");
    // A share link restores the scenario in a fresh page.
    b.type_into("#param-K", "321").await;
    b.client
        .find(Locator::Css("#share"))
        .await
        .unwrap()
        .click()
        .await
        .unwrap();
    b.settle().await;
    let link = b
        .client
        .find(Locator::Css("#share-link"))
        .await
        .unwrap()
        .prop("value")
        .await
        .unwrap()
        .unwrap();
    assert!(link.contains("#s="), "{link}");
    b.client
        .execute("localStorage.clear()", vec![])
        .await
        .unwrap();
    b.client.goto("about:blank").await.unwrap();
    b.client.goto(&link).await.unwrap();
    b.wait_for_app().await;
    let notice = b.text_of("#notice").await;
    assert_eq!(b.value_of("#param-K").await, "321", "notice: {notice}");
    assert!(notice.contains("shared link"), "{notice}");
    // A damaged link says so and keeps the page working.
    b.client.goto("about:blank").await.unwrap();
    b.client
        .goto(&format!("{}#s=garbage", b.base_url))
        .await
        .unwrap();
    b.wait_for_app().await;
    assert!(
        b.text_of("#notice").await.contains("damaged"),
        "{}",
        b.text_of("#notice").await
    );
    assert!(b.canvas("chart-time").await.0 > 1000);
    b.screenshot("damaged-link").await;
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn interventions_are_scheduled_marked_and_checked() {
    let b = Browser::start().await;
    b.open_app().await;
    let before = b.canvas("chart-time").await;
    b.client
        .find(Locator::Css("#add-event"))
        .await
        .unwrap()
        .click()
        .await
        .unwrap();
    b.settle().await;
    assert_ne!(
        before.1,
        b.canvas("chart-time").await.1,
        "a release did not change the chart"
    );
    b.type_into("#event-0-time", "999").await;
    let alert = b.text_of(".row-message").await;
    assert!(alert.contains("past the horizon"), "{alert}");
    b.type_into("#event-0-time", "20").await;
    b.type_into("#threshold-et", "10").await;
    let metrics = b.text_of(".analysis").await;
    assert!(metrics.contains("economic threshold (10)"), "{metrics}");
    b.client
        .execute(
            "document.querySelector('.schedule').scrollIntoView()",
            vec![],
        )
        .await
        .unwrap();
    b.screenshot("schedule").await;
    b.assert_clean_console().await;
    b.close().await;
}

/// The greenhouse example the page opens with, as the core reads it.
fn greenhouse(edit: impl FnOnce(&mut serde_json::Value)) -> tussock_core::Problem {
    let mut v: serde_json::Value =
        serde_json::from_str(include_str!("../../examples/greenhouse-mites.json")).unwrap();
    edit(&mut v);
    tussock_core::Scenario::from_json(&v.to_string())
        .and_then(|s| s.validate())
        .expect("the example is valid")
}

/// The first number after `key` in `text` (`"K = 133.621 — Hopf"`).
fn number_after(text: &str, key: &str) -> f64 {
    let rest = &text[text
        .find(key)
        .unwrap_or_else(|| panic!("{key:?} not in {text:?}"))
        + key.len()..];
    let end = rest
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == 'e'))
        .unwrap_or(rest.len());
    rest[..end]
        .parse()
        .unwrap_or_else(|_| panic!("no number after {key:?} in {text:?}"))
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn a_sweep_of_k_finds_the_hopf_point_where_the_formula_puts_it() {
    // Rosenzweig–MacArthur with Holling type II: the equilibrium loses
    // stability when it passes the hump of the prey isocline, at
    // K = 1/(a·h) + 2·N*, N* = m / (a·(e − m·h)) (Rosenzweig 1971, "Paradox
    // of enrichment", Science 171:385; the hump criterion of Rosenzweig &
    // MacArthur 1963).
    let b = Browser::start().await;
    b.open_app().await;
    let (a, h, e, m) = (0.08, 0.1, 0.3, 0.1); // the greenhouse example
    let n_star = m / (a * (e - m * h));
    let k_hopf = 1.0 / (a * h) + 2.0 * n_star;
    b.click("#view-sweep").await;
    b.select("#sweep-x-param", "K").await;
    b.type_into("#sweep-x-from", "50").await;
    b.type_into("#sweep-x-to", "400").await;
    b.type_into("#sweep-x-steps", "36").await;
    b.click("#sweep-run").await;
    b.wait_for_text("#job-line", 120, |t| t.contains("finished"))
        .await;
    let found = b.text_of("#sweep-bifurcations").await;
    assert!(found.contains("Hopf"), "{found}");
    let k = number_after(&found, "K = ");
    assert!(
        (k - k_hopf).abs() < 1e-3 * k_hopf,
        "Hopf at K = {k}, formula {k_hopf}"
    );
    assert!(
        b.canvas("chart-bifurcation").await.0 > 1000,
        "blank diagram"
    );
    b.screenshot("sweep-line").await;
    // The table downloads; a click on the diagram loads that K.
    b.click("#csv-line").await;
    let csv = b.downloaded("one-parameter-sweep.csv").await;
    assert!(csv.starts_with("K,"), "{}", &csv[..csv.len().min(200)]);
    assert!(csv.lines().count() > 36, "{} lines", csv.lines().count());
    b.click_at("#chart-bifurcation", 0.8, 0.5).await;
    b.click("#view-simulate").await;
    let k_now: f64 = b.value_of("#param-K").await.parse().unwrap_or(0.0);
    assert!(
        k_now > 200.0 && k_now < 400.0,
        "the click loaded K = {k_now}"
    );
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn an_outcome_map_has_a_legend_and_downloads_every_cell() {
    let b = Browser::start().await;
    b.open_app().await;
    b.click("#view-sweep").await;
    b.select("#sweep-mode", "two").await;
    b.select("#sweep-x-param", "K").await;
    b.type_into("#sweep-x-from", "50").await;
    b.type_into("#sweep-x-to", "400").await;
    b.type_into("#sweep-x-steps", "12").await;
    b.select("#sweep-y-param", "m").await;
    b.type_into("#sweep-y-from", "0.02").await;
    b.type_into("#sweep-y-to", "0.4").await;
    b.type_into("#sweep-y-steps", "10").await;
    b.click("#sweep-run").await;
    b.wait_for_text("#job-map", 180, |t| t.contains("finished"))
        .await;
    let legend = b.text_of("#map-legend").await;
    // High mortality starves the predator; low mortality at high K cycles.
    assert!(legend.contains("cells"), "{legend}");
    assert!(legend.lines().count() >= 2, "one class only: {legend}");
    assert!(b.canvas("chart-map").await.0 > 1000, "blank map");
    b.screenshot("sweep-map").await;
    b.click("#csv-map").await;
    let csv = b.downloaded("outcome-map.csv").await;
    assert!(
        csv.starts_with("K,m,outcome,class"),
        "{}",
        &csv[..csv.len().min(200)]
    );
    assert_eq!(csv.lines().count(), 1 + 12 * 10, "a row per cell");
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn the_browser_ensemble_repeats_the_native_one_seed_for_seed() {
    // Same seed, same counts: the worker's wasm build and the native core
    // must draw the same random numbers and take the same steps.
    let problem = greenhouse(|_| {});
    let options = tussock_core::stochastic::EnsembleOptions {
        runs: 500,
        seed: 42,
        ..Default::default()
    };
    let ensemble = tussock_core::stochastic::Ensemble::new(&problem, &options).unwrap();
    let mut acc = ensemble.accumulator();
    ensemble.run_batch(&mut acc, 0..500, &mut |_, _| true);
    let native = acc.summary();

    let b = Browser::start().await;
    b.open_app().await;
    b.click("#view-chance").await;
    b.type_into("#chance-runs", "500").await;
    b.type_into("#chance-seed", "42").await;
    b.click("#chance-run").await;
    b.wait_for_text("#job-ensemble", 120, |t| t.contains("finished"))
        .await;
    let risks = b.text_of("#chance-risks").await;
    for p in &native.extinction {
        let expected = format!(
            "{} dies out by 120 days in {} of {} runs",
            p.species, p.count, p.runs
        );
        assert!(
            risks.contains(&expected),
            "native: {expected}\nbrowser: {risks}"
        );
    }
    assert!(b.canvas("chart-fan-0").await.0 > 1000, "blank fan chart");
    b.click("#csv-ensemble").await;
    let csv = b.downloaded("stochastic-runs.csv").await;
    // The whole table (fan-chart quantiles and extinction curves at every
    // time), whichever of the page's helper workers ran which runs.
    assert!(csv.lines().count() > 10, "{csv}");
    assert!(
        csv == tussock_charts::tables::ensemble_csv(&native),
        "the page's table differs from the native one"
    );
    b.screenshot("chance").await;
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn the_browser_founders_table_repeats_the_native_one() {
    // The founder rows, spread over the page's helper workers, against the
    // same request run natively row after row.
    let problem = greenhouse(|_| {});
    let request = tussock_core::stochastic::EstablishmentRequest {
        species: 1,
        founders: vec![5, 20],
        releases: vec![1, 2],
        every: 10.0,
        level: 10.0,
        runs: 300,
        seed: 9,
        ..Default::default()
    };
    let native =
        tussock_core::stochastic::establishment(&problem, &request, &mut |_, _| true).unwrap();

    let b = Browser::start().await;
    b.open_app().await;
    b.click("#view-chance").await;
    for (css, value) in [
        ("#chance-runs", "300"),
        ("#chance-seed", "9"),
        ("#chance-founders", "5, 20"),
        ("#chance-releases", "1, 2"),
        ("#chance-every", "10"),
        ("#chance-level", "10"),
    ] {
        b.paste_into(css, value).await;
    }
    b.select("#chance-founder-species", "1").await;
    b.click("#chance-founders-run").await;
    b.wait_for_text("#job-founders", 120, |t| t.contains("finished"))
        .await;
    b.click("#csv-founders").await;
    let csv = b.downloaded("founders.csv").await;
    assert_eq!(csv.lines().count(), 1 + 4, "{csv}");
    assert!(
        csv == tussock_charts::tables::founders_csv(&native),
        "page:\n{csv}\nnative:\n{}",
        tussock_charts::tables::founders_csv(&native)
    );
    // Stopped at once, while its helpers are still loading: no error.
    b.paste_into("#chance-runs", "10000").await;
    b.click("#chance-founders-run").await;
    b.click("#job-founders-stop").await;
    b.wait_for_text("#job-founders", 20, |t| t.contains("stopped"))
        .await;
    tokio::time::sleep(std::time::Duration::from_secs(1)).await;
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn stopping_a_long_ensemble_keeps_the_partial_result_and_the_page_answers() {
    let b = Browser::start().await;
    b.open_app().await;
    b.type_into("#horizon", "3000").await;
    b.click("#view-chance").await;
    b.type_into("#chance-runs", "10000").await;
    b.click("#chance-run").await;
    // While the worker runs, the page still answers and edits still work.
    b.wait_for_text("#job-ensemble", 60, |t| t.contains("running"))
        .await;
    b.settle().await;
    // (Pasted in one step: partial results re-render the view meanwhile.)
    b.paste_into("#chance-seed", "5").await;
    assert_eq!(b.value_of("#chance-seed").await, "5");
    // Stop once some runs are done.
    b.wait_for_text("#job-ensemble", 60, |t| {
        t.contains("running") && !t.contains(" 0%")
    })
    .await;
    // The runs are spread over a helper worker per core (up to 16); the
    // stop ends them all.
    let cores = b
        .client
        .execute("return navigator.hardwareConcurrency", vec![])
        .await
        .expect("read the cores")
        .as_u64()
        .unwrap_or(1);
    let helpers = if cores >= 2 { cores.min(16) } else { 0 };
    assert_eq!(b.workers().await as u64, 1 + helpers, "{cores} cores");
    b.click("#job-ensemble-stop").await;
    let mut left = b.workers().await;
    for _ in 0..50 {
        if left == 0 {
            break;
        }
        tokio::time::sleep(std::time::Duration::from_millis(100)).await;
        left = b.workers().await;
    }
    assert_eq!(left, 0, "workers left running after the stop");
    let status = b
        .wait_for_text("#job-ensemble", 20, |t| t.contains("stopped"))
        .await;
    assert!(status.contains("partial"), "{status}");
    let shown = b
        .wait_for_text("#chance-study", 20, |t| t.contains("Partial:"))
        .await;
    assert!(shown.contains("of 10000 runs"), "{shown}");
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn counts_pasted_in_are_fitted_and_the_fitted_values_are_used() {
    // Counts made by the model itself with r = 0.3 (the page opens with
    // r = 0.25): a least-squares fit must find r again.
    let truth = greenhouse(|v| {
        v["params"]["r"] = json!(0.3);
        v["t_end"] = json!(60);
        v["output_step"] = json!(3);
    });
    let run = tussock_core::solve::solve(&truth);
    let mut csv = format!("day,{},{}\n", truth.species[0], truth.species[1]);
    for (t, x) in run.times.iter().zip(&run.states) {
        csv += &format!("{t},{:.6},{:.6}\n", x[0], x[1]);
    }
    let b = Browser::start().await;
    b.open_app().await;
    b.click("#view-fit").await;
    b.paste_into("#fit-csv", &csv).await;
    b.click("#fit-read").await;
    let preview = b.text_of("#fit-preview").await;
    assert!(preview.contains("Read 21 rows"), "{preview}");
    b.click("#fit-keep").await;
    // Estimate r alone; no intervals, to keep the test short.
    b.click("#fit-on-K").await;
    b.click("#fit-profiles").await;
    b.click("#fit-run").await;
    b.wait_for_text("#job-fit", 120, |t| t.contains("finished"))
        .await;
    let estimates = b.text_of("#fit-estimates").await;
    assert!(estimates.contains("prey growth rate"), "{estimates}");
    b.click("#csv-fit").await;
    let table = b.downloaded("fit.csv").await;
    assert!(table.lines().count() >= 2, "{table}");
    b.screenshot("fit").await;
    b.click("#fit-use").await;
    b.click("#view-simulate").await;
    let r: f64 = b.value_of("#param-r").await.parse().unwrap_or(0.0);
    assert!((r - 0.3).abs() < 1e-3, "fitted r = {r}");
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn the_planner_finds_a_release_and_it_goes_into_the_schedule() {
    let b = Browser::start().await;
    b.open_app().await;
    b.click("#view-plan").await;
    b.click("#plan-run").await;
    b.wait_for_text("#job-plan", 180, |t| t.contains("finished"))
        .await;
    let answer = b.text_of("#plan-answer").await;
    assert!(!answer.is_empty());
    assert!(
        b.canvas("chart-plan-response").await.0 > 1000,
        "blank response curve"
    );
    b.screenshot("plan").await;
    b.click("#csv-plan").await;
    assert!(b.downloaded("release-plan.csv").await.lines().count() >= 2);
    if b.client.find(Locator::Css("#plan-adopt")).await.is_ok() {
        b.click("#plan-adopt").await;
        b.click("#view-simulate").await;
        assert!(
            b.client.find(Locator::Css("#event-0-time")).await.is_ok(),
            "the planned release is not in the schedule"
        );
    } else {
        assert!(answer.contains("No release"), "no button to use: {answer}");
    }
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn variants_and_the_report_show_the_scenario() {
    let b = Browser::start().await;
    b.open_app().await;
    b.click("#view-variants").await;
    b.type_into("#variant-name", "as it came").await;
    b.click("#variant-save").await;
    assert!(b.text_of("#variant-list").await.contains("as it came"));
    b.click("#view-simulate").await;
    b.type_into("#param-K", "90").await;
    b.click("#view-variants").await;
    assert!(
        b.canvas("chart-variants").await.0 > 1000,
        "blank comparison"
    );
    b.click("#view-report").await;
    let stamp = b.text_of("#report-stamp").await;
    assert!(stamp.contains(env!("CARGO_PKG_VERSION")), "{stamp}");
    assert!(b.canvas("report-time").await.0 > 1000, "blank report chart");
    b.screenshot("report").await;
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn figures_and_tables_download() {
    let b = Browser::start().await;
    b.open_app().await;
    b.click("#csv-trajectory").await;
    let csv = b.downloaded("trajectory.csv").await;
    let mut lines = csv.lines();
    assert_eq!(lines.next(), Some("t,spider mite,predatory mite"));
    // A row per output time of the example.
    let p = greenhouse(|_| {});
    assert_eq!(
        lines.count(),
        (p.t_end / p.output_step).round() as usize + 1
    );
    b.click("#chart-time-svg").await;
    let deadline = Instant::now() + Duration::from_secs(20);
    let svg = loop {
        let found = std::fs::read_dir(&b.downloads.0)
            .unwrap()
            .filter_map(Result::ok)
            .map(|e| e.path())
            .find(|p| p.extension().is_some_and(|x| x == "svg"));
        if let Some(p) = found {
            break std::fs::read_to_string(p).unwrap();
        }
        assert!(Instant::now() < deadline, "no SVG was downloaded");
        tokio::time::sleep(Duration::from_millis(200)).await;
    };
    assert!(
        svg.contains("<svg") && svg.contains("spider mite"),
        "{}",
        &svg[..svg.len().min(300)]
    );
    b.assert_clean_console().await;
    b.close().await;
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn names_never_become_markup_and_the_page_has_no_inline_script() {
    // The built page: every script is a file, and the policy says so.
    let index = std::fs::read_to_string(dist_dir().join("index.html")).unwrap();
    assert!(index.contains("Content-Security-Policy"));
    for (i, part) in index.split("<script").skip(1).enumerate() {
        let tag = &part[..part.find('>').unwrap_or(part.len())];
        assert!(tag.contains("src="), "script {i} is inline: <script{tag}>");
    }
    let b = Browser::start().await;
    b.open_app().await;
    let hostile = "<img src=x onerror=\"window.hit=1\">";
    b.type_into("#species-0", hostile).await;
    let legend_sources = b
        .client
        .execute(
            "return [document.querySelectorAll('img').length, window.hit === undefined, document.body.innerText.includes(arguments[0])];",
            vec![json!(hostile)],
        )
        .await
        .unwrap();
    assert_eq!(
        legend_sources,
        json!([0, true, true]),
        "the name became markup"
    );
    // A share link carrying the name restores it as text too.
    b.click("#share").await;
    let link = b.value_of("#share-link").await;
    b.client.goto("about:blank").await.unwrap();
    b.client.goto(&link).await.unwrap();
    b.wait_for_app().await;
    assert_eq!(b.value_of("#species-0").await, hostile);
    let imgs = b
        .client
        .execute("return document.querySelectorAll('img').length;", vec![])
        .await
        .unwrap();
    assert_eq!(imgs, json!(0));
    b.assert_clean_console().await;
    b.close().await;
}
