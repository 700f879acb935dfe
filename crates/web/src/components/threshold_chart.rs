//! A small plotters chart drawn on a `<canvas>` (plotters-canvas), redrawn
//! whenever the threshold changes. Placeholder for the real charts; shows the
//! pattern: a `NodeRef` to the canvas and a `use_effect_with` that draws.

use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use web_sys::HtmlCanvasElement;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ThresholdChartProps {
    pub threshold: f64,
}

#[function_component(ThresholdChart)]
pub fn threshold_chart(props: &ThresholdChartProps) -> Html {
    let canvas = use_node_ref();
    {
        let canvas = canvas.clone();
        use_effect_with(props.threshold, move |&threshold| {
            if let Some(canvas) = canvas.cast::<HtmlCanvasElement>() {
                if let Err(e) = draw(canvas, threshold) {
                    web_sys::console::error_1(&format!("chart: {e}").into());
                }
            }
        });
    }
    html! {
        <canvas ref={canvas} data-testid="chart" width="480" height="240"></canvas>
    }
}

fn draw(canvas: HtmlCanvasElement, threshold: f64) -> Result<(), Box<dyn std::error::Error>> {
    let backend = CanvasBackend::with_canvas_object(canvas).ok_or("canvas has no 2d context")?;
    let root = backend.into_drawing_area();
    root.fill(&WHITE)?;
    let mut chart = ChartBuilder::on(&root)
        .margin(10)
        .caption("placeholder chart", ("sans-serif", 16))
        .x_label_area_size(28)
        .y_label_area_size(36)
        .build_cartesian_2d(0f64..1f64, 0f64..1f64)?;
    chart
        .configure_mesh()
        .x_desc("threshold")
        .light_line_style(WHITE)
        .draw()?;
    chart.draw_series(LineSeries::new(
        (0..=50).map(|i| {
            let x = f64::from(i) / 50.0;
            (x, 1.0 - x * x)
        }),
        &BLUE,
    ))?;
    chart.draw_series(LineSeries::new([(threshold, 0.0), (threshold, 1.0)], &RED))?;
    root.present()?;
    Ok(())
}
