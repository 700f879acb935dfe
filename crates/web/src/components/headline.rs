//! The headline numbers of the current settings on the batch in use.

use hedgerow_board::state::{show_precision_interval, show_ratio, thin_thousands, HELP};
use hedgerow_core::Metrics;
use yew::prelude::*;

use super::metric::Metric;

#[derive(Properties, PartialEq)]
pub struct HeadlineProps {
    pub metrics: Option<Metrics>,
}

const NONE: &str = "–";

fn help(key: &str) -> (&'static str, &'static str) {
    HELP.iter()
        .find(|(k, _, _)| *k == key)
        .map_or(("", ""), |(_, label, help)| (label, help))
}

fn count(n: u64) -> String {
    thin_thousands(n)
}

fn share(part: u64, whole: u64) -> Option<AttrValue> {
    (whole > 0).then(|| AttrValue::from(format!("{:.1} %", part as f64 * 100.0 / whole as f64)))
}

#[function_component(Headline)]
pub fn headline(props: &HeadlineProps) -> Html {
    let m = props.metrics.as_ref();
    let ratio = |f: fn(&Metrics) -> Option<f64>| m.map_or(NONE.to_string(), |m| show_ratio(f(m)));
    let ratio_metric = |key: &'static str, f: fn(&Metrics) -> Option<f64>, class: &'static str| {
        let (label, help) = help(key);
        html! { <Metric key_name={key} label={label} value={ratio(f)} help={help} class={classes!(class)} /> }
    };
    let (pred_label, pred_help) = help("predictions");
    let (prec_label, prec_help) = help("precision");
    let int = |f: fn(&Metrics) -> u64| m.map_or(NONE.to_string(), |m| f(m).to_string());
    let predictions = m.map_or(0, |m| m.predictions);
    let rows = m.map_or(0, |m| m.rows);
    let false_alarms = m.map_or(0, |m| m.false_alarms);
    let subtitle = m.map(|m| {
        format!(
            "{} rows: {} labelled, {} background",
            count(m.rows),
            count(m.labelled_rows),
            count(m.background_rows)
        )
    });
    html! {
        <section class="panel headline" aria-labelledby="headline-title">
            <h2 id="headline-title">
                { "Scores" }
                if let Some(s) = subtitle {
                    <span class="subtitle">{ s }</span>
                }
            </h2>
            <div class="metrics metrics-big">
                <Metric key_name="predictions" label={pred_label} value={int(|m| m.predictions)} help={pred_help} class={classes!("big")}
                    detail={share(predictions, rows).map(|s| AttrValue::from(format!("{s} of rows")))} />
                <Metric key_name="precision" label={prec_label} value={ratio(|m| m.precision)} help={prec_help} class={classes!("big")}
                    detail={m.and_then(show_precision_interval).map(AttrValue::from)} />
                { ratio_metric("specificity", |m| m.specificity, "big") }
                { ratio_metric("reward", |m| m.reward, "big") }
            </div>
            <div class="metrics metrics-small">
                { ratio_metric("hierarchical-precision", |m| m.hierarchical_precision, "small") }
                { ratio_metric("hierarchical-recall", |m| m.hierarchical_recall, "small") }
                { ratio_metric("hierarchical-f1", |m| m.hierarchical_f1, "small") }
                { ratio_metric("mistake-severity", |m| m.mistake_severity, "small") }
            </div>
            <div class="metrics metrics-counts">
                <Metric key_name="correct" label="correct" value={int(|m| m.correct)} class={classes!("small", "outcome", "correct")}
                    help="predictions that are the true node or one of its ancestors"
                    detail={share(m.map_or(0, |m| m.correct), predictions)} />
                <Metric key_name="unverifiable" label="unverifiable" value={int(|m| m.unverifiable)} class={classes!("small", "outcome", "unverifiable")}
                    help="predictions below a coarse label: more specific than the label can confirm"
                    detail={share(m.map_or(0, |m| m.unverifiable), predictions)} />
                <Metric key_name="wrong" label="wrong" value={int(|m| m.wrong)} class={classes!("small", "outcome", "wrong")}
                    help={format!("predictions off the label's path, with {false_alarms} false alarms on background rows")}
                    detail={share(m.map_or(0, |m| m.wrong), predictions)} />
                <Metric key_name="abstained" label="abstained" value={int(|m| m.abstained)} class={classes!("small", "outcome", "abstained")}
                    help="rows that predict nothing: objectness under the object threshold"
                    detail={share(m.map_or(0, |m| m.abstained), rows).map(|s| AttrValue::from(format!("{s} of rows")))} />
            </div>
        </section>
    }
}
