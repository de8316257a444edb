//! "Compare variants": up to four named alternatives of the scenario
//! ("one release at 1:10", "three releases at 1:30") overlaid on one chart,
//! with their planning metrics side by side.

use std::rc::Rc;

use tussock_core::analysis::round_sig;
use tussock_core::scenario::{Variant, MAX_VARIANTS};
use web_sys::{HtmlInputElement, HtmlSelectElement};
use yew::prelude::*;

use crate::components::analysis_panel::long_run_sentence;
use crate::components::chart_canvas::ChartCanvas;
use crate::figures::{Figure, Shared};
use crate::state::{Action, Run, Workbench};

/// Runs of the variants that validate; one that does not says why.
pub fn variant_runs(variants: &[Variant]) -> Vec<(String, Result<Rc<Run>, String>)> {
    variants
        .iter()
        .map(|v| {
            let run = v
                .scenario
                .validate()
                .map(|p| Rc::new(Run::compute(p, &[])))
                .map_err(|e| e.to_string());
            (v.name.clone(), run)
        })
        .collect()
}

/// One column of the comparison table.
pub fn metric_cells(run: &Run) -> Vec<String> {
    let p = &run.problem;
    let m = &run.metrics;
    let mut out = Vec::new();
    match &m.pest {
        Some(pest) => {
            out.push(
                pest.first_above_threshold
                    .map(|v| round_sig(v, 4))
                    .unwrap_or_else(|| "never".into()),
            );
            out.push(
                match (pest.first_above_threshold, pest.below_threshold_from) {
                    (None, _) => "throughout".into(),
                    (_, Some(from)) => round_sig(from, 4),
                    (_, None) => "still above at the end".into(),
                },
            );
            out.push(round_sig(pest.time_above_threshold, 3));
        }
        None => out.extend(["–".to_string(), "–".to_string(), "–".to_string()]),
    }
    for i in 0..2 {
        out.push(match (m.peak.get(i), p.species.get(i)) {
            (Some(e), Some(_)) => format!("{} at {}", round_sig(e.value, 4), round_sig(e.time, 3)),
            _ => "–".into(),
        });
    }
    for i in 0..2 {
        out.push(match (m.minimum.get(i), p.species.get(i)) {
            (Some(e), Some(_)) => format!("{} at {}", round_sig(e.value, 4), round_sig(e.time, 3)),
            _ => "–".into(),
        });
    }
    let releases: f64 = run
        .trajectory
        .pulses
        .iter()
        .filter(|pl| pl.after > pl.before)
        .map(|pl| pl.after - pl.before)
        .sum();
    out.push(round_sig(releases, 4));
    out.push(long_run_sentence(run));
    out
}

