//! A small harness for driving the page in headless Chromium through
//! chromedriver (WebDriver, via fantoccini without TLS).
//!
//! Elements are addressed by their `data-testid`. The helpers wait (up to
//! [`Config::timeout`]) for what they look for, since the page renders
//! asynchronously after the wasm starts.
//!
//! Network requests are read from Chrome's performance log
//! (`goog:loggingPrefs` {"performance": "ALL"}, `Network.requestWillBeSent`
//! events), fetched with chromedriver's log endpoint `POST /session/{id}/se/log`
//! as a raw WebDriver command; the console from the "browser" log the same way.
//! Reading a log empties chromedriver's buffer of it.

use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::mpsc;
use std::time::{Duration, Instant};

use anyhow::{anyhow, bail, Context};
use fantoccini::elements::Element;
use fantoccini::wd::{Capabilities, WebDriverCompatibleCommand};
use fantoccini::{Client, ClientBuilder, Locator};
use serde_json::{json, Value};

/// Where the browser and its driver are and how the browser is run.
#[derive(Debug, Clone)]
pub struct Config {
    pub chromedriver: PathBuf,
    pub chromium: PathBuf,
    pub window: (u32, u32),
    /// How long the helpers wait for an element, a text or the page to start.
    pub timeout: Duration,
    /// Where downloads land (Chrome's `download.default_directory`).
    pub download_dir: PathBuf,
}

impl Config {
    /// Debian's paths, overridable with `HEDGEROW_CHROMEDRIVER` and `HEDGEROW_CHROMIUM`.
    pub fn from_env() -> Self {
        let path = |var: &str, default: &str| {
            std::env::var_os(var)
                .map(PathBuf::from)
                .unwrap_or_else(|| PathBuf::from(default))
        };
        Self {
            chromedriver: path("HEDGEROW_CHROMEDRIVER", "/usr/bin/chromedriver"),
            chromium: path("HEDGEROW_CHROMIUM", "/usr/bin/chromium"),
            window: (1280, 800),
            timeout: Duration::from_secs(20),
            download_dir: crate::root().join("target").join("e2e").join("downloads"),
        }
    }
}

/// A running chromedriver, on the port it chose itself (`--port=0`); killed on drop.
pub struct Chromedriver {
    child: Child,
    port: u16,
}

impl Chromedriver {
    pub fn start(path: &Path) -> anyhow::Result<Self> {
        let mut child = Command::new(path)
            .arg("--port=0")
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .stderr(Stdio::inherit())
            .spawn()
            .with_context(|| {
                format!(
                    "starting {} (install Debian's chromium and chromium-driver, \
                     or set HEDGEROW_CHROMEDRIVER)",
                    path.display()
                )
            })?;
        let stdout = child.stdout.take().context("chromedriver stdout")?;
        // Read stdout on a thread: find the port line, then keep draining so
        // that chromedriver never blocks on a full pipe.
        let (tx, rx) = mpsc::channel();
        std::thread::spawn(move || {
            let mut tx = Some(tx);
            for line in BufReader::new(stdout).lines() {
                let Ok(line) = line else { break };
                if let Some(port) = parse_port_line(&line) {
                    if let Some(tx) = tx.take() {
                        let _ = tx.send(port);
                    }
                }
            }
        });
        match rx.recv_timeout(Duration::from_secs(20)) {
            Ok(port) => Ok(Self { child, port }),
            Err(_) => {
                let _ = child.kill();
                let _ = child.wait();
                bail!("chromedriver did not report its port")
            }
        }
    }

    pub fn url(&self) -> String {
        format!("http://127.0.0.1:{}", self.port)
    }
}

