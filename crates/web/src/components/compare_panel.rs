//! Comparing with a baseline (`hedgerow_board::baseline`): pin the current setting or load a
//! profile "as baseline" (its file input or drop zone; the Profile slot and the current
//! settings stay), then the metrics side by side with their differences and the rows whose
//! outcome changes as a table of transitions, each opening its rows in the row inspector.

use std::rc::Rc;

use hedgerow_board::baseline::{delta, delta_count, Baseline, BaselineAction, Comparison};
use hedgerow_board::state::{show_precision_interval, show_ratio, thin_thousands, Action};
use hedgerow_core::{Metrics, Outcome};
use web_sys::{DragEvent, File, HtmlInputElement};
use yew::prelude::*;

use super::node_table::Shared;

#[derive(Properties, PartialEq)]
pub struct ComparePanelProps {
    pub baseline: Option<Shared<Baseline>>,
    pub comparison: Option<Rc<Comparison>>,
    pub metrics: Option<Metrics>,
    pub error: Option<String>,
    pub has_batch: bool,
    pub on_action: Callback<Action>,
    /// A transition's button: open its rows in the inspector.
    pub on_open: Callback<(Outcome, Outcome)>,
}

/// A profile larger than this is not read (profiles are a few kilobytes).
const MAX_PROFILE: f64 = 16.0 * 1024.0 * 1024.0;

/// Reads a file chosen or dropped as the baseline and hands it to the board.
fn load(file: File, on_action: Callback<Action>) {
    let name = file.name();
    if file.size() > MAX_PROFILE {
        on_action.emit(Action::Unreadable {
            slot: Some(hedgerow_board::state::Slot::Profile),
            message: format!("{name}: too large for a profile ({} bytes)", file.size()),
        });
        return;
    }
    wasm_bindgen_futures::spawn_local(async move {
        let read = match crate::browser::start_read(&file, 0, file.size() as u64) {
            Ok(r) => crate::browser::finish_read(r).await,
            Err(e) => Err(e),
        };
        match read {
            Ok(bytes) => on_action.emit(Action::Baseline(BaselineAction::Load {
                name,
                bytes: Rc::new(bytes),
            })),
            Err(e) => on_action.emit(Action::Unreadable {
                slot: Some(hedgerow_board::state::Slot::Profile),
                message: format!("{name}: {e}"),
            }),
        }
    });
}

fn ratio_row(key: &'static str, label: &str, now: Option<f64>, base: Option<f64>) -> Html {
    html! {
        <tr data-key={key}>
            <th scope="row">{ label.to_string() }</th>
            <td class="num" data-testid={format!("compare-{key}-current")}>{ show_ratio(now) }</td>
            <td class="num" data-testid={format!("compare-{key}-baseline")}>{ show_ratio(base) }</td>
            <td class="num" data-testid={format!("compare-{key}-delta")}>{ delta(now, base) }</td>
        </tr>
    }
}

fn count_row(key: &'static str, now: u64, base: u64) -> Html {
    html! {
        <tr data-key={key}>
            <th scope="row">{ key }</th>
            <td class="num" data-testid={format!("compare-{key}-current")} data-value={now.to_string()}>{ thin_thousands(now) }</td>
            <td class="num" data-testid={format!("compare-{key}-baseline")} data-value={base.to_string()}>{ thin_thousands(base) }</td>
            <td class="num" data-testid={format!("compare-{key}-delta")}>{ delta_count(now, base) }</td>
        </tr>
    }
}

