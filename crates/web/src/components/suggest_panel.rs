//! The suggestion panel: the user sets a precision target and a confidence and asks for depth
//! thresholds that hold it on new rows (`hedgerow suggest`'s engine); the sliders move to the
//! suggestion, and the panel shows the guarantee, the comparison with one shared threshold and
//! with the in-sample optimum, and the held-out check.

use std::rc::Rc;

use hedgerow_board::state::Action;
use hedgerow_board::suggestion::{
    comparison, guarantee_line, method_line, Ask, AskText, Suggested,
};
use web_sys::{HtmlInputElement, HtmlSelectElement};
use yew::prelude::*;

use crate::browser;

#[derive(Properties, PartialEq)]
pub struct SuggestPanelProps {
    /// The suggestion made on the batch in use, if any.
    pub suggestion: Option<Rc<Suggested>>,
    /// Why the last ask failed.
    pub error: Option<String>,
    /// Columns of the labels CSV that can name each row's group.
    pub label_columns: Vec<String>,
    pub has_batch: bool,
    pub on_action: Callback<Action>,
}

fn field(
    id: &'static str,
    label: &'static str,
    help: &'static str,
    value: &str,
    on: Callback<String>,
) -> Html {
    let oninput = on.reform(|e: InputEvent| e.target_unchecked_into::<HtmlInputElement>().value());
    html! {
        <div class="field suggest-field">
            <label for={id}>{ label }</label>
            <input id={id} data-testid={id} type="text" inputmode="decimal" value={value.to_string()}
                title={help} aria-describedby={format!("{id}-help")} {oninput} />
            <span class="help" id={format!("{id}-help")}>{ help }</span>
        </div>
    }
}

