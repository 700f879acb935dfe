//! Advanced settings: per-depth softmax temperatures (a change re-reads the logits) and how
//! precision treats unverifiable predictions.

use hedgerow_board::state::Action;
use hedgerow_core::Policy;
use web_sys::HtmlSelectElement;
use yew::prelude::*;

use super::temperature_field::TemperatureField;

#[derive(Properties, PartialEq)]
pub struct AdvancedProps {
    pub depth: usize,
    /// Temperatures per depth 1..=D.
    pub temperatures: Vec<f64>,
    pub policy: Policy,
    pub on_action: Callback<Action>,
}

fn policy_help(p: Policy) -> &'static str {
    match p {
        Policy::Credit => "credit: a prediction below a coarse label counts as right.",
        Policy::Penalize => "penalize: a prediction below a coarse label counts as wrong.",
        Policy::Exclude => "exclude: predictions below a coarse label are left out of precision.",
    }
}

#[function_component(Advanced)]
pub fn advanced(props: &AdvancedProps) -> Html {
    let select = use_node_ref();
    {
        let select = select.clone();
        use_effect_with(props.policy, move |p| {
            if let Some(s) = select.cast::<HtmlSelectElement>() {
                s.set_value(p.as_str());
            }
        });
    }
    let on_policy = props.on_action.reform(|e: Event| {
        let s: HtmlSelectElement = e.target_unchecked_into();
        Action::SetPolicy(Policy::parse(&s.value()).unwrap_or_default())
    });
    let temps = (1..=props.depth).map(|d| {
        let value = props.temperatures.get(d - 1).copied().unwrap_or(1.0);
        html! { <TemperatureField key={d} depth={d} {value} on_action={props.on_action.clone()} /> }
    });
    html! {
        <details class="advanced" data-testid="advanced">
            <summary>{ "Advanced: temperatures, unverifiable policy" }</summary>
            if props.depth > 0 {
                <fieldset class="temperatures">
                    <legend>{ "Softmax temperature per depth" }</legend>
                    <div class="temperature-grid">{ for temps }</div>
                    <p class="help">{ "Logits are divided by the depth's temperature (a positive number) before each softmax. A change re-reads the logits file." }</p>
                </fieldset>
            }
            <div class="field">
                <label for="policy">{ "Unverifiable predictions" }</label>
                <select id="policy" data-testid="policy" ref={select} onchange={on_policy}>
                    { for [Policy::Credit, Policy::Penalize, Policy::Exclude].into_iter().map(|p| html! {
                        <option value={p.as_str()} selected={p == props.policy}>{ p.as_str() }</option>
                    }) }
                </select>
                <p class="help">{ policy_help(props.policy) }{ " Reward counts strictly correct predictions whatever the policy." }</p>
            </div>
        </details>
    }
}
