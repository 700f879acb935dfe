//! What a file announces is a claim: a bundle member that inflates to 1.5 GB (from about
//! 1.5 MB of deflate) and a `.npy` header announcing 10^9 rows over a few bytes are refused
//! with a located message, and the command's peak memory stays small (measured from
//! `/proc/<pid>/status`).

use miniz_oxide::deflate::core::{create_comp_flags_from_zip_params, CompressorOxide};
use miniz_oxide::deflate::stream::deflate;
use miniz_oxide::inflate::stream::{inflate, InflateState};
use miniz_oxide::{DataFormat, MZFlush, MZStatus};

use crate::harness::{hedgerow_peak, logits, npy_header, Peak, Run, Scratch, TAXONOMY};
use crate::zip::{zip, Member};

/// Zeros behind the labels header: 1.5 GB.
const ZEROS: u64 = 1_500_000_000;
/// What the refused runs may hold at most (resident); a run that inflated the member would
/// hold 1.5 GB.
const MAX_RSS_KIB: u64 = 200 * 1024;
const CHUNK: usize = 1 << 20;

/// Raw deflate of `prefix` then `zeros` zero bytes, built without compressing them all: after a
/// sync flush a megabyte of zeros compresses to the same bytes every time (checked twice), so
/// those bytes are repeated.
fn deflate_zeros(prefix: &[u8], zeros: u64) -> Vec<u8> {
    let mut c = CompressorOxide::new(create_comp_flags_from_zip_params(6, -15, 0));
    let mut buf = vec![0u8; 2 * CHUNK];
    let mut step = |input: &[u8], flush: MZFlush| -> Vec<u8> {
        let mut out = Vec::new();
        let mut input = input;
        loop {
            let r = deflate(&mut c, input, &mut buf, flush);
            input = &input[r.bytes_consumed..];
            out.extend_from_slice(&buf[..r.bytes_written]);
            let finished = matches!(r.status, Ok(MZStatus::StreamEnd));
            if input.is_empty() && (r.bytes_written < buf.len() || finished) {
                return out;
            }
            assert!(r.status.is_ok(), "deflate: {:?}", r.status);
        }
    };
    let zero = vec![0u8; CHUNK];
    let chunks = zeros / CHUNK as u64;
    let rest = (zeros % CHUNK as u64) as usize;
    assert!(chunks >= 4);
    let mut first = prefix.to_vec();
    first.extend_from_slice(&zero);
    let mut out = step(&first, MZFlush::Sync);
    let b1 = step(&zero, MZFlush::Sync);
    let b2 = step(&zero, MZFlush::Sync);
    let b3 = step(&zero, MZFlush::Sync);
    assert!(
        b1 == b2 && b2 == b3,
        "zeros compress alike after a sync flush"
    );
    out.extend_from_slice(&b1);
    out.extend_from_slice(&b2);
    out.extend_from_slice(&b3);
    for _ in 4..chunks {
        out.extend_from_slice(&b3);
    }
    out.extend(step(&zero[..rest], MZFlush::Finish));
    out
}

/// How many bytes a raw deflate stream inflates to (the test checks its own input).
fn inflated_len(data: &[u8]) -> u64 {
    let mut state = InflateState::new_boxed(DataFormat::Raw);
    let mut out = vec![0u8; 4 * CHUNK];
    let (mut input, mut total) = (data, 0u64);
    loop {
        let r = inflate(&mut state, input, &mut out, MZFlush::None);
        input = &input[r.bytes_consumed..];
        total += r.bytes_written as u64;
        match r.status {
            Ok(MZStatus::StreamEnd) => return total,
            Ok(_) => {}
            Err(e) => panic!("inflate: {e:?}"),
        }
    }
}

/// `hedgerow evaluate` on a bundle holding 4 rows of logits and the given labels member.
fn run_bundle(labels: Member) -> (Run, Peak, u64) {
    let s = Scratch::new("limits");
    s.write("t.csv", TAXONOMY.as_bytes());
    let logits = logits(4);
    let bundle = zip(&[
        Member {
            name: "logits.npy",
            method: 0,
            data: &logits,
            declared: logits.len() as u64,
        },
        labels,
    ]);
    s.write("b.npz", &bundle);
    let (run, peak) = hedgerow_peak(
        &s.dir,
        &["evaluate", "--taxonomy", "t.csv", "--logits", "b.npz"],
    );
    (run, peak, bundle.len() as u64)
}

