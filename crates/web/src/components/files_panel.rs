//! What each slot holds, a control to remove it, why a file was set aside, and beside each slot
//! its problems in the engine's words; above them, which batch is in use.

use std::collections::BTreeMap;

use hedgerow_board::state::{Origin, Slot};
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct FilesPanelProps {
    pub notes: BTreeMap<Slot, String>,
    pub errors: BTreeMap<Slot, Vec<String>>,
    /// Why a slot's previous file left it.
    pub set_aside: BTreeMap<Slot, String>,
    /// Slots that hold a file (these show a remove control).
    pub filled: Vec<Slot>,
    /// The files of the batch in use, and whether they are the demo's.
    pub active: Option<(BTreeMap<Slot, String>, Origin)>,
    /// A line about the staged files when they are not the batch in use.
    pub staging: Option<String>,
    pub last_read_ms: Option<f64>,
    pub on_remove: Callback<Slot>,
}

fn expects(slot: Slot) -> &'static str {
    match slot {
        Slot::Taxonomy => {
            "CSV with id,parent[,name] columns, or a JSON array of {id, parent, name}"
        }
        Slot::Logits => {
            ".npy (rows, nodes) of float16/32/64, one column per taxonomy row, or an .npz bundle holding `logits` (and optionally `labels`, `objectness`)"
        }
        Slot::Labels => {
            "CSV with a label column (node id; empty = background), or .npy of column indices"
        }
        Slot::Objectness => {
            "optional .npy (rows,) of probabilities in [0, 1]; a batch without it is complete (a classifier's)"
        }
        Slot::Profile => "a threshold profile (JSON) saved here or by hedgerow profile",
        Slot::Other => "files not recognised as any of the above",
    }
}

#[function_component(FilesPanel)]
pub fn files_panel(props: &FilesPanelProps) -> Html {
    let rows = Slot::ALL.into_iter().map(|slot| {
        let errors = props.errors.get(&slot).cloned().unwrap_or_default();
        let mut note = props.notes.get(&slot).cloned();
        if slot == Slot::Logits {
            if let (Some(n), Some(ms)) = (note.as_mut(), props.last_read_ms) {
                n.push_str(&format!(" (read in {:.2} s)", ms / 1000.0));
            }
        }
        let aside = props.set_aside.get(&slot).cloned();
        let removable = slot.is_batch_part() && props.filled.contains(&slot);
        let on_remove = props.on_remove.reform(move |_: MouseEvent| slot);
        html! {
            <tr key={slot.title()} data-testid={format!("file-{}", slot.title())} class={classes!((!errors.is_empty()).then_some("has-error"))}>
                <th scope="row">{ slot.title() }</th>
                <td>
                    if let Some(n) = note {
                        <span class="note">{ n }</span>
                    } else {
                        <span class="expects">{ expects(slot) }</span>
                    }
                    if let Some(a) = aside {
                        <p class="set-aside" data-testid={format!("file-{}-set-aside", slot.title())}>{ a }</p>
                    }
                </td>
                <td class="slot-errors" data-testid={format!("file-{}-errors", slot.title())}>
                    { for errors.iter().map(|e| html! { <p class="error-line">{ e }</p> }) }
                </td>
                <td class="slot-remove">
                    if removable {
                        <button type="button" class="secondary small" data-testid={format!("remove-{}", slot.title())}
                            aria-label={format!("Remove the {} file", slot.title())} onclick={on_remove}>{ "Remove" }</button>
                    }
                </td>
            </tr>
        }
    });
    html! {
        <section class="panel files" aria-labelledby="files-title">
            <h2 id="files-title">{ "Files" }
                <span class="subtitle">{ "Open files… or drop them anywhere on the page, in any order and several at once" }</span>
            </h2>
            <p class="in-use" data-testid="in-use">
                if let Some((names, origin)) = &props.active {
                    { "Batch in use: " }
                    <strong data-testid="in-use-origin">{ match origin { Origin::Demo => "the demo", Origin::User => "your files" } }</strong>
                    { " — " }{ names.values().cloned().collect::<Vec<_>>().join(" · ") }
                    if !names.contains_key(&Slot::Objectness) {
                        { " (no objectness: every row predicts)" }
                    }
                } else {
                    { "No complete batch yet: a taxonomy, logits and labels are needed (objectness is optional)." }
                }
            </p>
            if let Some(s) = &props.staging {
                <p class="staging" data-testid="staging">{ s }</p>
            }
            <table class="slots">
                <thead><tr><th scope="col">{ "slot" }</th><th scope="col">{ "recognised" }</th><th scope="col">{ "problems" }</th><th scope="col"><span class="visually-hidden">{ "remove" }</span></th></tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
        </section>
    }
}
