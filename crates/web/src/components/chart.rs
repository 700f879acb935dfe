//! One chart on a `<canvas>`, drawn by `hedgerow_board::charts` through plotters' canvas
//! backend after each render where its view (or the window's width) changed. The backing store
//! is sized by `devicePixelRatio`; the chart functions scale text and lines from the pixel size,
//! so text stays crisp and the same size on screen. Beside the canvas, the plotted numbers as
//! tables in a `<details>` (the canvas's `aria-describedby`), for screen readers and keyboards.
//!
//! The trade-off chart can be touched: hovering reads out the nearest curve point (threshold,
//! precision, specificity) beside the chart — the board's hit test `TradeoffFrame::nearest`
//! over the pixels the drawing used — and a click adopts its threshold for every depth. From
//! the keyboard the canvas takes the focus: the arrow keys step along the curve (Shift: ten
//! points) and Enter adopts; the readout's buttons do the same. Each chart downloads as SVG
//! (the same function on plotters' SVG backend) and as PNG (the canvas's pixels).

use std::rc::Rc;

use hedgerow_board::charts::{
    draw_stops, draw_tradeoff, draw_tradeoff_framed, svg_of, DataTable, StopView, TradeoffFrame,
    TradeoffView,
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
    /// A curve point chosen on the trade-off chart: its shared threshold.
    #[prop_or_default]
    pub on_threshold: Option<Callback<f64>>,
}

