//! `cargo xtask e2e`: end-to-end tests of the built page in headless Chromium.
//!
//! Builds the page (unless `--no-build`) and the command line (`hedgerow`, whose
//! `evaluate --json` on `demo-data/` gives the numbers the page must show), serves
//! `dist/` on an ephemeral port of 127.0.0.1 on a background thread, starts
//! chromedriver and one headless Chromium session, and runs every test in order
//! against both the http URL and `file://…/dist/index.html`. Screenshots go to
//! `target/e2e/`, including one per failed test (`target/e2e/failed-<test>.png`);
//! the measured figures (load time, one threshold change, a 300 MB batch's read time, frame
//! gaps and memory) to `target/e2e/figures.txt`. Generated batches are kept (and reused) under
//! `target/e2e/batch-*`.
//!
//! `a11y.rs` runs axe-core (npm, pinned in `xtask/e2e-assets/package-lock.json`, installed
//! with `npm ci` when missing) on every page state; `agree.rs` compares random batches scored natively and in wasm.
//!
//! Add tests in a module under `e2e/` and list them in [`all_tests`].

mod a11y;
mod agree;
mod big;
mod compare;
mod frames;
mod harness;
mod journey;
mod nodes;
mod page;
mod privacy;
mod suggest;

use std::future::Future;
use std::path::PathBuf;
use std::pin::Pin;
use std::sync::{Arc, Mutex};
use std::time::Instant;

use anyhow::{bail, Context};

pub use harness::{Browser, Config};

const USAGE: &str = "usage: cargo xtask e2e [--no-build] [--filter TEXT]

  --no-build     test dist/ as it is
  --filter TEXT  run only the tests whose name contains TEXT

env: HEDGEROW_CHROMIUM, HEDGEROW_CHROMEDRIVER (default /usr/bin/chromium, /usr/bin/chromedriver)
     HEDGEROW_E2E_HUGE=1   also run the >2 GiB logits test (by hand: generates ~2.2 GB under
                           target/e2e/, minutes); HEDGEROW_E2E_HUGE_ROWS=N changes its rows
     HEDGEROW_E2E_FRAMES=1 also time interactions on a 1M-row, depth-6 batch (~1 GB)";

/// What every test can use.
pub struct Ctx {
    /// `http://127.0.0.1:PORT/` serving `dist/`.
    pub http_url: String,
    /// `file:///…/dist/index.html`.
    pub file_url: String,
    /// Request lines the server received ("GET /"), in order.
    pub server_log: Arc<Mutex<Vec<String>>>,
    /// `target/e2e/`, for screenshots and other artifacts.
    pub out_dir: PathBuf,
    /// The command line (`target/debug/hedgerow`).
    pub cli: PathBuf,
    /// `demo-data/`.
    pub demo_dir: PathBuf,
    /// Figures measured by the tests ("name: value"), printed at the end.
    pub figures: Mutex<Vec<String>>,
}

impl Ctx {
    /// The server's request lines so far.
    pub fn server_requests(&self) -> Vec<String> {
        self.server_log
            .lock()
            .map(|l| l.clone())
            .unwrap_or_default()
    }

    /// Record a measured figure (reported, never asserted on).
    pub fn figure(&self, line: String) {
        eprintln!("        figure: {line}");
        if let Ok(mut f) = self.figures.lock() {
            f.push(line);
        }
    }
}

type TestFuture<'a> = Pin<Box<dyn Future<Output = anyhow::Result<()>> + 'a>>;
type TestFn = for<'a> fn(&'a Browser, &'a Ctx) -> TestFuture<'a>;

/// One named end-to-end test.
pub struct Test {
    pub name: &'static str,
    pub run: TestFn,
}

impl Test {
    pub const fn new(name: &'static str, run: TestFn) -> Self {
        Self { name, run }
    }
}

/// Every test, in the order they run.
fn all_tests() -> Vec<Test> {
    let mut tests = page::tests();
    tests.extend(journey::tests());
    tests.extend(nodes::tests());
    tests.extend(privacy::tests());
    tests.extend(suggest::tests());
    tests.extend(compare::tests());
    tests.extend(a11y::tests());
    tests.extend(agree::tests());
    tests.extend(big::tests());
    tests.extend(frames::tests());
    tests
}

pub fn run(args: &[String]) -> anyhow::Result<()> {
    let started = Instant::now();
    let mut build = true;
    let mut filter: Option<String> = None;
    let mut it = args.iter();
    while let Some(arg) = it.next() {
        match arg.as_str() {
            "--no-build" => build = false,
            "--filter" => filter = Some(it.next().context("--filter needs a value")?.clone()),
            "-h" | "--help" => {
                println!("{USAGE}");
                return Ok(());
            }
            other => bail!("e2e: unknown argument {other:?}\n{USAGE}"),
        }
    }

    let dist = crate::web::dist_dir();
    if build {
        crate::web::build_with(&crate::web::BuildOptions::default())?;
    } else if !dist.join("index.html").is_file() {
        bail!("dist/index.html is missing: run `cargo xtask build-web` or drop --no-build");
    }
    let cli = build_cli()?;
    serve_command_serves_the_page()?;
    let built = Instant::now();

    let server = crate::web::StaticServer::bind(0, dist.clone())?;
    let (http_url, server_log) = server.spawn();
    let ctx = Ctx {
        http_url,
        file_url: harness::file_url(&dist.join("index.html"))?,
        server_log,
        out_dir: crate::root().join("target").join("e2e"),
        cli,
        demo_dir: crate::root().join("demo-data"),
        figures: Mutex::default(),
    };
    std::fs::create_dir_all(&ctx.out_dir)?;

    let tests: Vec<Test> = all_tests()
        .into_iter()
        .filter(|t| filter.as_deref().is_none_or(|f| t.name.contains(f)))
        .collect();

    let rt = tokio::runtime::Builder::new_current_thread()
        .enable_all()
        .build()?;
    let (passed, failed) = rt.block_on(run_tests(&tests, &ctx))?;
    let figures = ctx.figures.lock().map(|f| f.clone()).unwrap_or_default();
    if !figures.is_empty() {
        eprintln!("e2e figures:");
        for f in &figures {
            eprintln!("  {f}");
        }
        let _ = std::fs::write(ctx.out_dir.join("figures.txt"), figures.join("\n") + "\n");
    }

    eprintln!(
        "e2e: build {:.1}s, browser tests {:.1}s, total {:.1}s",
        (built - started).as_secs_f64(),
        built.elapsed().as_secs_f64(),
        started.elapsed().as_secs_f64()
    );
    println!("e2e: {passed} passed, {failed} failed");
    if failed > 0 {
        bail!("{failed} end-to-end test(s) failed");
    }
    Ok(())
}

