//! The "Load demo" button.

use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct DemoButtonProps {
    pub onclick: Callback<()>,
}

#[function_component(DemoButton)]
pub fn demo_button(props: &DemoButtonProps) -> Html {
    let onclick = props.onclick.reform(|_: MouseEvent| ());
    html! {
        <button type="button" class="secondary" data-testid="load-demo" title="Load the bundled recycling-line batch: 173-node materials taxonomy, 20,000 detections" {onclick}>
            { "Load demo" }
        </button>
    }
}
