//! The row inspector: rows listed by outcome, stop depth and the selected node (predicted
//! there, or labelled at or below it), a page at a time (`hedgerow_board::inspect::list_rows`);
//! a row's button opens its greedy path step by step (`row_detail`), with the runner-up sibling
//! at each step once the shell has read that row's logits (`hedgerow_board::runner_up`).

use hedgerow_board::inspect::{list_rows, row_detail, RowFilter, Source};
use hedgerow_board::runner_up::RunnerUpColumn;
use hedgerow_board::state::thin_thousands;
use hedgerow_board::state::Action;
use hedgerow_core::{Batch, Outcome, Settings, Taxonomy};
use web_sys::HtmlSelectElement;
use yew::prelude::*;

use super::node_table::Shared;

#[derive(Properties, PartialEq)]
pub struct InspectorProps {
    pub taxonomy: Shared<Taxonomy>,
    pub batch: Shared<Batch>,
    pub settings: Settings,
    pub selected: Option<u32>,
    /// The row open in the inspector (the board's: `Action::Inspect`).
    pub inspected: Option<usize>,
    pub runner_ups: Option<RunnerUpColumn>,
    pub on_action: Callback<Action>,
    /// Only these rows, with what they are (a transition opened from the comparison).
    #[prop_or_default]
    pub rows: Option<(AttrValue, Shared<Vec<u32>>)>,
    #[prop_or_default]
    pub on_clear_rows: Callback<()>,
}

const PAGE: usize = 20;
const OUTCOMES: [Outcome; 5] = [
    Outcome::Correct,
    Outcome::Unverifiable,
    Outcome::Wrong,
    Outcome::Abstained,
    Outcome::Rejected,
];

/// How the selected node narrows the list.
#[derive(Clone, Copy, PartialEq)]
enum Scope {
    Any,
    Predicted,
    Labelled,
}

fn value_of(e: &Event) -> String {
    let select: HtmlSelectElement = e.target_unchecked_into();
    select.value()
}

fn num(v: f64) -> String {
    if v.is_finite() {
        format!("{v:.4}")
    } else {
        "–".into()
    }
}

/// Why the runner-up column is empty, as a sentence: the engine's reason starts with
/// "runner-ups need …"; a file's own problem starts with its name.
fn note_text(why: &str) -> String {
    match why.strip_prefix("runner-ups") {
        Some(rest) => format!("Runner-ups{rest}."),
        None => format!("No runner-ups: {why}"),
    }
}

