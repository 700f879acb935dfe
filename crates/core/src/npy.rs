//! NumPy `.npy` reading: header parsing (format 1.0/2.0/3.0) and element decoding for the
//! dtypes a Python pipeline writes (float16/32/64, integers, either byte order).
//!
//! The header is parsed from a byte prefix so callers can stream the body in chunks.

use crate::error::ErrorKind;

/// Element type of an array.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scalar {
    F16,
    F32,
    F64,
    I8,
    I16,
    I32,
    I64,
    U8,
    U16,
    U32,
    U64,
    Bool,
    /// Fixed-width unicode strings of this many characters (numpy `<U…`, UTF-32).
    Str(u32),
}

impl Scalar {
    pub fn size(self) -> usize {
        match self {
            Scalar::I8 | Scalar::U8 | Scalar::Bool => 1,
            Scalar::F16 | Scalar::I16 | Scalar::U16 => 2,
            Scalar::F32 | Scalar::I32 | Scalar::U32 => 4,
            Scalar::F64 | Scalar::I64 | Scalar::U64 => 8,
            Scalar::Str(n) => 4 * n as usize,
        }
    }
    pub fn is_float(self) -> bool {
        matches!(self, Scalar::F16 | Scalar::F32 | Scalar::F64)
    }
    pub fn is_integer(self) -> bool {
        !self.is_float() && !matches!(self, Scalar::Bool | Scalar::Str(_))
    }
}

/// A dtype: element type plus byte order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Dtype {
    pub scalar: Scalar,
    pub big_endian: bool,
}

impl Dtype {
    /// NumPy's name for it, e.g. `float16`.
    pub fn name(&self) -> &'static str {
        match self.scalar {
            Scalar::F16 => "float16",
            Scalar::F32 => "float32",
            Scalar::F64 => "float64",
            Scalar::I8 => "int8",
            Scalar::I16 => "int16",
            Scalar::I32 => "int32",
            Scalar::I64 => "int64",
            Scalar::U8 => "uint8",
            Scalar::U16 => "uint16",
            Scalar::U32 => "uint32",
            Scalar::U64 => "uint64",
            Scalar::Bool => "bool",
            Scalar::Str(_) => "str",
        }
    }

    /// Decode `count` elements from `bytes` into `out` as f64 (integers convert exactly up to
    /// 2^53). `bytes` must hold at least `count * size` bytes.
    pub fn decode_into(&self, bytes: &[u8], out: &mut Vec<f64>) {
        out.clear();
        macro_rules! each {
            ($n:literal, $conv:expr) => {{
                let conv = $conv;
                if self.big_endian {
                    out.extend(bytes.chunks_exact($n).map(|c| {
                        let mut a = [0u8; $n];
                        a.copy_from_slice(c);
                        a.reverse();
                        conv(a)
                    }));
                } else {
                    out.extend(bytes.chunks_exact($n).map(|c| {
                        let mut a = [0u8; $n];
                        a.copy_from_slice(c);
                        conv(a)
                    }));
                }
            }};
        }
        match self.scalar {
            Scalar::F16 => each!(2, |a: [u8; 2]| half::f16::from_le_bytes(a).to_f64()),
            Scalar::F32 => each!(4, |a: [u8; 4]| f32::from_le_bytes(a) as f64),
            Scalar::F64 => each!(8, f64::from_le_bytes),
            Scalar::I8 => each!(1, |a: [u8; 1]| a[0] as i8 as f64),
            Scalar::I16 => each!(2, |a| i16::from_le_bytes(a) as f64),
            Scalar::I32 => each!(4, |a| i32::from_le_bytes(a) as f64),
            Scalar::I64 => each!(8, |a| i64::from_le_bytes(a) as f64),
            Scalar::U8 | Scalar::Bool => each!(1, |a: [u8; 1]| a[0] as f64),
            Scalar::U16 => each!(2, |a| u16::from_le_bytes(a) as f64),
            Scalar::U32 => each!(4, |a| u32::from_le_bytes(a) as f64),
            Scalar::U64 => each!(8, |a| u64::from_le_bytes(a) as f64),
            Scalar::Str(_) => out.extend(std::iter::repeat_n(
                f64::NAN,
                bytes.len() / self.scalar.size().max(1),
            )),
        }
    }

    /// Decode fixed-width strings (trailing NULs removed; invalid code points become U+FFFD).
    pub fn decode_strings(&self, bytes: &[u8]) -> Vec<String> {
        let size = self.scalar.size().max(1);
        bytes
            .chunks_exact(size)
            .map(|item| {
                item.chunks_exact(4)
                    .map(|c| {
                        let c: [u8; 4] = [c[0], c[1], c[2], c[3]];
                        if self.big_endian {
                            u32::from_be_bytes(c)
                        } else {
                            u32::from_le_bytes(c)
                        }
                    })
                    .take_while(|&c| c != 0)
                    .map(|c| char::from_u32(c).unwrap_or('\u{fffd}'))
                    .collect()
            })
            .collect()
    }

    /// Decode integers exactly (for label arrays).
    pub fn decode_ints(&self, bytes: &[u8]) -> Vec<i128> {
        let n = self.scalar.size();
        bytes
            .chunks_exact(n)
            .map(|c| {
                let mut a = [0u8; 8];
                if self.big_endian {
                    for (i, b) in c.iter().rev().enumerate() {
                        a[i] = *b;
                    }
                } else {
                    a[..n].copy_from_slice(c);
                }
                let raw = u64::from_le_bytes(a);
                let signed = matches!(
                    self.scalar,
                    Scalar::I8 | Scalar::I16 | Scalar::I32 | Scalar::I64
                );
                if signed {
                    let shift = 64 - 8 * n as u32;
                    (((raw << shift) as i64) >> shift) as i128
                } else {
                    raw as i128
                }
            })
            .collect()
    }
}

