//! One chart on a `<canvas>`, drawn by `hedgerow_board::charts` through plotters' canvas
//! backend after each render where its view (or the window's width) changed. The backing store
//! is sized by `devicePixelRatio`; the chart functions scale text and lines from the pixel size,
//! so text stays crisp and the same size on screen. Beside the canvas, the plotted numbers as
//! tables in a `<details>` (the canvas's `aria-describedby`), for screen readers and keyboards.

use std::rc::Rc;

use hedgerow_board::charts::{
    draw_stops, draw_tradeoff, svg_of, DataTable, StopView, TradeoffView,
};
use plotters::prelude::*;
use web_sys::HtmlCanvasElement;
use yew::prelude::*;

use crate::browser::pixel_ratio;
use crate::hooks::use_window_width::use_window_width;

#[derive(Debug, Clone, PartialEq)]
pub enum ChartView {
    Tradeoff(TradeoffView),
    Stops(StopView),
}

#[derive(Properties, PartialEq)]
pub struct ChartProps {
    /// `data-testid` of the canvas.
    pub id: AttrValue,
    pub title: AttrValue,
    pub caption: AttrValue,
    pub view: Rc<ChartView>,
}

fn draw(canvas: &HtmlCanvasElement, view: &ChartView) -> Result<(), String> {
    let ratio = pixel_ratio();
    let (css_w, css_h) = (canvas.client_width(), canvas.client_height());
    if css_w <= 0 || css_h <= 0 {
        return Ok(()); // not laid out (hidden): nothing to draw on
    }
    let w = (f64::from(css_w) * ratio).round() as u32;
    let h = (f64::from(css_h) * ratio).round() as u32;
    if canvas.width() != w {
        canvas.set_width(w);
    }
    if canvas.height() != h {
        canvas.set_height(h);
    }
    let backend =
        crate::canvas::Measured::new(canvas.clone()).ok_or("the canvas has no 2d context")?;
    let area = backend.into_drawing_area();
    match view {
        ChartView::Tradeoff(v) => draw_tradeoff(&area, v),
        ChartView::Stops(v) => draw_stops(&area, v),
    }
    .map_err(|e| e.to_string())?;
    area.present().map_err(|e| e.to_string())
}

#[function_component(Chart)]
pub fn chart(props: &ChartProps) -> Html {
    let canvas = use_node_ref();
    let width = use_window_width();
    {
        let canvas = canvas.clone();
        let id = props.id.clone();
        use_effect_with((props.view.clone(), width), move |(view, _)| {
            let start = crate::browser::now();
            if let Some(c) = canvas.cast::<HtmlCanvasElement>() {
                if let Err(e) = draw(&c, view) {
                    web_sys::console::warn_1(&format!("chart: {e}").into());
                }
            }
            crate::browser::stamp_since(&format!("{id}-ms"), start);
            crate::browser::stamp(&id);
        });
    }
    let tables = match &*props.view {
        ChartView::Tradeoff(v) => v.tables(),
        ChartView::Stops(v) => v.tables(),
    };
    let data_id = format!("{}-data", props.id);
    let on_svg = {
        let (canvas, view, id) = (canvas.clone(), props.view.clone(), props.id.clone());
        Callback::from(move |_: MouseEvent| {
            let Some(c) = canvas.cast::<HtmlCanvasElement>() else {
                return;
            };
            let dims = (
                c.client_width().max(320) as u32,
                c.client_height().max(200) as u32,
            );
            let svg = svg_of(dims, |area| match &*view {
                ChartView::Tradeoff(v) => draw_tradeoff(area, v),
                ChartView::Stops(v) => draw_stops(area, v),
            });
            let result = svg
                .ok_or_else(|| "the chart could not be drawn".to_string())
                .and_then(|text| {
                    crate::browser::download(&format!("{id}.svg"), "image/svg+xml", &text)
                });
            if let Err(e) = result {
                web_sys::console::warn_1(&format!("chart SVG: {e}").into());
            }
        })
    };
    html! {
        <figure class="chart">
            <figcaption>
                <h3>{ props.title.clone() }</h3>
                <p class="help">{ props.caption.clone() }</p>
            </figcaption>
            <canvas ref={canvas} data-testid={props.id.clone()} role="img" aria-label={props.title.clone()}
                aria-describedby={data_id.clone()}></canvas>
            <button type="button" class="link chart-export" data-testid={format!("{}-svg", props.id)} onclick={on_svg}
                title="Download this chart as SVG (drawn by the same function as the canvas)">{ "Download SVG" }</button>
            // The text alternative: the plotted numbers, one table per series.
            <details class="chart-data" id={data_id.clone()} data-testid={data_id}>
                <summary>{ "The numbers in this chart" }</summary>
                { for tables.iter().map(data_table) }
            </details>
        </figure>
    }
}

/// A chart's numbers as an HTML table (its text alternative).
pub(crate) fn data_table(t: &DataTable) -> Html {
    html! {
        <table>
            <caption>{ t.caption.clone() }</caption>
            <thead><tr>{ for t.head.iter().map(|h| html! { <th scope="col">{ h.clone() }</th> }) }</tr></thead>
            <tbody>
                { for t.rows.iter().map(|r| html! {
                    <tr>{ for r.iter().map(|c| html! { <td>{ c.clone() }</td> }) }</tr>
                }) }
            </tbody>
        </table>
    }
}
