//! The root component: the one board state (`use_reducer` over `hedgerow_board::state::Board`),
//! the loader, stored settings, and the page's layout. Everything below gets props and
//! callbacks.

use std::rc::Rc;

use hedgerow_board::state::{Action, Slot};
use yew::prelude::*;

use super::chart::{Chart, ChartView};
use super::compare_panel::ComparePanel;
use super::controls::Controls;
use super::demo_button::DemoButton;
use super::error_area::ErrorArea;
use super::file_picker::FilePicker;
use super::files_panel::FilesPanel;
use super::headline::Headline;
use super::icicle::Icicle;
use super::inspector::Inspector;
use super::node_table::{NodeTable, Shared};
use super::read_progress::ReadProgress;
use super::suggest_panel::SuggestPanel;
use crate::browser;
use crate::hooks::use_file_drop::use_file_drop;
use crate::hooks::use_loader::use_loader;
use crate::store::BoardState;

#[function_component(App)]
pub fn app() -> Html {
    browser::stamp("app-render");
    let board = use_reducer(BoardState::restored);
    let loader = use_loader(&board);
    let on_action = use_callback(board.dispatcher(), |action: Action, d| d.dispatch(action));

    // The demo at startup, when nothing is loaded yet.
    {
        let loader = loader.clone();
        let empty = board.taxonomy.is_none() && board.logits.is_none() && board.active.is_none();
        use_effect_with((), move |()| {
            if empty {
                loader.load_demo();
            }
        });
    }
    // After every render of the page (the end-to-end tests' frame timing).
    use_effect(|| browser::stamp("app"));
    // Settings survive a reload.
    use_effect_with(board.stored(), browser::save_settings);
    // A timing mark the first time numbers are shown (read by the end-to-end tests).
    {
        let marked = use_mut_ref(|| false);
        use_effect_with(board.metrics.is_some(), move |&shown| {
            if shown && !*marked.borrow() {
                *marked.borrow_mut() = true;
                browser::mark("hedgerow:numbers-shown");
            }
        });
    }

    // The node selected in the table or the taxonomy view (a column; the root at `len()`).
    let selected = use_state(|| None::<u32>);
    let on_select = {
        let selected = selected.clone();
        Callback::from(move |v: u32| selected.set(Some(v)))
    };

    // The taxonomy view's focused subtree (`None`: the whole tree).
    let icicle_focus = use_state(|| None::<u32>);
    let on_icicle_focus = {
        let icicle_focus = icicle_focus.clone();
        Callback::from(move |v: u32| icicle_focus.set(Some(v)))
    };

    // The transition opened in the row inspector (baseline outcome, current outcome), and its
    // rows under the settings in use (recounted when the comparison changes).
    let transition = use_state(|| None::<(hedgerow_core::Outcome, hedgerow_core::Outcome)>);
    let on_open_transition = {
        let transition = transition.clone();
        Callback::from(move |t| transition.set(Some(t)))
    };
    let on_clear_transition = {
        let transition = transition.clone();
        Callback::from(move |()| transition.set(None))
    };
    let transition_rows = {
        let board = board.clone();
        use_memo(
            (
                *transition,
                board.comparison.clone().map(|c| Rc::as_ptr(&c) as usize),
            ),
            move |(t, _)| {
                let (from, to) = (*t)?;
                let rows = board.transition_rows(from, to)?;
                Some((
                    AttrValue::from(format!("from {} to {}", from.as_str(), to.as_str())),
                    Shared(Rc::new(rows)),
                ))
            },
        )
    };
    let on_threshold = on_action.reform(Action::SetAllDepths);

    let on_files = use_callback(loader.clone(), |files, loader| loader.load_files(files));
    let dragging = use_file_drop(on_files.clone());
    let on_demo = use_callback(loader.clone(), |(), loader| loader.load_demo());
    let on_cancel = use_callback(loader.clone(), |(), loader| loader.cancel());
    let on_dismiss = on_action.reform(|()| Action::ClearErrors);
    let on_reset = on_action.reform(|()| Action::Reset);
    let on_save = {
        let board = board.clone();
        Callback::from(move |()| {
            let result = match board.profile() {
                Some(p) => browser::download(
                    &board.profile_file_name(browser::local_time()),
                    "application/json",
                    &(p.to_json() + "\n"),
                ),
                None => Err(
                    "load a complete batch first: a profile records the metrics its settings score"
                        .into(),
                ),
            };
            if let Err(e) = result {
                board.dispatch(Action::Unreadable {
                    slot: Some(Slot::Profile),
                    message: format!("saving the profile: {e}"),
                });
            }
        })
    };

    let on_curve_csv = {
        let board = board.clone();
        Callback::from(move |_: MouseEvent| {
            let stem = board
                .active
                .as_ref()
                .and_then(|a| a.names.get(&Slot::Taxonomy).cloned())
                .unwrap_or_else(|| "taxonomy".into());
            let stem = stem
                .rsplit_once('.')
                .map_or(stem.as_str(), |(s, _)| s)
                .to_string();
            let result = hedgerow_board::nodes::curve_csv(&board)
                .ok_or_else(|| "load a complete batch first".to_string())
                .and_then(|text| {
                    browser::download(&format!("{stem}-curve.csv"), "text/csv", &text)
                });
            if let Err(e) = result {
                board.dispatch(Action::Unreadable {
                    slot: Some(Slot::Other),
                    message: format!("saving the curve: {e}"),
                });
            }
        })
    };

    let depth = board.depth();
    let errors: Vec<String> = board.errors.values().flatten().cloned().collect();
    let active_names = board.active.as_ref().map(|a| (a.names.clone(), a.origin));
    let kept = active_names
        .as_ref()
        .map(|(n, _)| AttrValue::from(n.values().cloned().collect::<Vec<_>>().join(", ")));
    let filled: Vec<Slot> = [
        (Slot::Taxonomy, board.taxonomy.is_some()),
        (Slot::Logits, board.logits.is_some()),
        (Slot::Labels, board.labels.is_some()),
        (Slot::Objectness, board.objectness.is_some()),
    ]
    .into_iter()
    .filter_map(|(s, f)| f.then_some(s))
    .collect();
    let on_remove = use_callback(loader.clone(), |slot, loader| loader.remove(slot));
    let has_objectness = board
        .active
        .as_ref()
        .is_some_and(|a| a.batch.has_objectness());
    let stop_share = board
        .metrics
        .as_ref()
        .map(|m| m.stop_share.clone())
        .unwrap_or_default();
    let temperatures = board.temperatures.expand(depth);
    let tradeoff = Rc::new(ChartView::Tradeoff(board.tradeoff_view()));
    let stops = Rc::new(ChartView::Stops(board.stop_view()));
    let focus = board.focus;
    let sweep_caption = format!("Up: more often right. Right: more specific. Dots: depth {focus} alone from 0 to 1 (focus another depth to switch).");

    html! {
        <div class={classes!("page", dragging.then_some("dragging"))}>
            <header class="top">
                <div class="brand">
                    <h1>{ "hedgerow" }</h1>
                    <p class="purpose">{ "Choose where a taxonomy classifier stops: tune per-depth thresholds on a validation batch, save the profile the CLI applies." }</p>
                </div>
                <div class="load">
                    <DemoButton onclick={on_demo} />
                    <FilePicker on_files={on_files} />
                </div>
            </header>
            if let Some(p) = board.progress.clone() {
                <ReadProgress progress={p} on_cancel={on_cancel} />
            }
            <ErrorArea errors={errors} kept={kept} on_dismiss={on_dismiss} />
            <div class="layout">
                <aside class="left">
                    <Controls settings={board.settings.clone()} depth={depth} has_objectness={has_objectness} focus={focus}
                        stop_share={stop_share} temperatures={temperatures} node_overrides={board.node_overrides()}
                        can_save={board.metrics.is_some()}
                        on_action={on_action.clone()} on_save={on_save} on_reset={on_reset} />
                </aside>
                <div class="right">
                    <Headline metrics={board.metrics.clone()} />
                    <section class="charts" aria-label="Charts">
                        <Chart id="chart-tradeoff" title="Precision against specificity (information gain)" caption={sweep_caption} view={tradeoff}
                            on_threshold={board.metrics.is_some().then_some(on_threshold)} />
                        <Chart id="chart-stops" title="Where predictions stop"
                            caption="Share of predictions that stop at each depth (0 = the root: type unknown), by outcome."
                            view={stops} />
                    </section>
                    if board.metrics.is_some() {
                        <p class="chart-tools">
                            <button type="button" class="secondary" data-testid="curve-csv" onclick={on_curve_csv}
                                title="The exact curve of one shared threshold (node thresholds held), as hedgerow curve writes it">
                                { "Download the curve as CSV" }
                            </button>
                        </p>
                    }
                </div>
            </div>
            <SuggestPanel suggestion={board.current_suggestion().cloned()}
                error={board.suggestion_error.clone()} label_columns={board.label_columns()}
                has_batch={board.active.is_some()} on_action={on_action.clone()} />
            <ComparePanel baseline={board.baseline.clone().map(Shared)} comparison={board.comparison.clone()}
                metrics={board.metrics.clone()} error={board.baseline_error.clone()} has_batch={board.active.is_some()}
                on_action={on_action.clone()} on_open={on_open_transition} />
            if let (Some(a), Some(report)) = (board.active.as_ref(), board.node_report.clone()) {
                <section class="where" aria-label="Where it fails">
                    if let Some(fates) = board.node_fates.clone() {
                        <Icicle taxonomy={Shared(a.taxonomy.clone())} fates={Shared(fates)}
                            focus={icicle_focus.filter(|&v| (v as usize) <= a.taxonomy.len()).unwrap_or(a.taxonomy.root())}
                            selected={*selected} on_focus={on_icicle_focus.clone()} on_select={on_select.clone()} />
                    }
                    <NodeTable taxonomy={Shared(a.taxonomy.clone())} report={Shared(report)}
                        selected={*selected} on_select={on_select.clone()} on_action={on_action.clone()}
                        taxonomy_file={a.names.get(&Slot::Taxonomy).cloned().unwrap_or_else(|| "taxonomy".into())} />
                    <Inspector taxonomy={Shared(a.taxonomy.clone())} batch={Shared(a.batch.clone())}
                        settings={board.settings.clone()} selected={*selected}
                        inspected={board.inspected.as_ref().map(|i| i.row)} runner_ups={board.runner_up_column()}
                        on_action={on_action.clone()}
                        key={transition_rows.as_ref().as_ref().map_or("all".to_string(), |(w, _)| w.to_string())}
                        rows={(*transition_rows).clone()} on_clear_rows={on_clear_transition} />
                </section>
            }
            <FilesPanel notes={board.notes.clone()} errors={board.errors.clone()} set_aside={board.set_aside.clone()}
                filled={filled} active={active_names} staging={board.staging_line()}
                last_read_ms={loader.last_read_ms()} on_remove={on_remove} />
            <footer class="foot">
                { "Everything runs in this page: files are read locally and nothing is sent anywhere. The scores come from the same engine as the " }
                <code>{ "hedgerow" }</code>{ " command line." }
            </footer>
            if dragging {
                <div class="drop-hint" aria-hidden="true">{ "Drop files to load them" }</div>
            }
        </div>
    }
}
