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
        <button type="button" data-testid="load-demo" {onclick}>{ "Load demo" }</button>
    }
}
