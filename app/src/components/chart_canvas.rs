//! A canvas that draws one figure, sized in device pixels so it is crisp on
//! high-DPI screens, with a readout of the point under the pointer, clicks
//! mapped back to data, and downloads of the figure as SVG and as PNG.

use std::cell::Cell;
use std::rc::Rc;

use plotters_canvas::CanvasBackend;
use tussock_charts::PlotMap;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::HtmlCanvasElement;
use yew::prelude::*;

use crate::browser;
use crate::figures::{Figure, EXPORT_SIZE};

#[derive(Properties, PartialEq)]
pub struct ChartCanvasProps {
    pub figure: Figure,
    /// Text alternative for screen readers.
    pub summary: AttrValue,
    pub id: AttrValue,
    /// Called with data coordinates when the plotting area is clicked.
    #[prop_or_default]
    pub on_click: Option<Callback<(f64, f64)>>,
    /// Where download failures are reported.
    #[prop_or_default]
    pub on_error: Option<Callback<String>>,
}

fn device_pixel_ratio() -> f64 {
    web_sys::window()
        .map(|w| w.device_pixel_ratio())
        .filter(|r| r.is_finite() && *r > 0.0)
        .unwrap_or(1.0)
}

#[function_component(ChartCanvas)]
pub fn chart_canvas(props: &ChartCanvasProps) -> Html {
    let canvas_ref = use_node_ref();
    let map: Rc<Cell<Option<PlotMap>>> = use_memo((), |_| Cell::new(None));
    let readout = use_state(String::new);
    {
        let canvas_ref = canvas_ref.clone();
        let map = map.clone();
        use_effect_with(props.figure.clone(), move |figure| {
            if let Some(canvas) = canvas_ref.cast::<HtmlCanvasElement>() {
                match draw(&canvas, figure) {
                    Ok(m) => {
                        map.set(Some(m));
                        mark_drawn(&canvas);
                    }
                    Err(e) => {
                        map.set(None);
                        web_sys::console::warn_1(&JsValue::from_str(&format!(
                            "chart not drawn: {e}"
                        )));
                    }
                }
            }
        });
    }
    let to_data = {
        let map = map.clone();
        move |e: &MouseEvent| {
            let scale = device_pixel_ratio();
            map.get().and_then(|m| {
                m.to_data(
                    f64::from(e.offset_x()) * scale,
                    f64::from(e.offset_y()) * scale,
                )
            })
        }
    };
    let on_move = {
        let readout = readout.clone();
        let figure = props.figure.clone();
        let to_data = to_data.clone();
        Callback::from(move |e: MouseEvent| {
            let text = to_data(&e)
                .map(|(x, y)| figure.describe_point(x, y))
                .unwrap_or_default();
            readout.set(text);
        })
    };
    let on_leave = {
        let readout = readout.clone();
        Callback::from(move |_: MouseEvent| readout.set(String::new()))
    };
    let on_click = props.on_click.clone().map(|cb| {
        Callback::from(move |e: MouseEvent| {
            if let Some(point) = to_data(&e) {
                cb.emit(point);
            }
        })
    });
    let report = {
        let on_error = props.on_error.clone();
        move |result: Result<(), String>| {
            if let (Err(e), Some(cb)) = (result, &on_error) {
                cb.emit(format!("Could not export the figure: {e}."));
            }
        }
    };
    let on_svg = {
        let figure = props.figure.clone();
        let report = report.clone();
        Callback::from(move |_: MouseEvent| {
            report(figure.to_svg().and_then(|svg| {
                browser::download(
                    &format!("{}.svg", figure.file_stem()),
                    "image/svg+xml",
                    &svg,
                )
            }))
        })
    };
    let on_png = {
        let figure = props.figure.clone();
        Callback::from(move |_: MouseEvent| report(export_png(&figure)))
    };
    let clickable = on_click.is_some() && props.figure.clickable();
    html! {
        <figure class={classes!("chart", clickable.then_some("clickable"))}>
            <canvas id={props.id.clone()} ref={canvas_ref} role="img" aria-label={props.summary.clone()}
                onmousemove={on_move} onmouseleave={on_leave} onclick={on_click}></canvas>
            <figcaption>
                <span class="readout" aria-hidden="true">{ (*readout).clone() }</span>
                <span class="figure-downloads">
                    <button id={format!("{}-svg", props.id)} type="button" class="small" onclick={on_svg} title="Download this figure as SVG (vector, for reports)">{ "SVG" }</button>
                    <button id={format!("{}-png", props.id)} type="button" class="small" onclick={on_png} title="Download this figure as PNG at twice screen resolution">{ "PNG" }</button>
                </span>
            </figcaption>
            <p class="visually-hidden">{ props.summary.clone() }</p>
        </figure>
    }
}

/// Stamp the canvas with the time its drawing finished (`data-drawn-at`,
/// milliseconds since the page started) and how many times it has been
/// drawn (`data-draws`): the browser tests wait on these and the browser
/// benchmark measures input-to-chart latency with them.
fn mark_drawn(canvas: &HtmlCanvasElement) {
    let now = web_sys::window()
        .and_then(|w| w.performance())
        .map(|p| p.now())
        .unwrap_or(0.0);
    let draws = canvas
        .get_attribute("data-draws")
        .and_then(|d| d.parse::<u64>().ok())
        .unwrap_or(0);
    let _ = canvas.set_attribute("data-drawn-at", &format!("{now:.3}"));
    let _ = canvas.set_attribute("data-draws", &(draws + 1).to_string());
}

fn draw(canvas: &HtmlCanvasElement, figure: &Figure) -> Result<PlotMap, String> {
    let scale = device_pixel_ratio();
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
    let (recording, map) = figure.record(w, h, scale)?;
    let mut backend = CanvasBackend::with_canvas_object(canvas.clone())
        .ok_or_else(|| "canvas has no 2D context".to_string())?;
    recording.play(&mut backend)?;
    Ok(map)
}

/// Draw the figure at twice the export size on a canvas off the page and
/// download it as PNG.
fn export_png(figure: &Figure) -> Result<(), String> {
    let document = web_sys::window()
        .and_then(|w| w.document())
        .ok_or("no document")?;
    let canvas: HtmlCanvasElement = document
        .create_element("canvas")
        .map_err(|_| "cannot make a canvas")?
        .dyn_into()
        .map_err(|_| "cannot make a canvas")?;
    let scale = 2.0;
    canvas.set_width(EXPORT_SIZE.0 * 2);
    canvas.set_height(EXPORT_SIZE.1 * 2);
    let (recording, _) = figure.record(EXPORT_SIZE.0 * 2, EXPORT_SIZE.1 * 2, scale)?;
    let mut backend =
        CanvasBackend::with_canvas_object(canvas.clone()).ok_or("canvas has no 2D context")?;
    recording.play(&mut backend)?;
    let url = canvas
        .to_data_url_with_type("image/png")
        .map_err(|_| "the browser refused to encode the PNG")?;
    browser::download_url(&format!("{}.png", figure.file_stem()), &url)
}
