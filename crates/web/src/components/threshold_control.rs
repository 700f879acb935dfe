//! One threshold in [0, 1]: a range slider for moving it and an exact number field. Both are
//! native inputs (keyboard-operable); the number field takes `input` (while typing) and
//! `change` (on commit), and an out-of-range or unreadable entry is put right on commit.

use std::cell::Cell;
use std::rc::Rc;

use web_sys::HtmlInputElement;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ThresholdControlProps {
    /// Element id and `data-testid` of the number field (the slider gets `-slider`).
    pub id: AttrValue,
    pub label: AttrValue,
    /// What the threshold does (the control's title).
    pub help: AttrValue,
    /// A visible line under the control.
    #[prop_or_default]
    pub note: Option<AttrValue>,
    pub value: f64,
    /// Several values (the all-depths control when the depths differ): the field shows none.
    #[prop_or_default]
    pub mixed: bool,
    /// Highlighted: chart 1 shows this control's sweep.
    #[prop_or_default]
    pub focused: bool,
    /// A short figure beside the label (e.g. the share of predictions stopping there).
    #[prop_or_default]
    pub aside: Option<AttrValue>,
    pub on_set: Callback<f64>,
    #[prop_or_default]
    pub on_focus: Option<Callback<()>>,
}

/// How a threshold is written in the field: the shortest text that reads back exactly.
pub fn show_threshold(v: f64) -> String {
    v.to_string()
}

#[function_component(ThresholdControl)]
pub fn threshold_control(props: &ThresholdControlProps) -> Html {
    // The value last sent up, so that the `input` + `change` pair of one edit sends once.
    let last = use_mut_ref(|| Cell::new(f64::NAN));
    last.borrow()
        .set(if props.mixed { f64::NAN } else { props.value });

    let shown = if props.mixed {
        String::new()
    } else {
        show_threshold(props.value)
    };
    let handle = {
        let last = Rc::clone(&last);
        let on_set = props.on_set.clone();
        let shown = shown.clone();
        move |input: HtmlInputElement, commit: bool| {
            let raw = input.value();
            match raw.trim().parse::<f64>() {
                Ok(v) if v.is_finite() => {
                    let v = v.clamp(0.0, 1.0);
                    if commit && raw.trim().parse::<f64>().ok() != Some(v) {
                        input.set_value(&show_threshold(v));
                    }
                    let cell = last.borrow();
                    if cell.get() != v {
                        cell.set(v);
                        on_set.emit(v);
                    }
                }
                _ if commit => input.set_value(&shown),
                _ => {}
            }
        }
    };
    let oninput = {
        let handle = handle.clone();
        Callback::from(move |e: InputEvent| handle(e.target_unchecked_into(), false))
    };
    let onchange = Callback::from(move |e: Event| handle(e.target_unchecked_into(), true));
    let onslide = {
        let on_set = props.on_set.clone();
        let last = Rc::clone(&last);
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            if let Ok(v) = input.value().parse::<f64>() {
                let cell = last.borrow();
                if v.is_finite() && cell.get() != v {
                    cell.set(v);
                    on_set.emit(v.clamp(0.0, 1.0));
                }
            }
        })
    };
    let onfocus = props.on_focus.clone().map(|f| f.reform(|_: FocusEvent| ()));
    let slider_id = format!("{}-slider", props.id);
    let class = classes!("threshold", props.focused.then_some("focused"));
    html! {
        <div {class} title={props.help.clone()}>
            <label for={props.id.clone()} class="threshold-label">
                <span class="name">{ props.label.clone() }</span>
                if let Some(aside) = &props.aside {
                    <span class="aside">{ aside.clone() }</span>
                }
            </label>
            <input type="range" min="0" max="1" step="0.01" id={slider_id.clone()} data-testid={slider_id}
                aria-label={format!("{} (slider)", props.label)}
                value={show_threshold(props.value)} oninput={onslide} onfocus={onfocus.clone()} />
            <input type="number" min="0" max="1" step="0.01" id={props.id.clone()} data-testid={props.id.clone()}
                placeholder={if props.mixed { "mixed" } else { "" }}
                value={shown} {oninput} {onchange} {onfocus} />
            if let Some(note) = &props.note {
                <p class="help">{ note.clone() }</p>
            }
        </div>
    }
}
