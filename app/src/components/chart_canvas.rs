//! A canvas that draws one chart of the current run, sized in device pixels
//! so it is crisp on high-DPI screens, with a readout of the point under the
//! pointer and, on the phase plane, clicks that start a new trajectory.

use std::cell::Cell;
use std::rc::Rc;

use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use tussock_core::analysis::round_sig;
use wasm_bindgen::JsValue;
use web_sys::HtmlCanvasElement;
use yew::prelude::*;

use crate::charts::{self, PlotMap};
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
    #[prop_or_default]
    pub log_y: bool,
    /// Text alternative for screen readers.
    pub summary: AttrValue,
    pub id: AttrValue,
    /// Called with data coordinates when the plotting area is clicked.
    #[prop_or_default]
    pub on_click: Option<Callback<(f64, f64)>>,
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
        let kind = props.kind;
        let map = map.clone();
        use_effect_with((props.run.clone(), props.log_y), move |(run, log_y)| {
            if let Some(canvas) = canvas_ref.cast::<HtmlCanvasElement>() {
                match draw(&canvas, kind, run, *log_y) {
                    Ok(m) => map.set(Some(m)),
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
        let run = props.run.clone();
        let kind = props.kind;
        let to_data = to_data.clone();
        Callback::from(move |e: MouseEvent| {
            let text = to_data(&e)
                .map(|(x, y)| describe_point(&run, kind, x, y))
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
    let clickable = on_click.is_some();
    html! {
        <figure class={classes!("chart", clickable.then_some("clickable"))}>
            <canvas id={props.id.clone()} ref={canvas_ref} role="img" aria-label={props.summary.clone()}
                onmousemove={on_move} onmouseleave={on_leave} onclick={on_click}></canvas>
            <figcaption class="readout" aria-hidden="true">{ (*readout).clone() }</figcaption>
            <p class="visually-hidden">{ props.summary.clone() }</p>
        </figure>
    }
}

/// Readout under the pointer: on the time series the state at the nearest
/// output time, on the phase plane the densities at the pointer.
fn describe_point(run: &Run, kind: ChartKind, x: f64, y: f64) -> String {
    let p = &run.problem;
    match kind {
        ChartKind::TimeSeries => {
            let traj = &run.trajectory;
            let Some(i) = traj
                .times
                .iter()
                .enumerate()
                .min_by(|a, b| (a.1 - x).abs().total_cmp(&(b.1 - x).abs()))
                .map(|(i, _)| i)
            else {
                return String::new();
            };
            let values: Vec<String> = (0..traj.n_species)
                .map(|k| format!("{} {}", p.species[k], round_sig(traj.states[i][k], 4)))
                .collect();
            format!(
                "t = {} {}: {}",
                round_sig(traj.times[i], 4),
                p.time_unit,
                values.join(", ")
            )
        }
        ChartKind::PhasePlane => format!(
            "{} {}, {} {} — click to start a trajectory here",
            p.species[0],
            round_sig(x, 4),
            p.species[1],
            round_sig(y, 4)
        ),
    }
}

fn draw(
    canvas: &HtmlCanvasElement,
    kind: ChartKind,
    run: &Run,
    log_y: bool,
) -> Result<PlotMap, String> {
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
    let backend = CanvasBackend::with_canvas_object(canvas.clone())
        .ok_or_else(|| "canvas has no 2D context".to_string())?;
    let root = backend.into_drawing_area();
    match kind {
        ChartKind::TimeSeries => charts::draw_time_series(&root, run, scale, log_y),
        ChartKind::PhasePlane => charts::draw_phase_plane(&root, run, scale),
    }
}
