// The wasm benchmark's driver in the page (`cargo xtask bench-wasm`).
//
// window.hedgerowBench(config) starts a run and returns at once; the result (or an error) lands
// in window.__bench, which the xtask polls. config: { wasm, taxonomy, logits, labels,
// objectness (URL or null), mode: "buffered" | "streamed", chunk (bytes), thresholds,
// objectThreshold, repeat, rounds, curve (bool), curveRepeat }.
//
// buffered: the logits are fetched into memory first (not timed), cut into `chunk`-byte pieces,
//           then fed to the engine: the timed ingestion is the engine's work plus the copies
//           into wasm memory, as the page does with Blob.slice pieces already read.
// streamed: each piece is fed as it arrives from fetch; the time includes the local transfer.
"use strict";
(function () {
  const log = (msg) => {
    const el = document.getElementById("log");
    el.textContent += "\n" + msg;
  };
  async function bytes(url) {
    const r = await fetch(url);
    if (!r.ok) throw new Error(url + ": HTTP " + r.status);
    return new Uint8Array(await r.arrayBuffer());
  }
  // Re-cut a stream of fetch chunks into pieces of exactly `size` bytes (the last may be short).
  function cutter(size, emit) {
    let buf = new Uint8Array(size), fill = 0;
    return {
      push(value) {
        let at = 0;
        while (at < value.length) {
          const n = Math.min(size - fill, value.length - at);
          buf.set(value.subarray(at, at + n), fill);
          fill += n;
          at += n;
          if (fill === size) { emit(buf); buf = new Uint8Array(size); fill = 0; }
        }
      },
      end() { if (fill > 0) emit(buf.subarray(0, fill)); },
    };
  }
  async function run(cfg) {
    const out = { config: cfg, userAgent: navigator.userAgent };
    let t = performance.now();
    await wasm_bindgen({ module_or_path: cfg.wasm });
    out.wasm_init_ms = performance.now() - t;
    const [tax, labels, obj] = await Promise.all([
      bytes(cfg.taxonomy), bytes(cfg.labels),
      cfg.objectness ? bytes(cfg.objectness) : Promise.resolve(new Uint8Array(0)),
    ]);
    const session = new wasm_bindgen.Session(tax);
    const resp = await fetch(cfg.logits);
    if (!resp.ok) throw new Error(cfg.logits + ": HTTP " + resp.status);
    const reader = resp.body.getReader();
    if (cfg.mode === "buffered") {
      const pieces = [];
      const cut = cutter(cfg.chunk, (p) => pieces.push(p));
      t = performance.now();
      for (;;) {
        const { done, value } = await reader.read();
        if (done) break;
        cut.push(value);
      }
      cut.end();
      out.fetch_ms = performance.now() - t;
      log("fetched " + pieces.length + " pieces in " + out.fetch_ms.toFixed(0) + " ms");
      t = performance.now();
      for (let i = 0; i < pieces.length; i++) { session.feed(pieces[i]); pieces[i] = null; }
      out.feed_wall_ms = performance.now() - t;
      session.finish(labels, obj);
      out.ingest_ms = performance.now() - t;
    } else {
      t = performance.now();
      const cut = cutter(cfg.chunk, (p) => session.feed(p));
      for (;;) {
        const { done, value } = await reader.read();
        if (done) break;
        cut.push(value);
      }
      cut.end();
      out.feed_wall_ms = performance.now() - t;
      session.finish(labels, obj);
      out.ingest_ms = performance.now() - t;
    }
    out.ingest = JSON.parse(session.ingest_report());
    log("ingested " + out.ingest.rows + " rows in " + out.ingest_ms.toFixed(0) + " ms");
    // Rounds of the same changes; the round with the lowest median is kept (as the native
    // figure is the best of a few runs).
    for (let round = 0; round < (cfg.rounds || 1); round++) {
      const r = JSON.parse(session.evaluate_changes(cfg.thresholds, cfg.objectThreshold, cfg.repeat));
      if (!out.evaluate || r.evaluate_ms_median < out.evaluate.evaluate_ms_median) out.evaluate = r;
      (out.evaluate_round_medians = out.evaluate_round_medians || []).push(r.evaluate_ms_median);
    }
    log("evaluate median " + out.evaluate.evaluate_ms_median.toFixed(2) + " ms");
    if (cfg.curve) {
      out.curve = JSON.parse(session.curve(cfg.objectThreshold, cfg.curveRepeat || 1));
      log("curve " + out.curve.curve_ms.toFixed(0) + " ms, " + out.curve.curve_points + " points");
    }
    if (cfg.suggest) {
      out.suggest = JSON.parse(session.suggest(cfg.suggestTarget || 0.9, cfg.objectThreshold, cfg.suggestRepeat || 1));
      log("suggest " + out.suggest.suggest_ms.toFixed(0) + " ms");
    }
    session.free();
    return out;
  }
  window.hedgerowBench = function (cfg) {
    window.__bench = null;
    run(cfg).then(
      (r) => { window.__bench = { ok: true, result: r }; },
      (e) => { log("error: " + e); window.__bench = { ok: false, error: String(e && e.stack || e) }; },
    );
    return true;
  };
})();
