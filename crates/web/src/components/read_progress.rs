//! The progress of a logits read, with Cancel.

use hedgerow_board::state::Progress;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ReadProgressProps {
    pub progress: Progress,
    pub on_cancel: Callback<()>,
}

fn mib(bytes: u64) -> String {
    format!("{:.1} MiB", bytes as f64 / f64::from(1 << 20))
}

#[function_component(ReadProgress)]
pub fn read_progress(props: &ReadProgressProps) -> Html {
    let p = &props.progress;
    let onclick = props.on_cancel.reform(|_: MouseEvent| ());
    html! {
        <div class="read-progress" data-testid="read-progress" role="status">
            <label for="read-progress-bar">{ format!("Reading {}: {} of {}", p.name, mib(p.done), mib(p.total)) }</label>
            <progress id="read-progress-bar" max={p.total.max(1).to_string()} value={p.done.to_string()}></progress>
            <button type="button" class="secondary" data-testid="cancel-read" {onclick}>{ "Cancel" }</button>
        </div>
    }
}
