//! Every current problem, in the engine's words (file, place, what was expected). Always
//! present (empty when there is none), so tests and screen readers find it in one place.

use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ErrorAreaProps {
    pub errors: Vec<String>,
    /// Names of the batch still in use, to say it was kept.
    pub kept: Option<AttrValue>,
    pub on_dismiss: Callback<()>,
}

#[function_component(ErrorArea)]
pub fn error_area(props: &ErrorAreaProps) -> Html {
    let onclick = props.on_dismiss.reform(|_: MouseEvent| ());
    html! {
        <div class="error-area" role="alert">
            <div data-testid="error" class="error">
                { for props.errors.iter().map(|e| html! { <p class="error-line">{ e }</p> }) }
            </div>
            if !props.errors.is_empty() {
                <div class="error-foot">
                    <span class="kept">{
                        match &props.kept {
                            Some(names) => format!("Nothing was changed: the batch in use ({names}) and its thresholds are kept."),
                            None => "No batch is in use yet.".to_string(),
                        }
                    }</span>
                    <button type="button" class="link" data-testid="dismiss-errors" {onclick}>{ "Dismiss" }</button>
                </div>
            }
        </div>
    }
}
