//! The app in a real browser: headless Chromium driven through ChromeDriver.
//!
//! These tests need the release build in `dist/` (or `TUSSOCK_DIST`) and
//! Debian's chromium and chromium-driver; `scripts/test` provides both and runs
//! them with `--ignored`. Screenshots go to `tests/artifacts/`.

use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use fantoccini::wd::WebDriverCompatibleCommand;
use fantoccini::{Client, ClientBuilder, Locator};
use serde_json::json;

const CHROMIUM: &str = "/usr/bin/chromium";
const CHROMEDRIVER: &str = "/usr/bin/chromedriver";

fn dist_dir() -> PathBuf {
    let dir = std::env::var_os("TUSSOCK_DIST")
        .map(PathBuf::from)
        .unwrap_or_else(|| Path::new(env!("CARGO_MANIFEST_DIR")).join("../dist"));
    assert!(
        dir.join("index.html").is_file(),
        "no app build at {} (run scripts/test, which builds it)",
        dir.display()
    );
    dir
}

fn content_type(path: &Path) -> &'static str {
    match path.extension().and_then(|e| e.to_str()) {
        Some("html") => "text/html; charset=utf-8",
        Some("js") => "text/javascript; charset=utf-8",
        Some("wasm") => "application/wasm",
        Some("css") => "text/css; charset=utf-8",
        Some("json") => "application/json",
        Some("png") => "image/png",
        Some("svg") => "image/svg+xml",
        _ => "application/octet-stream",
    }
}

/// Serve `dir` on a free loopback port from a background thread.
fn serve_static(dir: PathBuf) -> u16 {
    let server = tiny_http::Server::http("127.0.0.1:0").expect("bind a loopback port");
    let port = server.server_addr().to_ip().expect("an IP address").port();
    std::thread::spawn(move || {
        for request in server.incoming_requests() {
            let path = request
                .url()
                .split(['?', '#'])
                .next()
                .unwrap_or("/")
                .to_string();
            let relative = path.trim_start_matches('/');
            let relative = if relative.is_empty() {
                "index.html"
            } else {
                relative
            };
            let file = dir.join(relative);
            let response = if relative.split('/').any(|part| part == "..") || !file.is_file() {
                tiny_http::Response::from_string("not found")
                    .with_status_code(404)
                    .boxed()
            } else {
                let bytes = std::fs::read(&file).unwrap_or_default();
                let header = tiny_http::Header::from_bytes("Content-Type", content_type(&file))
                    .expect("a valid header");
                tiny_http::Response::from_data(bytes)
                    .with_header(header)
                    .boxed()
            };
            let _ = request.respond(response);
        }
    });
    port
}

fn free_port() -> u16 {
    std::net::TcpListener::bind("127.0.0.1:0")
        .and_then(|l| l.local_addr())
        .map(|a| a.port())
        .expect("a free port")
}

/// Chromium's console, read through ChromeDriver's log endpoint.
#[derive(Debug)]
struct BrowserLog;

impl WebDriverCompatibleCommand for BrowserLog {
    fn endpoint(
        &self,
        base: &url::Url,
        session: Option<&str>,
    ) -> Result<url::Url, url::ParseError> {
        base.join(&format!("session/{}/se/log", session.unwrap_or_default()))
    }
    fn method_and_body(&self, _url: &url::Url) -> (http::Method, Option<String>) {
        (
            http::Method::POST,
            Some(json!({"type": "browser"}).to_string()),
        )
    }
}

struct Browser {
    client: Client,
    driver: Child,
    base_url: String,
    _profile: TempDir,
}

struct TempDir(PathBuf);

impl Drop for TempDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

impl Browser {
    async fn start() -> Browser {
        let dist = dist_dir();
        let app_port = serve_static(dist);
        let driver_port = free_port();
        let driver = Command::new(CHROMEDRIVER)
            .arg(format!("--port={driver_port}"))
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .expect("start chromedriver (install chromium-driver)");
        let profile = std::env::temp_dir().join(format!("tussock-chromium-{driver_port}"));
        let capabilities = json!({
            "goog:chromeOptions": {
                "binary": CHROMIUM,
                "args": [
                    "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                    "--disable-background-networking", "--disable-component-update",
                    "--disable-sync", "--no-first-run", "--disable-quic",
                    "--window-size=1280,1000",
                    format!("--user-data-dir={}", profile.display()),
                ]
            },
            "goog:loggingPrefs": {"browser": "ALL"}
        });
        let capabilities = capabilities.as_object().cloned().unwrap_or_default();
        let webdriver = format!("http://127.0.0.1:{driver_port}");
        let deadline = Instant::now() + Duration::from_secs(20);
        let client = loop {
            match ClientBuilder::rustls()
                .expect("rustls client")
                .capabilities(capabilities.clone())
                .connect(&webdriver)
                .await
            {
                Ok(c) => break c,
                Err(e) if Instant::now() < deadline => {
                    let _ = e;
                    tokio::time::sleep(Duration::from_millis(200)).await;
                }
                Err(e) => panic!("could not start a Chromium session: {e}"),
            }
        };
        Browser {
            client,
            driver,
            base_url: format!("http://127.0.0.1:{app_port}/"),
            _profile: TempDir(profile),
        }
    }

