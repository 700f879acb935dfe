//! The page's per-node table: its numbers are the core's `node_report` under the settings in
//! use, after any sequence of threshold moves (the incremental counts equal a recomputation),
//! the CSV is the command line's bytes, and the table sorts, filters and pages.

use hedgerow_board::charts::icicle::FATE_LABELS;
use hedgerow_board::charts::{draw_icicle, icicle_view};
use hedgerow_board::nodes::{csv, table, Column, Fate, TableQuery};
use hedgerow_board::state::{Action, Board};
use hedgerow_core::nodes::report_csv;
use hedgerow_core::{node_report, Outcome, Rule};
use plotters::prelude::*;

use super::loaded;

/// The board's report equals a full pass of the core over the same batch and settings.
fn check_report(b: &Board, what: &str) {
    let a = b.active.as_ref().expect("active");
    let want = node_report(&a.taxonomy, &a.batch, &b.settings);
    let got = b.node_report.as_deref().expect("a node report");
    assert!(got == &want, "{what}: the board's per-node report differs");
}

/// splitmix64 (Steele, Lea & Flood, OOPSLA 2014): a small deterministic generator for the
/// random walk below.
fn next(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

#[test]
fn the_report_is_the_cores_once_loaded() {
    let b = loaded();
    check_report(&b, "loaded");
    let root = &b.node_report.as_deref().expect("report").root;
    let rows = b.active.as_ref().expect("active").batch.len() as u64;
    assert_eq!(
        root.labelled,
        rows - unlabelled(&b),
        "every labelled row is under the root"
    );
}

fn unlabelled(b: &Board) -> u64 {
    let a = b.active.as_ref().expect("active");
    (0..a.batch.len())
        .filter(|&r| a.batch.label(r) == hedgerow_core::taxonomy::NONE)
        .count() as u64
}

#[test]
fn incremental_counts_equal_a_recomputation_after_random_moves() {
    let mut b = loaded();
    let tax = b.active.as_ref().expect("active").taxonomy.clone();
    let d = tax.max_depth();
    let mut s = 0x5eed_u64;
    let unit = |s: &mut u64| (next(s) >> 11) as f64 / (1u64 << 53) as f64;
    for step in 0..80 {
        let action = match next(&mut s) % 10 {
            // Mostly drags of the focused depth (the incremental path), small and large.
            0..=4 => Action::SetDepth {
                depth: b.focus,
                value: unit(&mut s),
            },
            5 => Action::Focus(1 + (next(&mut s) as usize % d)),
            6 => Action::SetDepth {
                depth: 1 + (next(&mut s) as usize % d),
                value: unit(&mut s),
            },
            7 => {
                let v = (next(&mut s) % tax.len() as u64) as u32;
                let value = (next(&mut s) % 3 != 0).then(|| unit(&mut s));
                Action::SetNodeThreshold {
                    id: tax.id(v).to_string(),
                    value,
                }
            }
            8 => Action::SetRule(if next(&mut s) % 2 == 0 {
                Rule::Conditional
            } else {
                Rule::Cumulative
            }),
            _ => Action::SetObject(unit(&mut s)),
        };
        let what = format!("step {step}: {action:?}");
        b.apply(action);
        check_report(&b, &what);
    }
}

#[test]
fn a_node_threshold_is_set_and_cleared_by_id() {
    let mut b = loaded();
    b.apply(Action::SetNodeThreshold {
        id: "glass".into(),
        value: Some(0.9),
    });
    let tax = b.active.as_ref().expect("active").taxonomy.clone();
    let glass = tax.lookup("glass").expect("glass");
    assert_eq!(b.settings.thresholds.nodes, vec![(glass, 0.9)]);
    assert_eq!(b.stored().nodes.get("glass"), Some(&0.9));
    check_report(&b, "set");
    let rec = &b.node_report.as_deref().expect("report").nodes[glass as usize];
    assert!(rec.overridden && rec.threshold == 0.9);
    // Out of range, or an id the taxonomy lacks: nothing changes.
    for (id, value) in [
        ("glass", Some(1.5)),
        ("glass", Some(f64::NAN)),
        ("nope", Some(0.2)),
    ] {
        b.apply(Action::SetNodeThreshold {
            id: id.into(),
            value,
        });
        assert_eq!(
            b.settings.thresholds.nodes,
            vec![(glass, 0.9)],
            "{id} {value:?}"
        );
    }
    b.apply(Action::SetNodeThreshold {
        id: "glass".into(),
        value: None,
    });
    assert!(b.settings.thresholds.nodes.is_empty());
    assert!(b.stored().nodes.is_empty());
    check_report(&b, "cleared");
}

#[test]
fn the_csv_is_the_command_lines() {
    let b = loaded();
    let a = b.active.as_ref().expect("active");
    let report = b.node_report.as_deref().expect("report");
    let text = csv(&a.taxonomy, report).expect("csv");
    let want = report_csv(
        &a.taxonomy,
        &node_report(&a.taxonomy, &a.batch, &b.settings),
    )
    .expect("core csv");
    assert_eq!(text.as_bytes(), want.as_slice());
    assert!(text.starts_with("id,name,depth,threshold,overridden,stops,correct,"));
    assert_eq!(
        text.lines().count(),
        a.taxonomy.len() + 2,
        "header, root, nodes"
    );
}

#[test]
fn the_table_sorts_filters_and_pages() {
    let b = loaded();
    let tax = b.active.as_ref().expect("active").taxonomy.clone();
    let report = b.node_report.as_deref().expect("report");
    let all = table(&tax, report, &TableQuery::default());
    assert_eq!(all.matching, tax.len() + 1);
    assert_eq!(all.pages, (tax.len() + 1).div_ceil(50));
    assert_eq!(all.rows[0].node, tax.root(), "the root first in file order");
    assert_eq!(all.rows[1].id, tax.id(0));

    let by_wrong = TableQuery::default().clicked(Column::Wrong);
    assert!(by_wrong.descending, "counts start high to low");
    let page = table(&tax, report, &by_wrong);
    let most = report
        .nodes
        .iter()
        .chain([&report.root])
        .map(|r| r.wrong)
        .max();
    assert_eq!(page.rows.first().map(|r| r.wrong), most);
    assert!(page.rows.windows(2).all(|w| w[0].wrong >= w[1].wrong));
    let reversed = table(&tax, report, &by_wrong.clicked(Column::Wrong));
    assert!(reversed.rows.windows(2).all(|w| w[0].wrong <= w[1].wrong));

    let by_precision = table(
        &tax,
        report,
        &TableQuery::default().clicked(Column::Precision),
    );
    let p: Vec<f64> = by_precision
        .rows
        .iter()
        .map(|r| r.precision.unwrap_or(-1.0))
        .collect();
    assert!(p.windows(2).all(|w| w[0] >= w[1]), "{p:?}");

    let glass = TableQuery {
        filter: "GLASS".into(),
        ..TableQuery::default()
    };
    let page = table(&tax, report, &glass);
    assert!(page.matching >= 1);
    assert!(page.rows.iter().all(|r| {
        r.id.to_lowercase().contains("glass") || r.name.to_lowercase().contains("glass")
    }));

    let busy = TableQuery {
        min_rows: 500,
        ..TableQuery::default()
    };
    let page = table(&tax, report, &busy);
    assert!(page.matching < tax.len());
    assert!(page.rows.iter().all(|r| r.labelled.max(r.stops) >= 500));

    let last = TableQuery {
        page: 999,
        page_size: 20,
        ..TableQuery::default()
    };
    let page = table(&tax, report, &last);
    assert_eq!(page.page, page.pages - 1, "clamped to the last page");
    assert_eq!(page.rows.len(), (tax.len() + 1) - 20 * (page.pages - 1));
}

/// What happens to the rows labelled under each node, counted naively from each row's decode
/// (`hedgerow_core::decode_row`), against the board's incremental fates.
fn check_fates(b: &Board) {
    let a = b.active.as_ref().expect("active");
    let (tax, batch) = (&a.taxonomy, &a.batch);
    let thresholds = b.settings.thresholds.resolve(tax);
    let n = tax.len() + 1;
    let mut want = vec![Fate::default(); n];
    for r in 0..batch.len() {
        let g = batch.label(r);
        if g == hedgerow_core::taxonomy::NONE {
            continue;
        }
        let d = hedgerow_core::decode_row(tax, batch, &b.settings, &thresholds, r);
        for v in tax.path(g) {
            let f = &mut want[*v as usize];
            f.labelled += 1;
            let depth_v = if *v == tax.root() { 0 } else { tax.depth(*v) };
            match d.outcome {
                Outcome::Abstained => f.abstained += 1,
                Outcome::Wrong => f.wrong += 1,
                Outcome::Correct if d.depth < depth_v => f.above += 1,
                _ => f.reached += 1,
            }
        }
    }
    let got = b.node_fates.as_deref().expect("fates");
    assert_eq!(got, want.as_slice());
}

#[test]
fn fates_follow_the_thresholds() {
    let mut b = loaded();
    check_fates(&b);
    for (depth, value) in [(2, 0.8), (2, 0.1), (1, 0.95)] {
        b.apply(Action::SetDepth { depth, value });
        check_fates(&b);
    }
    b.apply(Action::SetObject(0.9));
    check_fates(&b);
}

#[test]
fn the_icicle_lays_out_and_draws_its_cells() {
    let b = loaded();
    let a = b.active.as_ref().expect("active");
    let tax = &a.taxonomy;
    let fates = b.node_fates.as_deref().expect("fates");
    let view = icicle_view(tax, fates, tax.root());
    assert_eq!(view.rows, tax.max_depth() + 1);
    assert_eq!(view.cells[0].node, tax.root());
    assert_eq!((view.cells[0].x0, view.cells[0].x1), (0.0, 1.0));
    // Children sit inside their parent, and no wider than its share.
    for c in &view.cells[1..] {
        let parent = view
            .cells
            .iter()
            .find(|p| p.node == tax.parent(c.node) || (c.row == 1 && p.node == tax.root()))
            .expect("parent drawn");
        assert!(
            c.x0 >= parent.x0 - 1e-9 && c.x1 <= parent.x1 + 1e-9,
            "{}",
            c.label
        );
        assert_eq!(c.row, parent.row + 1);
    }
    // Its text alternative: the root first with every labelled row, the largest cells after.
    let table = view.table(tax);
    assert!(table.rows.len() <= hedgerow_board::charts::MAX_ROWS);
    assert_eq!(table.rows[0][0], "(root)");
    assert_eq!(
        table.rows[0][2],
        fates[tax.root() as usize].labelled.to_string()
    );
    assert!(
        table
            .caption
            .contains(&format!("of its {} cells", view.cells.len()))
            || view.cells.len() <= hedgerow_board::charts::MAX_ROWS
    );

    // Focus a subtree: it takes the whole width.
    let glass = tax.lookup("glass").expect("glass");
    let focused = icicle_view(tax, fates, glass);
    assert_eq!(focused.cells[0].node, glass);
    assert_eq!((focused.cells[0].x0, focused.cells[0].x1), (0.0, 1.0));
    assert!(focused
        .cells
        .iter()
        .all(|c| c.node == glass || tax.path(c.node).contains(&glass)));

    // Drawn to SVG: the legend and every cell wide enough to be drawn.
    let mut svg = String::new();
    {
        let area = SVGBackend::with_string(&mut svg, (900, 320)).into_drawing_area();
        draw_icicle(&area, &focused, Some(glass)).expect("drawn");
        area.present().expect("presented");
    }
    for label in FATE_LABELS {
        assert!(svg.contains(label), "legend {label}");
    }
    assert!(svg.contains("\nglass\n"), "the focused cell's label");
    let rects = svg.matches("<rect").count();
    assert!(
        rects > focused.cells.len(),
        "{rects} rects for {} cells",
        focused.cells.len()
    );
    // The teal of "reached" fills part of the focused cell.
    assert!(svg.to_uppercase().contains("#1F7A6D"));
    // A click in the middle of the top band lands on the focused node.
    let hit = focused.cell_at((900, 320), (450, 60)).map(|c| c.node);
    assert_eq!(hit, Some(glass));
}

#[test]
fn the_inspector_lists_filtered_rows_and_walks_one_path() {
    use hedgerow_board::inspect::{list_rows, row_detail, RowFilter, Source};
    let mut b = loaded();
    let glass = {
        let tax = &b.active.as_ref().expect("active").taxonomy;
        tax.lookup("glass").expect("glass")
    };
    b.apply(Action::SetNodeThreshold {
        id: "glass".into(),
        value: Some(0.7),
    });
    let a = b.active.as_ref().expect("active");
    let (tax, batch) = (&a.taxonomy, &a.batch);
    let thresholds = b.settings.thresholds.resolve(tax);
    let filter = RowFilter {
        outcome: Some(Outcome::Wrong),
        label_under: Some(glass),
        ..RowFilter::default()
    };
    let page = list_rows(tax, batch, &b.settings, &filter, 0, 15);
    assert_eq!(page.rows.len(), 15);
    let want: Vec<usize> = (0..batch.len())
        .filter(|&r| {
            let g = batch.label(r);
            g != hedgerow_core::taxonomy::NONE
                && tax.path(g).contains(&glass)
                && hedgerow_core::decode_row(tax, batch, &b.settings, &thresholds, r).outcome
                    == Outcome::Wrong
        })
        .take(20)
        .collect();
    let got: Vec<usize> = page.rows.iter().map(|l| l.row).collect();
    assert_eq!(got, want[..15]);
    let next = list_rows(
        tax,
        batch,
        &b.settings,
        &filter,
        page.next.expect("more"),
        5,
    );
    assert_eq!(
        next.rows.iter().map(|l| l.row).collect::<Vec<_>>(),
        want[15..20]
    );

    // One row's path: the core's steps, thresholds from the depth or the node.
    for &r in &want[..5] {
        let d = row_detail(tax, batch, &b.settings, r).expect("row");
        let core = hedgerow_core::decode_row(tax, batch, &b.settings, &thresholds, r);
        assert_eq!(d.steps.len(), core.path.len() + 1);
        for (s, c) in d.steps[1..].iter().zip(&core.path) {
            assert_eq!(
                (s.node, s.conditional, s.cumulative),
                (c.node, c.conditional, c.cumulative)
            );
            let own = s.node == glass;
            assert_eq!(s.source, if own { Source::Node } else { Source::Depth });
            assert_eq!(s.threshold, thresholds[s.node as usize]);
            assert_eq!(s.taken, core.predicted.is_some() && s.depth <= core.depth);
        }
        assert_eq!(d.outcome, Outcome::Wrong);
        assert!(
            d.why.starts_with("stopped at depth") || d.why.starts_with("reached a leaf"),
            "{}",
            d.why
        );
    }
    assert!(row_detail(tax, batch, &b.settings, batch.len()).is_none());
}

#[test]
fn the_curve_csv_is_the_command_lines() {
    let mut b = loaded();
    b.apply(Action::SetNodeThreshold {
        id: "glass".into(),
        value: Some(0.9),
    });
    let a = b.active.as_ref().expect("active");
    let text = hedgerow_board::nodes::curve_csv(&b).expect("csv");
    let points = hedgerow_core::exact_curve_for(&a.taxonomy, &a.batch, &b.settings);
    let want = hedgerow_core::curve::curve_csv(&points).expect("core csv");
    assert_eq!(text.as_bytes(), want.as_slice());
    assert!(text.starts_with("threshold,predictions,correct,unverifiable,wrong,precision,"));
    assert_eq!(text.lines().count(), points.len() + 1);
}

#[test]
fn a_chart_exports_as_svg_through_its_drawing_function() {
    let b = loaded();
    let view = b.stop_view();
    let svg = hedgerow_board::charts::svg_of((640, 360), |area| {
        hedgerow_board::charts::draw_stops(area, &view)
    })
    .expect("svg");
    assert!(svg.starts_with("<svg") && svg.contains("depth where descent stops"));
}