/// A parsed `.npy` header.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Header {
    pub dtype: Dtype,
    pub fortran_order: bool,
    pub shape: Vec<u64>,
    /// Bytes before the data (magic, version, length field and header text).
    pub data_offset: usize,
}

impl Header {
    /// Number of elements the shape promises (saturating on absurd shapes).
    pub fn elements(&self) -> u64 {
        self.shape.iter().fold(1u64, |a, &b| a.saturating_mul(b))
    }
    /// Bytes of data the shape promises.
    pub fn data_len(&self) -> u64 {
        self.elements()
            .saturating_mul(self.dtype.scalar.size() as u64)
    }
    pub fn shape_text(&self) -> String {
        shape_text(&self.shape)
    }
}

pub fn shape_text(shape: &[u64]) -> String {
    match shape {
        [one] => format!("({one},)"),
        _ => format!(
            "({})",
            shape
                .iter()
                .map(u64::to_string)
                .collect::<Vec<_>>()
                .join(", ")
        ),
    }
}

const MAGIC: &[u8] = b"\x93NUMPY";

/// `Err` if `bytes` (the whole file, or all of it there is) do not start like a `.npy`.
pub fn check_magic(bytes: &[u8]) -> Result<(), ErrorKind> {
    let have = bytes.len().min(MAGIC.len());
    if bytes[..have] != MAGIC[..have] || bytes.is_empty() {
        let shown: String = bytes
            .iter()
            .take(6)
            .map(|b| {
                if b.is_ascii_graphic() {
                    (*b as char).to_string()
                } else {
                    format!("\\x{b:02x}")
                }
            })
            .collect();
        return Err(ErrorKind::NpyMagic {
            found: if shown.is_empty() {
                "an empty file".into()
            } else {
                shown
            },
        });
    }
    Ok(())
}

