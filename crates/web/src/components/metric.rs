//! One headline number: its value (the element's whole text is the number), its name, and a
//! one-line explanation both as a title and visible.

use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct MetricProps {
    /// `data-testid` of the value: `metric-{key}` (its label: `metric-{key}-label`).
    pub key_name: AttrValue,
    pub label: AttrValue,
    pub value: AttrValue,
    pub help: AttrValue,
    /// Extra classes (size, outcome colour).
    #[prop_or_default]
    pub class: Classes,
    /// A figure after the value (e.g. a share), outside the value's element.
    #[prop_or_default]
    pub detail: Option<AttrValue>,
}

#[function_component(Metric)]
pub fn metric(props: &MetricProps) -> Html {
    html! {
        <div class={classes!("metric", props.class.clone())} title={props.help.clone()}>
            <div class="metric-label" data-testid={format!("metric-{}-label", props.key_name)}>{ props.label.clone() }</div>
            <div class="metric-figure">
                <span class="metric-value" data-testid={format!("metric-{}", props.key_name)}>{ props.value.clone() }</span>
                if let Some(d) = &props.detail {
                    <span class="metric-detail">{ d.clone() }</span>
                }
            </div>
            <div class="metric-help">{ props.help.clone() }</div>
        </div>
    }
}
