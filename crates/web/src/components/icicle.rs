//! The taxonomy view: the board's icicle (`hedgerow_board::charts::draw_icicle`) on a canvas.
//! A click on a cell focuses its subtree (it becomes the full width) and selects the node; the
//! breadcrumb and "whole tree" go back up; hovering a cell names it and its numbers in the
//! readout beside the chart (also the text alternative for the selected node). Keyboard users
//! select a node in the table and focus it with "Focus the selected node".

use std::rc::Rc;

use hedgerow_board::charts::{draw_icicle, icicle_view, svg_of, IcicleView};
use hedgerow_board::nodes::Fate;
use hedgerow_core::Taxonomy;
use plotters::prelude::*;
use web_sys::HtmlCanvasElement;
use yew::prelude::*;

use super::node_table::Shared;
use crate::browser::pixel_ratio;
use crate::hooks::use_window_width::use_window_width;

#[derive(Properties, PartialEq)]
pub struct IcicleProps {
    pub taxonomy: Shared<Taxonomy>,
    pub fates: Shared<Vec<Fate>>,
    /// The focused node (the root at `len()`).
    pub focus: u32,
    pub selected: Option<u32>,
    pub on_focus: Callback<u32>,
    pub on_select: Callback<u32>,
}

fn draw(
    canvas: &HtmlCanvasElement,
    view: &IcicleView,
    selected: Option<u32>,
) -> Result<(), String> {
    let ratio = pixel_ratio();
    let (css_w, css_h) = (canvas.client_width(), canvas.client_height());
    if css_w <= 0 || css_h <= 0 {
        return Ok(());
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
    draw_icicle(&area, view, selected).map_err(|e| e.to_string())?;
    area.present().map_err(|e| e.to_string())
}

/// The node under a pointer event, in the canvas's backing-store pixels.
fn hit(canvas: &HtmlCanvasElement, view: &IcicleView, e: &MouseEvent) -> Option<u32> {
    let ratio = pixel_ratio();
    let x = (f64::from(e.offset_x()) * ratio).round() as i32;
    let y = (f64::from(e.offset_y()) * ratio).round() as i32;
    view.cell_at((canvas.width(), canvas.height()), (x, y))
        .map(|c| c.node)
}

fn share(n: u64, of: u64) -> String {
    if of == 0 {
        "–".into()
    } else {
        format!("{:.1} %", 100.0 * n as f64 / of as f64)
    }
}

/// One node in words: what the cell shows.
fn readout(tax: &Taxonomy, fates: &[Fate], v: u32) -> String {
    let f = fates.get(v as usize).copied().unwrap_or_default();
    let id = tax.id(v);
    let name = tax.name(v);
    let named = if id.is_empty() {
        "the root".to_string()
    } else if name.is_empty() || name == id {
        id.to_string()
    } else {
        format!("{id} ({name})")
    };
    format!(
        "{named}: {} rows labelled at or below it; reached {} ({}), stopped above {} ({}), wrong {} ({}), abstained {} ({})",
        f.labelled,
        f.reached,
        share(f.reached, f.labelled),
        f.above,
        share(f.above, f.labelled),
        f.wrong,
        share(f.wrong, f.labelled),
        f.abstained,
        share(f.abstained, f.labelled)
    )
}

#[function_component(Icicle)]
pub fn icicle(props: &IcicleProps) -> Html {
    crate::browser::stamp("icicle-render");
    let canvas = use_node_ref();
    let width = use_window_width();
    let hovered = use_state(|| None::<u32>);
    let view = {
        let tax = props.taxonomy.clone();
        let fates = props.fates.clone();
        use_memo((tax, fates, props.focus), |(tax, fates, focus)| {
            Rc::new(icicle_view(&tax.0, &fates.0, *focus))
        })
    };
    {
        let canvas = canvas.clone();
        use_effect_with(
            ((*view).clone(), props.selected, width),
            move |(view, selected, _)| {
                let start = crate::browser::now();
                if let Some(c) = canvas.cast::<HtmlCanvasElement>() {
                    if let Err(e) = draw(&c, view, *selected) {
                        web_sys::console::warn_1(&format!("taxonomy view: {e}").into());
                    }
                }
                crate::browser::stamp_since("icicle-ms", start);
                crate::browser::stamp("icicle");
            },
        );
    }
    let tax = &props.taxonomy.0;
    let on_click = {
        let (canvas, view) = (canvas.clone(), view.clone());
        let (on_focus, on_select) = (props.on_focus.clone(), props.on_select.clone());
        Callback::from(move |e: MouseEvent| {
            if let Some(c) = canvas.cast::<HtmlCanvasElement>() {
                if let Some(v) = hit(&c, &view, &e) {
                    on_select.emit(v);
                    on_focus.emit(v);
                }
            }
        })
    };
    let on_move = {
        let (canvas, view, hovered) = (canvas.clone(), view.clone(), hovered.clone());
        Callback::from(move |e: MouseEvent| {
            if let Some(c) = canvas.cast::<HtmlCanvasElement>() {
                let v = hit(&c, &view, &e);
                if *hovered != v {
                    hovered.set(v);
                }
            }
        })
    };
    let on_leave = {
        let hovered = hovered.clone();
        Callback::from(move |_: MouseEvent| hovered.set(None))
    };
    // The breadcrumb: the root, then the focused node's ancestors, then the node.
    let crumbs: Vec<u32> = if props.focus == tax.root() || (props.focus as usize) > tax.len() {
        vec![tax.root()]
    } else {
        tax.path(props.focus).to_vec()
    };
    let crumb_items = crumbs.iter().enumerate().map(|(i, &v)| {
        let id = tax.id(v);
        let label = if id.is_empty() {
            "whole tree".to_string()
        } else {
            id.to_string()
        };
        let last = i + 1 == crumbs.len();
        let onclick = props.on_focus.reform(move |_: MouseEvent| v);
        html! {
            <li>
                if last {
                    <span aria-current="location">{ label }</span>
                } else {
                    <button type="button" class="link" {onclick}>{ label }</button>
                }
            </li>
        }
    });
    let shown = (*hovered).or(props.selected).unwrap_or(props.focus);
    let on_whole = props.on_focus.reform({
        let root = tax.root();
        move |_: MouseEvent| root
    });
    let on_focus_selected = {
        let (on_focus, selected) = (props.on_focus.clone(), props.selected);
        Callback::from(move |_: MouseEvent| {
            if let Some(v) = selected {
                on_focus.emit(v);
            }
        })
    };
    let text = readout(tax, &props.fates.0, shown);
    let on_svg = {
        let (canvas, view, selected) = (canvas.clone(), view.clone(), props.selected);
        Callback::from(move |_: MouseEvent| {
            let Some(c) = canvas.cast::<HtmlCanvasElement>() else {
                return;
            };
            let dims = (
                c.client_width().max(320) as u32,
                c.client_height().max(200) as u32,
            );
            let result = svg_of(dims, |area| draw_icicle(area, &view, selected))
                .ok_or_else(|| "the taxonomy view could not be drawn".to_string())
                .and_then(|t| crate::browser::download("taxonomy-view.svg", "image/svg+xml", &t));
            if let Err(e) = result {
                web_sys::console::warn_1(&format!("taxonomy view SVG: {e}").into());
            }
        })
    };
    html! {
        <section class="panel icicle" aria-labelledby="icicle-title">
            <h2 id="icicle-title">{ "The taxonomy: where rows end up" }</h2>
            <p class="help">{ "One band per depth. Each node is as wide as the rows labelled at or below it; the colours show what happened to those rows' predictions. Click a node to look inside it." }</p>
            <nav aria-label="Focused subtree" class="crumbs">
                <ol data-testid="icicle-breadcrumb">{ for crumb_items }</ol>
                <button type="button" class="secondary" data-testid="icicle-whole" disabled={props.focus == tax.root()} onclick={on_whole}>{ "Back to the whole tree" }</button>
                <button type="button" class="secondary" data-testid="icicle-focus-selected" disabled={props.selected.is_none()} onclick={on_focus_selected}>{ "Focus the selected node" }</button>
            </nav>
            <canvas ref={canvas} class="icicle-canvas" data-testid="icicle" role="img"
                aria-label={format!("Taxonomy view focused on {}", if tax.id(props.focus).is_empty() { "the whole tree" } else { tax.id(props.focus) })}
                aria-describedby="icicle-data"
                onclick={on_click} onmousemove={on_move} onmouseleave={on_leave}></canvas>
            // The text alternative: the cells' numbers.
            <details class="chart-data" id="icicle-data" data-testid="icicle-data">
                <summary>{ "The numbers in this view" }</summary>
                { super::chart::data_table(&view.table(tax)) }
            </details>
            <p class="readout" data-testid="icicle-readout" aria-live="polite">{ text }</p>
            <button type="button" class="link chart-export" data-testid="icicle-svg" onclick={on_svg}
                title="Download this view as SVG (drawn by the same function as the canvas)">{ "Download SVG" }</button>
        </section>
    }
}
