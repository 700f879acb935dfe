//! `cargo xtask build-web` and `cargo xtask serve`: build the page and serve it locally.
//!
//! The build downloads nothing at run time:
//! 1. `cargo build -p hedgerow-web --target wasm32-unknown-unknown --profile wasm-release`;
//! 2. the bindgen step through the `wasm-bindgen-cli-support` library (pinned to
//!    exactly the web crate's `wasm-bindgen` version in the root `Cargo.toml`),
//!    target `no-modules`, name section removed;
//! 3. `dist/index.html` is made from `www/index.html` with everything inlined:
//!    the stylesheet, the icon (data: URI), the glue as a classic inline script,
//!    the wasm as base64 in a non-executed `<script type="application/octet-stream">`
//!    block, and a boot script that decodes it and hands the bytes to the glue.
//!    The CSP meta tag gets the sha256 hashes of the two inline scripts.
//!
//! So `dist/index.html` is one self-contained file that works both over http and
//! opened straight from disk (file://), where Chromium refuses ES-module imports
//! and fetching the `.wasm`. Other files in `www/` that are not inlined are copied
//! to `dist/` unchanged.

use std::collections::BTreeSet;
use std::fs;
use std::io::{BufRead, BufReader, Write};
use std::net::{SocketAddr, TcpListener, TcpStream};
use std::path::{Component, Path, PathBuf};
use std::process::Command;
use std::sync::{Arc, Mutex};
use std::time::Instant;

use anyhow::{bail, Context};
use base64::Engine as _;
use sha2::Digest as _;

/// The web crate's package name and the cargo profile of its wasm build.
const WEB_PACKAGE: &str = "hedgerow-web";
const WASM_PROFILE: &str = "wasm-release";
const WASM_TARGET: &str = "wasm32-unknown-unknown";
/// The global name that the no-modules glue defines.
const GLUE_GLOBAL: &str = "wasm_bindgen";

const USAGE_BUILD: &str = "usage: cargo xtask build-web [--keep-names]

  --keep-names   keep the wasm name section (readable stack traces, ~1/3 larger)";

const USAGE_SERVE: &str = "usage: cargo xtask serve [--port N] [--no-build] [--keep-names]

  --port N       port on 127.0.0.1 (default 8000; 0 picks a free one)
  --no-build     serve dist/ as it is";

/// Options of the page build.
#[derive(Debug, Clone, Default)]
pub struct BuildOptions {
    /// Keep the wasm name section (function names in stack traces).
    pub keep_names: bool,
}

/// What a build produced, with the figures it printed.
#[derive(Debug, Clone)]
pub struct BuildOutput {
    pub index_html: PathBuf,
    pub wasm_bytes: usize,
    pub html_bytes: usize,
}

pub fn build(args: &[String]) -> anyhow::Result<PathBuf> {
    let mut opts = BuildOptions::default();
    for arg in args {
        match arg.as_str() {
            "--keep-names" => opts.keep_names = true,
            "-h" | "--help" => {
                println!("{USAGE_BUILD}");
                return Ok(dist_dir());
            }
            other => bail!("build-web: unknown argument {other:?}\n{USAGE_BUILD}"),
        }
    }
    build_with(&opts).map(|out| out.index_html)
}

/// The folder the page is built into.
pub fn dist_dir() -> PathBuf {
    crate::root().join("dist")
}

