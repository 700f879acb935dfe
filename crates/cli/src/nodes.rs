//! `hedgerow nodes`: the core's per-node report (where predictions stop and fail) as a table,
//! CSV or JSON, with node ids in place of column indices.

use std::fmt::Write as _;

use hedgerow_core::{node_report, NodeRecord, Taxonomy};
use serde::Serialize;

use crate::load::Loaded;
use crate::report::show;

/// One wrong answer for rows labelled under a node.
#[derive(Serialize)]
struct Wrong<'a> {
    node: &'a str,
    count: u64,
}

/// A node's record as written: ids instead of columns (the root's id is empty).
#[derive(Serialize)]
struct Record<'a> {
    id: &'a str,
    name: &'a str,
    depth: usize,
    threshold: f64,
    overridden: bool,
    stops: u64,
    correct: u64,
    unverifiable: u64,
    wrong: u64,
    labelled: u64,
    stopped_above: u64,
    precision: Option<f64>,
    precision_low: Option<f64>,
    precision_high: Option<f64>,
    top_wrong: Vec<Wrong<'a>>,
}

impl<'a> Record<'a> {
    fn new(tax: &'a Taxonomy, r: &NodeRecord) -> Self {
        Record {
            id: tax.id(r.node),
            name: tax.name(r.node),
            depth: r.depth,
            threshold: r.threshold,
            overridden: r.overridden,
            stops: r.stops,
            correct: r.correct,
            unverifiable: r.unverifiable,
            wrong: r.wrong,
            labelled: r.labelled,
            stopped_above: r.stopped_above,
            precision: r.precision,
            precision_low: r.precision_interval.map(|i| i.low),
            precision_high: r.precision_interval.map(|i| i.high),
            top_wrong: r
                .top_wrong
                .iter()
                .map(|&(v, count)| Wrong {
                    node: tax.id(v),
                    count,
                })
                .collect(),
        }
    }
}

#[derive(Serialize)]
struct Report<'a> {
    rows: u64,
    predictions: u64,
    rule: &'static str,
    unverifiable_policy: &'static str,
    root: Record<'a>,
    nodes: Vec<Record<'a>>,
}

fn build(loaded: &Loaded) -> Report<'_> {
    let tax = &loaded.taxonomy;
    let report = node_report(tax, &loaded.batch, &loaded.settings);
    let root = Record::new(tax, &report.root);
    let nodes: Vec<Record> = report.nodes.iter().map(|r| Record::new(tax, r)).collect();
    let predictions = root.stops + nodes.iter().map(|r| r.stops).sum::<u64>();
    Report {
        rows: loaded.batch.len() as u64,
        predictions,
        rule: loaded.settings.rule.as_str(),
        unverifiable_policy: loaded.settings.policy.as_str(),
        root,
        nodes,
    }
}

pub fn json(loaded: &Loaded) -> anyhow::Result<String> {
    Ok(serde_json::to_string_pretty(&build(loaded))? + "\n")
}

fn cell(v: Option<f64>) -> String {
    v.map_or_else(String::new, |v| v.to_string())
}

/// One CSV row per node in file order, the root (empty id, depth 0) first.
pub fn csv(loaded: &Loaded) -> anyhow::Result<Vec<u8>> {
    let report = build(loaded);
    let mut w = csv::Writer::from_writer(Vec::new());
    let mut header: Vec<String> = [
        "id",
        "name",
        "depth",
        "threshold",
        "overridden",
        "stops",
        "correct",
        "unverifiable",
        "wrong",
        "labelled",
        "stopped_above",
        "precision",
        "precision_low",
        "precision_high",
    ]
    .map(String::from)
    .to_vec();
    for i in 1..=hedgerow_core::nodes::TOP_WRONG {
        header.extend([format!("wrong_{i}"), format!("wrong_{i}_count")]);
    }
    w.write_record(&header)?;
    for r in std::iter::once(&report.root).chain(&report.nodes) {
        let mut rec = vec![
            r.id.to_string(),
            r.name.to_string(),
            r.depth.to_string(),
            r.threshold.to_string(),
            r.overridden.to_string(),
            r.stops.to_string(),
            r.correct.to_string(),
            r.unverifiable.to_string(),
            r.wrong.to_string(),
            r.labelled.to_string(),
            r.stopped_above.to_string(),
            cell(r.precision),
            cell(r.precision_low),
            cell(r.precision_high),
        ];
        for i in 0..hedgerow_core::nodes::TOP_WRONG {
            match r.top_wrong.get(i) {
                Some(x) => rec.extend([x.node.to_string(), x.count.to_string()]),
                None => rec.extend([String::new(), String::new()]),
            }
        }
        w.write_record(&rec)?;
    }
    w.into_inner().map_err(|e| anyhow::anyhow!("{e}"))
}

/// The readable table: ids indented by depth, precision with its interval, the top wrong
/// answers. A `*` after a threshold marks a per-node override.
pub fn table(loaded: &Loaded) -> String {
    let report = build(loaded);
    let rows = std::iter::once(&report.root).chain(&report.nodes);
    let label = |r: &Record| {
        if r.depth == 0 {
            "(root)".to_string()
        } else {
            format!("{}{}", "  ".repeat(r.depth - 1), r.id)
        }
    };
    let width = rows
        .clone()
        .map(|r| label(r).chars().count())
        .max()
        .unwrap_or(0)
        .max(4);
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{} rows, {} predictions; rule {}, unverifiable: {}",
        report.rows, report.predictions, report.rule, report.unverifiable_policy
    );
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "{:<width$}  {:>9}  {:>7}  {:>7}  {:>7}  {:>7}  {:<24}  {:>8}  {:>13}  most often wrong for rows labelled here",
        "node", "threshold", "stops", "correct", "unverif", "wrong", "precision (95% interval)", "labelled", "stopped above"
    );
    for r in rows {
        let precision = match (r.precision, r.precision_low, r.precision_high) {
            (Some(p), Some(lo), Some(hi)) => format!("{p:.4} ({lo:.4}–{hi:.4})"),
            (p, _, _) => show(p),
        };
        let threshold = if r.depth == 0 && !loaded.batch.has_objectness() {
            "-".to_string()
        } else {
            format!("{}{}", r.threshold, if r.overridden { "*" } else { "" })
        };
        let wrong: Vec<String> = r
            .top_wrong
            .iter()
            .map(|x| format!("{} {}", x.node, x.count))
            .collect();
        let line = format!(
            "{:<width$}  {:>9}  {:>7}  {:>7}  {:>7}  {:>7}  {:<24}  {:>8}  {:>13}  {}",
            label(r),
            threshold,
            r.stops,
            r.correct,
            r.unverifiable,
            r.wrong,
            precision,
            r.labelled,
            r.stopped_above,
            wrong.join(", ")
        );
        let _ = writeln!(out, "{}", line.trim_end());
    }
    out
}
