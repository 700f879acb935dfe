//! Output formats: the readable table and the curve CSV (decode writes its rows itself).

use std::fmt::Write as _;

use hedgerow_core::{CurvePoint, Metrics};

use crate::load::Loaded;

/// A ratio as shown to people: 4 decimals, or "n/a" for an empty denominator.
pub fn show(v: Option<f64>) -> String {
    v.map_or_else(|| "n/a".to_string(), |v| format!("{v:.4}"))
}

pub fn table(loaded: &Loaded, m: &Metrics) -> String {
    let s = &loaded.settings;
    let tax = &loaded.taxonomy;
    let mut out = String::new();
    let depths: Vec<String> = (1..=tax.max_depth())
        .map(|d| format!("d{d} {}", s.thresholds.at_depth(d)))
        .collect();
    let _ = writeln!(
        out,
        "{} rows ({} labelled, {} background), {} nodes, depth {}",
        m.rows,
        m.labelled_rows,
        m.background_rows,
        tax.len(),
        tax.max_depth()
    );
    let object = if loaded.batch.has_objectness() {
        format!("object {}, ", s.thresholds.object)
    } else {
        String::new()
    };
    let _ = writeln!(
        out,
        "rule {}, thresholds: {object}{}, unverifiable: {}",
        s.rule.as_str(),
        depths.join(", "),
        s.policy.as_str()
    );
    if !s.thresholds.nodes.is_empty() {
        let nodes: Vec<String> = s
            .thresholds
            .nodes
            .iter()
            .map(|&(v, t)| format!("{} {t}", tax.id(v)))
            .collect();
        let _ = writeln!(out, "node thresholds: {}", nodes.join(", "));
    }
    let _ = writeln!(out);
    let rows: [(&str, String); 14] = [
        ("predictions", m.predictions.to_string()),
        ("  correct", m.correct.to_string()),
        ("  unverifiable", m.unverifiable.to_string()),
        (
            "  wrong",
            format!("{} ({} false alarms)", m.wrong, m.false_alarms),
        ),
        ("abstained", m.abstained.to_string()),
        (
            "precision",
            match m.precision_interval {
                Some(i) => format!(
                    "{}  (Wilson 95 %: {:.4}–{:.4})",
                    show(m.precision),
                    i.low,
                    i.high
                ),
                None => show(m.precision),
            },
        ),
        ("specificity", show(m.specificity)),
        ("reward", show(m.reward)),
        ("hier. precision", show(m.hierarchical_precision)),
        ("hier. recall", show(m.hierarchical_recall)),
        ("hier. F1", show(m.hierarchical_f1)),
        ("mistake severity", show(m.mistake_severity)),
        ("", String::new()),
        (
            "stop depth",
            "share    correct  unverif.  wrong".to_string(),
        ),
    ];
    for (k, v) in rows {
        let _ = writeln!(out, "{k:<18}{v}");
    }
    for (d, (share, o)) in m.stop_share.iter().zip(&m.stop_outcome).enumerate() {
        let _ = writeln!(
            out,
            "{:<18}{:<9}{:<9}{:<10}{}",
            d,
            show(*share),
            show(o.correct),
            show(o.unverifiable),
            show(o.wrong)
        );
    }
    out
}

/// The curve as CSV (the core's writer, which the page's download uses too).
pub fn curve_csv(points: &[CurvePoint]) -> anyhow::Result<Vec<u8>> {
    Ok(hedgerow_core::curve::curve_csv(points)?)
}
