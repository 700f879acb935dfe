//! What each slot holds and, beside it, that slot's problems in the engine's words.

use std::collections::BTreeMap;

use hedgerow_board::state::Slot;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct FilesPanelProps {
    pub notes: BTreeMap<Slot, String>,
    pub errors: BTreeMap<Slot, Vec<String>>,
    /// The files of the batch in use.
    pub active: Option<BTreeMap<Slot, String>>,
    pub last_read_ms: Option<f64>,
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
        Slot::Objectness => "optional .npy (rows,) of probabilities in [0, 1]",
        Slot::Profile => "a threshold profile (JSON) saved here or by hedgerow profile",
        Slot::Other => "files not recognised as any of the above",
    }
}

#[function_component(FilesPanel)]
pub fn files_panel(props: &FilesPanelProps) -> Html {
    let in_use = props
        .active
        .as_ref()
        .map(|names| names.values().cloned().collect::<Vec<_>>().join(" · "));
    let rows = Slot::ALL.into_iter().map(|slot| {
        let errors = props.errors.get(&slot).cloned().unwrap_or_default();
        let mut note = props.notes.get(&slot).cloned();
        if slot == Slot::Logits {
            if let (Some(n), Some(ms)) = (note.as_mut(), props.last_read_ms) {
                n.push_str(&format!(" (read in {:.2} s)", ms / 1000.0));
            }
        }
        html! {
            <tr key={slot.title()} data-testid={format!("file-{}", slot.title())} class={classes!((!errors.is_empty()).then_some("has-error"))}>
                <th scope="row">{ slot.title() }</th>
                <td>
                    if let Some(n) = note {
                        <span class="note">{ n }</span>
                    } else {
                        <span class="expects">{ expects(slot) }</span>
                    }
                </td>
                <td class="slot-errors" data-testid={format!("file-{}-errors", slot.title())}>
                    { for errors.iter().map(|e| html! { <p class="error-line">{ e }</p> }) }
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
                if let Some(names) = in_use {
                    { "Batch in use: " }<strong>{ names }</strong>
                } else {
                    { "No complete batch yet: a taxonomy, logits and labels are needed (objectness is optional)." }
                }
            </p>
            <table class="slots">
                <thead><tr><th scope="col">{ "slot" }</th><th scope="col">{ "recognised" }</th><th scope="col">{ "problems" }</th></tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
        </section>
    }
}
