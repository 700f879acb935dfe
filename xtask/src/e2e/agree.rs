//! Native and wasm agree bit for bit: `hedgerow_agree::run` (random batches from a seed, as
//! the property tests draw them, scored into a digest of every number's bits) here, and the
//! same function compiled to wasm (`crates/bench-wasm`'s `agree`) in headless Chromium.

use std::time::Instant;

use anyhow::{bail, Context};
use serde_json::{json, Value};

use super::{Browser, Ctx, Test};

/// Random batches compared per run, and the seed (a fixed one: a failure is reproducible).
const BATCHES: u32 = 1_500;
const SEED: u64 = 0x6865_6467_6572_6f77;

pub fn tests() -> Vec<Test> {
    vec![Test::new(
        "wasm: 1,500 random batches score the same bits in Chromium as natively",
        |b, c| Box::pin(native_equals_wasm(b, c)),
    )]
}

async fn native_equals_wasm(b: &Browser, c: &Ctx) -> anyhow::Result<()> {
    let t = Instant::now();
    let native = hedgerow_agree::run(SEED, u64::from(BATCHES))
        .map_err(|e| anyhow::anyhow!("native: {e}"))?;
    let native_s = t.elapsed().as_secs_f64();
    // The wasm build (the page's profile), served from target/ with its glue.
    let site = crate::bench::wasm::build_site(None)?;
    let target = std::fs::canonicalize(crate::root().join("target"))?;
    let site = std::fs::canonicalize(site)?;
    let rel = |p: &std::path::Path| -> anyhow::Result<String> {
        Ok(p.strip_prefix(&target)
            .with_context(|| format!("{} is not under target/", p.display()))?
            .components()
            .map(|c| c.as_os_str().to_string_lossy().into_owned())
            .collect::<Vec<_>>()
            .join("/"))
    };
    let server = crate::web::StaticServer::bind(0, target.clone())?;
    let (base, _log) = server.spawn();
    b.client()
        .goto(&format!("{base}{}", rel(&site.join("index.html"))?))
        .await
        .context("opening the wasm page")?;
    let wasm_url = format!("{base}{}", rel(&site.join("bench_wasm_bg.wasm"))?);
    let t = Instant::now();
    let wasm = call(b, &wasm_url, "agree", BATCHES).await?;
    let wasm_s = t.elapsed().as_secs_f64();
    let want: Value = serde_json::from_str(&native.to_json())?;
    if wasm != want {
        let first = first_difference(b, &wasm_url).await?;
        bail!("wasm scored {wasm}, native {want} (seed {SEED:#x}); {first}");
    }
    c.figure(format!(
        "agree: {} batches, {} rows, {} results, digest {}…; native {native_s:.1} s (xtask's dev build), wasm {wasm_s:.1} s",
        native.batches,
        native.rows,
        native.results,
        &native.digest[..12]
    ));
    Ok(())
}

/// Call one of bench-wasm's `agree` exports with the seed and `n`; its JSON result.
async fn call(b: &Browser, wasm_url: &str, name: &str, n: u32) -> anyhow::Result<Value> {
    let got = b
        .client()
        .execute_async(
            r#"
            const [wasm, name, seed, n, done] = arguments;
            const ready = window.__agreeReady || (window.__agreeReady = wasm_bindgen({ module_or_path: wasm }));
            ready
              .then(() => done({ ok: wasm_bindgen[name](BigInt(seed), n) }))
              .catch(e => done({ error: String(e) }));
            "#,
            vec![json!(wasm_url), json!(name), json!(SEED.to_string()), json!(n)],
        )
        .await
        .with_context(|| format!("running {name} in the page"))?;
    if let Some(e) = got.get("error") {
        bail!("wasm {name}: {e}");
    }
    Ok(serde_json::from_str(
        got["ok"].as_str().context("no result")?,
    )?)
}

/// The first batch whose digest differs, and the first of its numbers that differ.
async fn first_difference(b: &Browser, wasm_url: &str) -> anyhow::Result<String> {
    let native = hedgerow_agree::per_batch(SEED, u64::from(BATCHES))
        .map_err(|e| anyhow::anyhow!("native: {e}"))?;
    let wasm = call(b, wasm_url, "agree_per_batch", BATCHES).await?;
    let Some(i) = (0..native.len()).find(|&i| wasm[i].as_str() != Some(native[i].as_str())) else {
        return Ok("every batch's own digest agrees".into());
    };
    let n: Value = serde_json::from_str(
        &hedgerow_agree::dump(SEED, i as u64).map_err(|e| anyhow::anyhow!("native: {e}"))?,
    )?;
    let w = call(b, wasm_url, "agree_dump", i as u32).await?;
    let mut diffs = Vec::new();
    leaves_differ("", &n, &w, &mut diffs);
    Ok(format!(
        "first differing batch {i} of {}: {}",
        native.len(),
        diffs.into_iter().take(8).collect::<Vec<_>>().join("; ")
    ))
}

fn leaves_differ(at: &str, a: &Value, b: &Value, out: &mut Vec<String>) {
    match (a, b) {
        (Value::Array(x), Value::Array(y)) if x.len() == y.len() => {
            for (i, (p, q)) in x.iter().zip(y).enumerate() {
                leaves_differ(&format!("{at}[{i}]"), p, q, out);
            }
        }
        (Value::Object(x), Value::Object(y)) => {
            for (k, p) in x {
                leaves_differ(
                    &format!("{at}.{k}"),
                    p,
                    y.get(k).unwrap_or(&Value::Null),
                    out,
                );
            }
        }
        _ if a != b => out.push(format!("{at}: native {a}, wasm {b}")),
        _ => {}
    }
}
