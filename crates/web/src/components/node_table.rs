//! Where it fails, node by node: the per-node table (the numbers of `hedgerow nodes`), sorted
//! by a click on a header (`aria-sort`), filtered by id/name text and a minimum of rows, paged,
//! downloadable as the command line's CSV; a row's button selects the node, whose own threshold
//! is then set or cleared in the editor above the table.

use std::rc::Rc;

use hedgerow_board::nodes::{self, table, Column, TableQuery};
use hedgerow_board::state::{show_ratio, Action, Slot};
use hedgerow_board::wording::show_threshold;
use hedgerow_core::{NodeReport, Taxonomy};
use web_sys::{HtmlInputElement, HtmlSelectElement};
use yew::prelude::*;

use super::threshold_control::ThresholdControl;
use crate::browser;

/// Shared data compared by address: a new report is a new `Rc`, so a render that did not change
/// it skips the table.
#[derive(Clone)]
pub struct Shared<T>(pub Rc<T>);

impl<T> PartialEq for Shared<T> {
    fn eq(&self, other: &Self) -> bool {
        Rc::ptr_eq(&self.0, &other.0)
    }
}

#[derive(Properties, PartialEq)]
pub struct NodeTableProps {
    pub taxonomy: Shared<Taxonomy>,
    pub report: Shared<NodeReport>,
    /// The node selected here or in the taxonomy view (a column, the root at `len()`).
    pub selected: Option<u32>,
    pub on_select: Callback<u32>,
    pub on_action: Callback<Action>,
    /// Used for the CSV's file name.
    pub taxonomy_file: AttrValue,
}

const PAGE_SIZES: [usize; 5] = [25, 50, 100, 250, 1000];

fn count_cell(v: u64) -> Html {
    html! { <td class="num">{ v }</td> }
}

