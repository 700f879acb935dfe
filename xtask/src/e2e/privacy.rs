//! Privacy: the page makes no request but its own document load, over http
//! and from disk, through a whole session (the demo loads, thresholds and the
//! rule change, a profile is saved), logs no error (so no CSP violation), and
//! its CSP really refuses connections.
//!
//! Requests are counted three ways:
//! - Chrome's performance log (`Network.requestWillBeSent` of the page's
//!   target): every request the page started, any scheme;
//! - the test server's own request log (http only);
//! - the page's Resource Timing entries (`performance.getEntriesByType('resource')`).
//!
//! `data:` and `blob:` URLs never leave the page and are not counted.

use std::time::Duration;

use super::harness::Request;
use super::{Browser, Ctx, Test};

pub fn tests() -> Vec<Test> {
    vec![
        Test::new(
            "http: no request but the document, no console error",
            |b, c| Box::pin(no_requests(b, c, c.http_url.as_str(), true)),
        ),
        Test::new(
            "file: no request but the document, no console error",
            |b, c| Box::pin(no_requests(b, c, c.file_url.as_str(), false)),
        ),
        Test::new("http: CSP refuses fetch", |b, c| {
            Box::pin(csp_refuses_fetch(b, c))
        }),
    ]
}

/// Whether the headline shows a number (the demo is loaded and scored).
fn scored(t: &str) -> bool {
    t.parse::<f64>().is_ok()
}

/// Open the page, use it, and check what went out.
async fn no_requests(b: &Browser, c: &Ctx, url: &str, served: bool) -> anyhow::Result<()> {
    b.client().goto("about:blank").await?;
    b.clear_logs().await?;
    let server_before = c.server_requests().len();

    // A whole session: the demo at startup, again by its button, tuning, a saved profile.
    b.open(url).await?;
    b.wait_text("metric-precision", "a number", scored).await?;
    b.click("load-demo").await?;
    b.wait_text("metric-precision", "a number", scored).await?;
    b.set_value("threshold-depth-2", "0.8").await?;
    b.set_value("threshold-depth-4", "0.35").await?;
    b.set_value("rule", "conditional").await?;
    b.set_value("threshold-all", "0.6").await?;
    b.wait_text("metric-precision", "a number", scored).await?;
    let profile = super::page::save_and_fetch(b).await?;
    anyhow::ensure!(
        std::fs::metadata(&profile)?.len() > 0,
        "the saved profile is empty"
    );
    // Give anything lazy (favicon, late fetches) time to show up.
    tokio::time::sleep(Duration::from_millis(1000)).await;

    let requests = b.requests().await?;
    let outgoing = outgoing(&requests, url);
    anyhow::ensure!(
        outgoing.is_empty(),
        "requests besides the document: {outgoing:#?} (all: {requests:#?})"
    );
    anyhow::ensure!(
        requests.iter().any(|r| r.resource_type == "Document"),
        "the performance log shows no document load at all: is network logging on? {requests:#?}"
    );

    let resources = b.resource_entries().await?;
    anyhow::ensure!(
        resources.is_empty(),
        "resource timing entries: {resources:?}"
    );

    if served {
        let server: Vec<String> = c.server_requests()[server_before..].to_vec();
        anyhow::ensure!(
            server == ["GET /"],
            "the server saw {server:?}, expected only GET /"
        );
    }

    let problems: Vec<_> = b
        .console()
        .await?
        .into_iter()
        .filter(|e| e.level == "SEVERE" || e.message.contains("Content Security Policy"))
        .collect();
    anyhow::ensure!(problems.is_empty(), "console errors: {problems:#?}");
    Ok(())
}

/// Requests that would leave the page: all but data:/blob:/about: URLs and
/// one load of the page's own document.
pub fn outgoing(requests: &[Request], page_url: &str) -> Vec<Request> {
    let mut document_seen = false;
    requests
        .iter()
        .filter(|r| {
            let local = ["data:", "blob:", "about:"]
                .iter()
                .any(|s| r.url.starts_with(s));
            if local {
                return false;
            }
            if !document_seen && r.resource_type == "Document" && r.url == page_url {
                document_seen = true;
                return false;
            }
            true
        })
        .cloned()
        .collect()
}

/// The CSP meta tag is in force: a fetch to the very server that served the
/// page is refused by the browser and never reaches the server.
async fn csp_refuses_fetch(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    b.open(&c.http_url).await?;
    let before = c.server_requests().len();
    let probe = format!("{}csp-probe", c.http_url);
    let result = b
        .eval(
            "return fetch(arguments[0]).then(() => 'sent', e => 'refused: ' + e);",
            vec![serde_json::json!(probe)],
        )
        .await?;
    let result = result.as_str().unwrap_or("").to_string();
    anyhow::ensure!(
        result.starts_with("refused"),
        "fetch was not refused: {result}"
    );
    tokio::time::sleep(Duration::from_millis(200)).await;
    let after: Vec<String> = c.server_requests()[before..].to_vec();
    anyhow::ensure!(after.is_empty(), "the server saw {after:?}");
    let console = b.console().await?;
    anyhow::ensure!(
        console
            .iter()
            .any(|e| e.message.contains("Content Security Policy")
                || e.message.contains("connect-src")),
        "no CSP violation was logged: {console:#?}"
    );
    Ok(())
}
