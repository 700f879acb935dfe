//! A zip archive laid out as `np.savez` writes one, for tests that build bundles byte by byte
//! (sizes that lie, damaged data): each member's local header and data, then the central
//! directory and its end record. CRCs are 0 (the engine does not check them).

/// One member: its name, compression method (0 stored, 8 deflated), the bytes stored, and the
/// uncompressed size written in both headers.
pub struct Member<'a> {
    pub name: &'a str,
    pub method: u16,
    pub data: &'a [u8],
    pub declared: u64,
}

pub fn zip(members: &[Member]) -> Vec<u8> {
    let mut out = Vec::new();
    let mut central = Vec::new();
    for m in members {
        let at = out.len() as u32;
        let fixed = |sig: u32, out: &mut Vec<u8>| {
            out.extend(sig.to_le_bytes());
            if sig == 0x0201_4b50 {
                out.extend(20u16.to_le_bytes()); // version made by
            }
            out.extend(20u16.to_le_bytes()); // version needed
            out.extend(0u16.to_le_bytes()); // flags
            out.extend(m.method.to_le_bytes());
            out.extend([0u8; 4]); // time, date
            out.extend(0u32.to_le_bytes()); // crc
            out.extend((m.data.len() as u32).to_le_bytes());
            out.extend((m.declared as u32).to_le_bytes());
            out.extend((m.name.len() as u16).to_le_bytes());
            out.extend(0u16.to_le_bytes()); // extra
        };
        fixed(0x0403_4b50, &mut out);
        out.extend(m.name.as_bytes());
        out.extend(m.data);
        fixed(0x0201_4b50, &mut central);
        central.extend([0u8; 10]); // comment length, disk, internal and external attributes
        central.extend(at.to_le_bytes());
        central.extend(m.name.as_bytes());
    }
    let offset = out.len() as u32;
    out.extend(&central);
    out.extend(0x0605_4b50u32.to_le_bytes());
    out.extend([0u8; 4]);
    out.extend((members.len() as u16).to_le_bytes());
    out.extend((members.len() as u16).to_le_bytes());
    out.extend((central.len() as u32).to_le_bytes());
    out.extend(offset.to_le_bytes());
    out.extend(0u16.to_le_bytes());
    out
}