impl Drop for Chromedriver {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// "ChromeDriver was started successfully on port 46811."
fn parse_port_line(line: &str) -> Option<u16> {
    let rest = line.split("started successfully on port ").nth(1)?;
    rest.trim().trim_end_matches('.').parse().ok()
}

/// One request the page made, from `Network.requestWillBeSent`.
#[derive(Debug, Clone)]
pub struct Request {
    pub url: String,
    #[allow(dead_code)] // shown in failure messages (Debug)
    pub method: String,
    /// "Document", "Script", "Fetch", "Image", ...
    pub resource_type: String,
}

/// One console message (from the "browser" log).
#[derive(Debug, Clone)]
pub struct ConsoleEntry {
    /// "SEVERE", "WARNING", "INFO", ...
    pub level: String,
    pub message: String,
}

/// A headless Chromium session.
pub struct Browser {
    client: Client,
    // Dropped after the client is closed: kills chromedriver.
    _driver: Chromedriver,
    profile_dir: PathBuf,
    pub timeout: Duration,
    /// Where downloads land.
    pub download_dir: PathBuf,
}

impl Browser {
    /// Start chromedriver and a headless Chromium with a fresh profile.
    pub async fn launch(cfg: &Config) -> anyhow::Result<Self> {
        let driver = Chromedriver::start(&cfg.chromedriver)?;
        let profile_dir = fresh_profile_dir()?;
        std::fs::create_dir_all(&cfg.download_dir)
            .with_context(|| format!("creating {}", cfg.download_dir.display()))?;
        let download_dir = std::fs::canonicalize(&cfg.download_dir)?;
        let args = vec![
            "--headless".to_string(),
            "--no-sandbox".into(),
            "--disable-gpu".into(),
            "--disable-dev-shm-usage".into(),
            "--disable-background-networking".into(),
            "--disable-component-update".into(),
            "--disable-sync".into(),
            "--disable-default-apps".into(),
            "--disable-extensions".into(),
            "--no-first-run".into(),
            "--no-default-browser-check".into(),
            "--disable-quic".into(),
            "--hide-scrollbars".into(),
            // performance.memory in exact bytes (not bucketed), for the memory figures.
            "--enable-precise-memory-info".into(),
            format!("--window-size={},{}", cfg.window.0, cfg.window.1),
            format!("--user-data-dir={}", profile_dir.display()),
        ];
        let caps = json!({
            "browserName": "chrome",
            "goog:chromeOptions": {
                "binary": cfg.chromium,
                "args": args,
                "perfLoggingPrefs": { "enableNetwork": true, "enablePage": false },
                // Downloads (a saved profile) go straight to a known folder, headless too.
                "prefs": {
                    "download.default_directory": download_dir,
                    "download.prompt_for_download": false,
                    "download.directory_upgrade": true,
                    "safebrowsing.enabled": false,
                },
            },
            "goog:loggingPrefs": { "performance": "ALL", "browser": "ALL" },
        });
        let caps: Capabilities = match caps {
            Value::Object(map) => map,
            _ => unreachable!("capabilities are an object"),
        };
        let connector = hyper_util::client::legacy::connect::HttpConnector::new();
        let client = ClientBuilder::new(connector)
            .capabilities(caps)
            .connect(&driver.url())
            .await
            .context("opening a WebDriver session in chromedriver")?;
        fit_viewport(&client, cfg.window).await?;
        Ok(Self {
            client,
            _driver: driver,
            profile_dir,
            timeout: cfg.timeout,
            download_dir,
        })
    }

    /// End the session, stop the driver and remove the profile.
    pub async fn close(self) -> anyhow::Result<()> {
        let Self {
            client,
            _driver,
            profile_dir,
            ..
        } = self;
        let closed = client.close().await;
        drop(_driver);
        let _ = std::fs::remove_dir_all(&profile_dir);
        closed.context("closing the WebDriver session")
    }

    /// The fantoccini client, for anything the helpers don't cover.
    pub fn client(&self) -> &Client {
        &self.client
    }

    /// Navigate to `url` and wait until the page's wasm has started (the boot
    /// status line is gone); fails with the page's own message if it could not.
    pub async fn open(&self, url: &str) -> anyhow::Result<()> {
        self.client
            .goto(url)
            .await
            .with_context(|| format!("opening {url}"))?;
        let probe = r#"
            const s = document.getElementById("boot-status");
            if (!s) return "ready";
            if (s.classList.contains("boot-error")) return "error: " + s.textContent;
            return "loading";
        "#;
        let deadline = Instant::now() + self.timeout;
        loop {
            let state = self.eval(probe, vec![]).await?;
            match state.as_str().unwrap_or("") {
                "ready" => return Ok(()),
                s if s.starts_with("error") => bail!("{url}: {s}"),
                _ if Instant::now() > deadline => bail!("{url}: the page did not start in time"),
                _ => tokio::time::sleep(Duration::from_millis(50)).await,
            }
        }
    }

    /// The CSS selector for a `data-testid`.
    pub fn testid(id: &str) -> String {
        format!(
            "[data-testid=\"{}\"]",
            id.replace('\\', "\\\\").replace('"', "\\\"")
        )
    }

    /// Wait for the element with this `data-testid`.
    pub async fn find(&self, id: &str) -> anyhow::Result<Element> {
        let sel = Self::testid(id);
        self.client
            .wait()
            .at_most(self.timeout)
            .for_element(Locator::Css(&sel))
            .await
            .with_context(|| format!("waiting for {sel}"))
    }