#[function_component(NodeTable)]
pub fn node_table(props: &NodeTableProps) -> Html {
    crate::browser::stamp("node-table-render");
    let query = use_state(TableQuery::default);
    // After every render of the table (the end-to-end tests' frame timing).
    use_effect(|| browser::stamp("node-table"));
    let tax = &props.taxonomy.0;
    let page = table(tax, &props.report.0, &query);

    let headers = Column::ALL.iter().enumerate().map(|(i, &(column, label))| {
        let sort = if query.sort == column {
            if query.descending {
                "descending"
            } else {
                "ascending"
            }
        } else {
            "none"
        };
        let onclick = {
            let query = query.clone();
            Callback::from(move |_: MouseEvent| query.set(query.clicked(column)))
        };
        html! {
            <th scope="col" aria-sort={sort}>
                <button type="button" class="sort" {onclick} data-testid={format!("sort-{i}")}>
                    { label }
                    <span aria-hidden="true">{ match sort { "ascending" => " ▲", "descending" => " ▼", _ => "" } }</span>
                </button>
            </th>
        }
    });
    let body = page.rows.iter().map(|r| {
        let node = r.node;
        let selected = props.selected == Some(node);
        let onclick = props.on_select.reform(move |_: MouseEvent| node);
        let shown_id = if r.id.is_empty() { "(root)".to_string() } else { r.id.clone() };
        let precision = match (r.precision, r.interval) {
            (Some(p), Some(i)) => format!("{} ({:.3}–{:.3})", show_ratio(Some(p)), i.low, i.high),
            (p, _) => show_ratio(p),
        };
        let wrong: Vec<String> = r.top_wrong.iter().map(|(id, k)| format!("{id} {k}")).collect();
        html! {
            <tr key={node} class={classes!(selected.then_some("selected"))} data-node={r.id.clone()} aria-selected={selected.to_string()}>
                <td class="num">{ if r.id.is_empty() { 0 } else { node as u64 + 1 } }</td>
                <td><button type="button" class="link" {onclick} title="Select this node (threshold editor, taxonomy view, rows)">{ shown_id }</button></td>
                <td>{ if r.name == r.id { String::new() } else { r.name.clone() } }</td>
                <td class="num">{ r.depth }</td>
                <td class="num">{ format!("{}{}", show_threshold(r.threshold), if r.overridden { " *" } else { "" }) }</td>
                { count_cell(r.stops) }
                { count_cell(r.correct) }
                { count_cell(r.unverifiable) }
                { count_cell(r.wrong) }
                { count_cell(r.labelled) }
                { count_cell(r.stopped_above) }
                <td class="num" data-value={r.precision.map(|p| p.to_string()).unwrap_or_default()}>{ precision }</td>
                <td class="wrong-list">{ wrong.join(", ") }</td>
            </tr>
        }
    });

    let on_filter = {
        let query = query.clone();
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            query.set(TableQuery {
                filter: input.value(),
                page: 0,
                ..(*query).clone()
            });
        })
    };
    let on_min = {
        let query = query.clone();
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            let min_rows = input.value().trim().parse().unwrap_or(0);
            query.set(TableQuery {
                min_rows,
                page: 0,
                ..(*query).clone()
            });
        })
    };
    let on_size = {
        let query = query.clone();
        Callback::from(move |e: Event| {
            let select: HtmlSelectElement = e.target_unchecked_into();
            let page_size = select.value().parse().unwrap_or(50);
            query.set(TableQuery {
                page_size,
                page: 0,
                ..(*query).clone()
            });
        })
    };
    let go = |to: usize| {
        let query = query.clone();
        Callback::from(move |_: MouseEvent| {
            query.set(TableQuery {
                page: to,
                ..(*query).clone()
            })
        })
    };
    let on_csv = {
        let taxonomy = props.taxonomy.0.clone();
        let report = props.report.0.clone();
        let on_action = props.on_action.clone();
        let stem = props.taxonomy_file.to_string();
        Callback::from(move |_: MouseEvent| {
            let stem = stem.rsplit_once('.').map_or(stem.as_str(), |(s, _)| s);
            let result = nodes::csv(&taxonomy, &report)
                .ok_or_else(|| "the table could not be written".to_string())
                .and_then(|text| {
                    browser::download(&format!("{stem}-nodes.csv"), "text/csv", &text)
                });
            if let Err(e) = result {
                on_action.emit(Action::Unreadable {
                    slot: Some(Slot::Other),
                    message: format!("saving the per-node table: {e}"),
                });
            }
        })
    };

    // The selected node's own threshold.
    let editor = props.selected.filter(|&v| v < tax.root()).map(|v| {
        let id = tax.id(v).to_string();
        let rec = props.report.0.nodes.get(v as usize);
        let value = rec.map_or(0.5, |r| r.threshold);
        let overridden = rec.is_some_and(|r| r.overridden);
        let depth = tax.depth(v);
        let on_set = {
            let id = id.clone();
            props.on_action.reform(move |t: f64| Action::SetNodeThreshold { id: id.clone(), value: Some(t) })
        };
        let on_clear = {
            let id = id.clone();
            props.on_action.reform(move |_: MouseEvent| Action::SetNodeThreshold { id: id.clone(), value: None })
        };
        html! {
            <div class="node-editor" data-testid="node-editor">
                <ThresholdControl id="node-threshold" label={format!("Threshold for {id}")}
                    help={format!("Stepping into {id} takes this threshold instead of depth {depth}'s.")}
                    note={Some(AttrValue::from(if overridden { format!("{id} has its own threshold; Clear gives it depth {depth}'s again.") } else { format!("{id} uses depth {depth}'s threshold; a new value here gives it its own.") }))}
                    {value} live={false} {on_set} />
                <button type="button" class="secondary" data-testid="node-threshold-clear" disabled={!overridden} onclick={on_clear}>
                    { format!("Clear {id}'s threshold") }
                </button>
            </div>
        }
    });

    let last = page.pages.saturating_sub(1);
    html! {
        <section class="panel node-table" aria-labelledby="node-table-title">
            <h2 id="node-table-title">{ "Where it fails, node by node" }</h2>
            <p class="help">{ "Per node: predictions that stop there by outcome; rows labelled at or below it, and of those the ones whose prediction stopped above it; precision of its stops with a 95 % Wilson interval; the wrong answers most often given for rows labelled under it. * marks a node's own threshold. The same numbers as " }<code>{ "hedgerow nodes" }</code>{ "." }</p>
            { for editor }
            <div class="table-tools">
                <label>{ "Filter id or name " }
                    <input type="search" data-testid="node-filter" value={query.filter.clone()} oninput={on_filter} />
                </label>
                <label>{ "At least " }
                    <input type="text" inputmode="numeric" class="short" data-testid="node-min-rows" value={query.min_rows.to_string()} oninput={on_min} />
                    { " rows" }
                </label>
                <label>{ "Per page " }
                    <select data-testid="node-page-size" onchange={on_size}>
                        { for PAGE_SIZES.iter().map(|&n| html! { <option value={n.to_string()} selected={n == query.page_size}>{ n }</option> }) }
                    </select>
                </label>
                <button type="button" class="secondary" data-testid="node-csv" onclick={on_csv}
                    title="Download the whole table (every node, file order) as hedgerow nodes --out writes it">{ "Download CSV" }</button>
            </div>
            <p class="help" data-testid="node-count" aria-live="polite">{ format!("{} of {} nodes (the root included); page {} of {}", page.matching, tax.len() + 1, page.page + 1, page.pages) }</p>
            <div class="table-scroll">
                <table data-testid="node-table">
                    <thead><tr>{ for headers }<th scope="col">{ "most often wrong" }</th></tr></thead>
                    <tbody>{ for body }</tbody>
                </table>
            </div>
            <nav class="pager" aria-label="Pages of the node table">
                <button type="button" class="secondary" disabled={page.page == 0} onclick={go(0)}>{ "First" }</button>
                <button type="button" class="secondary" disabled={page.page == 0} onclick={go(page.page.saturating_sub(1))} data-testid="node-prev">{ "Previous" }</button>
                <button type="button" class="secondary" disabled={page.page >= last} onclick={go(page.page + 1)} data-testid="node-next">{ "Next" }</button>
                <button type="button" class="secondary" disabled={page.page >= last} onclick={go(last)}>{ "Last" }</button>
            </nav>
        </section>
    }
}