#[derive(Properties, PartialEq)]
pub struct VariantsPanelProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(VariantsPanel)]
pub fn variants_panel(props: &VariantsPanelProps) -> Html {
    let bench = &*props.bench;
    let d = props.bench.dispatcher();
    let name = use_state(String::new);
    let species = use_state(|| 0usize);
    let runs = use_memo(bench.scenario.variants.clone(), |v| variant_runs(v));
    let current = bench.run.clone();
    let overlay = use_memo(
        (Shared(current.clone()), Shared(runs.clone())),
        |(current, runs)| {
            let mut all = vec![("current scenario".to_string(), current.0.clone())];
            for (n, r) in runs.0.iter() {
                if let Ok(r) = r {
                    all.push((n.clone(), r.clone()));
                }
            }
            Shared::new(all)
        },
    );
    let on_name = {
        let name = name.clone();
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            name.set(input.value());
        })
    };
    let on_save = {
        let name = name.clone();
        let d = d.clone();
        Callback::from(move |e: SubmitEvent| {
            e.prevent_default();
            d.dispatch(Action::SaveVariant {
                name: (*name).clone(),
            });
            name.set(String::new());
        })
    };
    let on_species = {
        let species = species.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            species.set(sel.value().parse().unwrap_or(0));
        })
    };
    let n_species = current.problem.model.n_species();
    let shown = (*species).min(n_species - 1);
    let list = runs.iter().enumerate().map(|(i, (vname, run))| {
        let load = {
            let d = d.clone();
            Callback::from(move |_: MouseEvent| d.dispatch(Action::LoadVariant { index: i }))
        };
        let delete = {
            let d = d.clone();
            Callback::from(move |_: MouseEvent| d.dispatch(Action::DeleteVariant { index: i }))
        };
        html! {
            <li>
                <strong>{ vname.clone() }</strong>
                if let Err(e) = run { <span class="warn">{ format!(" — cannot be run: {e}") }</span> }
                { " " }
                <button type="button" class="small" onclick={load} aria-label={format!("show variant {vname}")}>{ "Show" }</button>
                <button type="button" class="small" onclick={delete} aria-label={format!("delete variant {vname}")}>{ "Delete" }</button>
            </li>
        }
    });
    let columns: Vec<(String, Vec<String>)> = overlay
        .iter()
        .map(|(n, r)| (n.clone(), metric_cells(r)))
        .collect();
    let p = &current.problem;
    let row_names = [
        "pest first above its threshold".to_string(),
        "pest below its threshold from".to_string(),
        format!("time above the threshold ({})", p.time_unit),
        format!("peak {} (when)", p.species[0]),
        format!(
            "peak {} (when)",
            p.species.get(1).cloned().unwrap_or_default()
        ),
        format!("lowest {} (when)", p.species[0]),
        format!(
            "lowest {} (when)",
            p.species.get(1).cloned().unwrap_or_default()
        ),
        "individuals released".to_string(),
        "in the long run".to_string(),
    ];
    let table_rows = row_names.iter().enumerate().filter(|(k, _)| n_species == 2 || !matches!(k, 4 | 6)).map(|(k, label)| {
        html! {
            <tr><th>{ label.clone() }</th>{ for columns.iter().map(|(_, cells)| html! { <td>{ cells.get(k).cloned().unwrap_or_default() }</td> }) }</tr>
        }
    });
    let species_options = p.species.iter().enumerate().map(|(i, s)| {
        html! { <option value={i.to_string()} selected={shown == i}>{ s.clone() }</option> }
    });
    let full = bench.scenario.variants.len() >= MAX_VARIANTS;
    html! {
        <section class="study" aria-labelledby="variants-title">
            <h2 id="variants-title">{ "Compare variants" }</h2>
            <p class="hint">{ format!("Keep up to {MAX_VARIANTS} versions of the scenario under names of your own, change the current one, and compare them here. Variants are saved with the scenario.") }</p>
            <form class="study-form inline" onsubmit={on_save}>
                <label for="variant-name">{ "Keep the current setup as" }</label>
                <input id="variant-name" type="text" maxlength="80" placeholder="e.g. three releases at 1:30" value={(*name).clone()} oninput={on_name} disabled={full} />
                <button id="variant-save" type="submit" disabled={full}>{ "Keep" }</button>
            </form>
            <ul class="variants" id="variant-list">{ for list }</ul>
            if runs.is_empty() {
                <p class="hint">{ "No variants yet: the chart shows the current scenario alone." }</p>
            }
            <div class="chart-head">
                <h3>{ "Densities over time" }</h3>
                <label>{ "Show " }<select id="variants-species" onchange={on_species}>{ for species_options }</select></label>
            </div>
            <ChartCanvas id="chart-variants" figure={Figure::Variants { runs: (*overlay).clone(), species: shown }}
                summary={AttrValue::from(format!("{} over time in {} runs: {}.", p.species[shown], overlay.len(), overlay.iter().map(|(n, _)| n.clone()).collect::<Vec<_>>().join(", ")))} />
            <div class="table-wrap">
                <table class="events results-table" id="variants-table">
                    <thead><tr><th></th>{ for columns.iter().map(|(n, _)| html! { <th>{ n.clone() }</th> }) }</tr></thead>
                    <tbody>{ for table_rows }</tbody>
                </table>
            </div>
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use tussock_core::Scenario;

    #[test]
    fn variants_are_run_and_tabulated() {
        let text = std::fs::read_to_string(format!(
            "{}/../examples/greenhouse-release.json",
            env!("CARGO_MANIFEST_DIR")
        ))
        .unwrap();
        let s = Scenario::from_json(&text).unwrap();
        let mut one = s.clone();
        one.events.truncate(1);
        one.events[0].count = Some(1);
        let mut broken = s.clone();
        broken.t_end = -1.0;
        let runs = variant_runs(&[
            Variant {
                name: "one release".into(),
                scenario: Box::new(one),
            },
            Variant {
                name: "broken".into(),
                scenario: Box::new(broken),
            },
        ]);
        let run = runs[0].1.as_ref().unwrap();
        assert!(runs[1].1.as_ref().unwrap_err().contains("t_end"));
        let cells = metric_cells(run);
        assert_eq!(cells.len(), 9);
        // One release of 0.5 predatory mites per leaf.
        assert_eq!(cells[7], "0.5");
        let all = metric_cells(&Run::compute(s.validate().unwrap(), &[]));
        assert_eq!(all[7], "1.5");
    }
}