#[function_component(ComparePanel)]
pub fn compare_panel(props: &ComparePanelProps) -> Html {
    let on_pin = props
        .on_action
        .reform(|_: MouseEvent| Action::Baseline(BaselineAction::Pin));
    let on_clear = props
        .on_action
        .reform(|_: MouseEvent| Action::Baseline(BaselineAction::Clear));
    let on_file = {
        let on_action = props.on_action.clone();
        Callback::from(move |e: Event| {
            let input: HtmlInputElement = e.target_unchecked_into();
            let file = input.files().and_then(|l| l.item(0));
            input.set_value("");
            if let Some(f) = file {
                load(f, on_action.clone());
            }
        })
    };
    let on_drag_over = Callback::from(|e: DragEvent| e.prevent_default());
    let on_drop = {
        let on_action = props.on_action.clone();
        Callback::from(move |e: DragEvent| {
            // This drop is the baseline's: the page's own drop handler (the Profile slot)
            // must not see it.
            e.prevent_default();
            e.stop_propagation();
            if let Some(f) = e
                .data_transfer()
                .and_then(|d| d.files())
                .and_then(|l| l.item(0))
            {
                load(f, on_action.clone());
            }
        })
    };

    let body = match (&props.baseline, &props.metrics) {
        (Some(Shared(b)), Some(m)) => {
            let base = &b.metrics;
            let transitions = props
                .comparison
                .as_ref()
                .map(|c| c.transitions())
                .unwrap_or_default();
            let unchanged = props.comparison.as_ref().map_or(0, |c| c.unchanged());
            let lines = transitions.iter().map(|t| {
                let (from, to) = (t.from, t.to);
                let id = format!("transition-{}-{}", from.as_str(), to.as_str());
                let onclick = props.on_open.reform(move |_: MouseEvent| (from, to));
                html! {
                    <tr key={id.clone()}>
                        <td>{ from.as_str() }</td>
                        <td aria-hidden="true">{ "→" }</td>
                        <td>{ to.as_str() }</td>
                        <td class="num" data-testid={id.clone()} data-value={t.rows.to_string()}>{ thin_thousands(t.rows) }</td>
                        <td><button type="button" class="link" {onclick} data-testid={format!("{id}-open")}
                            aria-label={format!("Show the rows that went from {} to {} in the row inspector", from.as_str(), to.as_str())}>{ "show rows" }</button></td>
                    </tr>
                }
            });
            html! {
                <>
                <p class="help" data-testid="compare-name">{ format!("Baseline: {} ({} rule, thresholds {}).", b.name, b.settings.rule.as_str(),
                    b.settings.thresholds.depths.iter().map(|t| t.to_string()).collect::<Vec<_>>().join(", ")) }</p>
                <div class="table-scroll">
                <table data-testid="compare-metrics">
                    <caption>{ "Current settings against the baseline (Δ = current − baseline)" }</caption>
                    <thead><tr><th scope="col">{ "metric" }</th><th scope="col">{ "current" }</th><th scope="col">{ "baseline" }</th><th scope="col">{ "Δ" }</th></tr></thead>
                    <tbody>
                        { count_row("predictions", m.predictions, base.predictions) }
                        { ratio_row("precision", "precision", m.precision, base.precision) }
                        <tr data-key="interval">
                            <th scope="row">{ "precision's interval" }</th>
                            <td data-testid="compare-interval-current">{ show_precision_interval(m).unwrap_or_else(|| "–".into()) }</td>
                            <td data-testid="compare-interval-baseline">{ show_precision_interval(base).unwrap_or_else(|| "–".into()) }</td>
                            <td></td>
                        </tr>
                        { ratio_row("specificity", "specificity", m.specificity, base.specificity) }
                        { ratio_row("reward", "reward", m.reward, base.reward) }
                        { count_row("correct", m.correct, base.correct) }
                        { count_row("unverifiable", m.unverifiable, base.unverifiable) }
                        { count_row("wrong", m.wrong, base.wrong) }
                        { count_row("abstained", m.abstained, base.abstained) }
                    </tbody>
                </table>
                </div>
                <div class="table-scroll">
                <table data-testid="compare-transitions">
                    <caption>{ format!("Rows whose outcome changes from the baseline to the current settings ({} rows unchanged)", thin_thousands(unchanged)) }</caption>
                    <thead><tr><th scope="col">{ "baseline" }</th><th scope="col"><span class="visually-hidden">{ "to" }</span></th><th scope="col">{ "current" }</th><th scope="col">{ "rows" }</th><th scope="col"><span class="visually-hidden">{ "open" }</span></th></tr></thead>
                    <tbody>
                        if transitions.is_empty() {
                            <tr><td colspan="5" class="help">{ "No row changes outcome." }</td></tr>
                        }
                        { for lines }
                    </tbody>
                </table>
                </div>
                </>
            }
        }
        _ => html! {
            <p class="help">{ "Pin the current setting, or load a profile as baseline, then tune: the two are compared here and on the trade-off chart." }</p>
        },
    };

    html! {
        <section class="panel compare" aria-labelledby="compare-title" data-testid="compare-panel">
            <h2 id="compare-title">{ "Compare with a baseline" }</h2>
            <div class="table-tools">
                <button type="button" class="secondary" data-testid="pin-baseline" onclick={on_pin} disabled={!props.has_batch}>{ "Pin as baseline" }</button>
                <label class="file-picker button drop-baseline" ondragover={on_drag_over} ondrop={on_drop}
                    title="A profile (.json) to compare with; it does not replace the current settings">
                    <input type="file" accept=".json,application/json" data-testid="baseline-input" onchange={on_file} disabled={!props.has_batch} />
                    <span>{ "Load a profile as baseline…" }</span>
                </label>
                if props.baseline.is_some() {
                    <button type="button" class="link" data-testid="clear-baseline" onclick={on_clear}>{ "Clear the baseline" }</button>
                }
            </div>
            if let Some(e) = &props.error {
                <p class="error" role="alert" data-testid="baseline-error">{ e.clone() }</p>
            }
            { body }
        </section>
    }
}
