//! The charts' numbers as tables: the text alternative the page puts beside each canvas (a
//! screen reader reaches the table; the canvas points at it with `aria-describedby`). Long
//! series are thinned to [`MAX_ROWS`] evenly spaced points, first and last kept.

use super::stops::{percent, OUTCOME_LABELS, X_DESC as STOPS_X_DESC};
use super::tradeoff::{sweep_label, CURRENT_LABEL, CURVE_LABEL, X_DESC, Y_DESC};
use super::{StopView, TradePoint, TradeoffView};

/// Rows a table holds at most.
pub const MAX_ROWS: usize = 41;

/// One table: its caption, column heads and cells.
#[derive(Debug, Clone, PartialEq)]
pub struct DataTable {
    pub caption: String,
    pub head: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

/// At most `max` of `items`, evenly spaced, the first and the last included.
fn thin<T>(items: &[T], max: usize) -> Vec<&T> {
    if items.len() <= max || max < 2 {
        return items.iter().collect();
    }
    let last = items.len() - 1;
    (0..max)
        .filter_map(|i| items.get(i * last / (max - 1)))
        .collect()
}

fn point_rows<'a>(points: impl IntoIterator<Item = &'a TradePoint>) -> Vec<Vec<String>> {
    points
        .into_iter()
        .map(|p| {
            vec![
                format!("{:.3}", p.threshold),
                percent(p.specificity),
                percent(p.precision),
            ]
        })
        .collect()
}

fn point_head() -> Vec<String> {
    vec!["threshold".into(), X_DESC.into(), Y_DESC.into()]
}

impl TradeoffView {
    /// The current point, the shared-threshold curve and the focused depth's sweep.
    pub fn tables(&self) -> Vec<DataTable> {
        let mut out = Vec::new();
        if let Some(p) = &self.current {
            out.push(DataTable {
                caption: format!("{CURRENT_LABEL} ({} rule)", self.rule),
                head: vec![X_DESC.into(), Y_DESC.into()],
                rows: vec![vec![percent(p.specificity), percent(p.precision)]],
            });
        }
        let with_count = |label: &str, n: usize| {
            if n > MAX_ROWS {
                format!("{label}: {MAX_ROWS} of its {n} points")
            } else {
                label.to_string()
            }
        };
        if !self.curve.is_empty() {
            out.push(DataTable {
                caption: with_count(CURVE_LABEL, self.curve.len()),
                head: point_head(),
                rows: point_rows(thin(&self.curve, MAX_ROWS)),
            });
        }
        if let Some((depth, points)) = &self.sweep {
            if !points.is_empty() {
                out.push(DataTable {
                    caption: with_count(&sweep_label(*depth), points.len()),
                    head: point_head(),
                    rows: point_rows(thin(points, MAX_ROWS)),
                });
            }
        }
        if !self.marks.is_empty() {
            out.push(DataTable {
                caption: "marked settings".into(),
                head: vec!["setting".into(), X_DESC.into(), Y_DESC.into()],
                rows: self
                    .marks
                    .iter()
                    .map(|(l, p)| vec![l.clone(), percent(p.specificity), percent(p.precision)])
                    .collect(),
            });
        }
        out
    }
}

impl StopView {
    /// One row per depth: the shares of all predictions stopping there, by outcome.
    pub fn tables(&self) -> Vec<DataTable> {
        let mut head = vec![STOPS_X_DESC.to_string()];
        head.extend(OUTCOME_LABELS.iter().map(|s| s.to_string()));
        vec![DataTable {
            caption: "share of predictions stopping at each depth, by outcome".into(),
            head,
            rows: self
                .shares
                .iter()
                .enumerate()
                .map(|(d, &(c, u, w))| vec![d.to_string(), percent(c), percent(u), percent(w)])
                .collect(),
        }]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn point(t: f64) -> TradePoint {
        TradePoint {
            threshold: t,
            specificity: t / 2.0,
            precision: 1.0 - t,
        }
    }

    #[test]
    fn long_curves_are_thinned_to_max_rows_with_both_ends() {
        let curve: Vec<TradePoint> = (0..=2000).map(|i| point(i as f64 / 2000.0)).collect();
        let v = TradeoffView {
            curve,
            current: Some(point(0.5)),
            sweep: Some((2, (0..=10).map(|i| point(i as f64 / 10.0)).collect())),
            rule: "cumulative".into(),
            marks: vec![("suggested".into(), point(0.25))],
        };
        let t = v.tables();
        assert_eq!(t.len(), 4);
        assert_eq!(
            t[3].rows,
            vec![vec!["suggested".to_string(), "12.5%".into(), "75%".into()]]
        );
        assert_eq!(t[0].rows, vec![vec!["25%".to_string(), "50%".to_string()]]);
        assert_eq!(t[1].rows.len(), MAX_ROWS);
        assert_eq!(t[1].rows[0][0], "0.000");
        assert_eq!(t[1].rows[MAX_ROWS - 1][0], "1.000");
        assert!(
            t[1].caption.ends_with("41 of its 2001 points"),
            "{}",
            t[1].caption
        );
        assert_eq!(t[2].rows.len(), 11);
        assert_eq!(t[2].caption, "depth 2 from 0 to 1");
    }

    #[test]
    fn stops_give_one_row_per_depth() {
        let v = StopView {
            shares: vec![(0.1, 0.0, 0.05), (0.5, 0.1, 0.25)],
        };
        let t = &v.tables()[0];
        assert_eq!(t.head.len(), 4);
        assert_eq!(t.rows[1], vec!["1", "50%", "10%", "25%"]);
    }
}