/// Parse the header from the start of a file. `Ok(None)`: more bytes are needed. The magic is
/// judged once its six bytes are there, so the message names the same bytes however the file
/// was cut into chunks.
pub fn parse_header(bytes: &[u8]) -> Result<Option<Header>, ErrorKind> {
    if bytes.len() < MAGIC.len() {
        return Ok(None);
    }
    check_magic(bytes)?;
    if bytes.len() < 10 {
        return Ok(None);
    }
    let (major, minor) = (bytes[6], bytes[7]);
    let (len, start) = match major {
        1 => (u16::from_le_bytes([bytes[8], bytes[9]]) as usize, 10),
        2 | 3 => {
            if bytes.len() < 12 {
                return Ok(None);
            }
            (
                u32::from_le_bytes([bytes[8], bytes[9], bytes[10], bytes[11]]) as usize,
                12,
            )
        }
        _ => return Err(ErrorKind::NpyVersion { major, minor }),
    };
    if minor != 0 {
        return Err(ErrorKind::NpyVersion { major, minor });
    }
    if len > 1 << 24 {
        return Err(ErrorKind::NpyHeader(format!(
            "header length {len} bytes is implausible"
        )));
    }
    if bytes.len() < start + len {
        return Ok(None);
    }
    let text = std::str::from_utf8(&bytes[start..start + len])
        .map_err(|_| ErrorKind::NpyHeader("the header text is not valid UTF-8".into()))?;
    let dict = parse_dict(text)?;
    Ok(Some(Header {
        dtype: dict.0,
        fortran_order: dict.1,
        shape: dict.2,
        data_offset: start + len,
    }))
}

/// The header is a Python dict literal: `{'descr': '<f4', 'fortran_order': False, 'shape': (3, 4), }`.
fn parse_dict(text: &str) -> Result<(Dtype, bool, Vec<u64>), ErrorKind> {
    let bad = |what: &str| ErrorKind::NpyHeader(format!("{what} in `{}`", text.trim_end()));
    let mut p = Lexer {
        s: text.as_bytes(),
        i: 0,
    };
    p.skip_ws();
    if !p.eat(b'{') {
        return Err(bad("expected a dict starting with `{`"));
    }
    let (mut descr, mut fortran, mut shape) = (None, None, None);
    loop {
        p.skip_ws();
        if p.eat(b'}') {
            break;
        }
        let key = p.string().ok_or_else(|| bad("expected a quoted key"))?;
        p.skip_ws();
        if !p.eat(b':') {
            return Err(bad("expected `:` after a key"));
        }
        p.skip_ws();
        match key.as_str() {
            "descr" => {
                let Some(d) = p.string() else {
                    if p.s.get(p.i) == Some(&b'[') {
                        return Err(ErrorKind::Dtype {
                            found: "a structured dtype".into(),
                            expected: "a plain numeric dtype",
                        });
                    }
                    return Err(bad("expected a quoted dtype string for 'descr'"));
                };
                descr = Some(d);
            }
            "fortran_order" => {
                fortran = Some(if p.word("True") {
                    true
                } else if p.word("False") {
                    false
                } else {
                    return Err(bad("expected True or False for 'fortran_order'"));
                })
            }
            "shape" => {
                if !p.eat(b'(') {
                    return Err(bad("expected a tuple for 'shape'"));
                }
                let mut dims = Vec::new();
                loop {
                    p.skip_ws();
                    if p.eat(b')') {
                        break;
                    }
                    dims.push(
                        p.int()
                            .ok_or_else(|| bad("expected a whole number in 'shape'"))?,
                    );
                    p.skip_ws();
                    if !p.eat(b',') {
                        p.skip_ws();
                        if !p.eat(b')') {
                            return Err(bad("expected `,` or `)` in 'shape'"));
                        }
                        break;
                    }
                }
                shape = Some(dims);
            }
            _ => return Err(bad(&format!("unexpected key '{key}'"))),
        }
        p.skip_ws();
        if !p.eat(b',') {
            p.skip_ws();
            if !p.eat(b'}') {
                return Err(bad("expected `,` or `}`"));
            }
            break;
        }
    }
    let descr = descr.ok_or_else(|| bad("missing 'descr'"))?;
    let fortran = fortran.ok_or_else(|| bad("missing 'fortran_order'"))?;
    let shape = shape.ok_or_else(|| bad("missing 'shape'"))?;
    Ok((parse_descr(&descr)?, fortran, shape))
}