/// Build the page into `dist/`.
pub fn build_with(opts: &BuildOptions) -> anyhow::Result<BuildOutput> {
    let started = Instant::now();
    let root = crate::root();
    // A fresh machine (the README's first command) may not have the target yet.
    crate::test::ensure_wasm_target()?;
    let wasm_in = cargo_build_wasm(&root)?;
    let compiled = Instant::now();

    let (glue, wasm) = bindgen(&wasm_in, opts.keep_names)?;
    let www = root.join("www");
    let page = assemble(&www, &glue, &wasm)?;

    let dist = dist_dir();
    if dist.exists() {
        fs::remove_dir_all(&dist).with_context(|| format!("removing {}", dist.display()))?;
    }
    fs::create_dir_all(&dist)?;
    let index_html = dist.join("index.html");
    fs::write(&index_html, &page.html)?;
    copy_rest(&www, &dist, &page.inlined)?;

    let out = BuildOutput {
        index_html,
        wasm_bytes: wasm.len(),
        html_bytes: page.html.len(),
    };
    eprintln!(
        "build-web: wasm {} bytes (rustc output {} bytes), dist/index.html {} bytes; \
         cargo {:.1}s, bindgen+assemble {:.1}s",
        out.wasm_bytes,
        fs::metadata(&wasm_in).map(|m| m.len()).unwrap_or(0),
        out.html_bytes,
        (compiled - started).as_secs_f64(),
        compiled.elapsed().as_secs_f64(),
    );
    Ok(out)
}

/// Cargo's target directory (`CARGO_TARGET_DIR`, else `target/` of the workspace).
pub fn target_dir() -> PathBuf {
    let root = crate::root();
    std::env::var_os("CARGO_TARGET_DIR")
        .map(PathBuf::from)
        .map(|p| if p.is_relative() { root.join(p) } else { p })
        .unwrap_or_else(|| root.join("target"))
}

/// Compile the web crate for wasm32 and return the path of the `.wasm`.
fn cargo_build_wasm(root: &Path) -> anyhow::Result<PathBuf> {
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let status = Command::new(cargo)
        .current_dir(root)
        .args([
            "build",
            "--package",
            WEB_PACKAGE,
            "--target",
            WASM_TARGET,
            "--profile",
            WASM_PROFILE,
        ])
        .status()
        .context("running cargo build for the page")?;
    if !status.success() {
        bail!("cargo build of {WEB_PACKAGE} for {WASM_TARGET} failed ({status})");
    }
    let wasm = target_dir()
        .join(WASM_TARGET)
        .join(WASM_PROFILE)
        .join(format!("{WEB_PACKAGE}.wasm"));
    if !wasm.is_file() {
        bail!(
            "cargo built {WEB_PACKAGE} but {} is missing",
            wasm.display()
        );
    }
    Ok(wasm)
}

/// The bindgen step: returns the no-modules JS glue and the final wasm bytes.
pub fn bindgen(wasm: &Path, keep_names: bool) -> anyhow::Result<(String, Vec<u8>)> {
    let mut bg = wasm_bindgen_cli_support::Bindgen::new();
    bg.input_path(wasm)
        .no_modules(true)?
        .no_modules_global(GLUE_GLOBAL)?;
    bg.typescript(false)
        .debug(false)
        // The library's default (true) is the opposite of the CLI's; set it
        // anyway: the glue must never guess a URL to fetch, the boot script
        // always passes the module bytes.
        .omit_default_module_path(true)
        .remove_name_section(!keep_names)
        .remove_producers_section(true);
    let mut out = bg
        .generate_output()
        .with_context(|| format!("wasm-bindgen on {}", wasm.display()))?;
    // `snippets` has an entry (usually empty) per crate that uses wasm-bindgen.
    let snippets: Vec<&String> = out
        .snippets()
        .iter()
        .filter(|(_, list)| !list.is_empty())
        .map(|(krate, _)| krate)
        .chain(out.local_modules().keys())
        .collect();
    if !snippets.is_empty() {
        bail!(
            "JS snippets (inline_js / module = ...) in {snippets:?}: the no-modules \
             target cannot load them; inline them by hand or drop them"
        );
    }
    let glue = out.js().to_string();
    let bytes = out.wasm_mut().emit_wasm();
    Ok((glue, bytes))
}

/// The assembled page.
struct Page {
    html: String,
    /// Files of `www/` that were inlined into the page (not copied).
    inlined: BTreeSet<String>,
}

