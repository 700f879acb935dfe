//! `npz::Inflow` holds a member to its claims: never more output than the declared size, a
//! declared size no larger than the `.npy` header implies, and a small member's data within
//! its `Limit` — each refused before the offending bytes reach the sink (of a member's data,
//! none: only the header's own bytes may have passed).

use hedgerow_core::{npy, npz, ErrorKind, Labels, Objectness};

fn member(size: u64, data: &[u8], method: u16) -> npz::Member {
    npz::Member {
        name: "labels.npy".into(),
        method,
        compressed: data.len() as u64,
        size,
        local_header: 0,
    }
}

/// Inflate in 7-byte pieces; returns the bytes the sink saw and the first error.
fn inflate(flow: &mut npz::Inflow, data: &[u8]) -> (u64, Option<ErrorKind>) {
    let mut seen = 0u64;
    for piece in data.chunks(7) {
        let r = flow.feed(
            piece,
            &mut |c: &[u8]| -> Result<(), ErrorKind> {
                seen += c.len() as u64;
                Ok(())
            },
            |k| k,
        );
        if let Err(k) = r {
            return (seen, Some(k));
        }
    }
    (seen, flow.finish().err())
}

fn labels_npy(rows: u64, extra: usize) -> Vec<u8> {
    let mut b = npy::header_bytes("<i8", &[rows], false);
    b.extend(vec![0u8; rows as usize * 8 + extra]);
    b
}

#[test]
fn output_past_the_declared_size_never_reaches_the_sink() {
    let npy = labels_npy(4, 100_000);
    for (method, data) in [
        (0, npy.clone()),
        (8, miniz_oxide::deflate::compress_to_vec(&npy, 6)),
    ] {
        let declared = npy.len() as u64 - 100_000;
        let mut flow = npz::Inflow::new(&member(declared, &data, method)).expect("method");
        let (seen, err) = inflate(&mut flow, &data);
        assert!(seen <= declared, "method {method}: {seen} > {declared}");
        assert_eq!(
            err,
            Some(ErrorKind::MemberOverflow { declared }),
            "method {method}"
        );
    }
}

#[test]
fn declared_size_larger_than_the_header_implies_is_refused_at_the_header() {
    let npy = labels_npy(4, 5000);
    let data = miniz_oxide::deflate::compress_to_vec(&npy, 6);
    let mut flow = npz::Inflow::new(&member(npy.len() as u64, &data, 8)).expect("deflate");
    let (seen, err) = inflate(&mut flow, &data);
    assert!(seen < 128, "only header bytes passed on: {seen}");
    assert_eq!(
        err,
        Some(ErrorKind::MemberSize {
            declared: npy.len() as u64,
            implied: 128 + 32
        })
    );
}

#[test]
fn small_members_are_capped_by_the_logits_rows() {
    let npy = labels_npy(1000, 0);
    let data = miniz_oxide::deflate::compress_to_vec(&npy, 6);
    let m = member(npy.len() as u64, &data, 8);
    let mut flow = npz::Inflow::new(&m)
        .expect("deflate")
        .limit(Objectness::npy_limit(10, "b.npz:logits"));
    let (seen, err) = inflate(&mut flow, &data);
    assert!(seen < 128, "only header bytes passed on: {seen}");
    assert_eq!(
        err.map(|k| k.to_string()).as_deref(),
        Some("shape (1000,) of int64 is 8000 bytes of data; one value for each of the 10 rows of b.npz:logits takes at most 80")
    );
    // Within the cap it reads whole.
    let mut flow = npz::Inflow::new(&m)
        .expect("deflate")
        .limit(Labels::npy_limit(1000, "b.npz:logits"));
    assert_eq!(inflate(&mut flow, &data), (npy.len() as u64, None));
    assert_eq!(npz::peek_header(&m, &data).map(|h| h.shape), Ok(vec![1000]));
}
