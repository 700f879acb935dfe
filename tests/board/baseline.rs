//! Comparing with a baseline: the pinned setting or a profile loaded as baseline, its metrics
//! the core's, the transitions equal to a direct per-row comparison through `decode_row`, the
//! inspector's list of a transition's rows, the baseline's mark on the trade-off chart, and the
//! chart's hit test (the nearest curve point to the pointer, over the drawn geometry).

use std::rc::Rc;

use hedgerow_board::baseline::{BaselineAction, MARK_LABEL, OUTCOMES};
use hedgerow_board::charts::draw_tradeoff_framed;
use hedgerow_board::inspect::{list_rows, RowFilter};
use hedgerow_board::state::{Action, Board};
use hedgerow_core::{decode_row, evaluate, Outcome, Settings};
use plotters::prelude::*;

use super::loaded;

/// Per row, the outcome under `settings`, through the core's `decode_row`.
fn outcomes(b: &Board, settings: &Settings) -> Vec<Outcome> {
    let a = b.active.as_ref().expect("active");
    let thresholds = settings.thresholds.resolve(&a.taxonomy);
    (0..a.batch.len())
        .map(|r| decode_row(&a.taxonomy, &a.batch, settings, &thresholds, r).outcome)
        .collect()
}

/// The board's transition counts equal counting both settings' outcomes row by row.
fn check_transitions(b: &Board, what: &str) {
    let base = b.baseline.as_ref().expect("a baseline");
    let (was, now) = (outcomes(b, &base.settings), outcomes(b, &b.settings));
    let mut want = [[0u64; 5]; 5];
    for (x, y) in was.iter().zip(&now) {
        let i = OUTCOMES.iter().position(|o| o == x).expect("listed");
        let j = OUTCOMES.iter().position(|o| o == y).expect("listed");
        want[i][j] += 1;
    }
    let got = b.comparison.as_ref().expect("a comparison");
    assert_eq!(got.counts, want, "{what}");
    for t in got.transitions() {
        let rows: Vec<u32> = (0..was.len())
            .filter(|&r| was[r] == t.from && now[r] == t.to)
            .map(|r| r as u32)
            .collect();
        assert_eq!(rows.len() as u64, t.rows, "{what}");
        assert_eq!(b.transition_rows(t.from, t.to), Some(rows), "{what}");
    }
}

#[test]
fn a_pinned_setting_is_compared_row_by_row_with_the_current_one() {
    let mut b = loaded();
    b.apply(Action::Baseline(BaselineAction::Pin));
    let pinned = b.settings.clone();
    let base = b.baseline.clone().expect("pinned");
    let a = b.active.clone().expect("active");
    assert_eq!(base.metrics, evaluate(&a.taxonomy, &a.batch, &pinned));
    let c = b.comparison.clone().expect("compared");
    assert!(
        c.transitions().is_empty(),
        "the same setting changes no row"
    );
    assert_eq!(c.unchanged(), a.batch.len() as u64);

    for (action, what) in [
        (Action::SetAllDepths(0.7), "all depths 0.7"),
        (
            Action::SetDepth {
                depth: 2,
                value: 0.3,
            },
            "depth 2 at 0.3",
        ),
        // The same depth again: the drag path, which moves only the rows that flip.
        (
            Action::SetDepth {
                depth: 2,
                value: 0.75,
            },
            "depth 2 dragged to 0.75",
        ),
        (
            Action::SetDepth {
                depth: 2,
                value: 0.1,
            },
            "depth 2 dragged to 0.1",
        ),
        (Action::SetObject(0.8), "object 0.8"),
        (
            Action::SetNodeThreshold {
                id: "glass".into(),
                value: Some(0.9),
            },
            "glass at 0.9",
        ),
        (
            Action::SetRule(hedgerow_core::Rule::Conditional),
            "conditional",
        ),
        (
            Action::SetDepth {
                depth: 3,
                value: 0.6,
            },
            "depth 3 at 0.6",
        ),
        (
            Action::SetDepth {
                depth: 3,
                value: 0.2,
            },
            "depth 3 dragged to 0.2",
        ),
    ] {
        b.apply(action);
        check_transitions(&b, what);
        assert_eq!(
            b.baseline.as_ref().expect("kept").settings,
            pinned,
            "{what}"
        );
    }
    let c = b.comparison.clone().expect("compared");
    let t = *c.transitions().first().expect("some row changed");
    assert!(t.rows > 0);

    // The inspector lists exactly that transition's rows, a page at a time.
    let rows = Rc::new(b.transition_rows(t.from, t.to).expect("rows"));
    let filter = RowFilter {
        rows: Some(rows.clone()),
        ..RowFilter::default()
    };
    let mut seen = Vec::new();
    let mut start = Some(0);
    while let Some(s) = start {
        let page = list_rows(&a.taxonomy, &a.batch, &b.settings, &filter, s, 7);
        assert!(page.rows.iter().all(|l| l.outcome == t.to));
        seen.extend(page.rows.iter().map(|l| l.row as u32));
        start = page.next;
    }
    assert_eq!(seen, *rows);

    // The baseline is on the trade-off chart, after the suggestion's marks.
    let view = b.tradeoff_view();
    let (label, p) = view.marks.last().expect("a mark");
    assert_eq!(label, MARK_LABEL);
    assert_eq!(Some(p.precision), base.metrics.precision);

    b.apply(Action::Baseline(BaselineAction::Clear));
    assert!(b.baseline.is_none() && b.comparison.is_none());
    assert!(b.tradeoff_view().marks.iter().all(|(l, _)| l != MARK_LABEL));
}