/// Draws the chart; for the trade-off chart, returns where its curve's points went.
fn draw(canvas: &HtmlCanvasElement, view: &ChartView) -> Result<Option<TradeoffFrame>, String> {
    let ratio = pixel_ratio();
    let (css_w, css_h) = (canvas.client_width(), canvas.client_height());
    if css_w <= 0 || css_h <= 0 {
        return Ok(None); // not laid out (hidden): nothing to draw on
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
    let frame = match view {
        ChartView::Tradeoff(v) => draw_tradeoff_framed(&area, v).map(Some),
        ChartView::Stops(v) => draw_stops(&area, v).map(|()| None),
    }
    .map_err(|e| e.to_string())?;
    area.present().map_err(|e| e.to_string())?;
    Ok(frame)
}

/// The curve point nearest to a pointer event, in the canvas's backing-store pixels.
fn hit(frame: &TradeoffFrame, e: &MouseEvent) -> Option<usize> {
    let ratio = pixel_ratio();
    let x = (f64::from(e.offset_x()) * ratio).round() as i32;
    let y = (f64::from(e.offset_y()) * ratio).round() as i32;
    frame.nearest((x, y), frame.reach())
}

#[function_component(Chart)]
pub fn chart(props: &ChartProps) -> Html {
    let canvas = use_node_ref();
    let width = use_window_width();
    let frame = use_mut_ref(|| None::<TradeoffFrame>);
    // The curve point read out (an index into the frame's points) and the frame's version, so
    // the readout re-renders once a drawing placed the points.
    let chosen = use_state(|| None::<usize>);
    let drawn = use_state(|| 0u32);
    {
        let (canvas, frame, drawn) = (canvas.clone(), frame.clone(), drawn.clone());
        let id = props.id.clone();
        use_effect_with((props.view.clone(), width), move |(view, _)| {
            let start = crate::browser::now();
            if let Some(c) = canvas.cast::<HtmlCanvasElement>() {
                match draw(&c, view) {
                    Ok(f) => {
                        let had = frame.borrow().as_ref().map(|f| f.points.len());
                        let now = f.as_ref().map(|f| f.points.len());
                        *frame.borrow_mut() = f;
                        if had != now {
                            drawn.set(*drawn + 1);
                        }
                    }
                    Err(e) => web_sys::console::warn_1(&format!("chart: {e}").into()),
                }
            }
            crate::browser::stamp_since(&format!("{id}-ms"), start);
            crate::browser::stamp(&id);
        });
    }
    let touchable = props.on_threshold.is_some();
    let point_at = {
        let frame = frame.clone();
        move |i: usize| {
            frame
                .borrow()
                .as_ref()
                .and_then(|f| f.points.get(i).map(|(_, p)| *p))
        }
    };
    let on_move = {
        let (frame, chosen) = (frame.clone(), chosen.clone());
        Callback::from(move |e: MouseEvent| {
            if let Some(i) = frame.borrow().as_ref().and_then(|f| hit(f, &e)) {
                if *chosen != Some(i) {
                    chosen.set(Some(i));
                }
            }
        })
    };
    let adopt = {
        let (on, point_at) = (props.on_threshold.clone(), point_at.clone());
        move |i: usize| {
            if let (Some(on), Some(p)) = (&on, point_at(i)) {
                on.emit(p.threshold);
            }
        }
    };
    let on_click = {
        let (frame, chosen, adopt) = (frame.clone(), chosen.clone(), adopt.clone());
        Callback::from(move |e: MouseEvent| {
            let i = frame.borrow().as_ref().and_then(|f| hit(f, &e));
            if let Some(i) = i {
                chosen.set(Some(i));
                adopt(i);
            }
        })
    };
    let points = frame.borrow().as_ref().map_or(0, |f| f.points.len());
    let step = {
        let chosen = chosen.clone();
        move |by: isize| {
            if points == 0 {
                return;
            }
            let i = match *chosen {
                None if by > 0 => 0,
                None => points - 1,
                Some(i) => i.saturating_add_signed(by).min(points - 1),
            };
            chosen.set(Some(i));
        }
    };
    let on_key = {
        let (chosen, step, adopt) = (chosen.clone(), step.clone(), adopt.clone());
        Callback::from(move |e: KeyboardEvent| {
            let by = if e.shift_key() { 10 } else { 1 };
            match e.key().as_str() {
                "ArrowRight" | "ArrowUp" => step(by),
                "ArrowLeft" | "ArrowDown" => step(-by),
                "Enter" | " " => match *chosen {
                    Some(i) => adopt(i),
                    None => return,
                },
                _ => return,
            }
            e.prevent_default();
        })
    };
    let shown = (*chosen).filter(|&i| i < points).and_then(&point_at);
    let readout = touchable.then(|| {
        let (prev, next) = (step.clone(), step.clone());
        let on_prev = Callback::from(move |_: MouseEvent| prev(-1));
        let on_next = Callback::from(move |_: MouseEvent| next(1));
        let on_adopt = {
            let (chosen, adopt) = (chosen.clone(), adopt.clone());
            Callback::from(move |_: MouseEvent| {
                if let Some(i) = *chosen {
                    adopt(i);
                }
            })
        };
        html! {
            <div class="chart-readout" data-testid={format!("{}-readout", props.id)} aria-live="polite"
                data-threshold={shown.map(|p| p.threshold.to_string())}>
                if let Some(p) = shown {
                    <span>{ format!("threshold {:.4} · precision {:.4} · specificity {:.4}", p.threshold, p.precision, p.specificity) }</span>
                } else {
                    <span class="help">{ "Point at the curve (or focus the chart and use the arrow keys) to read a shared threshold." }</span>
                }
                <button type="button" class="link" onclick={on_prev} disabled={points == 0}
                    data-testid={format!("{}-prev", props.id)} title="The curve point one step lower">{ "◀ lower" }</button>
                <button type="button" class="link" onclick={on_next} disabled={points == 0}
                    data-testid={format!("{}-next", props.id)} title="The curve point one step higher">{ "higher ▶" }</button>
                <button type="button" class="secondary" onclick={on_adopt} disabled={shown.is_none()}
                    data-testid={format!("{}-adopt", props.id)}>
                    { shown.map_or("Use this threshold".to_string(), |p| format!("Use threshold {:.4} for every depth", p.threshold)) }
                </button>
            </div>
        }
    });
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
    let on_png = {
        let (canvas, id) = (canvas.clone(), props.id.clone());
        Callback::from(move |_: MouseEvent| {
            let result = canvas
                .cast::<HtmlCanvasElement>()
                .ok_or_else(|| "no canvas".to_string())
                .and_then(|c| crate::browser::download_png(&c, &format!("{id}.png")));
            if let Err(e) = result {
                web_sys::console::warn_1(&format!("chart PNG: {e}").into());
            }
        })
    };
    html! {
        <figure class="chart">
            <figcaption>
                <h3>{ props.title.clone() }</h3>
                <p class="help">{ props.caption.clone() }</p>
            </figcaption>
            if touchable {
                <canvas ref={canvas} data-testid={props.id.clone()} role="img" aria-label={format!("{} (arrow keys: step along the curve; Enter: use its threshold)", props.title)}
                    aria-describedby={data_id.clone()} tabindex="0" class="touchable"
                    onmousemove={on_move} onclick={on_click} onkeydown={on_key}></canvas>
            } else {
                <canvas ref={canvas} data-testid={props.id.clone()} role="img" aria-label={props.title.clone()}
                    aria-describedby={data_id.clone()}></canvas>
            }
            { for readout }
            <button type="button" class="link chart-export" data-testid={format!("{}-svg", props.id)} onclick={on_svg}
                title="Download this chart as SVG (drawn by the same function as the canvas)">{ "Download SVG" }</button>
            <button type="button" class="link chart-export" data-testid={format!("{}-png", props.id)} onclick={on_png}
                title="Download this chart as PNG (the canvas's pixels)">{ "Download PNG" }</button>
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
