//! Headless Chromium driving the built app, for the browser tests
//! (`tests/browser.rs`) and the browser benchmark (`benches/browser.rs`).
//!
//! Both need the release build in `dist/` (or `TUSSOCK_DIST`) and Debian's
//! chromium and chromium-driver; `scripts/test` and `scripts/bench` provide
//! them. Screenshots go to `tests/artifacts/`.

use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use fantoccini::wd::WebDriverCompatibleCommand;
use fantoccini::{Client, ClientBuilder, Locator};
use serde_json::json;

const CHROMIUM: &str = "/usr/bin/chromium";
const CHROMEDRIVER: &str = "/usr/bin/chromedriver";

pub fn dist_dir() -> PathBuf {
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

pub fn content_type(path: &Path) -> &'static str {
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
pub fn serve_static(dir: PathBuf) -> u16 {
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

pub fn free_port() -> u16 {
    std::net::TcpListener::bind("127.0.0.1:0")
        .and_then(|l| l.local_addr())
        .map(|a| a.port())
        .expect("a free port")
}

/// Chromium's console, read through ChromeDriver's log endpoint.
#[derive(Debug)]
pub struct BrowserLog;

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

/// A Chrome DevTools Protocol command, sent through ChromeDriver.
#[derive(Debug)]
pub struct DevTools {
    pub cmd: &'static str,
    pub params: serde_json::Value,
}

impl WebDriverCompatibleCommand for DevTools {
    fn endpoint(
        &self,
        base: &url::Url,
        session: Option<&str>,
    ) -> Result<url::Url, url::ParseError> {
        base.join(&format!(
            "session/{}/goog/cdp/execute",
            session.unwrap_or_default()
        ))
    }
    fn method_and_body(&self, _url: &url::Url) -> (http::Method, Option<String>) {
        (
            http::Method::POST,
            Some(json!({"cmd": self.cmd, "params": self.params}).to_string()),
        )
    }
}

/// Memory of the page after a garbage collection, in bytes.
#[derive(Clone, Copy, Debug)]
pub struct PageMemory {
    /// The JavaScript heap in use.
    pub js_heap: f64,
    /// The linear memory of every WebAssembly instance in the page.
    pub wasm: f64,
}

pub struct Browser {
    pub client: Client,
    driver: Child,
    pub base_url: String,
    _profile: TempDir,
    /// Where Chromium saves downloads.
    pub downloads: TempDir,
}

pub struct TempDir(pub PathBuf);

impl Drop for TempDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

impl Browser {
    pub async fn start() -> Browser {
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
        let downloads = std::env::temp_dir().join(format!("tussock-downloads-{driver_port}"));
        std::fs::create_dir_all(&downloads).expect("create the download folder");
        let capabilities = json!({
            "goog:chromeOptions": {
                "binary": CHROMIUM,
                "args": [
                    "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                    "--disable-background-networking", "--disable-component-update",
                    "--disable-sync", "--no-first-run", "--disable-quic",
                    "--window-size=1280,1000",
                    format!("--user-data-dir={}", profile.display()),
                ],
                "prefs": {
                    "download.default_directory": downloads.display().to_string(),
                    "download.prompt_for_download": false
                }
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
            downloads: TempDir(downloads),
        }
    }

    pub async fn open_app(&self) {
        self.client
            .goto(&self.base_url)
            .await
            .expect("open the app");
        self.wait_for_app().await;
    }

    /// Wait until the page in the browser has rendered its charts.
    pub async fn wait_for_app(&self) {
        self.client
            .wait()
            .at_most(Duration::from_secs(30))
            .for_element(Locator::Css("#chart-time"))
            .await
            .expect("the app renders its charts");
        self.settle().await;
    }

    /// Let the page finish pending work (effects run after paint).
    pub async fn settle(&self) {
        self.client
            .execute_async(
                "const done = arguments[0]; requestAnimationFrame(() => requestAnimationFrame(() => done(true)));",
                vec![],
            )
            .await
            .expect("page responds");
    }

    /// Non-white pixels and a checksum of a canvas, read back from the page.
    pub async fn canvas(&self, id: &str) -> (u64, u64) {
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
    pub async fn type_into(&self, css: &str, text: &str) {
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

    pub async fn text_of(&self, css: &str) -> String {
        let el = self
            .client
            .find(Locator::Css(css))
            .await
            .expect("find the element");
        el.text().await.expect("read its text")
    }

    /// Console messages of level SEVERE (errors and uncaught exceptions).
    pub async fn console_errors(&self) -> Vec<String> {
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

    /// Collect garbage, then read the page's heap (DevTools' Runtime.getHeapUsage).
    pub async fn memory(&self) -> PageMemory {
        let gc = DevTools {
            cmd: "HeapProfiler.collectGarbage",
            params: json!({}),
        };
        self.client.issue_cmd(gc).await.expect("collect garbage");
        let usage = DevTools {
            cmd: "Runtime.getHeapUsage",
            params: json!({}),
        };
        let v = self.client.issue_cmd(usage).await.expect("read the heap");
        PageMemory {
            js_heap: v["usedSize"].as_f64().unwrap_or(f64::NAN),
            wasm: self.wasm_memory().await,
        }
    }

    /// Web Workers alive in the browser (DevTools' Target.getTargets).
    pub async fn workers(&self) -> usize {
        let targets = DevTools {
            cmd: "Target.getTargets",
            params: json!({}),
        };
        let v = self.client.issue_cmd(targets).await.expect("list targets");
        v["targetInfos"]
            .as_array()
            .map_or(0, |t| t.iter().filter(|t| t["type"] == "worker").count())
    }

    /// Bytes of linear memory of all live `WebAssembly.Memory` objects,
    /// found through DevTools' Runtime.queryObjects (the page's bindings
    /// keep theirs private).
    async fn wasm_memory(&self) -> f64 {
        let cdp = |cmd, params| DevTools { cmd, params };
        let proto = self
            .client
            .issue_cmd(cdp(
                "Runtime.evaluate",
                json!({"expression": "WebAssembly.Memory.prototype"}),
            ))
            .await
            .expect("find WebAssembly.Memory");
        let found = self
            .client
            .issue_cmd(cdp(
                "Runtime.queryObjects",
                json!({"prototypeObjectId": proto["result"]["objectId"]}),
            ))
            .await
            .expect("query the memories");
        let total = self
            .client
            .issue_cmd(cdp(
                "Runtime.callFunctionOn",
                json!({
                    "objectId": found["objects"]["objectId"],
                    "functionDeclaration": "function () { return this.reduce((s, m) => s + m.buffer.byteLength, 0); }",
                    "returnByValue": true
                }),
            ))
            .await
            .expect("add up their sizes");
        total["result"]["value"].as_f64().unwrap_or(f64::NAN)
    }

    /// The value of a field, read in one step in the page (a find and then
    /// a read can miss when the view re-renders in between).
    pub async fn value_of(&self, css: &str) -> String {
        let value = self
            .client
            .execute(
                "const e = document.querySelector(arguments[0]); return e ? String(e.value) : null;",
                vec![json!(css)],
            )
            .await
            .expect("read the field");
        match value.as_str() {
            Some(v) => v.to_string(),
            None => panic!("no field {css}"),
        }
    }

    pub async fn assert_clean_console(&self) {
        let errors = self.console_errors().await;
        assert!(errors.is_empty(), "console errors: {errors:?}");
    }

    pub async fn screenshot(&self, name: &str) {
        let png = self.client.screenshot().await.expect("take a screenshot");
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("artifacts");
        std::fs::create_dir_all(&dir).expect("create tests/artifacts");
        std::fs::write(dir.join(format!("{name}.png")), png).expect("save the screenshot");
    }

    pub async fn close(mut self) {
        let _ = self.client.close().await;
        let _ = self.driver.kill();
        let _ = self.driver.wait();
    }
}

impl Browser {
    pub async fn select(&self, css: &str, value: &str) {
        let el = self
            .client
            .find(Locator::Css(css))
            .await
            .expect("find the select");
        el.select_by_value(value).await.expect("choose an option");
        self.settle().await;
    }

    pub async fn click(&self, css: &str) {
        // A view that re-renders while a job streams results can replace
        // the element between finding and clicking it: find it again.
        for attempt in 0.. {
            let el = self
                .client
                .find(Locator::Css(css))
                .await
                .unwrap_or_else(|e| panic!("find {css}: {e}"));
            match el.click().await {
                Ok(()) => break,
                Err(e) if attempt < 5 && e.to_string().contains("stale element") => continue,
                Err(e) => panic!("click {css}: {e}"),
            }
        }
        self.settle().await;
    }

    /// Wait until the text of `css` satisfies `done` (a worker job
    /// finishing, say); panics with the last text after `seconds`.
    pub async fn wait_for_text(
        &self,
        css: &str,
        seconds: u64,
        done: impl Fn(&str) -> bool,
    ) -> String {
        let deadline = Instant::now() + Duration::from_secs(seconds);
        let mut last = String::new();
        loop {
            if let Ok(el) = self.client.find(Locator::Css(css)).await {
                last = el.text().await.unwrap_or_default();
                if done(&last) {
                    return last;
                }
            }
            assert!(
                Instant::now() < deadline,
                "{css} did not change as expected within {seconds} s; last text: {last:?}"
            );
            tokio::time::sleep(Duration::from_millis(200)).await;
        }
    }

    /// Set a form field's value the way a paste does (one input event), or
    /// a choice the way a pick does (one change event).
    pub async fn paste_into(&self, css: &str, text: &str) {
        self.client
            .execute(
                "const f = document.querySelector(arguments[0]); f.value = arguments[1]; f.dispatchEvent(new Event(f.tagName === 'SELECT' ? 'change' : 'input', {bubbles: true}));",
                vec![json!(css), json!(text)],
            )
            .await
            .expect("paste into the field");
        self.settle().await;
    }

    /// The text of a downloaded file, once Chromium has finished writing it.
    pub async fn downloaded(&self, name: &str) -> String {
        let path = self.downloads.0.join(name);
        let deadline = Instant::now() + Duration::from_secs(20);
        while !path.is_file() {
            assert!(Instant::now() < deadline, "{name} was not downloaded");
            tokio::time::sleep(Duration::from_millis(200)).await;
        }
        std::fs::read_to_string(&path).expect("read the download")
    }

    pub async fn click_at(&self, css: &str, fx: f64, fy: f64) {
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
