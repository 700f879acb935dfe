//! The group of each row, read from a column of the labels CSV: rows of one group (one image's
//! detections, say) are kept in the same part when tuning rows are split.

use std::collections::HashMap;

use crate::error::{Collector, Error, ErrorKind, Location, Result};

/// Dense group indices (0, 1, … in order of first appearance), one per data row of the labels
/// CSV `bytes`, from the column named `column` (matched like `label`: trimmed, any case).
/// Every row must name its group; a `.npy` labels file has no columns to read.
pub fn parse(bytes: &[u8], file: &str, column: &str) -> Result<Vec<u32>> {
    if bytes.starts_with(b"\x93NUMPY") {
        return Err(Error::new(
            file,
            Location::default(),
            ErrorKind::Invalid {
                what: format!("group column `{column}`"),
                expected: "a labels CSV file with that column".into(),
                found: "a .npy file".into(),
            },
        )
        .into());
    }
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .from_reader(bytes);
    let headers = reader
        .headers()
        .map_err(|e| Error::new(file, Location::line(1), ErrorKind::Csv(e.to_string())))?
        .clone();
    let wanted = column.trim();
    let Some(col) = headers
        .iter()
        .position(|h| h.trim().eq_ignore_ascii_case(wanted))
    else {
        let found = headers
            .iter()
            .map(|h| format!("`{h}`"))
            .collect::<Vec<_>>()
            .join(", ");
        return Err(Error::new(
            file,
            Location::line(1),
            ErrorKind::Invalid {
                what: "header".into(),
                expected: format!("a `{wanted}` column (--group-column)"),
                found,
            },
        )
        .into());
    };
    let mut errors = Collector::default();
    let mut index: HashMap<String, u32> = HashMap::new();
    let mut groups = Vec::new();
    for record in reader.records() {
        match record {
            Ok(rec) => {
                let line = rec.position().map(|p| p.line()).unwrap_or(0);
                let value = rec.get(col).unwrap_or("").trim();
                if value.is_empty() {
                    errors.push(Error::new(
                        file,
                        Location::line(line).column(wanted),
                        ErrorKind::Empty { what: "group id" },
                    ));
                    groups.push(0);
                    continue;
                }
                let next = index.len() as u32;
                groups.push(*index.entry(value.to_string()).or_insert(next));
            }
            Err(e) => {
                let line = e.position().map(|p| p.line()).unwrap_or(0);
                errors.push(Error::new(
                    file,
                    Location::line(line),
                    ErrorKind::Csv(e.to_string()),
                ));
            }
        }
    }
    errors.finish(file)?;
    Ok(groups)
}