#[function_component(SuggestPanel)]
pub fn suggest_panel(props: &SuggestPanelProps) -> Html {
    let text = use_state(|| AskText::from(&Ask::default()));
    let problems = use_state(Vec::<String>::new);
    let busy = use_state(|| false);
    let took = use_state(|| None::<f64>);

    let set = |f: fn(&mut AskText, String)| {
        let text = text.clone();
        Callback::from(move |v: String| {
            let mut t = (*text).clone();
            f(&mut t, v);
            text.set(t);
        })
    };
    let on_maximize = set(|t, v| t.maximize = v)
        .reform(|e: Event| e.target_unchecked_into::<HtmlSelectElement>().value());
    let on_group = set(|t, v| t.group_column = v)
        .reform(|e: Event| e.target_unchecked_into::<HtmlSelectElement>().value());
    let onsubmit = {
        let text = text.clone();
        let problems = problems.clone();
        let busy = busy.clone();
        let took = took.clone();
        let on_action = props.on_action.clone();
        Callback::from(move |e: SubmitEvent| {
            e.prevent_default();
            match text.parse() {
                Err(p) => problems.set(p),
                Ok(ask) => {
                    problems.set(Vec::new());
                    busy.set(true);
                    let (busy, took, on_action) = (busy.clone(), took.clone(), on_action.clone());
                    // Paint "Suggesting…" before the engine takes the thread.
                    wasm_bindgen_futures::spawn_local(async move {
                        browser::next_tick().await;
                        let start = browser::now();
                        on_action.emit(Action::Suggest(ask));
                        took.set(Some(browser::now() - start));
                        browser::mark("hedgerow:suggested");
                        busy.set(false);
                    });
                }
            }
        })
    };

    let result = props.suggestion.as_ref().map(|s| {
        let rows = comparison(s).into_iter().enumerate().map(|(i, r)| html! {
            <tr key={i} data-testid={format!("suggest-row-{i}")}>
                <th scope="row">{ r.name }</th>
                <td class="thresholds">{ r.thresholds }</td>
                <td>{ r.calibration }</td>
                <td>{ r.bound }</td>
                <td>{ r.tuning }</td>
                <td>{ r.held_precision }</td>
                <td>{ r.held_wilson }</td>
                <td>{ r.held_clopper_pearson }</td>
                <td>{ r.held_specificity }</td>
            </tr>
        });
        let ok = s.report.suggestion.is_some();
        html! {
            <div class="suggest-result">
                <p class={classes!("suggest-guarantee", (!ok).then_some("unmet"))} data-testid="suggest-guarantee" role="status">
                    { guarantee_line(s) }
                </p>
                <p class="help" data-testid="suggest-method">{ method_line(s) }</p>
                <div class="table-scroll">
                    <table class="suggest-table" data-testid="suggest-table">
                        <caption>{ "The suggestion beside (a) one threshold shared by every depth, certified by the same test, and (b) the best setting on the tuning rows without a guarantee. Held-out intervals are 95 %." }</caption>
                        <thead>
                            <tr>
                                <th scope="col">{ "setting" }</th>
                                <th scope="col">{ "depth thresholds" }</th>
                                <th scope="col">{ "calibration precision" }</th>
                                <th scope="col">{ "lower bound" }</th>
                                <th scope="col">{ "tuning precision" }</th>
                                <th scope="col">{ "held-out precision" }</th>
                                <th scope="col">{ "Wilson" }</th>
                                <th scope="col">{ "Clopper–Pearson" }</th>
                                <th scope="col">{ "held-out specificity" }</th>
                            </tr>
                        </thead>
                        <tbody>{ for rows }</tbody>
                    </table>
                </div>
            </div>
        }
    });

    let groups = props.label_columns.iter().map(|c| {
        html! { <option value={c.clone()} selected={text.group_column == *c}>{ c.clone() }</option> }
    });
    html! {
        <section class="panel suggest" aria-labelledby="suggest-title" data-testid="suggest-panel">
            <h2 id="suggest-title">{ "Suggest thresholds for a precision target" }</h2>
            <p class="help">
                { "Depth thresholds chosen on part of the rows and certified on another, so that precision holds on new rows with the confidence you set (Pareto Testing, then Learn-then-Test with Clopper–Pearson p-values). The rule, the unverifiable policy, the object threshold and node thresholds are kept. The same as " }
                <code>{ "hedgerow suggest" }</code>{ " with the same files, settings and seed." }
            </p>
            <form class="suggest-form" {onsubmit}>
                { field("suggest-target", "target precision", "P: the precision to hold on new rows", &text.target, set(|t, v| t.target = v)) }
                { field("suggest-confidence", "confidence", "C: the chance, over the tuning rows drawn, that it holds", &text.confidence, set(|t, v| t.confidence = v)) }
                { field("suggest-holdout", "held out", "share of rows kept out of tuning, to check the result", &text.holdout, set(|t, v| t.holdout = v)) }
                { field("suggest-seed", "seed", "the split of the rows (the same seed gives the same suggestion)", &text.seed, set(|t, v| t.seed = v)) }
                <div class="field suggest-field">
                    <label for="suggest-maximize">{ "maximize" }</label>
                    <select id="suggest-maximize" data-testid="suggest-maximize" onchange={on_maximize}>
                        <option value="specificity" selected={text.maximize == "specificity"}>{ "specificity" }</option>
                        <option value="reward" selected={text.maximize == "reward"}>{ "reward" }</option>
                    </select>
                </div>
                <div class="field suggest-field">
                    <label for="suggest-group">{ "keep together" }</label>
                    <select id="suggest-group" data-testid="suggest-group" onchange={on_group}>
                        <option value="" selected={text.group_column.is_empty()}>{ "rows one by one" }</option>
                        { for groups }
                    </select>
                </div>
                <button type="submit" data-testid="suggest-button" disabled={!props.has_batch || *busy}>
                    { if *busy { "Suggesting…" } else { "Suggest" } }
                </button>
                if let Some(ms) = *took {
                    <span class="help" data-testid="suggest-took">{ format!("took {:.2} s", ms / 1000.0) }</span>
                }
            </form>
            if !problems.is_empty() || props.error.is_some() {
                <ul class="field-errors" data-testid="suggest-errors" role="alert">
                    { for problems.iter().chain(props.error.iter()).map(|p| html! { <li>{ p.clone() }</li> }) }
                </ul>
            }
            { for result }
        </section>
    }
}
