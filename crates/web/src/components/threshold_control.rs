//! One threshold in [0, 1]: a range slider for moving it and an exact text field. Both are
//! native inputs (keyboard-operable). The field takes `input` (while typing) and `change` (on
//! commit); an entry outside [0, 1] or not a number is not applied and says why beside the
//! field until the next valid entry (`hedgerow_board::wording::read_threshold`), and the value in
//! use stays what it was before the edit.
//!
//! The field is a text field (`inputmode="decimal"`), not `type="number"`, so that what was
//! typed can be read and quoted back; it is left alone while the user edits it and follows the
//! value in use otherwise.

use std::cell::Cell;

use hedgerow_board::wording::{read_threshold, show_threshold, Typed};
use web_sys::HtmlInputElement;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ThresholdControlProps {
    /// Element id and `data-testid` of the field (the slider gets `-slider`, the figure beside
    /// the label `-share`, the note `-note`, a refused entry's message `-error`).
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
    /// What the figure means (its title).
    #[prop_or_default]
    pub aside_help: Option<AttrValue>,
    /// Apply values while they are typed. Off (all depths: each keystroke would overwrite every
    /// depth), only a committed entry is applied.
    #[prop_or(true)]
    pub live: bool,
    pub on_set: Callback<f64>,
    #[prop_or_default]
    pub on_focus: Option<Callback<()>>,
}

/// The control's memory between events (cells: events read and write them without a render).
struct Edit {
    /// The value in use as last rendered (NaN when mixed).
    current: Cell<f64>,
    /// The value this control last sent up: a change of the value to anything else came from
    /// elsewhere (a profile, Reset) and clears the message.
    sent: Cell<f64>,
    /// The value in use when the current edit of the field began; `None` when not editing.
    start: Cell<Option<f64>>,
}

impl Edit {
    fn new() -> Self {
        Edit {
            current: Cell::new(f64::NAN),
            sent: Cell::new(f64::NAN),
            start: Cell::new(None),
        }
    }

    /// Send `v` up unless it is the value in use.
    fn send(&self, on_set: &Callback<f64>, v: f64) {
        if v.is_finite() && self.current.get() != v {
            self.current.set(v);
            self.sent.set(v);
            on_set.emit(v);
        }
    }
}

#[function_component(ThresholdControl)]
pub fn threshold_control(props: &ThresholdControlProps) -> Html {
    let edit = use_mut_ref(Edit::new);
    edit.borrow()
        .current
        .set(if props.mixed { f64::NAN } else { props.value });
    let message = use_state_eq(|| None::<String>);
    let field = use_node_ref();
    let shown = if props.mixed {
        String::new()
    } else {
        show_threshold(props.value)
    };

    // The field follows the value in use, except while the user is editing it.
    {
        let (field, edit, message) = (field.clone(), edit.clone(), message.clone());
        use_effect_with(
            (props.value.to_bits(), shown.clone()),
            move |(bits, shown)| {
                let e = edit.borrow();
                if e.start.get().is_none() {
                    if let Some(input) = field.cast::<HtmlInputElement>() {
                        if input.value() != *shown {
                            input.set_value(shown);
                        }
                    }
                }
                if e.sent.get().to_bits() != *bits {
                    message.set(None);
                }
            },
        );
    }

    let handle = {
        let (edit, message) = (edit.clone(), message.clone());
        let on_set = props.on_set.clone();
        let live = props.live;
        move |input: HtmlInputElement, commit: bool| {
            let e = edit.borrow();
            if e.start.get().is_none() {
                e.start.set(Some(e.current.get()));
            }
            let raw = input.value();
            match read_threshold(&raw, commit) {
                Typed::Value(v) => {
                    message.set(None);
                    if live || commit {
                        e.send(&on_set, v);
                    }
                    if commit {
                        input.set_value(&show_threshold(v));
                    }
                }
                Typed::Empty | Typed::Unfinished => {
                    if commit {
                        input.set_value(&show_or_blank(e.current.get()));
                    }
                    message.set(None);
                }
                Typed::Refused(why) => {
                    // Not applied: back to the value from before this edit (a live edit may
                    // have sent a prefix of it, `1` of `1.7`).
                    if let Some(before) = e.start.get() {
                        e.send(&on_set, before);
                    }
                    if commit {
                        input.set_value(&show_or_blank(e.current.get()));
                    }
                    message.set(Some(why));
                }
            }
            if commit {
                e.start.set(None);
            }
        }
    };
    let oninput = {
        let handle = handle.clone();
        Callback::from(move |e: InputEvent| handle(e.target_unchecked_into(), false))
    };
    let onchange = Callback::from(move |e: Event| handle(e.target_unchecked_into(), true));
    let onblur = {
        let edit = edit.clone();
        Callback::from(move |_: FocusEvent| edit.borrow().start.set(None))
    };
    let onslide = {
        let (edit, message) = (edit.clone(), message.clone());
        let on_set = props.on_set.clone();
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            if let Ok(v) = input.value().parse::<f64>() {
                message.set(None);
                edit.borrow().send(&on_set, v.clamp(0.0, 1.0));
            }
        })
    };
    let onfocus = props.on_focus.clone().map(|f| f.reform(|_: FocusEvent| ()));
    let slider_id = format!("{}-slider", props.id);
    let error_id = format!("{}-error", props.id);
    let class = classes!("threshold", props.focused.then_some("focused"));
    html! {
        <div {class} title={props.help.clone()}>
            <label for={props.id.clone()} class="threshold-label">
                <span class="name">{ props.label.clone() }</span>
                if let Some(aside) = &props.aside {
                    <span class="aside" title={props.aside_help.clone()} data-testid={format!("{}-share", props.id)}>{ aside.clone() }</span>
                }
            </label>
            <input type="range" min="0" max="1" step="0.01" id={slider_id.clone()} data-testid={slider_id}
                aria-label={format!("{} (slider)", props.label)}
                value={show_threshold(props.value)} oninput={onslide} onfocus={onfocus.clone()} />
            <input type="text" inputmode="decimal" autocomplete="off" spellcheck="false" class="number"
                id={props.id.clone()} data-testid={props.id.clone()} ref={field}
                placeholder={if props.mixed { "mixed" } else { "" }}
                aria-invalid={message.is_some().then_some("true")}
                aria-describedby={message.is_some().then(|| error_id.clone())}
                {oninput} {onchange} {onblur} {onfocus} />
            if let Some(why) = (*message).clone() {
                <p class="field-error" id={error_id.clone()} data-testid={error_id} role="alert">{ why }</p>
            }
            if let Some(note) = &props.note {
                <p class="help" data-testid={format!("{}-note", props.id)}>{ note.clone() }</p>
            }
        </div>
    }
}

/// The field's text for a value in use (none when mixed).
fn show_or_blank(v: f64) -> String {
    if v.is_nan() {
        String::new()
    } else {
        show_threshold(v)
    }
}
