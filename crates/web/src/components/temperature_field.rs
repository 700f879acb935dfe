//! One depth's softmax temperature: a text field applied on commit (a change re-reads the
//! logits), which must be a positive finite number; anything else is not applied and says why
//! beside the field until the next valid entry (`hedgerow_board::wording::read_temperature`).

use hedgerow_board::state::Action;
use hedgerow_board::wording::{read_temperature, Typed};
use web_sys::HtmlInputElement;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct TemperatureFieldProps {
    pub depth: usize,
    /// The temperature in use.
    pub value: f64,
    pub on_action: Callback<Action>,
}

#[function_component(TemperatureField)]
pub fn temperature_field(props: &TemperatureFieldProps) -> Html {
    let message = use_state_eq(|| None::<String>);
    let field = use_node_ref();
    // The field shows the value in use whenever it changes (a re-read cancelled, Reset).
    {
        let (field, message) = (field.clone(), message.clone());
        use_effect_with(props.value.to_bits(), move |&bits| {
            if let Some(input) = field.cast::<HtmlInputElement>() {
                let v = f64::from_bits(bits);
                if input.value().trim().parse::<f64>().ok() != Some(v) {
                    input.set_value(&v.to_string());
                    message.set(None);
                }
            }
        });
    }
    let d = props.depth;
    let current = props.value;
    let onchange = {
        let (on_action, message) = (props.on_action.clone(), message.clone());
        Callback::from(move |e: Event| {
            let input: HtmlInputElement = e.target_unchecked_into();
            match read_temperature(&input.value(), true) {
                Typed::Value(v) => {
                    message.set(None);
                    input.set_value(&v.to_string());
                    if v != current {
                        on_action.emit(Action::SetTemperature { depth: d, value: v });
                    }
                }
                Typed::Empty | Typed::Unfinished => {
                    message.set(None);
                    input.set_value(&current.to_string());
                }
                Typed::Refused(why) => {
                    message.set(Some(why));
                    input.set_value(&current.to_string());
                }
            }
        })
    };
    let id = format!("temperature-depth-{d}");
    let error_id = format!("{id}-error");
    html! {
        <div class="temperature">
            <div class="temperature-row">
                <label for={id.clone()}>{ format!("Depth {d}") }</label>
                <input type="text" inputmode="decimal" autocomplete="off" spellcheck="false" class="number"
                    id={id.clone()} data-testid={id} ref={field}
                    title={format!("Logits of depth-{d} nodes are divided by this before the softmax (a positive number)")}
                    aria-invalid={message.is_some().then_some("true")}
                    aria-describedby={message.is_some().then(|| error_id.clone())}
                    {onchange} />
            </div>
            if let Some(why) = (*message).clone() {
                <p class="field-error" id={error_id.clone()} data-testid={error_id} role="alert">{ why }</p>
            }
        </div>
    }
}
