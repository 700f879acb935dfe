//! `hedgerow decode` streams: its peak memory on 5,000,000 rows stays far under what holding
//! the rows' paths would take, and does not grow from 1,000,000 rows to 5,000,000.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::Duration;

use crate::harness::Scratch;

/// 12 nodes, depth 3: two top-level nodes, two children each, two grandchildren under three
/// of those (and one leaf at depth 2).
const TAXONOMY: &str =
    "id,parent\np,\nq,\np1,p\np2,p\nq1,q\nq2,q\np1a,p1\np1b,p1\np2a,p2\np2b,p2\nq1a,q1\nq1b,q1\n";
const NODES: usize = 12;

/// IEEE 754 half-precision bit patterns (from memory) of -2, -1, -0.5, 0, 0.5, 1, 1.5, 2, 3.
const HALF: [u16; 9] = [
    0xC000, 0xBC00, 0xB800, 0x0000, 0x3800, 0x3C00, 0x3E00, 0x4000, 0x4200,
];

/// A float16 `.npy` of `rows` × 12 logits, written block by block (never held whole); the
/// values vary with row and column so paths and stops vary.
fn write_logits(path: &Path, rows: u64) {
    let mut out = BufWriter::with_capacity(1 << 20, File::create(path).expect("create logits"));
    out.write_all(&hedgerow_core::npy::header_bytes(
        "<f2",
        &[rows, NODES as u64],
        false,
    ))
    .expect("header");
    const BLOCK: u64 = 65_536;
    let mut block = Vec::with_capacity(BLOCK as usize * NODES * 2);
    let mut r = 0;
    while r < rows {
        block.clear();
        for row in r..(r + BLOCK).min(rows) {
            for c in 0..NODES as u64 {
                let i = (row * 7 + c * 13 + row / 3 + row / 101) % HALF.len() as u64;
                block.extend_from_slice(&HALF[i as usize].to_le_bytes());
            }
        }
        out.write_all(&block).expect("write logits");
        r += BLOCK;
    }
    out.flush().expect("flush logits");
}

/// Peak resident memory (`VmHWM`, KiB) of `hedgerow decode` on `rows` rows, read from
/// /proc/<pid>/status while it runs; the last reading before it exits is kept.
fn decode_peak_kib(s: &Scratch, rows: u64) -> u64 {
    let logits = s.dir.join(format!("l{rows}.npy"));
    write_logits(&logits, rows);
    let mut child = Command::new(env!("CARGO_BIN_EXE_hedgerow"))
        .current_dir(&s.dir)
        .args(["decode", "--taxonomy", "t.csv", "--logits"])
        .arg(&logits)
        .args(["--thresholds", "0.6,0.5", "--out", "/dev/null"])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawn hedgerow");
    let status_file = format!("/proc/{}/status", child.id());
    let mut peak = 0;
    loop {
        if let Ok(text) = std::fs::read_to_string(&status_file) {
            let hwm = text
                .lines()
                .find_map(|l| l.strip_prefix("VmHWM:"))
                .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<u64>().ok());
            if let Some(kib) = hwm {
                peak = peak.max(kib);
            }
        }
        if child.try_wait().expect("poll hedgerow").is_some() {
            break;
        }
        std::thread::sleep(Duration::from_millis(5));
    }
    let out = child.wait_with_output().expect("wait");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let _ = std::fs::remove_file(&logits);
    assert!(peak > 0, "no VmHWM read for {rows} rows");
    peak
}

#[test]
fn decode_memory_does_not_grow_with_rows() {
    let s = Scratch::new("stream");
    s.write("t.csv", TAXONOMY.as_bytes());
    let small = decode_peak_kib(&s, 1_000_000);
    let large = decode_peak_kib(&s, 5_000_000);
    // Held paths alone take 4 + 4 · 3 bytes per row: 80,000,000 bytes for 5M rows, 16,000,000
    // for 1M (64 MB more), before labels, agreement depths or output.
    let held_paths_kib = 5_000_000 * 16 / 1024;
    assert!(
        large < held_paths_kib / 2,
        "5M rows peaked at {large} KiB; holding the paths alone takes {held_paths_kib} KiB"
    );
    assert!(
        large < small + 8 * 1024,
        "peak grew from {small} KiB (1M rows) to {large} KiB (5M rows)"
    );
    eprintln!("peak RSS: {small} KiB for 1M rows, {large} KiB for 5M rows");
}
