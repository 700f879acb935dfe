//! `hedgerow bench`: wall-clock figures for one batch, as JSON, for `cargo xtask bench`.
//! Timing lives here (not in tests): tests never assert on time.

use std::time::Instant;

use hedgerow_core::{evaluate, CurveIndex, DepthDrag};

use crate::load::{Failure, Loaded};
use crate::{Input, SettingArgs};

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v.get(v.len() / 2).copied().unwrap_or(f64::NAN)
}

/// Peak (`VmHWM`) or current (`VmRSS`) resident memory of this process in bytes (Linux).
fn rss(field: &str) -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with(field))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

pub fn run(input: &Input, args: &SettingArgs, repeat: usize) -> Result<String, Failure> {
    let bytes = std::fs::metadata(&input.logits)
        .map(|m| m.len())
        .unwrap_or(0);
    let before = rss("VmRSS:");
    let t = Instant::now();
    let loaded = Loaded::load(input, args)?;
    let load_seconds = t.elapsed().as_secs_f64();
    let after = rss("VmRSS:");
    let peak_during_load = rss("VmHWM:");
    let (tax, batch) = (&loaded.taxonomy, &loaded.batch);
    let depth = tax.max_depth();
    // Each timed change moves one depth's threshold, as dragging a slider does.
    let mut settings = loaded.settings.clone();
    let mut times = Vec::with_capacity(repeat);
    let mut checksum = 0u64;
    for i in 0..repeat.max(1) {
        let d = i % depth.max(1);
        if let Some(t) = settings.thresholds.depths.get_mut(d) {
            *t = 0.3 + 0.6 * ((i * 7919) % 101) as f64 / 100.0;
        }
        let t = Instant::now();
        let m = evaluate(tax, batch, &settings);
        times.push(t.elapsed().as_secs_f64());
        checksum = checksum.wrapping_add(m.correct);
    }
    // Dragging one depth's slider: build the index once, then small moves re-score only the
    // rows whose decision flips.
    let drag_depth = depth.clamp(1, 2);
    let t = Instant::now();
    let mut drag = DepthDrag::new(tax, batch, &settings, drag_depth);
    let drag_build_seconds = t.elapsed().as_secs_f64();
    let mut drag_times = Vec::with_capacity(repeat);
    for i in 0..repeat.max(1) {
        let value = 0.4 + 0.004 * (i % 50) as f64;
        let t = Instant::now();
        let m = drag.set(tax, batch, value);
        drag_times.push(t.elapsed().as_secs_f64());
        checksum = checksum.wrapping_add(m.correct);
    }
    let t = Instant::now();
    let index = CurveIndex::with_overrides(tax, batch, settings.rule, &settings.thresholds.nodes);
    let curve_index_seconds = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let curve = index.sweep(tax, batch, settings.thresholds.object, settings.policy);
    let curve_sweep_seconds = t.elapsed().as_secs_f64();
    let curve_seconds = curve_index_seconds + curve_sweep_seconds;
    let t = Instant::now();
    let drawn = index.sweep_within(
        tax,
        batch,
        settings.thresholds.object,
        settings.policy,
        1.0 / 2000.0,
    );
    let curve_drawn_seconds = t.elapsed().as_secs_f64();
    // The per-node report (`hedgerow nodes`): one pass over the rows.
    let t = Instant::now();
    let report = hedgerow_core::node_report(tax, batch, &settings);
    let nodes_seconds = t.elapsed().as_secs_f64();
    checksum = checksum.wrapping_add(report.root.stops);
    // `hedgerow suggest`'s engine (precision 0.9, confidence 0.9, 30 % held out): the split,
    // the path, the test, both baselines and the hold-out scores.
    let request = hedgerow_core::Request {
        target: 0.9,
        confidence: 0.9,
        maximize: hedgerow_core::Maximize::Specificity,
        holdout: 0.3,
        seed: 1,
    };
    let t = Instant::now();
    let suggested = hedgerow_core::suggest(tax, batch, &settings, None, &request)
        .map_err(|e| Failure::Input(vec![e.to_string()]))?;
    let suggest_seconds = t.elapsed().as_secs_f64();
    checksum = checksum.wrapping_add(suggested.record.tested as u64);
    let out = serde_json::json!({
        "rows": batch.len(),
        "nodes": tax.len(),
        "depth": depth,
        "logits_bytes": bytes,
        "load_seconds": load_seconds,
        "evaluate_seconds_median": median(times.clone()),
        "evaluate_seconds_min": times.iter().copied().fold(f64::INFINITY, f64::min),
        "evaluate_repeats": times.len(),
        "drag_depth": drag_depth,
        "drag_build_seconds": drag_build_seconds,
        "drag_move_seconds_median": median(drag_times),
        "drag_movable_rows": drag.movable(),
        "curve_seconds": curve_seconds,
        "curve_index_seconds": curve_index_seconds,
        "curve_sweep_seconds": curve_sweep_seconds,
        "curve_breakpoints": index.len(),
        "curve_drawn_sweep_seconds": curve_drawn_seconds,
        "curve_drawn_points": drawn.len(),
        "curve_points": curve.len(),
        "nodes_seconds": nodes_seconds,
        "suggest_seconds": suggest_seconds,
        "suggest_path_length": suggested.record.path_length,
        "path_bytes_per_row": batch.paths().bytes_per_row(),
        "resident_growth_after_load_bytes": after.zip(before).map(|(a, b)| a.saturating_sub(b)),
        "peak_rss_during_load_bytes": peak_during_load,
        "peak_rss_bytes": rss("VmHWM:"),
        "checksum": checksum,
    });
    Ok(serde_json::to_string_pretty(&out).map_err(|e| Failure::Other(e.into()))? + "\n")
}