/// Make `dist/index.html` from `www/index.html`, the glue and the wasm.
fn assemble(www: &Path, glue: &str, wasm: &[u8]) -> anyhow::Result<Page> {
    let template_path = www.join("index.html");
    let mut html = fs::read_to_string(&template_path)
        .with_context(|| format!("reading {}", template_path.display()))?;
    let mut inlined = BTreeSet::from(["index.html".to_string()]);

    // <link rel="stylesheet" href="X"> -> <style>X</style>;
    // <link rel="icon" ... href="X"> -> the same tag with a data: URI.
    for tag in link_tags(&html) {
        let Some(rel) = attr(&tag, "rel") else {
            continue;
        };
        let Some(href) = attr(&tag, "href") else {
            continue;
        };
        if href.starts_with("data:") {
            continue;
        }
        let file = local_file(www, &href)?;
        let replacement = match rel.as_str() {
            "stylesheet" => {
                let css = fs::read_to_string(&file)
                    .with_context(|| format!("reading {}", file.display()))?;
                if css.to_ascii_lowercase().contains("</style") {
                    bail!("{} contains \"</style\"", file.display());
                }
                format!("<style>\n{}</style>", css)
            }
            "icon" | "shortcut icon" | "apple-touch-icon" => {
                let bytes =
                    fs::read(&file).with_context(|| format!("reading {}", file.display()))?;
                let uri = format!(
                    "data:{};base64,{}",
                    content_type(&file),
                    base64::engine::general_purpose::STANDARD.encode(bytes)
                );
                tag.replace(&format!("href=\"{href}\""), &format!("href=\"{uri}\""))
            }
            _ => bail!("www/index.html: don't know how to inline <link rel={rel:?}>"),
        };
        html = html.replacen(&tag, &replacement, 1);
        inlined.insert(href);
    }

    let glue = check_inline_script("wasm-bindgen glue", glue)?;
    let boot = check_inline_script("boot script", &boot_script())?;
    let b64 = base64::engine::general_purpose::STANDARD.encode(wasm);
    let scripts = format!(
        "<script>{glue}</script>\n\
         <script type=\"application/octet-stream\" id=\"hedgerow-wasm\">{b64}</script>\n\
         <script>{boot}</script>"
    );
    let hashes = [glue.as_str(), boot.as_str()]
        .iter()
        .map(|s| format!("'sha256-{}'", sha256_b64(s)))
        .collect::<Vec<_>>()
        .join(" ");

    html = replace_once(&html, "{{SCRIPT_HASHES}}", &hashes)?;
    html = replace_once(&html, "<!-- {{BOOT}} -->", &scripts)?;
    Ok(Page { html, inlined })
}

/// The boot script: decode the base64 wasm and start it through the glue.
fn boot_script() -> String {
    format!(
        r#"
(function () {{
  "use strict";
  var status = document.getElementById("boot-status");
  function fail(e) {{
    console.error(e);
    if (status) {{
      status.className = "boot-status boot-error";
      status.textContent = "The page could not start: " + e;
    }}
  }}
  try {{
    var b64 = document.getElementById("hedgerow-wasm").textContent.trim();
    var bytes;
    if (typeof Uint8Array.fromBase64 === "function") {{
      bytes = Uint8Array.fromBase64(b64);
    }} else {{
      var bin = atob(b64);
      bytes = new Uint8Array(bin.length);
      for (var i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);
    }}
    {GLUE_GLOBAL}({{ module_or_path: bytes }}).then(function () {{
      if (status) status.remove();
    }}, fail);
  }} catch (e) {{
    fail(e);
  }}
}})();
"#
    )
}

/// A classic inline script must not contain `</script` or `<!--`.
fn check_inline_script(what: &str, js: &str) -> anyhow::Result<String> {
    let lower = js.to_ascii_lowercase();
    if lower.contains("</script") || lower.contains("<!--") {
        bail!("the {what} contains \"</script\" or \"<!--\" and cannot be inlined");
    }
    Ok(js.to_string())
}

fn sha256_b64(s: &str) -> String {
    base64::engine::general_purpose::STANDARD.encode(sha2::Sha256::digest(s.as_bytes()))
}

