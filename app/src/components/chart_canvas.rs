//! A canvas that draws one chart of the current run, sized in device pixels
//! so it is crisp on high-DPI screens.

use std::rc::Rc;

use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use wasm_bindgen::JsValue;
use web_sys::HtmlCanvasElement;
use yew::prelude::*;

use crate::charts;
use crate::state::Run;

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ChartKind {
    TimeSeries,
    PhasePlane,
}

#[derive(Properties, PartialEq)]
pub struct ChartCanvasProps {
    pub kind: ChartKind,
    pub run: Rc<Run>,
    /// Text alternative for screen readers.
    pub summary: AttrValue,
    pub id: AttrValue,
}

#[function_component(ChartCanvas)]
pub fn chart_canvas(props: &ChartCanvasProps) -> Html {
    let canvas_ref = use_node_ref();
    {
        let canvas_ref = canvas_ref.clone();
        let kind = props.kind;
        use_effect_with(props.run.clone(), move |run| {
            if let Some(canvas) = canvas_ref.cast::<HtmlCanvasElement>() {
                if let Err(e) = draw(&canvas, kind, run) {
                    web_sys::console::warn_1(&JsValue::from_str(&format!("chart not drawn: {e}")));
                }
            }
        });
    }
    html! {
        <figure class="chart">
            <canvas id={props.id.clone()} ref={canvas_ref} role="img" aria-label={props.summary.clone()}></canvas>
            <figcaption class="visually-hidden">{ props.summary.clone() }</figcaption>
        </figure>
    }
}

fn draw(canvas: &HtmlCanvasElement, kind: ChartKind, run: &Run) -> Result<(), String> {
    let scale = web_sys::window()
        .map(|w| w.device_pixel_ratio())
        .filter(|r| r.is_finite() && *r > 0.0)
        .unwrap_or(1.0);
    let css_w = f64::from(canvas.client_width().max(1));
    let css_h = f64::from(canvas.client_height().max(1));
    let (w, h) = (
        (css_w * scale).round() as u32,
        (css_h * scale).round() as u32,
    );
    // Setting width/height clears the canvas, so only do it when they change.
    if canvas.width() != w {
        canvas.set_width(w);
    }
    if canvas.height() != h {
        canvas.set_height(h);
    }
    let backend = CanvasBackend::with_canvas_object(canvas.clone())
        .ok_or_else(|| "canvas has no 2D context".to_string())?;
    let root = backend.into_drawing_area();
    match kind {
        ChartKind::TimeSeries => charts::draw_time_series(&root, run, scale),
        ChartKind::PhasePlane => charts::draw_phase_plane(&root, run, scale),
    }
}
