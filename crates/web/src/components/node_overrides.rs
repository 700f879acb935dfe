//! The per-node thresholds in use (from a loaded profile, kept across reloads): each node's id,
//! name and threshold, which replaces its depth's for that node.

use hedgerow_board::overrides::NodeOverride;
use hedgerow_board::wording::show_threshold;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct NodeOverridesProps {
    pub overrides: Vec<NodeOverride>,
}

#[function_component(NodeOverrides)]
pub fn node_overrides(props: &NodeOverridesProps) -> Html {
    if props.overrides.is_empty() {
        return html! {};
    }
    let items = props.overrides.iter().map(|o| {
        html! {
            <li key={o.id.clone()} data-testid={format!("node-override-{}", o.id)}
                title={format!("{}, a depth-{} node: stepping into it takes ≥ {} instead of depth {}'s threshold", o.id, o.depth, show_threshold(o.threshold), o.depth)}>
                <code>{ o.id.clone() }</code>
                if !o.name.is_empty() {
                    <span class="node-name">{ o.name.clone() }</span>
                }
                <span class="node-threshold">{ format!("≥ {}", show_threshold(o.threshold)) }</span>
            </li>
        }
    });
    html! {
        <div class="node-overrides" data-testid="node-overrides">
            <p class="node-overrides-title">{ format!("Node overrides ({})", props.overrides.len()) }</p>
            <ul>{ for items }</ul>
            <p class="help">{ "From the profile: these nodes use their own threshold instead of their depth's. Reset removes them." }</p>
        </div>
    }
}
