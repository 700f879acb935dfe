//! A minimal writer for NumPy `.npy` files (format version 1.0, little-endian, C order).

use anyhow::{bail, ensure};
use half::f16;

/// Element types this writer knows, with their NumPy `descr` and little-endian bytes.
pub trait Element: Copy {
    const DESCR: &'static str;
    fn put_le(self, out: &mut Vec<u8>);
}

impl Element for f16 {
    const DESCR: &'static str = "<f2";
    fn put_le(self, out: &mut Vec<u8>) {
        out.extend_from_slice(&self.to_le_bytes());
    }
}

impl Element for f32 {
    const DESCR: &'static str = "<f4";
    fn put_le(self, out: &mut Vec<u8>) {
        out.extend_from_slice(&self.to_le_bytes());
    }
}

impl Element for i64 {
    const DESCR: &'static str = "<i8";
    fn put_le(self, out: &mut Vec<u8>) {
        out.extend_from_slice(&self.to_le_bytes());
    }
}

/// The preamble exactly as NumPy writes it: magic, version 1.0, u16 LE header length, then the
/// Python dict literal padded with spaces and a final `\n`, so that the data start at a multiple
/// of 64 bytes (NumPy aligns for memory-mapping).
pub fn header(descr: &str, shape: &[usize]) -> anyhow::Result<Vec<u8>> {
    // Python's repr of a tuple: `()`, `(n,)`, `(a, b)`.
    let shape_repr = match shape {
        [] => "()".to_string(),
        [n] => format!("({n},)"),
        dims => {
            let parts: Vec<String> = dims.iter().map(|d| d.to_string()).collect();
            format!("({})", parts.join(", "))
        }
    };
    let dict = format!("{{'descr': '{descr}', 'fortran_order': False, 'shape': {shape_repr}, }}");
    const PREAMBLE: usize = 6 + 2 + 2; // magic, version, header length
    let unpadded = PREAMBLE + dict.len() + 1; // + the closing '\n'
    let padding = (64 - unpadded % 64) % 64;
    let header_len = dict.len() + padding + 1;
    let Ok(header_len16) = u16::try_from(header_len) else {
        bail!("npy header of {header_len} bytes does not fit format version 1.0");
    };

    let mut out = Vec::with_capacity(PREAMBLE + header_len);
    out.extend_from_slice(b"\x93NUMPY");
    out.extend_from_slice(&[1, 0]);
    out.extend_from_slice(&header_len16.to_le_bytes());
    out.extend_from_slice(dict.as_bytes());
    out.resize(out.len() + padding, b' ');
    out.push(b'\n');
    Ok(out)
}

/// A whole `.npy` file holding `data` (row-major) with the given shape.
pub fn encode<T: Element>(shape: &[usize], data: &[T]) -> anyhow::Result<Vec<u8>> {
    let count: usize = shape.iter().product();
    ensure!(
        count == data.len(),
        "npy: shape {shape:?} needs {count} values, got {}",
        data.len()
    );
    let mut out = header(T::DESCR, shape)?;
    out.reserve(std::mem::size_of_val(data));
    for &x in data {
        x.put_le(&mut out);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn header_matches_numpy_layout() {
        for shape in [
            &[][..],
            &[3][..],
            &[20000][..],
            &[20000, 175][..],
            &[2, 3, 4][..],
        ] {
            let h = header("<f4", shape).expect("header");
            assert_eq!(h.len() % 64, 0, "{shape:?}");
            assert_eq!(&h[..8], b"\x93NUMPY\x01\x00");
            let hlen = u16::from_le_bytes([h[8], h[9]]) as usize;
            assert_eq!(10 + hlen, h.len());
            assert_eq!(h.last(), Some(&b'\n'));
        }
        let h = header("<f2", &[20000, 175]).expect("header");
        let text = std::str::from_utf8(&h[10..]).expect("ascii");
        assert!(
            text.starts_with("{'descr': '<f2', 'fortran_order': False, 'shape': (20000, 175), }")
        );
        let h = header("<f4", &[7]).expect("header");
        let text = std::str::from_utf8(&h[10..]).expect("ascii");
        assert!(text.starts_with("{'descr': '<f4', 'fortran_order': False, 'shape': (7,), }"));
    }

    #[test]
    fn encode_checks_length_and_writes_little_endian() {
        assert!(encode(&[2, 2], &[1.0f32; 3]).is_err());
        let bytes = encode(&[2], &[1.0f32, -2.0]).expect("encode");
        let start = bytes.len() - 8;
        assert_eq!(start % 64, 0);
        assert_eq!(&bytes[start..], &[0, 0, 0x80, 0x3f, 0, 0, 0, 0xc0]);
        let bytes = encode(&[1], &[f16::from_f32(1.0)]).expect("encode");
        assert_eq!(&bytes[bytes.len() - 2..], &[0x00, 0x3c]);
    }
}
