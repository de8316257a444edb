//! The top-level component: the scenario form beside the two charts.

use yew::prelude::*;

use crate::components::chart_canvas::{ChartCanvas, ChartKind};
use crate::components::scenario_form::ScenarioForm;
use crate::state::{starting_scenario, Run, Workbench};

#[function_component(App)]
pub fn app() -> Html {
    let bench = use_reducer(|| match Workbench::new(starting_scenario()) {
        Ok(b) => b,
        Err(e) => {
            crate::panic::show_fatal(&format!("the starting scenario is invalid: {e}"));
            // A last resort that is valid by construction.
            let model = tussock_core::models::MODELS[0];
            let scenario = tussock_core::Scenario::with_defaults(model, vec![10.0, 1.0], 100.0);
            Workbench::new(scenario).unwrap_or_else(|_| unreachable!("defaults are valid"))
        }
    });
    let run = bench.run.clone();
    let model = run.problem.model;
    let stop = (!run.trajectory.stop.is_finished()).then(|| {
        run.trajectory
            .stop
            .describe(&run.problem.species, &run.problem.time_unit)
    });

    html! {
        <>
        <header class="top">
            <h1>{ "Tussock" }</h1>
            <p class="tagline">{ "What will two interacting populations do? Set the numbers, read the curves." }</p>
        </header>
        <div class="workbench">
            <aside class="inputs">
                <h2>{ model.title }</h2>
                <p class="summary">{ model.summary }</p>
                <pre class="equations" aria-label="model equations">{ model.equations }</pre>
                <ScenarioForm bench={bench.clone()} />
            </aside>
            <section class="results" aria-label="results">
                if let Some(message) = stop {
                    <p class="stop-warning" role="status">{ message }</p>
                }
                <h2>{ "Densities over time" }</h2>
                <ChartCanvas id="chart-time" kind={ChartKind::TimeSeries} run={run.clone()} summary={time_summary(&run)} />
                <h2>{ "Phase plane" }</h2>
                <ChartCanvas id="chart-phase" kind={ChartKind::PhasePlane} run={run.clone()} summary={phase_summary(&run)} />
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
            format!("{} between {lo:.1} and {hi:.1}", p.species[i])
        })
        .collect();
    AttrValue::from(format!(
        "Densities over {} {}: {}.",
        p.t_end,
        p.time_unit,
        parts.join("; ")
    ))
}

fn phase_summary(run: &Run) -> AttrValue {
    let p = &run.problem;
    match (run.trajectory.states.first(), run.trajectory.states.last()) {
        (Some(a), Some(b)) if run.trajectory.n_species == 2 => AttrValue::from(format!(
            "Phase plane of {} against {}: from ({:.1}, {:.1}) to ({:.1}, {:.1}).",
            p.species[1], p.species[0], a[0], a[1], b[0], b[1]
        )),
        _ => AttrValue::from("Phase plane: not available for one species."),
    }
}
