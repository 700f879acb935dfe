//! "Open files…": a native multiple file input dressed as a button (keyboard-operable: the
//! input itself takes the focus). Dropping files anywhere on the page does the same.

use web_sys::{File, HtmlInputElement};
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct FilePickerProps {
    pub on_files: Callback<Vec<File>>,
}

#[function_component(FilePicker)]
pub fn file_picker(props: &FilePickerProps) -> Html {
    let on_files = props.on_files.clone();
    let onchange = Callback::from(move |e: Event| {
        let input: HtmlInputElement = e.target_unchecked_into();
        let files: Vec<File> = input
            .files()
            .map(|list| (0..list.length()).filter_map(|i| list.item(i)).collect())
            .unwrap_or_default();
        // Clear, so that choosing the same file again (after fixing it) loads it again.
        input.set_value("");
        if !files.is_empty() {
            on_files.emit(files);
        }
    });
    html! {
        <label class="file-picker button" title="Taxonomy (.csv/.json), logits (.npy, or an .npz bundle with labels and objectness), labels (.csv/.npy), objectness (.npy) or a profile (.json); several at once">
            <input type="file" multiple=true data-testid="file-input" accept=".csv,.json,.npy,.npz,.txt,text/csv,application/json" {onchange} />
            <span>{ "Open files…" }</span>
        </label>
    }
}
