//! The suggestion panel's state: asking moves the depth sliders to exactly what the engine's
//! `suggest` (the function `hedgerow suggest` calls) gives for the page's settings; the chart
//! marks the suggestion and its shared baseline; an unreachable target moves nothing; the
//! fields refuse bad values by name; a profile saved while the sliders hold the suggestion
//! records how it was made.

use hedgerow_board::state::Action;
use hedgerow_board::suggestion::{
    comparison, guarantee_line, Ask, AskText, SHARED_MARK, SUGGESTED_MARK,
};
use hedgerow_core::{evaluate, suggest};

use crate::demo_board;

#[test]
fn a_suggestion_moves_the_sliders_to_the_engines_answer_and_marks_the_chart() {
    let (mut b, _shell) = demo_board();
    let before = b.settings.clone();
    let ask = Ask {
        target: 0.9,
        confidence: 0.9,
        holdout: 0.3,
        seed: 7,
        ..Ask::default()
    };
    b.apply(Action::Suggest(ask.clone()));
    assert_eq!(b.suggestion_error, None);
    let a = b.active.clone().expect("active");
    let direct = suggest::suggest(&a.taxonomy, &a.batch, &before, None, &ask.request())
        .expect("the engine suggests");
    let s = b.current_suggestion().expect("a suggestion").clone();
    assert_eq!(
        s.report, direct,
        "the page asks the engine with its own settings"
    );
    let chosen = direct
        .suggestion
        .as_ref()
        .expect("0.9 is reachable on the demo");
    assert_eq!(b.settings.thresholds.depths, chosen.thresholds.depths);
    assert_eq!(b.settings.thresholds.object, before.thresholds.object);
    assert_eq!(b.settings.rule, before.rule);
    assert_eq!(
        b.metrics.as_ref(),
        Some(&evaluate(&a.taxonomy, &a.batch, &b.settings))
    );

    let view = b.tradeoff_view();
    let labels: Vec<&str> = view.marks.iter().map(|(l, _)| l.as_str()).collect();
    assert_eq!(labels, [SUGGESTED_MARK, SHARED_MARK]);
    // The suggestion's mark is where the current point now is.
    let current = view.current.expect("current point");
    assert_eq!(view.marks[0].1.precision, current.precision);
    assert_eq!(view.marks[0].1.specificity, current.specificity);

    let line = guarantee_line(&s);
    assert!(
        line.starts_with("With probability at least 90 % over the draw of the tuning rows")
            && line.contains("at least 0.9"),
        "{line}"
    );
    let rows = comparison(&s);
    assert_eq!(rows.len(), 3);
    assert!(rows[0].held_wilson.contains('–'), "{:?}", rows[0]);

    // Saved now, the profile says how it was made; after a slider moves, it does not.
    let p = b.profile().expect("profile");
    assert_eq!(p.made_by.as_ref(), Some(&direct.record));
    b.apply(Action::SetDepth {
        depth: 1,
        value: 0.123,
    });
    assert_eq!(b.profile().expect("profile").made_by, None);
    // The marks stay until another batch is in use.
    assert_eq!(b.tradeoff_view().marks.len(), 2);
}

#[test]
fn an_unreachable_target_says_what_can_be_guaranteed_and_moves_nothing() {
    let (mut b, _shell) = demo_board();
    let before = b.settings.clone();
    b.apply(Action::Suggest(Ask {
        target: 0.999_999,
        ..Ask::default()
    }));
    let s = b.current_suggestion().expect("a report").clone();
    assert!(s.report.suggestion.is_none());
    assert_eq!(b.settings, before);
    let line = guarantee_line(&s);
    assert!(
        line.starts_with("Precision 0.999999 cannot be guaranteed with confidence 90 %")
            && line.contains(&format!("{:.4}", s.report.guaranteeable)),
        "{line}"
    );
}

#[test]
fn the_fields_refuse_bad_values_by_name_and_a_missing_group_column_is_located() {
    let bad = AskText {
        target: "1.2".into(),
        confidence: "x".into(),
        holdout: "1".into(),
        seed: "-3".into(),
        maximize: "speed".into(),
        group_column: String::new(),
    };
    let problems = bad.parse().expect_err("every field is bad");
    assert_eq!(problems.len(), 5, "{problems:?}");
    assert_eq!(
        problems[0],
        "target precision (--min-precision): expected a number strictly between 0 and 1, found `1.2`"
    );
    assert!(problems[4].contains("expected specificity or reward, found `speed`"));
    let fine = AskText::from(&Ask::default())
        .parse()
        .expect("defaults parse");
    assert_eq!(fine, Ask::default());

    let (mut b, _shell) = demo_board();
    assert_eq!(b.label_columns(), ["row"]);
    let before = b.settings.clone();
    b.apply(Action::Suggest(Ask {
        group_column: Some("image".into()),
        ..Ask::default()
    }));
    let e = b.suggestion_error.clone().expect("an error");
    assert!(e.contains("labels.csv") && e.contains("image"), "{e}");
    assert_eq!(b.settings, before);
    // A column that exists keeps rows of one group together (here every row its own group).
    b.apply(Action::Suggest(Ask {
        group_column: Some("row".into()),
        ..Ask::default()
    }));
    assert_eq!(b.suggestion_error, None);
    let s = b.current_suggestion().expect("a suggestion");
    assert!(s.report.record.groups.is_some());
}