fn parse_descr(descr: &str) -> Result<Dtype, ErrorKind> {
    let unknown = || ErrorKind::Dtype {
        found: descr.to_string(),
        expected: "a numeric dtype such as '<f4'",
    };
    let mut chars = descr.chars();
    let (order, rest) = match chars.next() {
        Some(c @ ('<' | '>' | '|' | '=')) => (c, chars.as_str()),
        _ => ('=', descr),
    };
    let scalar = match rest {
        "f2" | "e" => Scalar::F16,
        "f4" | "f" => Scalar::F32,
        "f8" | "d" => Scalar::F64,
        "i1" | "b" => Scalar::I8,
        "i2" | "h" => Scalar::I16,
        "i4" | "i" => Scalar::I32,
        "i8" | "q" | "l" => Scalar::I64,
        "u1" | "B" => Scalar::U8,
        "u2" | "H" => Scalar::U16,
        "u4" | "I" => Scalar::U32,
        "u8" | "Q" | "L" => Scalar::U64,
        "b1" | "?" => Scalar::Bool,
        _ => match rest.strip_prefix('U').and_then(|n| n.parse::<u32>().ok()) {
            // Wider strings than a million characters are no labels (and 4·n must fit a
            // 32-bit usize in the page).
            Some(n) if n > 0 && n <= 1 << 20 => Scalar::Str(n),
            _ => return Err(unknown()),
        },
    };
    Ok(Dtype {
        scalar,
        big_endian: order == '>' && scalar.size() > 1,
    })
}

struct Lexer<'a> {
    s: &'a [u8],
    i: usize,
}

impl Lexer<'_> {
    fn skip_ws(&mut self) {
        while self.i < self.s.len() && self.s[self.i].is_ascii_whitespace() {
            self.i += 1;
        }
    }
    fn eat(&mut self, c: u8) -> bool {
        if self.s.get(self.i) == Some(&c) {
            self.i += 1;
            true
        } else {
            false
        }
    }
    fn word(&mut self, w: &str) -> bool {
        if self.s[self.i..].starts_with(w.as_bytes()) {
            self.i += w.len();
            true
        } else {
            false
        }
    }
    fn string(&mut self) -> Option<String> {
        let q = *self.s.get(self.i)?;
        if q != b'\'' && q != b'"' {
            return None;
        }
        let start = self.i + 1;
        let end = start + self.s[start..].iter().position(|&c| c == q)?;
        self.i = end + 1;
        String::from_utf8(self.s[start..end].to_vec()).ok()
    }
    fn int(&mut self) -> Option<u64> {
        let start = self.i;
        while self.i < self.s.len() && self.s[self.i].is_ascii_digit() {
            self.i += 1;
        }
        let n = std::str::from_utf8(&self.s[start..self.i])
            .ok()?
            .parse()
            .ok()?;
        // Python 2 era files may write `3L`.
        self.eat(b'L');
        Some(n)
    }
}

/// The bytes before the data of a `.npy` file, as NumPy writes them: magic, version, header
/// length, then the dict literal padded with spaces and ending in `\n` so the data start at a
/// multiple of 64 bytes. Format 1.0 when the header fits its 16-bit length, else 2.0.
pub fn header_bytes(descr: &str, shape: &[u64], fortran_order: bool) -> Vec<u8> {
    let order = if fortran_order { "True" } else { "False" };
    let dict = format!(
        "{{'descr': '{descr}', 'fortran_order': {order}, 'shape': {}, }}",
        shape_text(shape)
    );
    let v1 = dict.len() + 11 <= u16::MAX as usize;
    let pre = if v1 { 10 } else { 12 };
    let len = (dict.len() + 1 + pre).div_ceil(64) * 64 - pre;
    let mut out = Vec::with_capacity(pre + len);
    out.extend_from_slice(b"\x93NUMPY");
    if v1 {
        out.extend_from_slice(&[1, 0]);
        out.extend_from_slice(&(len as u16).to_le_bytes());
    } else {
        out.extend_from_slice(&[2, 0]);
        out.extend_from_slice(&(len as u32).to_le_bytes());
    }
    out.extend_from_slice(dict.as_bytes());
    out.resize(pre + len - 1, b' ');
    out.push(b'\n');
    out
}