fn replace_once(haystack: &str, marker: &str, with: &str) -> anyhow::Result<String> {
    match haystack.matches(marker).count() {
        1 => Ok(haystack.replacen(marker, with, 1)),
        n => bail!("www/index.html must contain {marker:?} exactly once (found {n})"),
    }
}

/// Every `<link ...>` tag of the document, verbatim.
fn link_tags(html: &str) -> Vec<String> {
    let mut tags = Vec::new();
    let mut rest = html;
    while let Some(start) = rest.find("<link") {
        let Some(len) = rest[start..].find('>') else {
            break;
        };
        tags.push(rest[start..start + len + 1].to_string());
        rest = &rest[start + len + 1..];
    }
    tags
}

/// The value of a double-quoted attribute of a tag.
fn attr(tag: &str, name: &str) -> Option<String> {
    let key = format!(" {name}=\"");
    let start = tag.find(&key)? + key.len();
    let len = tag[start..].find('"')?;
    Some(tag[start..start + len].to_string())
}

/// A relative path inside `dir`, refusing anything that climbs out of it.
fn local_file(dir: &Path, rel: &str) -> anyhow::Result<PathBuf> {
    let rel = Path::new(rel);
    if rel
        .components()
        .any(|c| !matches!(c, Component::Normal(_) | Component::CurDir))
    {
        bail!("{} is not a plain relative path", rel.display());
    }
    Ok(dir.join(rel))
}

/// Copy the files of `www/` that were not inlined into `dist/`.
fn copy_rest(www: &Path, dist: &Path, inlined: &BTreeSet<String>) -> anyhow::Result<()> {
    fn walk(dir: &Path, base: &Path, out: &mut Vec<PathBuf>) -> std::io::Result<()> {
        for entry in fs::read_dir(dir)? {
            let path = entry?.path();
            if path.is_dir() {
                walk(&path, base, out)?;
            } else if let Ok(rel) = path.strip_prefix(base) {
                out.push(rel.to_path_buf());
            }
        }
        Ok(())
    }
    let mut files = Vec::new();
    walk(www, www, &mut files)?;
    for rel in files {
        let key = rel.to_string_lossy().replace('\\', "/");
        if inlined.contains(&key) {
            continue;
        }
        let to = dist.join(&rel);
        if let Some(parent) = to.parent() {
            fs::create_dir_all(parent)?;
        }
        fs::copy(www.join(&rel), &to).with_context(|| format!("copying www/{key}"))?;
    }
    Ok(())
}

pub fn serve(args: &[String]) -> anyhow::Result<()> {
    let mut port: u16 = 8000;
    let mut build_first = true;
    let mut opts = BuildOptions::default();
    let mut it = args.iter();
    while let Some(arg) = it.next() {
        match arg.as_str() {
            "--port" => {
                let v = it.next().context("--port needs a value")?;
                port = v.parse().with_context(|| format!("bad port {v:?}"))?;
            }
            s if s.starts_with("--port=") => {
                let v = &s["--port=".len()..];
                port = v.parse().with_context(|| format!("bad port {v:?}"))?;
            }
            "--no-build" => build_first = false,
            "--keep-names" => opts.keep_names = true,
            "-h" | "--help" => {
                println!("{USAGE_SERVE}");
                return Ok(());
            }
            other => bail!("serve: unknown argument {other:?}\n{USAGE_SERVE}"),
        }
    }
    if build_first {
        build_with(&opts)?;
    }
    let server = StaticServer::bind(port, dist_dir())?;
    println!("serving dist/ at {}  (Ctrl-C to stop)", server.url());
    std::io::stdout().flush()?;
    server.run();
    Ok(())
}

/// A small static file server on 127.0.0.1 (GET and HEAD, one thread per
/// connection, `Connection: close`). It records every request line, so tests
/// can check what a page asked for.
pub struct StaticServer {
    listener: TcpListener,
    root: PathBuf,
    log: Arc<Mutex<Vec<String>>>,
}

