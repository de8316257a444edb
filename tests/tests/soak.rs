//! The browser soak: 1,000 random edits in headless Chromium (numbers and
//! nonsense typed into every kind of field, model and option switches,
//! examples, interventions added and deleted, undo and redo, view changes),
//! drawn from a seeded generator so a failure can be replayed. No console
//! error and no panic may appear, and the page's memory must not grow with
//! the number of edits. Prints the heap at the start, middle and end.
//! Run by scripts/test with the other browser tests.

use serde_json::json;
use tussock_tests::{Browser, PageMemory};

/// Edits made (SOAK_EDITS overrides, for a longer soak by hand).
fn edits() -> u64 {
    std::env::var("SOAK_EDITS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1000)
}
const BATCH: u64 = 50;
const SEED: u64 = 20261203;

/// One batch of random edits in the page. Each edit waits two animation
/// frames (the page's charts redraw after paint). Returns the edits made.
const EDIT_BATCH: &str = r##"
const [seed, count, done] = arguments;
// xorshift64*: reproducible from the seed.
let s = BigInt(seed) | 1n;
const M = (1n << 64n) - 1n;
const next = () => {
    s ^= s >> 12n; s ^= (s << 25n) & M; s ^= s >> 27n;
    return Number(((s * 2685821657736338717n) & M) >> 11n) / 2 ** 53;
};
const pick = (list) => list[Math.floor(next() * list.length)];
const visible = (el) => el.offsetParent !== null && !el.disabled;
const nonsense = ["", "abc", "-1", "0", "1e308", "-1e308", "NaN", "Infinity", "1e-300",
    "<b>x</b>", "1,5", "  7 ", "2e", "--3", "99999999999", "0.0000001", "½", "1/0"];
const number = (old) => {
    const v = parseFloat(old);
    if (!isFinite(v) || next() < 0.3) return pick(nonsense);
    return String(+(v * (0.25 + 2.5 * next())).toPrecision(4));
};
const actions = [
    // Type into a text field of the current view.
    () => {
        const fields = [...document.querySelectorAll("main input[type=text], main input:not([type])")]
            .filter(visible).filter((f) => f.id !== "share-link");
        if (!fields.length) return "no field";
        const f = pick(fields);
        f.value = f.id.endsWith("-name") || f.id.startsWith("species") ? pick(["prey", "<i>x</i>", "", "a\"b"]) : number(f.value);
        f.dispatchEvent(new Event("input", {bubbles: true}));
        f.dispatchEvent(new Event("change", {bubbles: true}));
        return "type " + f.id + " = " + f.value;
    },
    // Choose an option of a drop-down (models, responses, examples, …).
    () => {
        const selects = [...document.querySelectorAll("main select")].filter(visible);
        if (!selects.length) return "no select";
        const sel = pick(selects);
        const opt = pick([...sel.options]);
        sel.value = opt.value;
        sel.dispatchEvent(new Event("change", {bubbles: true}));
        return "select " + sel.id + " = " + opt.value;
    },
    // Buttons that change the scenario or the view.
    () => {
        const buttons = [...document.querySelectorAll(
            "#undo, #redo, #add-event, [id^=view-], button[aria-label^='delete event']")]
            .filter(visible);
        if (!buttons.length) return "no button";
        const b = pick(buttons);
        b.click();
        return "click " + (b.id || b.getAttribute("aria-label"));
    },
    // Undo or redo from the keyboard.
    () => {
        const redo = next() < 0.5;
        document.dispatchEvent(new KeyboardEvent("keydown",
            {key: "z", ctrlKey: true, shiftKey: redo, bubbles: true}));
        return redo ? "ctrl+shift+z" : "ctrl+z";
    },
];
const log = [];
const step = (i) => {
    if (i >= count) { done(log); return; }
    try {
        log.push(pick(actions)());
    } catch (e) {
        log.push("THREW " + e);
    }
    requestAnimationFrame(() => requestAnimationFrame(() => step(i + 1)));
};
step(0);
"##;

fn mib(bytes: f64) -> String {
    format!("{:.1} MiB", bytes / (1024.0 * 1024.0))
}

fn describe(label: &str, m: PageMemory) -> String {
    format!(
        "{label}: JS heap {}, WebAssembly memory {}",
        mib(m.js_heap),
        mib(m.wasm)
    )
}

#[tokio::test]
#[ignore = "needs the app build and Chromium; run scripts/test"]
async fn a_thousand_random_edits_leave_no_error_and_no_growing_heap() {
    let b = Browser::start().await;
    b.client
        .update_timeouts(fantoccini::wd::TimeoutConfiguration::new(
            Some(std::time::Duration::from_secs(300)),
            None,
            None,
        ))
        .await
        .expect("set the script timeout");
    b.open_app().await;
    let start = b.memory().await;
    println!("{}", describe("start", start));
    let mut history: Vec<String> = Vec::new();
    let mut middle = start;
    let batches = edits() / BATCH;
    for batch in 0..batches {
        let done = b
            .client
            .execute_async(EDIT_BATCH, vec![json!(SEED + batch), json!(BATCH)])
            .await
            .expect("run a batch of edits");
        let edits: Vec<String> = serde_json::from_value(done).unwrap_or_default();
        assert_eq!(edits.len() as u64, BATCH, "batch {batch}: {edits:?}");
        history.extend(edits);
        let errors = b.console_errors().await;
        assert!(
            errors.is_empty(),
            "console errors after batch {batch} (seed {}): {errors:?}\nlast edits: {:?}",
            SEED + batch,
            &history[history.len().saturating_sub(10)..]
        );
        if (batch + 1) % (batches / 4).max(1) == 0 {
            let now = b.memory().await;
            println!(
                "{}",
                describe(&format!("after {} edits", (batch + 1) * BATCH), now)
            );
            if batch + 1 == batches / 2 {
                middle = now;
            }
        }
    }
    b.settle().await;
    let end = b.memory().await;
    let kinds = ["type ", "select ", "click ", "ctrl+", "no "];
    let counts: Vec<String> = kinds
        .iter()
        .map(|k| {
            format!(
                "{}{}",
                k,
                history.iter().filter(|e| e.starts_with(k)).count()
            )
        })
        .collect();
    println!("edits: {}", counts.join(", "));
    let threw: Vec<&String> = history.iter().filter(|e| e.starts_with("THREW")).collect();
    assert!(threw.is_empty(), "the page threw: {threw:?}");
    let fatal = b
        .client
        .execute("return document.querySelector('.fatal') !== null;", vec![])
        .await
        .expect("look for the fatal banner");
    assert_eq!(fatal, json!(false), "the page shows a fatal error");
    // Stable memory: the second half of the edits adds little to what the
    // first half left. Generous bounds: the undo list (200 scenarios) and
    // the allocator's high-water mark can still grow in the second half.
    let grew = |a: f64, b: f64| b - a;
    assert!(
        grew(middle.js_heap, end.js_heap) <= 8.0 * 1024.0 * 1024.0,
        "JS heap grew by {} over the second half",
        mib(grew(middle.js_heap, end.js_heap))
    );
    assert!(
        grew(middle.wasm, end.wasm) <= 16.0 * 1024.0 * 1024.0,
        "WebAssembly memory grew by {} over the second half",
        mib(grew(middle.wasm, end.wasm))
    );
    // The page still works: an example loads and its chart is drawn.
    b.click("#view-simulate").await;
    b.select("#example", "0").await;
    b.settle().await;
    assert!(
        b.canvas("chart-time").await.0 > 1000,
        "no chart after loading an example"
    );
    b.assert_clean_console().await;
    b.close().await;
}
