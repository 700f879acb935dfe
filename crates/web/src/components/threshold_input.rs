//! A number input for one threshold in [0, 1]; reports a parsed value or an
//! error message on every `input` event.

use web_sys::HtmlInputElement;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ThresholdInputProps {
    pub value: f64,
    pub onchange: Callback<Result<f64, String>>,
}

#[function_component(ThresholdInput)]
pub fn threshold_input(props: &ThresholdInputProps) -> Html {
    let oninput = props.onchange.reform(|e: InputEvent| {
        let raw = e.target_unchecked_into::<HtmlInputElement>().value();
        parse_threshold(&raw)
    });
    html! {
        <label>
            { "Threshold " }
            <input
                type="number"
                min="0"
                max="1"
                step="0.01"
                data-testid="threshold"
                value={props.value.to_string()}
                {oninput}
            />
        </label>
    }
}

fn parse_threshold(raw: &str) -> Result<f64, String> {
    match raw.trim().parse::<f64>() {
        Ok(v) if (0.0..=1.0).contains(&v) => Ok(v),
        _ => Err(format!("threshold must be a number in [0, 1], got {raw:?}")),
    }
}
