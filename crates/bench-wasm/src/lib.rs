//! The engine's benchmark in the browser: JS feeds a batch's files (the logits in chunks, as the
//! page does with `Blob.slice`), and this crate times, with `performance.now()`, what the page
//! does with them: ingestion (`LogitsReader::feed` + `finish`, then `Batch::new`), `evaluate`
//! after threshold changes (one depth's threshold moved per change, as a slider drag does: the
//! same sequence as `hedgerow bench`), and the exact curve. Results are JSON strings.
//!
//! Built for wasm32-unknown-unknown and driven by `cargo xtask bench-wasm` (see
//! `xtask/src/bench/wasm.rs` and the page in `crates/bench-wasm/www/`). `agree` runs the random
//! batches of `hedgerow-agree` for the native-equals-wasm check in `cargo xtask e2e`.

use hedgerow_core::{
    evaluate, exact_curve, Batch, Labels, LogitsReader, Objectness, Policy, Rule, Settings,
    Taxonomy, Temperatures, Thresholds,
};
use wasm_bindgen::prelude::*;

/// Milliseconds from `performance.now()` (falls back to `Date.now()` off the main thread).
pub fn now_ms() -> f64 {
    web_sys::window()
        .and_then(|w| w.performance())
        .map(|p| p.now())
        .unwrap_or_else(js_sys::Date::now)
}

fn js_err(e: impl std::fmt::Display) -> JsError {
    JsError::new(&e.to_string())
}

fn errors(e: hedgerow_core::Errors) -> JsError {
    JsError::new(
        &e.iter()
            .map(|e| e.to_string())
            .collect::<Vec<_>>()
            .join("\n"),
    )
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v.get(v.len() / 2).copied().unwrap_or(f64::NAN)
}

/// One batch being read, then evaluated.
#[wasm_bindgen]
pub struct Session {
    tax: Taxonomy,
    reader: Option<LogitsReader>,
    batch: Option<Batch>,
    feed_ms: f64,
    fed_bytes: u64,
    chunks: u64,
    finish_ms: f64,
}

#[wasm_bindgen]
impl Session {
    /// Start a session for a taxonomy (CSV or JSON bytes).
    #[wasm_bindgen(constructor)]
    pub fn new(taxonomy: &[u8]) -> Result<Session, JsError> {
        let tax = Taxonomy::parse(taxonomy, "taxonomy.csv").map_err(errors)?;
        let reader = LogitsReader::new("logits.npy", &tax, &Temperatures::default());
        Ok(Session {
            tax,
            reader: Some(reader),
            batch: None,
            feed_ms: 0.0,
            fed_bytes: 0,
            chunks: 0,
            finish_ms: 0.0,
        })
    }

    /// Feed the next chunk of the logits file (timed inside: engine work only).
    pub fn feed(&mut self, chunk: &[u8]) -> Result<(), JsError> {
        let reader = self
            .reader
            .as_mut()
            .ok_or_else(|| js_err("the logits were already finished"))?;
        let t = now_ms();
        reader.feed(&self.tax, chunk).map_err(errors)?;
        self.feed_ms += now_ms() - t;
        self.fed_bytes += chunk.len() as u64;
        self.chunks += 1;
        Ok(())
    }

    /// End the logits and join them with the labels (CSV or .npy) and objectness (.npy; empty =
    /// none) into a batch.
    pub fn finish(&mut self, labels: &[u8], objectness: &[u8]) -> Result<(), JsError> {
        let reader = self
            .reader
            .take()
            .ok_or_else(|| js_err("the logits were already finished"))?;
        let t = now_ms();
        let ingested = reader.finish(&self.tax).map_err(errors)?;
        let labels = Labels::parse(labels, "labels.csv", &self.tax).map_err(errors)?;
        let objectness = if objectness.is_empty() {
            None
        } else {
            Some(Objectness::parse(objectness, "objectness.npy").map_err(errors)?)
        };
        let batch = Batch::new(
            &self.tax,
            "logits.npy",
            ingested,
            Temperatures::default(),
            labels,
            objectness,
        )
        .map_err(errors)?;
        self.finish_ms = now_ms() - t;
        self.batch = Some(batch);
        Ok(())
    }

    /// Ingestion figures so far, as JSON.
    pub fn ingest_report(&self) -> String {
        let rows = self.batch.as_ref().map_or(0, |b| b.len());
        serde_json::json!({
            "rows": rows,
            "nodes": self.tax.len(),
            "depth": self.tax.max_depth(),
            "fed_bytes": self.fed_bytes,
            "chunks": self.chunks,
            "feed_ms": self.feed_ms,
            "finish_ms": self.finish_ms,
            "path_bytes_per_row": self.batch.as_ref().map(|b| b.paths().bytes_per_row()),
        })
        .to_string()
    }

