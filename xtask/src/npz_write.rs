//! A minimal writer for `.npz` bundles as `np.savez_compressed` lays them out: a zip archive of
//! `.npy` members, each deflated.
//!
//! The zip records are written here (about as much code as a zip crate's setup) so that the
//! bytes depend on nothing but the members: the modification time is fixed at 1980-01-01 00:00,
//! the earliest DOS date, where numpy stamps the current time. Deflate is `miniz_oxide`, the
//! crate the core inflates with. Record layouts follow PKWARE's APPNOTE.TXT (sections 4.3.7
//! local file header, 4.3.12 central directory header, 4.3.16 end of central directory
//! record), from memory; the core's reader (`hedgerow_core::npz`) and Python's `zipfile` read
//! the result (tests below, and a manual check with `zipfile.ZipFile.testzip`).

use anyhow::ensure;

/// "Version needed to extract": 2.0, the first version with deflate.
const VERSION: u16 = 20;
/// Compression method 8: deflate.
const DEFLATE: u16 = 8;
/// DOS date of 1980-01-01: (year - 1980) << 9 | month << 5 | day.
const DOS_DATE: u16 = 1 << 5 | 1;
const DOS_TIME: u16 = 0;
/// zlib's default level, as `np.savez_compressed` uses (`zipfile.ZIP_DEFLATED`, default level).
const LEVEL: u8 = 6;

fn put16(out: &mut Vec<u8>, v: u16) {
    out.extend_from_slice(&v.to_le_bytes());
}
fn put32(out: &mut Vec<u8>, v: u32) {
    out.extend_from_slice(&v.to_le_bytes());
}

/// A whole `.npz` file holding `members` (`(name, bytes)`, names such as `logits.npy`), in order.
pub fn encode(members: &[(&str, &[u8])]) -> anyhow::Result<Vec<u8>> {
    let mut out = Vec::new();
    let mut directory = Vec::new();
    for &(name, data) in members {
        ensure!(name.len() <= u16::MAX as usize, "npz: member name too long");
        let compressed = miniz_oxide::deflate::compress_to_vec(data, LEVEL);
        let crc = crc32fast::hash(data);
        let (Ok(size), Ok(csize), Ok(offset)) = (
            u32::try_from(data.len()),
            u32::try_from(compressed.len()),
            u32::try_from(out.len()),
        ) else {
            anyhow::bail!("npz: member `{name}` or the archive passes 4 GiB (zip64 not written)");
        };
        ensure!(
            size != u32::MAX && csize != u32::MAX && offset != u32::MAX,
            "npz: member `{name}` needs zip64"
        );
        let name_len = name.len() as u16;

        // Local file header (APPNOTE 4.3.7).
        put32(&mut out, 0x0403_4b50);
        put16(&mut out, VERSION);
        put16(&mut out, 0); // flags: sizes and CRC are in this header, no data descriptor
        put16(&mut out, DEFLATE);
        put16(&mut out, DOS_TIME);
        put16(&mut out, DOS_DATE);
        put32(&mut out, crc);
        put32(&mut out, csize);
        put32(&mut out, size);
        put16(&mut out, name_len);
        put16(&mut out, 0); // extra field length
        out.extend_from_slice(name.as_bytes());
        out.extend_from_slice(&compressed);

        // Central directory header (APPNOTE 4.3.12).
        put32(&mut directory, 0x0201_4b50);
        put16(&mut directory, VERSION); // version made by: 2.0, MS-DOS attributes
        put16(&mut directory, VERSION);
        put16(&mut directory, 0);
        put16(&mut directory, DEFLATE);
        put16(&mut directory, DOS_TIME);
        put16(&mut directory, DOS_DATE);
        put32(&mut directory, crc);
        put32(&mut directory, csize);
        put32(&mut directory, size);
        put16(&mut directory, name_len);
        put16(&mut directory, 0); // extra field length
        put16(&mut directory, 0); // comment length
        put16(&mut directory, 0); // disk number start
        put16(&mut directory, 0); // internal attributes
        put32(&mut directory, 0); // external attributes
        put32(&mut directory, offset);
        directory.extend_from_slice(name.as_bytes());
    }
    let (Ok(dir_offset), Ok(dir_size), Ok(count)) = (
        u32::try_from(out.len()),
        u32::try_from(directory.len()),
        u16::try_from(members.len()),
    ) else {
        anyhow::bail!("npz: archive too large for a plain zip directory");
    };
    out.extend_from_slice(&directory);

    // End of central directory record (APPNOTE 4.3.16).
    put32(&mut out, 0x0605_4b50);
    put16(&mut out, 0); // this disk
    put16(&mut out, 0); // disk with the directory
    put16(&mut out, count);
    put16(&mut out, count);
    put32(&mut out, dir_size);
    put32(&mut out, dir_offset);
    put16(&mut out, 0); // comment length
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::encode;
    use hedgerow_core::npz;

    #[test]
    fn core_reader_lists_and_inflates_every_member() -> anyhow::Result<()> {
        let big: Vec<u8> = (0..50_000u32).map(|i| (i % 251) as u8).collect();
        let small = b"\x93NUMPY tiny".to_vec();
        let empty: Vec<u8> = Vec::new();
        let bytes = encode(&[
            ("logits.npy", &big),
            ("labels.npy", &small),
            ("empty.npy", &empty),
        ])?;
        let members = npz::members(&bytes).map_err(|e| anyhow::anyhow!("{e:?}"))?;
        let keys: Vec<&str> = members.iter().map(|m| m.key()).collect();
        assert_eq!(keys, ["logits", "labels", "empty"]);
        for (m, want) in members.iter().zip([&big, &small, &empty]) {
            assert_eq!(m.method, 8, "{}", m.name);
            assert_eq!(m.size, want.len() as u64);
            let got = npz::extract(&bytes, m).map_err(|e| anyhow::anyhow!("{e:?}"))?;
            assert_eq!(&got, want, "{}", m.name);
        }
        // Deflate did its job on the repetitive member.
        assert!(members[0].compressed < members[0].size / 10);
        // Fixed timestamps: the same members give the same bytes.
        assert_eq!(
            bytes,
            encode(&[
                ("logits.npy", &big),
                ("labels.npy", &small),
                ("empty.npy", &empty)
            ])?
        );
        Ok(())
    }
}
