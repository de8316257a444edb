//! The browser benchmark: what the page costs to download, how long it takes
//! from navigation to the first chart, and how long from an edit to both
//! charts redrawn (the workbench's target is one frame, 16 ms, for the
//! examples). Run by `scripts/bench` after the app build; prints a markdown
//! table and writes it to `target/bench/browser.md`. Measurements only:
//! nothing here passes or fails on time.

use std::path::Path;

use serde_json::json;
use tussock_tests::{dist_dir, Browser};

/// Edits measured, alternating two values of K so every one changes it.
const EDITS: usize = 50;
const LOADS: usize = 5;

fn gzipped(path: &Path) -> usize {
    let bytes = std::fs::read(path).unwrap_or_default();
    // Level 9 deflate; gzip adds an 18-byte frame.
    miniz_oxide::deflate::compress_to_vec(&bytes, 9).len() + 18
}

/// (files the page loads at start, files the workers load on demand), in
/// gzipped bytes.
fn page_weight(dist: &Path) -> (usize, usize) {
    let mut start = 0;
    let mut later = 0;
    for entry in std::fs::read_dir(dist).expect("read dist").flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        let size = gzipped(&entry.path());
        if name.starts_with("tussock-worker") || name == "worker-loader.js" {
            later += size;
        } else if [".html", ".js", ".wasm", ".css", ".svg"]
            .iter()
            .any(|ext| name.ends_with(ext))
        {
            start += size;
        }
    }
    (start, later)
}

fn quantile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let i = ((sorted.len() - 1) as f64 * q).round() as usize;
    sorted[i]
}

async fn measure() -> String {
    let dist = dist_dir();
    let (start_bytes, worker_bytes) = page_weight(&dist);
    let b = Browser::start().await;

    let mut loads = Vec::new();
    for _ in 0..LOADS {
        b.client.goto("about:blank").await.expect("blank page");
        b.open_app().await;
        let v = b
            .client
            .execute(
                "return parseFloat(document.getElementById('chart-time').dataset.drawnAt);",
                vec![],
            )
            .await
            .expect("read the first draw time");
        loads.push(v.as_f64().unwrap_or(f64::NAN));
    }

    let script = r#"
        const [value, done] = arguments;
        const time = document.getElementById('chart-time');
        const phase = document.getElementById('chart-phase');
        const before = [+time.dataset.draws, +phase.dataset.draws];
        const field = document.getElementById('param-K');
        const t0 = performance.now();
        field.value = value;
        field.dispatchEvent(new Event('input', {bubbles: true}));
        const poll = () => {
            if (+time.dataset.draws > before[0] && +phase.dataset.draws > before[1]) {
                done(Math.max(+time.dataset.drawnAt, +phase.dataset.drawnAt) - t0);
            } else if (performance.now() - t0 > 5000) {
                done(-1);
            } else {
                setTimeout(poll, 0);
            }
        };
        poll();
    "#;
    let mut redraws = Vec::new();
    for i in 0..EDITS {
        let value = if i % 2 == 0 { "151" } else { "150" };
        let ms = b
            .client
            .execute_async(script, vec![json!(value)])
            .await
            .expect("edit and wait for the redraw");
        match ms.as_f64() {
            Some(ms) if ms >= 0.0 => redraws.push(ms),
            _ => eprintln!("edit {i}: no redraw within 5 s"),
        }
    }
    let map_seconds = outcome_map(&b).await;
    let runs = ensemble(&b).await;
    let mut busy = busy_redraws(&b, script).await;
    b.close().await;
    busy.sort_by(f64::total_cmp);
    loads.sort_by(f64::total_cmp);
    redraws.sort_by(f64::total_cmp);
    let kb = |bytes: usize| format!("{:.0} KB", bytes as f64 / 1024.0);
    format!(
        "| browser measure (headless Chromium, greenhouse example) | value |\n\
         |---|---|\n\
         | page weight at start, gzipped (budget 600 KB) | {} |\n\
         | worker code, gzipped, loaded on first background job | {} |\n\
         | navigation to first chart, median of {LOADS} loads | {:.0} ms |\n\
         | edit to both charts redrawn, median of {} edits | {:.1} ms |\n\
         | edit to both charts redrawn, 95th percentile | {:.1} ms |\n\
         | 200 × 200 Rosenzweig–MacArthur outcome map to t = 2000 (worker), click to finished | {:.2} s |\n\
         | edit to both charts redrawn while the worker runs 10,000 stochastic runs, median of {} edits | {:.1} ms |\n\
         | 1,000 exact stochastic runs, RM ~1,000 individuals, 365 days: the page (a helper worker per core), click to finished | {:.2} s |\n\
         | the same runs on the native core, one thread, in this process | {:.2} s (page / native: {:.2}) |\n\
         | the same runs on the native core, {} threads (all cores), in this process | {:.2} s (page / native: {:.2}) |\n",
        kb(start_bytes),
        kb(worker_bytes),
        quantile(&loads, 0.5),
        redraws.len(),
        quantile(&redraws, 0.5),
        quantile(&redraws, 0.95),
        map_seconds,
        busy.len(),
        quantile(&busy, 0.5),
        runs.page,
        runs.one_thread,
        runs.page / runs.one_thread,
        runs.threads,
        runs.all_cores,
        runs.page / runs.all_cores,
    )
}