#[function_component(Inspector)]
pub fn inspector(props: &InspectorProps) -> Html {
    crate::browser::stamp("inspector-render");
    let outcome = use_state(|| None::<Outcome>);
    let stop = use_state(|| None::<usize>);
    let scope = use_state(|| Scope::Any);
    let start = use_state(|| 0usize);
    // Rows where earlier pages began, for "Previous".
    let starts = use_state(Vec::<usize>::new);
    let row = props.inspected;
    // After every render of the inspector (the end-to-end tests' frame timing).
    use_effect(|| crate::browser::stamp("inspector"));
    let (tax, batch) = (&props.taxonomy.0, &props.batch.0);

    let filter = RowFilter {
        outcome: *outcome,
        stop_depth: *stop,
        predicted: props.selected.filter(|_| *scope == Scope::Predicted),
        label_under: props.selected.filter(|_| *scope == Scope::Labelled),
        rows: props.rows.as_ref().map(|(_, r)| r.0.clone()),
    };
    let page = list_rows(tax, batch, &props.settings, &filter, *start, PAGE);

    let reset_pages = {
        let (start, starts) = (start.clone(), starts.clone());
        move || {
            start.set(0);
            starts.set(Vec::new());
        }
    };
    let on_outcome = {
        let (outcome, reset) = (outcome.clone(), reset_pages.clone());
        Callback::from(move |e: Event| {
            let v = value_of(&e);
            outcome.set(OUTCOMES.iter().copied().find(|o| o.as_str() == v));
            reset();
        })
    };
    let on_stop = {
        let (stop, reset) = (stop.clone(), reset_pages.clone());
        Callback::from(move |e: Event| {
            stop.set(value_of(&e).parse().ok());
            reset();
        })
    };
    let on_scope = {
        let (scope, reset) = (scope.clone(), reset_pages.clone());
        Callback::from(move |e: Event| {
            scope.set(match value_of(&e).as_str() {
                "predicted" => Scope::Predicted,
                "labelled" => Scope::Labelled,
                _ => Scope::Any,
            });
            reset();
        })
    };
    let on_next = {
        let (start, starts, next) = (start.clone(), starts.clone(), page.next);
        Callback::from(move |_: MouseEvent| {
            if let Some(n) = next {
                let mut s = (*starts).clone();
                s.push(*start);
                starts.set(s);
                start.set(n);
            }
        })
    };
    let on_prev = {
        let (start, starts) = (start.clone(), starts.clone());
        Callback::from(move |_: MouseEvent| {
            let mut s = (*starts).clone();
            if let Some(p) = s.pop() {
                start.set(p);
                starts.set(s);
            }
        })
    };
    let selected_id = props.selected.map(|v| {
        if v == tax.root() {
            "(root)".to_string()
        } else {
            tax.id(v).to_string()
        }
    });

    let lines = page.rows.iter().map(|l| {
        let r = l.row;
        let onclick = props.on_action.reform(move |_: MouseEvent| Action::Inspect(r));
        html! {
            <tr key={r} class={classes!((row == Some(r)).then_some("selected"))}>
                <td class="num"><button type="button" class="link" {onclick} data-testid={format!("inspect-row-{r}")}>{ r }</button></td>
                <td>{ l.label.clone() }</td>
                <td>{ l.predicted.clone() }</td>
                <td class="num">{ l.depth.map(|d| d.to_string()).unwrap_or_default() }</td>
                <td>{ l.outcome.as_str() }</td>
            </tr>
        }
    });

    let column = props.runner_ups.clone();
    let detail = row.and_then(|r| row_detail(tax, batch, &props.settings, r)).map(|d| {
        let steps = d.steps.iter().map(|s| {
            let source = match s.source {
                Source::Depth if s.depth == 0 => "object threshold".to_string(),
                Source::Depth => format!("depth {}", s.depth),
                Source::Node => "node's own".to_string(),
                Source::None => "none (no objectness)".to_string(),
            };
            let runner_up = match (&column, s.depth) {
                (_, 0) => html! { <td class="runner-up">{ "–" }</td> },
                (Some(RunnerUpColumn::Shown(cells)), d) => match cells.get(d - 1) {
                    Some(Some(c)) => {
                        // The name (often long) as the cell's title, so the table stays narrow.
                        let title = if c.name.is_empty() { c.id.clone() } else { c.name.clone() };
                        html! {
                            <td class="runner-up" data-node={c.id.clone()} data-value={c.conditional.to_string()} {title}>
                                { format!("{} {}", c.id, num(c.conditional)) }
                            </td>
                        }
                    }
                    _ => html! { <td class="runner-up" data-node="">{ "only child" }</td> },
                },
                (Some(RunnerUpColumn::Reading), _) => html! { <td class="runner-up">{ "…" }</td> },
                _ => html! { <td class="runner-up">{ "–" }</td> },
            };
            html! {
                <tr class={classes!(s.taken.then_some("taken"))} data-node={s.id.clone()}>
                    <td class="num">{ s.depth }</td>
                    <td>{ s.id.clone() }</td>
                    <td class="num" data-value={s.conditional.to_string()}>{ num(s.conditional) }</td>
                    <td class="num" data-value={s.cumulative.to_string()}>{ num(s.cumulative) }</td>
                    <td class="num" data-value={s.threshold.to_string()}>{ num(s.threshold) }</td>
                    <td>{ source }</td>
                    { runner_up }
                    <td>{ if s.taken { "stepped in" } else { "stopped before" } }</td>
                </tr>
            }
        });
        html! {
            <div class="row-detail" data-testid="row-detail" data-row={d.row.to_string()}>
                <h3>{ format!("Row {}", d.row) }</h3>
                <p>{ format!("label {} · predicted {} · {}", if d.label.is_empty() { "none (background)" } else { &d.label }, if d.predicted.is_empty() { "nothing (abstained)" } else { &d.predicted }, d.outcome.as_str()) }</p>
                <p data-testid="row-why">{ d.why.clone() }</p>
                <div class="table-scroll">
                <table data-testid="row-path">
                    <thead><tr>
                        <th scope="col">{ "depth" }</th><th scope="col">{ "node" }</th>
                        <th scope="col">{ "p(node | parent)" }</th><th scope="col">{ "P(node)" }</th>
                        <th scope="col">{ "threshold" }</th><th scope="col">{ "from" }</th>
                        <th scope="col" title="the most probable other child of the same parent, with p(sibling | parent)">{ "runner-up, p(· | parent)" }</th><th scope="col">{ "descent" }</th>
                    </tr></thead>
                    <tbody>{ for steps }</tbody>
                </table>
                </div>
                if let Some(RunnerUpColumn::Note(why)) = &column {
                    <p class="help" data-testid="runner-up-note">{ note_text(why) }</p>
                }
                <p class="help">{ "The greedy path to its leaf: the rule compares P(node) (cumulative) or p(node | parent) (conditional) with the threshold. The runner-up is the most probable other child of the same parent, read from this row's logits when it is opened." }</p>
            </div>
        }
    });

    let depth = tax.max_depth();
    html! {
        <section class="panel inspector" aria-labelledby="inspector-title">
            <h2 id="inspector-title">{ "Rows" }</h2>
            <div class="table-tools">
                <label>{ "Outcome " }
                    <select data-testid="inspect-outcome" onchange={on_outcome}>
                        <option value="" selected={outcome.is_none()}>{ "any" }</option>
                        { for OUTCOMES.iter().map(|o| html! { <option value={o.as_str()} selected={*outcome == Some(*o)}>{ o.as_str() }</option> }) }
                    </select>
                </label>
                <label>{ "Stops at depth " }
                    <select data-testid="inspect-depth" onchange={on_stop}>
                        <option value="" selected={stop.is_none()}>{ "any" }</option>
                        { for (0..=depth).map(|d| html! { <option value={d.to_string()} selected={*stop == Some(d)}>{ d }</option> }) }
                    </select>
                </label>
                <label>{ "Node " }
                    <select data-testid="inspect-scope" onchange={on_scope} disabled={selected_id.is_none()}>
                        <option value="any" selected={*scope == Scope::Any}>{ "any" }</option>
                        <option value="predicted" selected={*scope == Scope::Predicted}>{ format!("predicted {}", selected_id.clone().unwrap_or_default()) }</option>
                        <option value="labelled" selected={*scope == Scope::Labelled}>{ format!("labelled at or below {}", selected_id.clone().unwrap_or_default()) }</option>
                    </select>
                </label>
            </div>
            if let Some((what, rows)) = &props.rows {
                <p class="help" data-testid="inspect-transition" data-rows={rows.0.len().to_string()}>
                    { format!("Only the {} rows that went {what}. ", thin_thousands(rows.0.len() as u64)) }
                    <button type="button" class="link" data-testid="inspect-all-rows" onclick={props.on_clear_rows.reform(|_: MouseEvent| ())}>{ "Show all rows" }</button>
                </p>
            }
            <p class="help" aria-live="polite">{
                if page.rows.is_empty() { format!("No rows from row {} on match.", *start) }
                else { format!("Rows {}–{} that match (from row {}).", page.rows.first().map_or(0, |l| l.row), page.rows.last().map_or(0, |l| l.row), *start) }
            }</p>
            <div class="table-scroll">
            <table data-testid="inspect-rows">
                <thead><tr><th scope="col">{ "row" }</th><th scope="col">{ "label" }</th><th scope="col">{ "predicted" }</th><th scope="col">{ "depth" }</th><th scope="col">{ "outcome" }</th></tr></thead>
                <tbody>{ for lines }</tbody>
            </table>
            </div>
            <nav class="pager" aria-label="Pages of rows">
                <button type="button" class="secondary" disabled={starts.is_empty()} onclick={on_prev}>{ "Previous" }</button>
                <button type="button" class="secondary" disabled={page.next.is_none()} onclick={on_next}>{ "Next" }</button>
            </nav>
            { for detail }
        </section>
    }
}
