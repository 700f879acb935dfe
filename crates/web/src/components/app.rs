//! The root component (placeholder until the real page is written on top of
//! `hedgerow-core`): proves that the wasm runs, events reach Rust, inputs are
//! read and a plotters chart draws on a canvas.

use yew::prelude::*;

use super::demo_button::DemoButton;
use super::threshold_chart::ThresholdChart;
use super::threshold_input::ThresholdInput;
use crate::demo_data;

#[function_component(App)]
pub fn app() -> Html {
    let status = use_state(|| String::from("No data loaded."));
    let threshold = use_state(|| 0.5_f64);
    let error = use_state(String::new);

    let on_load_demo = {
        let status = status.clone();
        Callback::from(move |()| {
            let bytes: usize = demo_data::FILES.iter().map(|f| f.bytes.len()).sum();
            let names: Vec<&str> = demo_data::FILES.iter().map(|f| f.name).collect();
            status.set(format!(
                "Demo loaded: {} embedded files, {} bytes [{}].",
                names.len(),
                bytes,
                names.join(", ")
            ));
        })
    };

    let on_threshold = {
        let threshold = threshold.clone();
        let error = error.clone();
        Callback::from(move |value: Result<f64, String>| match value {
            Ok(v) => {
                threshold.set(v);
                error.set(String::new());
            }
            Err(e) => error.set(e),
        })
    };

    html! {
        <>
            <header>
                <h1>{ "hedgerow" }</h1>
                <p class="subtitle">{ "Per-depth stopping thresholds for taxonomy classifiers" }</p>
            </header>
            <section class="panel">
                <DemoButton onclick={on_load_demo} />
                <p data-testid="status">{ (*status).clone() }</p>
                <ThresholdInput value={*threshold} onchange={on_threshold} />
                <p data-testid="threshold-echo">{ format!("threshold = {:.2}", *threshold) }</p>
                <div data-testid="error" class="error" role="alert">{ (*error).clone() }</div>
            </section>
            <section class="panel">
                <ThresholdChart threshold={*threshold} />
            </section>
        </>
    }
}