/// Seconds from the click to the finished map, for a 200 × 200 outcome map
/// of the page's example over K and m, computed in the worker.
async fn outcome_map(b: &Browser) -> f64 {
    b.open_app().await;
    b.click("#view-sweep").await;
    for (css, value) in [
        ("#sweep-mode", "two"),
        ("#sweep-x-param", "K"),
        ("#sweep-x-from", "50"),
        ("#sweep-x-to", "1000"),
        ("#sweep-x-steps", "200"),
        ("#sweep-y-param", "m"),
        ("#sweep-y-from", "0.02"),
        ("#sweep-y-to", "0.4"),
        ("#sweep-y-steps", "200"),
    ] {
        b.paste_into(css, value).await;
    }
    let started = std::time::Instant::now();
    b.click("#sweep-run").await;
    b.wait_for_text("#job-map", 600, |t| {
        t.contains("finished") || t.contains("failed")
    })
    .await;
    started.elapsed().as_secs_f64()
}

/// Seconds for the same 1,000 exact runs in three places.
struct EnsembleTimes {
    /// The page, from the click to the finished summary.
    page: f64,
    /// The native core on one thread.
    one_thread: f64,
    /// The native core on `threads` threads, as the command line runs it.
    all_cores: f64,
    threads: usize,
}

/// Seconds from the click to the finished ensemble for 1,000 exact runs of
/// the benchmark case (`bench_problems::rosenzweig_macarthur_365_days`,
/// seed 1) in the page, and for the same runs on the native core in this
/// process, on one thread and on all cores. The page and the native core
/// must count the same extinctions (the same seed gives the same runs on
/// both), which is checked.
async fn ensemble(b: &Browser) -> EnsembleTimes {
    use tussock_core::bench_problems::{rosenzweig_macarthur_365_days, thousand_runs};
    use tussock_core::stochastic::{run_ensemble, Ensemble, Method};
    let problem = rosenzweig_macarthur_365_days();
    let options = thousand_runs(Method::Exact);
    let started = std::time::Instant::now();
    let native = run_ensemble(&problem, &options, &mut |_, _| true).expect("the native ensemble");
    let one_thread = started.elapsed().as_secs_f64();

    // Rayon's default pool: one thread per core.
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    let started = std::time::Instant::now();
    let ensemble = Ensemble::new(&problem, &options).expect("the native ensemble");
    // The command line's own parallel runner.
    let all = tussock_cli::parallel::ensemble(&ensemble, options.runs);
    let all_cores = started.elapsed().as_secs_f64();
    if all.summary() != native {
        eprintln!("the native ensemble differs between one thread and {threads}");
    }

    b.open_app().await;
    for (css, value) in [
        ("#param-r", "0.2"),
        ("#param-K", "1000"),
        ("#param-a", "0.001"),
        ("#param-h", "0.5"),
        ("#param-e", "0.2"),
        ("#param-m", "0.1"),
        ("#initial-0", "800"),
        ("#initial-1", "100"),
        ("#horizon", "365"),
    ] {
        b.paste_into(css, value).await;
    }
    b.click("#view-chance").await;
    b.paste_into("#chance-runs", "1000").await;
    b.paste_into("#chance-seed", "1").await;
    b.select("#chance-method", "exact").await;
    let started = std::time::Instant::now();
    b.click("#chance-run").await;
    b.wait_for_text("#job-ensemble", 600, |t| {
        t.contains("finished") || t.contains("failed")
    })
    .await;
    let page = started.elapsed().as_secs_f64();
    let risks = b.text_of("#chance-risks").await;
    for p in &native.extinction {
        let expected = format!("dies out by 365 days in {} of {} runs", p.count, p.runs);
        if !risks.contains(&expected) {
            eprintln!("the page and the native core disagree: native {expected:?}, page {risks:?}");
        }
    }
    EnsembleTimes {
        page,
        one_thread,
        all_cores,
        threads,
    }
}

/// Redraw times of workbench edits made while the worker is busy with
/// 10,000 stochastic runs (the page's thread must not wait for it).
async fn busy_redraws(b: &Browser, edit: &str) -> Vec<f64> {
    b.open_app().await;
    b.click("#view-chance").await;
    b.paste_into("#chance-runs", "10000").await;
    b.click("#chance-run").await;
    b.click("#view-simulate").await;
    let busy = "return document.querySelector('.views .busy') !== null;";
    let mut times = Vec::new();
    while times.len() < 50 {
        let value = if times.len() % 2 == 0 { "151" } else { "150" };
        let ms = b
            .client
            .execute_async(edit, vec![json!(value)])
            .await
            .expect("edit while the worker runs");
        let running = b.client.execute(busy, vec![]).await.expect("read the tabs");
        if running != json!(true) {
            break;
        }
        if let Some(ms) = ms.as_f64().filter(|ms| *ms >= 0.0) {
            times.push(ms);
        }
    }
    times
}

fn main() {
    // `cargo bench` passes --bench; anything else (cargo test's listing)
    // should not start a browser.
    if !std::env::args().any(|a| a == "--bench") {
        return;
    }
    let table = tokio::runtime::Runtime::new()
        .expect("tokio runtime")
        .block_on(measure());
    print!("{table}");
    let out = Path::new(env!("CARGO_MANIFEST_DIR")).join("../target/bench");
    if std::fs::create_dir_all(&out).is_ok() {
        let _ = std::fs::write(out.join("browser.md"), &table);
    }
}
