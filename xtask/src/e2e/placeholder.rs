//! Tests of the placeholder page: the wasm starts over http and from disk,
//! clicks and input events reach Rust, the error line shows messages.
//! Replace these with the real page's tests as it is written.

use super::{Browser, Ctx, Test};

pub fn tests() -> Vec<Test> {
    vec![
        Test::new("http: load-demo sets the status", |b, c| {
            Box::pin(load_demo(b, c.http_url.as_str()))
        }),
        Test::new("file: load-demo sets the status", |b, c| {
            Box::pin(load_demo(b, c.file_url.as_str()))
        }),
        Test::new("http: threshold input and error line", |b, c| {
            Box::pin(threshold_input(b, c))
        }),
        Test::new("file: screenshot", |b, c| Box::pin(screenshot(b, c))),
    ]
}

async fn load_demo(b: &Browser, url: &str) -> anyhow::Result<()> {
    b.open(url).await?;
    let before = b.text("status").await?;
    anyhow::ensure!(
        before == "No data loaded.",
        "status before the click: {before:?}"
    );
    b.click("load-demo").await?;
    b.wait_text("status", "\"Demo loaded…\"", |t| {
        t.starts_with("Demo loaded")
    })
    .await?;
    let error = b.text("error").await?;
    anyhow::ensure!(error.is_empty(), "error line: {error:?}");
    Ok(())
}

async fn threshold_input(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    b.open(&c.http_url).await?;
    b.set_value("threshold", "0.25").await?;
    b.wait_text("threshold-echo", "threshold = 0.25", |t| {
        t == "threshold = 0.25"
    })
    .await?;
    b.set_value("threshold", "7").await?;
    b.wait_text("error", "an error message", |t| t.contains("[0, 1]"))
        .await?;
    b.set_value("threshold", "0.75").await?;
    b.wait_text("error", "no error", str::is_empty).await?;
    b.wait_text("threshold-echo", "threshold = 0.75", |t| {
        t == "threshold = 0.75"
    })
    .await?;
    Ok(())
}

async fn screenshot(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    b.open(&c.file_url).await?;
    b.click("load-demo").await?;
    b.set_value("threshold", "0.3").await?;
    b.wait_text("status", "\"Demo loaded…\"", |t| {
        t.starts_with("Demo loaded")
    })
    .await?;
    // Let the chart effect run before the shot.
    tokio::time::sleep(std::time::Duration::from_millis(200)).await;
    b.screenshot(&c.out_dir.join("placeholder.png")).await
}