impl StaticServer {
    /// Bind to 127.0.0.1:`port` (0 picks a free port).
    pub fn bind(port: u16, root: PathBuf) -> anyhow::Result<Self> {
        let listener = TcpListener::bind(("127.0.0.1", port))
            .with_context(|| format!("binding 127.0.0.1:{port}"))?;
        Ok(Self {
            listener,
            root,
            log: Arc::default(),
        })
    }

    pub fn addr(&self) -> SocketAddr {
        self.listener
            .local_addr()
            .unwrap_or_else(|_| SocketAddr::from(([127, 0, 0, 1], 0)))
    }

    /// `http://127.0.0.1:PORT/`
    pub fn url(&self) -> String {
        format!("http://127.0.0.1:{}/", self.addr().port())
    }

    /// The shared log of request lines ("GET /index.html"), in arrival order.
    pub fn log(&self) -> Arc<Mutex<Vec<String>>> {
        Arc::clone(&self.log)
    }

    /// Serve forever on this thread.
    pub fn run(self) {
        for stream in self.listener.incoming() {
            let Ok(stream) = stream else { continue };
            let root = self.root.clone();
            let log = Arc::clone(&self.log);
            std::thread::spawn(move || {
                if let Err(e) = handle(stream, &root, &log) {
                    eprintln!("serve: {e:#}");
                }
            });
        }
    }

    /// Serve on a background thread (it lives as long as the process).
    pub fn spawn(self) -> (String, Arc<Mutex<Vec<String>>>) {
        let url = self.url();
        let log = self.log();
        std::thread::spawn(move || self.run());
        (url, log)
    }
}

fn handle(mut stream: TcpStream, root: &Path, log: &Mutex<Vec<String>>) -> anyhow::Result<()> {
    stream.set_read_timeout(Some(std::time::Duration::from_secs(10)))?;
    let mut reader = BufReader::new(stream.try_clone()?);
    let mut request_line = String::new();
    if reader.read_line(&mut request_line)? == 0 {
        return Ok(()); // a connection opened and closed without a request
    }
    loop {
        let mut header = String::new();
        if reader.read_line(&mut header)? == 0 || header == "\r\n" || header == "\n" {
            break;
        }
    }
    let mut parts = request_line.split_whitespace();
    let method = parts.next().unwrap_or("");
    let target = parts.next().unwrap_or("/");
    if let Ok(mut log) = log.lock() {
        log.push(format!("{method} {target}"));
    }

    if method != "GET" && method != "HEAD" {
        return respond(
            &mut stream,
            "405 Method Not Allowed",
            "text/plain",
            b"",
            true,
        );
    }
    let path = target.split(['?', '#']).next().unwrap_or("/");
    let Some(file) = resolve(root, path) else {
        return respond(
            &mut stream,
            "404 Not Found",
            "text/plain; charset=utf-8",
            b"not found\n",
            method == "GET",
        );
    };
    match fs::read(&file) {
        Ok(body) => respond(
            &mut stream,
            "200 OK",
            content_type(&file),
            &body,
            method == "GET",
        ),
        Err(_) => respond(
            &mut stream,
            "404 Not Found",
            "text/plain; charset=utf-8",
            b"not found\n",
            method == "GET",
        ),
    }
}

/// Map a request path to a file under `root`; `None` if it is outside or missing.
fn resolve(root: &Path, path: &str) -> Option<PathBuf> {
    let decoded = percent_decode(path)?;
    let mut file = root.to_path_buf();
    for seg in decoded.split('/') {
        match seg {
            "" | "." => {}
            ".." => return None,
            s if s.contains('\\') || s.contains('\0') => return None,
            s => file.push(s),
        }
    }
    if file.is_dir() {
        file.push("index.html");
    }
    file.is_file().then_some(file)
}

fn percent_decode(s: &str) -> Option<String> {
    let bytes = s.as_bytes();
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b'%' {
            let hex = s.get(i + 1..i + 3)?;
            out.push(u8::from_str_radix(hex, 16).ok()?);
            i += 3;
        } else {
            out.push(bytes[i]);
            i += 1;
        }
    }
    String::from_utf8(out).ok()
}

