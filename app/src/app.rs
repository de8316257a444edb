//! The top-level component: inputs on the left, analysis and charts on the
//! right, cautions at the foot.

use tussock_core::analysis::round_sig;
use wasm_bindgen::JsCast;
use web_sys::HtmlInputElement;
use yew::prelude::*;

use crate::components::analysis_panel::{long_run_sentence, AnalysisPanel};
use crate::components::chance_panel::ChancePanel;
use crate::components::chart_canvas::ChartCanvas;
use crate::components::example_menu::ExampleMenu;
use crate::components::fit_panel::FitPanel;
use crate::components::model_picker::ModelPicker;
use crate::components::planner_panel::PlannerPanel;
use crate::components::report_view::ReportView;
use crate::components::scenario_form::ScenarioForm;
use crate::components::schedule_table::ScheduleTable;
use crate::components::study::{csv_of, CsvButton};
use crate::components::sweep_panel::SweepPanel;
use crate::components::toolbar::{open_file, Toolbar};
use crate::components::variants_panel::VariantsPanel;
use crate::components::view_tabs::ViewTabs;
use crate::figures::{Figure, Shared};
use crate::state::{Action, Run, View, Workbench};
use crate::{browser, share};

#[function_component(App)]
pub fn app() -> Html {
    let bench = use_reducer(Workbench::starting);
    // Once: a shared link wins over the autosaved scenario.
    {
        let d = bench.dispatcher();
        use_effect_with((), move |_| {
            let fragment = browser::fragment();
            match share::decode_fragment(&fragment) {
                Ok(scenario) => d.dispatch(Action::Open {
                    scenario: Box::new(scenario),
                    source: "the shared link".into(),
                }),
                Err(share::LinkError::NotAScenarioLink) => {
                    if let Some(saved) = browser::load_saved() {
                        d.dispatch(Action::Open {
                            scenario: Box::new(saved),
                            source: "your last session (saved in this browser)".into(),
                        });
                    }
                }
                Err(e) => d.dispatch(Action::Notify {
                    message: format!("Could not open the link: {e}."),
                }),
            }
        });
    }
    // Autosave every accepted change.
    {
        let d = bench.dispatcher();
        use_effect_with(bench.scenario.clone(), move |scenario| {
            if !browser::save(scenario) {
                d.dispatch(Action::Notify { message: "This browser refuses to save: changes are kept only until the page closes. Save a scenario file to keep them.".into() });
            }
        });
    }
    // Ctrl+Z / Ctrl+Shift+Z (and Ctrl+Y) outside text fields. The listener
    // must not be passive (gloo's default): it cancels the browser's own
    // undo, and a passive listener cannot (Chromium logs an error).
    {
        let d = bench.dispatcher();
        use_effect_with((), move |_| {
            let options = gloo_events::EventListenerOptions::enable_prevent_default();
            let listener = web_sys::window().map(|w| {
                gloo_events::EventListener::new_with_options(&w, "keydown", options, move |event| {
                    let Some(key) = event.dyn_ref::<web_sys::KeyboardEvent>() else {
                        return;
                    };
                    let in_field = key
                        .target()
                        .and_then(|t| t.dyn_into::<web_sys::HtmlInputElement>().ok())
                        .is_some_and(|i| i.type_() == "text");
                    if in_field || !(key.ctrl_key() || key.meta_key()) {
                        return;
                    }
                    match (key.key().to_lowercase().as_str(), key.shift_key()) {
                        ("z", false) => d.dispatch(Action::Undo),
                        ("z", true) | ("y", _) => d.dispatch(Action::Redo),
                        _ => return,
                    }
                    key.prevent_default();
                })
            });
            move || drop(listener)
        });
    }
    let on_drop = {
        let d = bench.dispatcher();
        Callback::from(move |e: DragEvent| {
            e.prevent_default();
            if let Some(file) = e
                .data_transfer()
                .and_then(|t| t.files())
                .and_then(|f| f.get(0))
            {
                open_file(d.clone(), file);
            }
        })
    };
    let on_drag_over = Callback::from(|e: DragEvent| e.prevent_default());
    let run = bench.run.clone();
    let model = run.problem.model;
    let two_species = model.n_species() == 2;
    let stop = (!run.trajectory.stop.is_finished()).then(|| {
        run.trajectory
            .stop
            .describe(&run.problem.species, &run.problem.time_unit)
    });

    let on_log = {
        let d = bench.dispatcher();
        Callback::from(move |e: Event| {
            let input: HtmlInputElement = e.target_unchecked_into();
            d.dispatch(Action::SetLogScale {
                on: input.checked(),
            });
        })
    };
    let on_plane_click = {
        let d = bench.dispatcher();
        Callback::from(move |(x, y): (f64, f64)| d.dispatch(Action::AddStart { x, y }))
    };
    let on_notify = {
        let d = bench.dispatcher();
        Callback::from(move |message: String| d.dispatch(Action::Notify { message }))
    };
    let observed = use_memo(bench.scenario.data.clone(), |d| d.clone().map(Shared::new));
    let on_clear = {
        let d = bench.dispatcher();
        Callback::from(move |_: MouseEvent| d.dispatch(Action::ClearStarts))
    };

    let workbench = html! {
        <>
            <AnalysisPanel run={run.clone()} />
            <div class="chart-head">
                <h2>{ "Densities over time" }</h2>
                <label class="toggle"><input id="log-scale" type="checkbox" checked={bench.log_scale} onchange={on_log} />{ " log scale" }</label>
            </div>
            <ChartCanvas id="chart-time" figure={Figure::TimeSeries { run: run.clone(), log_y: bench.log_scale, observed: (*observed).clone() }} summary={time_summary(&run)} on_error={on_notify.clone()} />
            <CsvButton id="csv-trajectory" file="trajectory.csv" make={csv_of(run.clone(), tussock_charts::tables::trajectory_csv)} label="Download the densities (CSV)" />
            if two_species {
                <div class="chart-head">
                    <h2>{ "Phase plane" }</h2>
                    <button id="clear-trajectories" type="button" onclick={on_clear} disabled={bench.starts.is_empty()}>
                        { format!("Clear added trajectories ({})", bench.starts.len()) }
                    </button>
                </div>
                <ChartCanvas id="chart-phase" figure={Figure::PhasePlane { run: run.clone(), observed: (*observed).clone() }} summary={phase_summary(&run)} on_click={on_plane_click} on_error={on_notify.clone()} />
                <p class="key" aria-hidden="true">
                    { format!("Key: ● stable equilibrium  ○ unstable  ⊗ saddle  — — {} nullcline  · · · {} nullcline  ",
                        run.problem.species[0], run.problem.species[1]) }
                    <span class="swatch-extra">{ "━" }</span>{ " trajectories you added (click the plane)" }
                </p>
            }
            <ScheduleTable bench={bench.clone()} />
        </>
    };

    html! {
        <>
        <header class="top">
            <h1>{ "Tussock" }</h1>
            <p class="tagline">{ "What will two interacting populations do? Set the numbers, read the curves." }</p>
        </header>
        <Toolbar bench={bench.clone()} />
        if let Some(message) = bench.notice.clone() {
            <p class="notice" id="notice" role="status">{ message }</p>
        }
        <ExampleMenu bench={bench.clone()} />
        <div class="workbench" ondrop={on_drop} ondragover={on_drag_over}>
            <aside class="inputs">
                <ModelPicker bench={bench.clone()} />
                <h2>{ model.title }</h2>
                <p class="summary">{ model.summary }</p>
                <pre class="equations" aria-label="model equations">{ model.equations }</pre>
                <ScenarioForm bench={bench.clone()} />
            </aside>
            <section class="results" aria-label="results">
                <ViewTabs bench={bench.clone()} />
                if let Some(message) = stop {
                    <p class="stop-warning" role="status">{ message }</p>
                }
                { match bench.view {
                    View::Workbench => workbench,
                    View::Planner => html! { <PlannerPanel bench={bench.clone()} /> },
                    View::Variants => html! { <VariantsPanel bench={bench.clone()} /> },
                    View::Sweep => html! { <SweepPanel bench={bench.clone()} /> },
                    View::Fit => html! { <FitPanel bench={bench.clone()} /> },
                    View::Chance => html! { <ChancePanel bench={bench.clone()} /> },
                    View::Report => html! { <ReportView bench={bench.clone()} /> },
                } }
            </section>
        </div>
        <footer class="cautions">
            <h2>{ "Before you act" }</h2>
            <ul>
                <li>{ "Results are planning aids, not forecasts: the model assumes well-mixed populations, deterministic change and constant parameters." }</li>
                <li>{ "Releases of natural enemies are regulated: follow the product label, your national plant-protection authority and local extension advice, and never release a non-native agent without a permit." }</li>
                <li>{ "Reintroductions and translocations follow the IUCN/SSC Guidelines for Reintroductions and Other Conservation Translocations (2013) and national wildlife law." }</li>
            </ul>
        </footer>
        </>
    }
}