fn check(name: &str, run: &Run, peak: Peak, file_len: u64, message: &str) {
    eprintln!(
        "{name}: {file_len}-byte file, peak RSS {} KiB, peak address space {} KiB",
        peak.rss_kib, peak.vm_kib
    );
    assert_eq!(run.code, 2, "{name}: {}", run.stderr);
    assert!(run.stderr.contains(message), "{name}: {}", run.stderr);
    // 0: the refusal was so quick that the process had gone before its first sample (every
    // millisecond); writing 1.5 GB of inflated bytes takes far longer than that, so a run
    // that allocated them is always sampled.
    assert!(
        peak.rss_kib < MAX_RSS_KIB,
        "{name}: peak RSS {} KiB",
        peak.rss_kib
    );
}

/// The header tells the truth (187.5 M int64 labels), but the logits have 4 rows: refused
/// from the header, before the data is inflated.
#[test]
fn labels_member_larger_than_the_rows_is_refused_from_its_header() {
    let header = npy_header("<i8", &format!("({},)", ZEROS / 8));
    let data = deflate_zeros(&header, ZEROS);
    let declared = header.len() as u64 + ZEROS;
    assert_eq!(inflated_len(&data), declared);
    let (run, peak, len) = run_bundle(Member {
        name: "labels.npy",
        method: 8,
        data: &data,
        declared,
    });
    check(
        "honest header",
        &run,
        peak,
        len,
        "b.npz:labels: shape (187500000,) of int64 is 1500000000 bytes of data; one value for each of the 4 rows of b.npz:logits takes at most 4096",
    );
}

/// The header says 4 labels, the directory 1.5 GB: the two disagree.
#[test]
fn member_declared_larger_than_its_header_is_refused() {
    let header = npy_header("<i8", "(4,)");
    let data = deflate_zeros(&header, ZEROS);
    let declared = header.len() as u64 + ZEROS;
    let (run, peak, len) = run_bundle(Member {
        name: "labels.npy",
        method: 8,
        data: &data,
        declared,
    });
    check(
        "declared size",
        &run,
        peak,
        len,
        "b.npz:labels: the bundle's directory declares 1500000128 bytes for this member, but its .npy header implies 160",
    );
}

/// Header and directory agree on 160 bytes, but the deflate stream goes on for 1.5 GB.
#[test]
fn member_inflating_past_its_declared_size_is_refused() {
    let header = npy_header("<i8", "(4,)");
    let data = deflate_zeros(&header, ZEROS);
    let (run, peak, len) = run_bundle(Member {
        name: "labels.npy",
        method: 8,
        data: &data,
        declared: header.len() as u64 + 32,
    });
    check(
        "inflates past",
        &run,
        peak,
        len,
        "b.npz:labels: the member inflates past the 160 bytes the bundle's directory declares for it",
    );
}

/// A header announcing 10^9 rows of 3 float32 columns over 4 MiB of data: truncated, and no
/// room is made for rows that never come. (4 MiB rather than a few bytes so that the run lasts
/// long enough for its memory to be sampled.)
#[test]
fn header_announcing_a_billion_rows_is_truncated_with_small_memory() {
    let s = Scratch::new("billion");
    s.write("t.csv", TAXONOMY.as_bytes());
    s.write("y.csv", b"label\ny\n");
    let mut npy = npy_header("<f4", "(1000000000, 3)");
    npy.extend(vec![0u8; 4 << 20]);
    s.write("l.npy", &npy);
    let (run, peak) = hedgerow_peak(
        &s.dir,
        &[
            "evaluate",
            "--taxonomy",
            "t.csv",
            "--logits",
            "l.npy",
            "--labels",
            "y.csv",
        ],
    );
    check(
        "billion rows",
        &run,
        peak,
        npy.len() as u64,
        "l.npy, row 349525: truncated: expected 12000000000 bytes of data for the shape in the header, found 4194304",
    );
    // Nothing was reserved for the announced rows either (4 + 4·2 bytes each would be 12 GB).
    assert!(
        peak.vm_kib < 1 << 20,
        "peak address space {} KiB",
        peak.vm_kib
    );
}