fn respond(
    stream: &mut TcpStream,
    status: &str,
    content_type: &str,
    body: &[u8],
    with_body: bool,
) -> anyhow::Result<()> {
    let head = format!(
        "HTTP/1.1 {status}\r\n\
         Content-Type: {content_type}\r\n\
         Content-Length: {}\r\n\
         Cache-Control: no-store\r\n\
         X-Content-Type-Options: nosniff\r\n\
         Connection: close\r\n\r\n",
        body.len()
    );
    stream.write_all(head.as_bytes())?;
    if with_body {
        stream.write_all(body)?;
    }
    stream.flush()?;
    Ok(())
}

/// The Content-Type for a file, from its extension.
pub fn content_type(path: &Path) -> &'static str {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .unwrap_or_default();
    match ext.as_str() {
        "html" | "htm" => "text/html; charset=utf-8",
        "js" | "mjs" => "text/javascript; charset=utf-8",
        "wasm" => "application/wasm",
        "css" => "text/css; charset=utf-8",
        "svg" => "image/svg+xml",
        "png" => "image/png",
        "ico" => "image/x-icon",
        "json" => "application/json",
        "txt" => "text/plain; charset=utf-8",
        "csv" => "text/csv; charset=utf-8",
        _ => "application/octet-stream",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn content_types() {
        assert_eq!(
            content_type(Path::new("a/index.html")),
            "text/html; charset=utf-8"
        );
        assert_eq!(content_type(Path::new("x.wasm")), "application/wasm");
        assert_eq!(
            content_type(Path::new("x.JS")),
            "text/javascript; charset=utf-8"
        );
        assert_eq!(content_type(Path::new("x.css")), "text/css; charset=utf-8");
        assert_eq!(content_type(Path::new("icon.svg")), "image/svg+xml");
    }

    #[test]
    fn resolve_refuses_climbing_out() {
        let root = crate::root().join("www");
        assert!(resolve(&root, "/../Cargo.toml").is_none());
        assert!(resolve(&root, "/%2e%2e/Cargo.toml").is_none());
        assert_eq!(resolve(&root, "/"), Some(root.join("index.html")));
    }

    #[test]
    fn server_serves_www_with_content_types() -> anyhow::Result<()> {
        use std::io::Read;
        let server = StaticServer::bind(0, crate::root().join("www"))?;
        let addr = server.addr();
        let (_url, log) = server.spawn();
        let get = |path: &str| -> anyhow::Result<String> {
            let mut s = TcpStream::connect(addr)?;
            write!(s, "GET {path} HTTP/1.1\r\nHost: x\r\n\r\n")?;
            let mut out = String::new();
            s.read_to_string(&mut out)?;
            Ok(out)
        };
        let css = get("/styles.css")?;
        assert!(css.starts_with("HTTP/1.1 200 OK\r\n"), "{css}");
        assert!(css.contains("Content-Type: text/css; charset=utf-8\r\n"));
        assert!(get("/icon.svg")?.contains("Content-Type: image/svg+xml\r\n"));
        assert!(get("/")?.contains("Content-Type: text/html; charset=utf-8\r\n"));
        assert!(get("/nope.wasm")?.starts_with("HTTP/1.1 404"));
        assert!(get("/../Cargo.toml")?.starts_with("HTTP/1.1 404"));
        let log = log.lock().map(|l| l.clone()).unwrap_or_default();
        assert_eq!(log.first().map(String::as_str), Some("GET /styles.css"));
        assert_eq!(log.len(), 5);
        Ok(())
    }

    #[test]
    fn link_tags_and_attrs() {
        let html = r#"<head><link rel="icon" type="image/svg+xml" href="icon.svg"><link rel="stylesheet" href="styles.css"></head>"#;
        let tags = link_tags(html);
        assert_eq!(tags.len(), 2);
        assert_eq!(attr(&tags[0], "href").as_deref(), Some("icon.svg"));
        assert_eq!(attr(&tags[1], "rel").as_deref(), Some("stylesheet"));
    }
}