fn range_of(run: &Run, i: usize) -> (f64, f64) {
    run.trajectory
        .series(i)
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        })
}

fn time_summary(run: &Run) -> AttrValue {
    let p = &run.problem;
    let parts: Vec<String> = (0..run.trajectory.n_species)
        .map(|i| {
            let (lo, hi) = range_of(run, i);
            format!(
                "{} between {} and {}",
                p.species[i],
                round_sig(lo, 3),
                round_sig(hi, 3)
            )
        })
        .collect();
    AttrValue::from(format!(
        "Densities over {} {}: {}. {}",
        p.t_end,
        p.time_unit,
        parts.join("; "),
        long_run_sentence(run)
    ))
}

fn phase_summary(run: &Run) -> AttrValue {
    let p = &run.problem;
    match (run.trajectory.states.first(), run.trajectory.states.last()) {
        (Some(a), Some(b)) => AttrValue::from(format!(
            "Phase plane of {} against {}: from ({}, {}) to ({}, {}); {} extra trajectories.",
            p.species[1],
            p.species[0],
            round_sig(a[0], 3),
            round_sig(a[1], 3),
            round_sig(b[0], 3),
            round_sig(b[1], 3),
            run.extra.len()
        )),
        _ => AttrValue::from("Phase plane: no trajectory."),
    }
}
