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

/// One CSV row per node in file order, the root (empty id, depth 0) first (the core's
/// writer, which the page's download uses too).
pub fn csv(loaded: &Loaded) -> anyhow::Result<Vec<u8>> {
    let report = node_report(&loaded.taxonomy, &loaded.batch, &loaded.settings);
    Ok(hedgerow_core::nodes::report_csv(&loaded.taxonomy, &report)?)
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