/// `cargo build -p hedgerow-cli`; returns the binary.
fn build_cli() -> anyhow::Result<PathBuf> {
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let status = std::process::Command::new(cargo)
        .current_dir(crate::root())
        .args(["build", "--package", "hedgerow-cli"])
        .status()
        .context("running cargo build for the command line")?;
    if !status.success() {
        bail!("cargo build -p hedgerow-cli failed ({status})");
    }
    let bin = crate::web::target_dir()
        .join("debug")
        .join(format!("hedgerow{}", std::env::consts::EXE_SUFFIX));
    if !bin.is_file() {
        bail!("cargo built hedgerow-cli but {} is missing", bin.display());
    }
    Ok(bin)
}

/// What a test returns (as its error) when it did not run: it is reported as skipped, with the
/// reason, and counted neither as passed nor as failed.
#[derive(Debug)]
pub struct Skipped(pub String);

impl std::fmt::Display for Skipped {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for Skipped {}

async fn run_tests(tests: &[Test], ctx: &Ctx) -> anyhow::Result<(usize, usize)> {
    let launched = Instant::now();
    let browser = Browser::launch(&Config::from_env()).await?;
    eprintln!(
        "e2e: chromium up in {:.1}s; page at {} and {}",
        launched.elapsed().as_secs_f64(),
        ctx.http_url,
        ctx.file_url
    );
    let (mut passed, mut failed, mut skipped) = (0, 0, 0);
    for test in tests {
        let t = Instant::now();
        match (test.run)(&browser, ctx).await {
            Ok(()) => {
                passed += 1;
                eprintln!("  ok    {} ({:.2}s)", test.name, t.elapsed().as_secs_f64());
            }
            Err(e) if e.downcast_ref::<Skipped>().is_some() => {
                skipped += 1;
                eprintln!("  skip  {}: {e}", test.name);
            }
            Err(e) => {
                failed += 1;
                eprintln!(
                    "  FAIL  {} ({:.2}s): {e:#}",
                    test.name,
                    t.elapsed().as_secs_f64()
                );
                let shot = ctx.out_dir.join(format!("failed-{}.png", slug(test.name)));
                if browser.screenshot(&shot).await.is_ok() {
                    eprintln!("        screenshot: {}", shot.display());
                }
            }
        }
    }
    browser.close().await?;
    if skipped > 0 {
        eprintln!("e2e: {skipped} skipped (not counted as passed)");
    }
    Ok((passed, failed))
}

fn slug(name: &str) -> String {
    name.chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '-' })
        .collect()
}

/// The README's main command, `cargo xtask serve`: this very binary with `serve` prints a URL
/// on 127.0.0.1 whose `/` is the page.
fn serve_command_serves_the_page() -> anyhow::Result<()> {
    use std::io::{BufRead, BufReader, Read, Write};
    let exe = std::env::current_exe().context("no path to the xtask binary")?;
    let mut child = std::process::Command::new(exe)
        .args(["serve", "--port", "0", "--no-build"])
        .stdout(std::process::Stdio::piped())
        .spawn()
        .context("starting `xtask serve`")?;
    let result = (|| -> anyhow::Result<()> {
        let stdout = child.stdout.take().context("no stdout")?;
        let mut line = String::new();
        BufReader::new(stdout).read_line(&mut line)?;
        let url = line
            .split_whitespace()
            .find(|w| w.starts_with("http://127.0.0.1:"))
            .with_context(|| format!("serve printed no URL: {line:?}"))?;
        let addr = url.trim_start_matches("http://").trim_end_matches('/');
        let mut conn = std::net::TcpStream::connect(addr)?;
        conn.set_read_timeout(Some(std::time::Duration::from_secs(10)))?;
        write!(
            conn,
            "GET / HTTP/1.1\r\nHost: {addr}\r\nConnection: close\r\n\r\n"
        )?;
        let mut body = String::new();
        conn.read_to_string(&mut body)?;
        anyhow::ensure!(
            body.starts_with("HTTP/1.1 200"),
            "GET / answered {:?}",
            body.lines().next()
        );
        anyhow::ensure!(body.contains("<title>hedgerow"), "GET / is not the page");
        println!("  ok    serve: `cargo xtask serve` prints {url} and serves the page there");
        Ok(())
    })();
    let _ = child.kill();
    let _ = child.wait();
    result
}