#[test]
fn a_profile_loads_as_baseline_without_touching_the_current_settings() {
    let mut b = loaded();
    b.apply(Action::SetAllDepths(0.35));
    b.apply(Action::SetObject(0.6));
    let json = b.profile().expect("a profile").to_json();
    let profile_settings = b.settings.clone();
    b.apply(Action::SetAllDepths(0.8));
    let current = b.settings.clone();
    b.apply(Action::Baseline(BaselineAction::Load {
        name: "production.json".into(),
        bytes: Rc::new(json.into_bytes()),
    }));
    assert_eq!(b.baseline_error, None);
    assert_eq!(b.settings, current, "the current settings stay");
    let base = b.baseline.clone().expect("loaded");
    assert_eq!(base.name, "production.json");
    assert_eq!(base.settings, profile_settings);
    let a = b.active.clone().expect("active");
    assert_eq!(
        base.metrics,
        evaluate(&a.taxonomy, &a.batch, &profile_settings)
    );
    check_transitions(&b, "profile baseline");
    assert!(!b.comparison.as_ref().expect("c").transitions().is_empty());

    // A file that is not a profile for this taxonomy says why, and changes nothing.
    b.apply(Action::Baseline(BaselineAction::Load {
        name: "broken.json".into(),
        bytes: Rc::new(b"{\"version\": 1}".to_vec()),
    }));
    let e = b.baseline_error.clone().expect("an error");
    assert!(e.contains("broken.json"), "{e}");
    assert_eq!(b.settings, current);
    let kept = b.baseline.as_ref().expect("the earlier baseline stays");
    assert_eq!(kept.name, "production.json");
}

#[test]
fn the_hit_test_finds_the_nearest_drawn_curve_point() {
    let b = loaded();
    let view = b.tradeoff_view();
    let mut svg = String::new();
    let frame = {
        let area = SVGBackend::with_string(&mut svg, (640, 400)).into_drawing_area();
        let f = draw_tradeoff_framed(&area, &view).expect("drawn");
        area.present().expect("presented");
        f
    };
    assert!(frame.points.len() > 10, "{}", frame.points.len());
    assert_eq!(frame.points.len(), view.curve.len());
    let reach = frame.reach();
    let brute = |at: (i32, i32)| {
        frame
            .points
            .iter()
            .map(|(p, _)| {
                let (dx, dy) = (f64::from(p.0 - at.0), f64::from(p.1 - at.1));
                dx * dx + dy * dy
            })
            .enumerate()
            .filter(|&(_, d)| d <= reach * reach)
            .min_by(|x, y| x.1.total_cmp(&y.1))
            .map(|(i, _)| i)
    };
    for (i, (p, tp)) in frame.points.iter().enumerate().step_by(7) {
        let got = frame.nearest(*p, reach).expect("on a point");
        // Points drawn on the same pixel are equally near: either is right.
        assert_eq!(frame.points[got].0, *p, "point {i}");
        for off in [(3, -2), (-5, 4), (0, 9)] {
            let at = (p.0 + off.0, p.1 + off.1);
            assert_eq!(frame.nearest(at, reach), brute(at), "near point {i}");
        }
        assert!((0.0..=1.0).contains(&tp.threshold));
    }
    assert_eq!(
        frame.nearest((-500, -500), reach),
        None,
        "far off the curve"
    );
}
