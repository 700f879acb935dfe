//! Whether staged files make one batch, and which of two that do not fit gives way.

use super::Kind;
use crate::error::{Error, ErrorKind, Location};

/// One staged file as far as batch membership goes: what it is, its name in messages, how
/// many rows (or, for a taxonomy, nodes) it holds when known, and when it was given.
#[derive(Debug, Clone, PartialEq)]
pub struct Part {
    pub kind: Kind,
    /// How messages name it: `labels.csv`, or `demo objectness`.
    pub label: String,
    /// Rows (labels, objectness, logits) or nodes (taxonomy), once known.
    pub count: Option<u64>,
    /// Logits only: the columns, once known.
    pub columns: Option<u64>,
    /// Larger is newer: of two files that do not fit together, the older one gives way.
    pub seq: u64,
}

/// Two staged files that cannot be one batch.
#[derive(Debug, Clone, PartialEq)]
pub struct Mismatch {
    pub older: Kind,
    pub newer: Kind,
    /// In the older file's words: `demo objectness: 20,000 rows, the new logits have 550 rows`.
    pub reason: String,
    /// In the newer file's words: `labels.csv: 540 rows, but the logits have 550 rows`.
    pub refusal: String,
}

impl Mismatch {
    /// Which file leaves: a new taxonomy or new logits start a new batch, so the older file
    /// of the pair is set aside; new labels or objectness that do not fit are refused, and the
    /// batch they were meant for is kept.
    pub fn gives_way(&self) -> Kind {
        if matches!(self.newer, Kind::Taxonomy | Kind::Logits) {
            self.older
        } else {
            self.newer
        }
    }
}

/// Whether staged files make one batch: the taxonomy's nodes equal the logits' columns, and
/// labels, objectness and logits have as many rows (labels and objectness are compared with
/// each other when no logits are staged; with logits of rows not yet known, nothing is). Each mismatch names the older file of the pair.
pub fn mismatches(parts: &[Part]) -> Vec<Mismatch> {
    let get = |k: Kind| parts.iter().find(|p| p.kind == k);
    let mut out = Vec::new();
    let mut pair = |a: &Part, a_n: u64, b: &Part, b_n: u64, unit_a: &str, unit_b: &str| {
        if a_n == b_n {
            return;
        }
        let (older, newer, older_n, newer_n, ou, nu) = if a.seq <= b.seq {
            (a, b, a_n, b_n, unit_a, unit_b)
        } else {
            (b, a, b_n, a_n, unit_b, unit_a)
        };
        out.push(Mismatch {
            older: older.kind,
            newer: newer.kind,
            reason: format!(
                "{}: {} {ou}, the new {} {} {} {nu}",
                older.label,
                thousands(older_n),
                newer.kind.title(),
                if newer.kind.is_plural() {
                    "have"
                } else {
                    "has"
                },
                thousands(newer_n),
            ),
            refusal: format!(
                "{}: {} {nu}, but the {} {} {} {ou}",
                newer.label,
                thousands(newer_n),
                older.kind.title(),
                if older.kind.is_plural() {
                    "have"
                } else {
                    "has"
                },
                thousands(older_n),
            ),
        });
    };
    let logits = get(Kind::Logits);
    if let (Some(t), Some(l)) = (get(Kind::Taxonomy), logits) {
        if let (Some(n), Some(c)) = (t.count, l.columns) {
            pair(t, n, l, c, "nodes", "columns");
        }
    }
    match (logits, rows_of(logits)) {
        (_, Some((l, n))) => {
            for k in [Kind::Labels, Kind::Objectness] {
                if let Some((p, m)) = rows_of(get(k)) {
                    pair(p, m, l, n, "rows", "rows");
                }
            }
        }
        // Logits whose rows are not known yet (a bundle before its read): wait for them.
        (Some(_), None) => {}
        (None, None) => {
            if let (Some((a, n)), Some((b, m))) =
                (rows_of(get(Kind::Labels)), rows_of(get(Kind::Objectness)))
            {
                pair(a, n, b, m, "rows", "rows");
            }
        }
    }
    out
}

fn rows_of(p: Option<&Part>) -> Option<(&Part, u64)> {
    p.and_then(|p| Some((p, p.count?)))
}

/// The row-count check of a batch being joined, as located errors: `labels.csv: 540 rows, but
/// logits.npy has 550 rows`. The same comparison as [`mismatches`], worded for a refusal.
pub fn row_errors(logits: &str, rows: u64, others: &[(&str, u64)]) -> Vec<Error> {
    others
        .iter()
        .filter(|(_, n)| *n != rows)
        .map(|(file, n)| {
            Error::new(
                *file,
                Location::default(),
                ErrorKind::RowCount {
                    found: *n,
                    other: logits.to_string(),
                    expected: rows,
                },
            )
        })
        .collect()
}

/// `20000` as `20,000`.
pub fn thousands(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// Names as messages quote them: `` `logits`, `labels` ``.
pub fn quoted(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn part(kind: Kind, label: &str, count: u64, seq: u64) -> Part {
        Part {
            kind,
            label: label.into(),
            count: Some(count),
            columns: None,
            seq,
        }
    }
    #[test]
    fn the_older_file_of_a_mismatched_pair_gives_way() {
        let mut logits = part(Kind::Logits, "logits.npy", 550, 5);
        logits.columns = Some(526);
        let parts = [
            part(Kind::Taxonomy, "taxonomy.csv", 526, 4),
            logits,
            part(Kind::Labels, "labels.csv", 550, 6),
            part(Kind::Objectness, "demo objectness", 20_000, 1),
        ];
        let m = mismatches(&parts);
        assert_eq!(m.len(), 1, "{m:?}");
        assert_eq!(m[0].older, Kind::Objectness);
        assert_eq!(
            m[0].gives_way(),
            Kind::Objectness,
            "new logits set the old file aside"
        );
        assert_eq!(
            m[0].reason,
            "demo objectness: 20,000 rows, the new logits have 550 rows"
        );
    }

    #[test]
    fn a_new_taxonomy_sets_older_logits_aside() {
        let mut logits = part(Kind::Logits, "demo logits", 20_000, 1);
        logits.columns = Some(173);
        let m = mismatches(&[logits, part(Kind::Taxonomy, "t.csv", 526, 9)]);
        assert_eq!(m[0].older, Kind::Logits);
        assert_eq!(
            m[0].reason,
            "demo logits: 173 columns, the new taxonomy has 526 nodes"
        );
    }

    #[test]
    fn without_logits_labels_and_objectness_are_compared() {
        let m = mismatches(&[
            part(Kind::Labels, "a", 3, 2),
            part(Kind::Objectness, "b", 4, 1),
        ]);
        assert_eq!(m[0].older, Kind::Objectness);
        assert_eq!(
            m[0].gives_way(),
            Kind::Labels,
            "new labels that do not fit are refused"
        );
        assert_eq!(m[0].refusal, "a: 3 rows, but the objectness has 4 rows");
        assert!(mismatches(&[
            part(Kind::Labels, "a", 3, 2),
            part(Kind::Objectness, "b", 3, 1)
        ])
        .is_empty());
    }

    #[test]
    fn counts_are_written_with_thousands_separators() {
        assert_eq!(thousands(1_234_567), "1,234,567");
        assert_eq!(thousands(550), "550");
    }
}