    /// Time `repeat` evaluations, each after moving one depth's threshold (as `hedgerow bench`
    /// does), starting from `thresholds` (comma-separated) and the object threshold.
    pub fn evaluate_changes(
        &self,
        thresholds: &str,
        object_threshold: f64,
        repeat: usize,
    ) -> Result<String, JsError> {
        let batch = self
            .batch
            .as_ref()
            .ok_or_else(|| js_err("no batch: call finish first"))?;
        let depths: Vec<f64> = thresholds
            .split(',')
            .map(|t| t.trim().parse::<f64>().map_err(js_err))
            .collect::<Result<_, _>>()?;
        let depth = self.tax.max_depth();
        let mut settings = Settings {
            rule: Rule::Cumulative,
            thresholds: Thresholds {
                object: object_threshold,
                depths: (1..=depth.max(1))
                    .map(|d| depths.get(d - 1).or(depths.last()).copied().unwrap_or(0.5))
                    .collect(),
                nodes: Vec::new(),
            },
            policy: Policy::Credit,
        };
        let mut times = Vec::with_capacity(repeat);
        let mut checksum = 0u64;
        for i in 0..repeat.max(1) {
            let d = i % depth.max(1);
            if let Some(t) = settings.thresholds.depths.get_mut(d) {
                *t = 0.3 + 0.6 * ((i * 7919) % 101) as f64 / 100.0;
            }
            let t = now_ms();
            let m = evaluate(&self.tax, batch, &settings);
            times.push(now_ms() - t);
            checksum = checksum.wrapping_add(m.correct);
        }
        let base = Settings {
            thresholds: Thresholds {
                object: object_threshold,
                depths,
                nodes: Vec::new(),
            },
            ..settings.clone()
        };
        let at_base = evaluate(&self.tax, batch, &base);
        Ok(serde_json::json!({
            "evaluate_ms_median": median(times.clone()),
            "evaluate_ms_min": times.iter().copied().fold(f64::INFINITY, f64::min),
            "evaluate_repeats": times.len(),
            "checksum": checksum,
            "metrics": at_base,
        })
        .to_string())
    }

    /// Time the exact curve (cumulative rule, credit policy) `repeat` times; the fastest is
    /// reported as `curve_ms` (a busy moment on the machine only ever makes a run slower).
    pub fn curve(&self, object_threshold: f64, repeat: usize) -> Result<String, JsError> {
        let batch = self
            .batch
            .as_ref()
            .ok_or_else(|| js_err("no batch: call finish first"))?;
        let mut times = Vec::new();
        let mut points = 0;
        for _ in 0..repeat.max(1) {
            let t = now_ms();
            let curve = exact_curve(
                &self.tax,
                batch,
                Rule::Cumulative,
                object_threshold,
                Policy::Credit,
            );
            times.push(now_ms() - t);
            points = curve.len();
        }
        Ok(serde_json::json!({
            "curve_ms": times.iter().copied().fold(f64::INFINITY, f64::min),
            "curve_ms_median": median(times.clone()),
            "curve_ms_all": times,
            "curve_points": points,
        })
        .to_string())
    }

    /// Time the page's suggestion (`hedgerow suggest`'s engine, as the page's panel calls it:
    /// cumulative rule, credit policy, the object threshold given, confidence 0.9, 30 % held
    /// out, seed 1) for precision `target`, `repeat` times; the fastest is `suggest_ms`.
    pub fn suggest(
        &self,
        target: f64,
        object_threshold: f64,
        repeat: usize,
    ) -> Result<String, JsError> {
        let batch = self
            .batch
            .as_ref()
            .ok_or_else(|| js_err("no batch: call finish first"))?;
        let settings = Settings {
            rule: Rule::Cumulative,
            thresholds: Thresholds {
                object: object_threshold,
                depths: vec![0.5; self.tax.max_depth().max(1)],
                nodes: Vec::new(),
            },
            policy: Policy::Credit,
        };
        let request = hedgerow_core::suggest::Request {
            target,
            confidence: 0.9,
            maximize: hedgerow_core::suggest::Maximize::Specificity,
            holdout: 0.3,
            seed: 1,
        };
        let mut times = Vec::new();
        let mut report = None;
        for _ in 0..repeat.max(1) {
            let t = now_ms();
            let r = hedgerow_core::suggest::suggest(&self.tax, batch, &settings, None, &request)
                .map_err(js_err)?;
            times.push(now_ms() - t);
            report = Some(r);
        }
        let depths = report
            .as_ref()
            .and_then(|r| r.suggestion.as_ref())
            .map(|c| c.thresholds.depths.clone());
        Ok(serde_json::json!({
            "suggest_ms": times.iter().copied().fold(f64::INFINITY, f64::min),
            "suggest_ms_all": times,
            "suggest_target": target,
            "suggested_depths": depths,
            "path_length": report.as_ref().map(|r| r.record.path_length),
        })
        .to_string())
    }
}

/// `batches` random batches from `seed` through the engine, as `hedgerow_agree::run` natively:
/// the digest of every number scored, as JSON (`cargo xtask e2e` compares it with native).
#[wasm_bindgen]
pub fn agree(seed: u64, batches: u32) -> Result<String, JsError> {
    hedgerow_agree::run(seed, u64::from(batches))
        .map(|d| d.to_json())
        .map_err(js_err)
}

/// [`hedgerow_agree::per_batch`], as a JSON array.
#[wasm_bindgen]
pub fn agree_per_batch(seed: u64, batches: u32) -> Result<String, JsError> {
    hedgerow_agree::per_batch(seed, u64::from(batches))
        .map(|v| serde_json::json!(v).to_string())
        .map_err(js_err)
}

/// [`hedgerow_agree::dump`].
#[wasm_bindgen]
pub fn agree_dump(seed: u64, index: u32) -> Result<String, JsError> {
    hedgerow_agree::dump(seed, u64::from(index)).map_err(js_err)
}