/// A whole small array (labels, objectness) read at once.
#[derive(Debug, Clone)]
pub struct Array<'a> {
    pub header: Header,
    pub data: &'a [u8],
}

/// Parse a complete `.npy` held in memory, checking that the data length matches the shape.
pub fn read_array(bytes: &[u8]) -> Result<Array<'_>, ErrorKind> {
    let header = match parse_header(bytes)? {
        Some(h) => h,
        None => {
            check_magic(bytes)?;
            return Err(ErrorKind::NpyHeader(format!(
                "the file ends inside the header ({} bytes)",
                bytes.len()
            )));
        }
    };
    let found = (bytes.len() - header.data_offset) as u64;
    let expected = header.data_len();
    if found < expected {
        return Err(ErrorKind::Truncated { expected, found });
    }
    if found > expected {
        return Err(ErrorKind::TrailingBytes {
            found: found - expected,
        });
    }
    let data = &bytes[header.data_offset..];
    Ok(Array { header, data })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A header in format `version` (2.0 and 3.0 differ from 1.0 only in the length field).
    fn header(descr: &str, shape: &[u64], version: u8) -> Vec<u8> {
        let h = header_bytes(descr, shape, false);
        if version == 1 {
            return h;
        }
        let len = u16::from_le_bytes([h[8], h[9]]) as u32;
        let mut out = b"\x93NUMPY".to_vec();
        out.extend([version, 0]);
        out.extend((len - 2).to_le_bytes());
        out.extend(&h[10..h.len() - 3]);
        out.push(b'\n');
        out
    }

    #[test]
    fn parses_each_version() {
        for v in [1, 2, 3] {
            let h = header("<f2", &[3, 4], v);
            let parsed = parse_header(&h).expect("valid").expect("complete");
            assert_eq!(parsed.shape, vec![3, 4]);
            assert_eq!(
                parsed.dtype,
                Dtype {
                    scalar: Scalar::F16,
                    big_endian: false
                }
            );
            assert_eq!(parsed.data_offset % 64, 0, "version {v}");
        }
    }

    #[test]
    fn partial_header_asks_for_more() {
        let h = header("<f4", &[3], 1);
        assert_eq!(parse_header(&h[..20]), Ok(None));
        assert_eq!(parse_header(&h[..4]), Ok(None));
    }

    #[test]
    fn rejects_bad_magic_and_version() {
        assert!(matches!(
            parse_header(b"PK\x03\x04xxxxxxxx"),
            Err(ErrorKind::NpyMagic { .. })
        ));
        let mut h = header("<f4", &[3], 1);
        h[6] = 4;
        assert_eq!(
            parse_header(&h),
            Err(ErrorKind::NpyVersion { major: 4, minor: 0 })
        );
    }

    #[test]
    fn big_endian_values_decode() {
        let d = Dtype {
            scalar: Scalar::F32,
            big_endian: true,
        };
        let mut out = Vec::new();
        d.decode_into(&1.5f32.to_be_bytes(), &mut out);
        assert_eq!(out, vec![1.5]);
        let d = Dtype {
            scalar: Scalar::I16,
            big_endian: true,
        };
        assert_eq!(d.decode_ints(&(-2i16).to_be_bytes()), vec![-2]);
        let d = Dtype {
            scalar: Scalar::I32,
            big_endian: false,
        };
        assert_eq!(d.decode_ints(&(-1i32).to_le_bytes()), vec![-1]);
    }

    #[test]
    fn descr_spellings() {
        assert_eq!(parse_descr("|u1").map(|d| d.scalar), Ok(Scalar::U8));
        assert_eq!(
            parse_descr(">f8"),
            Ok(Dtype {
                scalar: Scalar::F64,
                big_endian: true
            })
        );
        assert_eq!(parse_descr("<U10").map(|d| d.scalar), Ok(Scalar::Str(10)));
        assert!(parse_descr("<c16").is_err());
    }
}