    async fn open_app(&self) {
        self.client
            .goto(&self.base_url)
            .await
            .expect("open the app");
        self.wait_for_app().await;
    }

    /// Wait until the page in the browser has rendered its charts.
    async fn wait_for_app(&self) {
        self.client
            .wait()
            .at_most(Duration::from_secs(30))
            .for_element(Locator::Css("#chart-time"))
            .await
            .expect("the app renders its charts");
        self.settle().await;
    }

    /// Let the page finish pending work (effects run after paint).
    async fn settle(&self) {
        self.client
            .execute_async(
                "const done = arguments[0]; requestAnimationFrame(() => requestAnimationFrame(() => done(true)));",
                vec![],
            )
            .await
            .expect("page responds");
    }

    /// Non-white pixels and a checksum of a canvas, read back from the page.
    async fn canvas(&self, id: &str) -> (u64, u64) {
        let script = r#"
            const c = document.getElementById(arguments[0]);
            if (!c || c.width === 0 || c.height === 0) return [0, 0];
            const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
            let ink = 0, sum = 0;
            for (let i = 0; i < d.length; i += 4) {
                if (d[i] < 250 || d[i + 1] < 250 || d[i + 2] < 250) ink++;
                sum = (sum * 31 + d[i] + 7 * d[i + 1] + 13 * d[i + 2]) % 1000000007;
            }
            return [ink, sum];
        "#;
        let v = self
            .client
            .execute(script, vec![json!(id)])
            .await
            .expect("read canvas pixels");
        (v[0].as_u64().unwrap_or(0), v[1].as_u64().unwrap_or(0))
    }

    /// Replace the text of an input by typing, as a user would.
    async fn type_into(&self, css: &str, text: &str) {
        let field = self
            .client
            .find(Locator::Css(css))
            .await
            .expect("find the field");
        field.click().await.expect("focus the field");
        // Ctrl+A, Backspace, then the new text: each key fires an input event.
        field
            .send_keys("\u{E009}a\u{E000}\u{E003}")
            .await
            .expect("clear the field");
        field.send_keys(text).await.expect("type into the field");
        self.settle().await;
    }

    async fn text_of(&self, css: &str) -> String {
        let el = self
            .client
            .find(Locator::Css(css))
            .await
            .expect("find the element");
        el.text().await.expect("read its text")
    }

    /// Console messages of level SEVERE (errors and uncaught exceptions).
    async fn console_errors(&self) -> Vec<String> {
        let log = self
            .client
            .issue_cmd(BrowserLog)
            .await
            .expect("read the browser log");
        log.as_array()
            .map(|entries| {
                entries
                    .iter()
                    .filter(|e| e["level"] == "SEVERE")
                    .map(|e| e["message"].as_str().unwrap_or_default().to_string())
                    .collect()
            })
            .unwrap_or_default()
    }

    async fn value_of(&self, css: &str) -> String {
        let field = self
            .client
            .find(Locator::Css(css))
            .await
            .expect("find the field");
        field
            .prop("value")
            .await
            .expect("read its value")
            .unwrap_or_default()
    }

    async fn assert_clean_console(&self) {
        let errors = self.console_errors().await;
        assert!(errors.is_empty(), "console errors: {errors:?}");
    }

    async fn screenshot(&self, name: &str) {
        let png = self.client.screenshot().await.expect("take a screenshot");
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("artifacts");
        std::fs::create_dir_all(&dir).expect("create tests/artifacts");
        std::fs::write(dir.join(format!("{name}.png")), png).expect("save the screenshot");
    }

    async fn close(mut self) {
        let _ = self.client.close().await;
        let _ = self.driver.kill();
        let _ = self.driver.wait();
    }
}

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

impl Browser {
    async fn select(&self, css: &str, value: &str) {
        let el = self
            .client
            .find(Locator::Css(css))
            .await
            .expect("find the select");
        el.select_by_value(value).await.expect("choose an option");
        self.settle().await;
    }

    async fn click_at(&self, css: &str, fx: f64, fy: f64) {
        // Click at a fraction of the element's size, through a real pointer.
        let el = self
            .client
            .find(Locator::Css(css))
            .await
            .expect("find the element");
        let (_, _, w, h) = el.rectangle().await.expect("its size");
        use fantoccini::actions::InputSource;
        let actions = fantoccini::actions::MouseActions::new("mouse".to_string())
            .then(fantoccini::actions::PointerAction::MoveToElement {
                element: el.clone(),
                duration: None,
                x: (fx - 0.5) * w,
                y: (fy - 0.5) * h,
            })
            .then(fantoccini::actions::PointerAction::Down {
                button: fantoccini::actions::MOUSE_BUTTON_LEFT,
            })
            .then(fantoccini::actions::PointerAction::Up {
                button: fantoccini::actions::MOUSE_BUTTON_LEFT,
            });
        self.client.perform_actions(actions).await.expect("click");
        self.settle().await;
    }
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