    /// Every element with this `data-testid` now (no waiting).
    pub async fn find_all(&self, id: &str) -> anyhow::Result<Vec<Element>> {
        let sel = Self::testid(id);
        Ok(self.client.find_all(Locator::Css(&sel)).await?)
    }

    pub async fn click(&self, id: &str) -> anyhow::Result<()> {
        self.find(id)
            .await?
            .click()
            .await
            .with_context(|| format!("clicking {id}"))
    }

    /// The rendered text of an element.
    pub async fn text(&self, id: &str) -> anyhow::Result<String> {
        Ok(self.find(id).await?.text().await?)
    }

    /// Wait until an element's text satisfies `ok`; returns that text.
    pub async fn wait_text(
        &self,
        id: &str,
        what: &str,
        ok: impl Fn(&str) -> bool,
    ) -> anyhow::Result<String> {
        let deadline = Instant::now() + self.timeout;
        loop {
            let text = self.text(id).await?;
            if ok(&text) {
                return Ok(text);
            }
            if Instant::now() > deadline {
                bail!("[data-testid={id}]: expected {what}, text is {text:?}");
            }
            tokio::time::sleep(Duration::from_millis(50)).await;
        }
    }

    /// Set an input's (or select's, or textarea's) value as a user would
    /// end up doing, and fire `input` then `change` (both bubbling).
    pub async fn set_value(&self, id: &str, value: &str) -> anyhow::Result<()> {
        self.find(id).await?;
        let js = r#"
            const [sel, value] = arguments;
            const el = document.querySelector(sel);
            if (!el) throw new Error("no element " + sel);
            const desc = Object.getOwnPropertyDescriptor(Object.getPrototypeOf(el), "value");
            if (desc && desc.set) desc.set.call(el, value); else el.value = value;
            el.dispatchEvent(new InputEvent("input", { bubbles: true }));
            el.dispatchEvent(new Event("change", { bubbles: true }));
        "#;
        self.eval(js, vec![json!(Self::testid(id)), json!(value)])
            .await
            .with_context(|| format!("setting {id} to {value:?}"))?;
        Ok(())
    }

    /// Choose a local file in an `<input type="file">` (WebDriver sends the path).
    pub async fn upload_file(&self, id: &str, path: &Path) -> anyhow::Result<()> {
        let abs = std::fs::canonicalize(path).with_context(|| format!("{}", path.display()))?;
        self.find(id)
            .await?
            .send_keys(&abs.to_string_lossy())
            .await
            .with_context(|| format!("uploading {} into {id}", abs.display()))
    }

    /// Choose several local files at once in an `<input type="file" multiple>` (chromedriver
    /// takes the paths separated by newlines), as one selection.
    pub async fn upload_files(&self, id: &str, paths: &[&Path]) -> anyhow::Result<()> {
        let mut abs = Vec::new();
        for p in paths {
            let a = std::fs::canonicalize(p).with_context(|| format!("{}", p.display()))?;
            abs.push(a.to_string_lossy().into_owned());
        }
        let keys = abs.join("\n");
        self.find(id)
            .await?
            .send_keys(&keys)
            .await
            .with_context(|| format!("uploading {abs:?} into {id}"))
    }

    /// Run a script in the page (`arguments[i]` are `args`); a returned
    /// promise is awaited by the driver.
    pub async fn eval(&self, js: &str, args: Vec<Value>) -> anyhow::Result<Value> {
        self.client
            .execute(js, args)
            .await
            .context("executing script in the page")
    }

    /// Save a PNG screenshot of the viewport.
    pub async fn screenshot(&self, path: &Path) -> anyhow::Result<()> {
        let png = self
            .client
            .screenshot()
            .await
            .context("taking a screenshot")?;
        if let Some(dir) = path.parent() {
            std::fs::create_dir_all(dir)?;
        }
        std::fs::write(path, png).with_context(|| format!("writing {}", path.display()))
    }

    /// Read (and empty) one of chromedriver's logs: "performance" or "browser".
    pub async fn log(&self, kind: &str) -> anyhow::Result<Vec<Value>> {
        let v = self
            .client
            .issue_cmd(GetLog(kind.to_string()))
            .await
            .with_context(|| format!("reading the {kind} log"))?;
        match v {
            Value::Array(entries) => Ok(entries),
            other => Err(anyhow!("the {kind} log is not a list: {other}")),
        }
    }

    /// Empty the logs, so that the next read sees only what follows.
    pub async fn clear_logs(&self) -> anyhow::Result<()> {
        self.log("performance").await?;
        self.log("browser").await?;
        Ok(())
    }

    /// Every request the page started since the logs were last read.
    pub async fn requests(&self) -> anyhow::Result<Vec<Request>> {
        let mut out = Vec::new();
        for entry in self.log("performance").await? {
            let Some(msg) = entry.get("message").and_then(Value::as_str) else {
                continue;
            };
            let Ok(msg) = serde_json::from_str::<Value>(msg) else {
                continue;
            };
            let msg = &msg["message"];
            if msg["method"] != "Network.requestWillBeSent" {
                continue;
            }
            let p = &msg["params"];
            let s = |v: &Value| v.as_str().unwrap_or("").to_string();
            out.push(Request {
                url: s(&p["request"]["url"]),
                method: s(&p["request"]["method"]),
                resource_type: s(&p["type"]),
            });
        }
        Ok(out)
    }

    /// Console messages since the logs were last read.
    pub async fn console(&self) -> anyhow::Result<Vec<ConsoleEntry>> {
        Ok(self
            .log("browser")
            .await?
            .into_iter()
            .map(|e| ConsoleEntry {
                level: e["level"].as_str().unwrap_or("").to_string(),
                message: e["message"].as_str().unwrap_or("").to_string(),
            })
            .collect())
    }

    /// The page's own Resource Timing entries (names of loaded resources).
    pub async fn resource_entries(&self) -> anyhow::Result<Vec<String>> {
        let v = self
            .eval(
                "return performance.getEntriesByType('resource').map(e => e.name);",
                vec![],
            )
            .await?;
        Ok(v.as_array()
            .map(|a| {
                a.iter()
                    .map(|x| x.as_str().unwrap_or("").to_string())
                    .collect()
            })
            .unwrap_or_default())
    }
}

/// Resize the window so that the page's viewport (not the window, which has the browser's
/// own bars even headless) is `width`×`height`, as on a screen of that size.
async fn fit_viewport(client: &Client, (width, height): (u32, u32)) -> anyhow::Result<()> {
    for _ in 0..3 {
        let v = client
            .execute("return [window.innerWidth, window.innerHeight];", vec![])
            .await
            .context("reading the viewport size")?;
        let inner = |i: usize| v[i].as_u64().unwrap_or(0) as i64;
        let (dw, dh) = (i64::from(width) - inner(0), i64::from(height) - inner(1));
        if dw == 0 && dh == 0 {
            return Ok(());
        }
        let (w, h) = client.get_window_size().await?;
        let grow = |outer: u64, d: i64| (outer as i64 + d).max(100) as u32;
        client.set_window_size(grow(w, dw), grow(h, dh)).await?;
    }
    Ok(())
}

/// `POST /session/{id}/se/log {"type": kind}`: chromedriver's log endpoint,
/// which the W3C protocol (and so fantoccini) has no command for.
#[derive(Debug)]
struct GetLog(String);

impl WebDriverCompatibleCommand for GetLog {
    fn endpoint(
        &self,
        base_url: &url::Url,
        session_id: Option<&str>,
    ) -> Result<url::Url, url::ParseError> {
        base_url.join(&format!(
            "session/{}/se/log",
            session_id.unwrap_or_default()
        ))
    }

    fn method_and_body(&self, _request_url: &url::Url) -> (http::Method, Option<String>) {
        (
            http::Method::POST,
            Some(json!({ "type": self.0 }).to_string()),
        )
    }
}

fn fresh_profile_dir() -> anyhow::Result<PathBuf> {
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    let dir = std::env::temp_dir().join(format!(
        "hedgerow-e2e-profile-{}-{nanos}",
        std::process::id()
    ));
    std::fs::create_dir_all(&dir).with_context(|| format!("creating {}", dir.display()))?;
    Ok(dir)
}

/// `file:///abs/path` for a local file.
pub fn file_url(path: &Path) -> anyhow::Result<String> {
    let abs = std::fs::canonicalize(path).with_context(|| format!("{}", path.display()))?;
    url::Url::from_file_path(&abs)
        .map(String::from)
        .map_err(|()| anyhow!("no file URL for {}", abs.display()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn port_line() {
        assert_eq!(
            parse_port_line("ChromeDriver was started successfully on port 46811."),
            Some(46811)
        );
        assert_eq!(parse_port_line("Only local connections are allowed."), None);
    }

    #[test]
    fn testid_selector() {
        assert_eq!(Browser::testid("load-demo"), "[data-testid=\"load-demo\"]");
    }
}
