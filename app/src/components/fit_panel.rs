//! "Fit to counts": paste or upload census counts, check how they were
//! read, choose what to estimate, fit in a worker, read estimates with
//! intervals and warnings, and carry the fitted values into the workbench.

use std::collections::BTreeMap;

use tussock_core::analysis::round_sig;
use tussock_core::data::{read_counts, ImportOptions, Imported};
use tussock_core::fit::{EstimateSpec, FitRequest, FitResult, Objective};
use tussock_core::Scenario;
use web_sys::{HtmlInputElement, HtmlSelectElement, HtmlTextAreaElement};
use yew::prelude::*;

use crate::browser;
use crate::components::chart_canvas::ChartCanvas;
use crate::components::study::{csv_of, launch, parse_count, CsvButton, JobBar};
use crate::figures::{Figure, Labels, Shared};
use crate::jobs::{Task, TaskKind};
use crate::state::{format_number, parse_number, Action, Workbench};

/// Largest pasted or uploaded counts file.
pub const MAX_CSV_BYTES: f64 = 2e6;

/// One quantity that can be estimated, as shown in the form.
#[derive(Clone, Debug, PartialEq)]
pub struct Choice {
    pub name: String,
    pub label: String,
    pub on: bool,
    pub lower: String,
    pub upper: String,
}

/// The fit's settings as typed.
#[derive(Clone, Debug, PartialEq)]
pub struct FitForm {
    pub choices: Vec<Choice>,
    pub objective: Objective,
    pub starts: String,
    pub seed: String,
    pub profiles: bool,
}

impl FitForm {
    /// Every parameter and initial density of the model; ticked are the
    /// ones the last request estimated (or the growth rates and capacities).
    pub fn from_scenario(s: &Scenario) -> FitForm {
        let Some(model) = tussock_core::models::find(&s.model) else {
            return FitForm {
                choices: Vec::new(),
                objective: Objective::default(),
                starts: "20".into(),
                seed: "1".into(),
                profiles: true,
            };
        };
        let last = s.studies.as_ref().and_then(|st| st.fit.as_ref());
        let asked: BTreeMap<&str, &EstimateSpec> = last
            .map(|r| r.estimate.iter().map(|e| (e.name.as_str(), e)).collect())
            .unwrap_or_default();
        let bound = |v: Option<f64>| v.map(format_number).unwrap_or_default();
        let mut choices: Vec<Choice> = model
            .params
            .iter()
            .map(|p| {
                let e = asked.get(p.symbol);
                Choice {
                    name: p.symbol.to_string(),
                    label: p.name.to_string(),
                    on: match last {
                        Some(_) => e.is_some(),
                        None => {
                            !p.optional && (p.symbol.starts_with('r') || p.symbol.starts_with('K'))
                        }
                    },
                    lower: bound(e.and_then(|e| e.lower)),
                    upper: bound(e.and_then(|e| e.upper)),
                }
            })
            .collect();
        for (i, name) in model.species.iter().enumerate() {
            let key = format!("init{}", i + 1);
            let e = asked.get(key.as_str());
            choices.push(Choice {
                on: e.is_some(),
                lower: bound(e.and_then(|e| e.lower)),
                upper: bound(e.and_then(|e| e.upper)),
                name: key,
                label: format!("initial {name}"),
            });
        }
        FitForm {
            choices,
            objective: last.map(|r| r.objective).unwrap_or_default(),
            starts: last.map_or("20".into(), |r| r.starts.to_string()),
            seed: last.map_or("1".into(), |r| r.seed.to_string()),
            profiles: last.is_none_or(|r| r.profiles),
        }
    }

    /// The request, or a message naming what is wrong.
    pub fn request(&self) -> Result<FitRequest, String> {
        let optional = |t: &str, what: &str, name: &str| -> Result<Option<f64>, String> {
            if t.trim().is_empty() {
                Ok(None)
            } else {
                parse_number(t)
                    .map(Some)
                    .map_err(|e| format!("{what} bound of {name}: {e}"))
            }
        };
        let estimate = self
            .choices
            .iter()
            .filter(|c| c.on)
            .map(|c| {
                Ok(EstimateSpec {
                    name: c.name.clone(),
                    lower: optional(&c.lower, "lower", &c.name)?,
                    upper: optional(&c.upper, "upper", &c.name)?,
                })
            })
            .collect::<Result<Vec<_>, String>>()?;
        if estimate.is_empty() {
            return Err("tick at least one quantity to estimate".into());
        }
        Ok(FitRequest {
            estimate,
            objective: self.objective,
            starts: parse_count(&self.starts, 1, FitRequest::MAX_STARTS as u64)
                .map_err(|e| format!("starts: {e}"))? as usize,
            seed: parse_count(&self.seed, 0, u32::MAX as u64).map_err(|e| format!("seed: {e}"))?,
            profiles: self.profiles,
            options: Default::default(),
        })
    }
}

fn objective_label(o: Objective) -> &'static str {
    match o {
        Objective::LogLeastSquares => "least squares on log(count + 1) (usual for counts)",
        Objective::LeastSquares => "least squares on counts",
        Objective::Poisson => "Poisson likelihood",
        Objective::NegativeBinomial => "negative-binomial likelihood (overdispersed counts)",
    }
}

/// An interval in words: `[0.21, 0.35]`, with `open` where the profile
/// did not close.
pub fn interval_text(ci: &[Option<f64>; 2]) -> String {
    let side = |v: Option<f64>| v.map(|v| round_sig(v, 4)).unwrap_or_else(|| "open".into());
    format!("[{}, {}]", side(ci[0]), side(ci[1]))
}

#[derive(Properties, PartialEq)]
pub struct FitPanelProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(FitPanel)]
pub fn fit_panel(props: &FitPanelProps) -> Html {
    let bench = &*props.bench;
    let problem = &bench.run.problem;
    let d = props.bench.dispatcher();
    let text = use_state(String::new);
    let preview = use_state(|| None::<Result<Imported, String>>);
    let form = {
        let s = bench.scenario.clone();
        use_state(move || FitForm::from_scenario(&s))
    };
    let form_error = use_state(|| None::<String>);
    {
        let form = form.clone();
        let s = bench.scenario.clone();
        use_effect_with(bench.scenario.model.clone(), move |_| {
            form.set(FitForm::from_scenario(&s));
        });
    }
    let read = {
        let preview = preview.clone();
        let species = problem.species.clone();
        let unit = problem.time_unit.clone();
        move |t: &str| {
            preview.set(Some(
                read_counts(t, &species, &unit, &ImportOptions::default())
                    .map_err(|e| e.to_string()),
            ))
        }
    };
    let on_text = {
        let text = text.clone();
        Callback::from(move |e: InputEvent| {
            let area: HtmlTextAreaElement = e.target_unchecked_into();
            text.set(area.value());
        })
    };
    let on_read = {
        let text = text.clone();
        let read = read.clone();
        Callback::from(move |_: MouseEvent| read(&text))
    };
    let on_file = {
        let text = text.clone();
        let preview = preview.clone();
        let read = read.clone();
        Callback::from(move |e: Event| {
            let input: HtmlInputElement = e.target_unchecked_into();
            let Some(file) = input.files().and_then(|f| f.get(0)) else {
                return;
            };
            input.set_value("");
            if file.size() > MAX_CSV_BYTES {
                preview.set(Some(Err(format!(
                    "{} is over 2 MB: too large for a table of counts.",
                    file.name()
                ))));
                return;
            }
            let text = text.clone();
            let preview = preview.clone();
            let read = read.clone();
            wasm_bindgen_futures::spawn_local(async move {
                match browser::read_text(file).await {
                    Ok(t) => {
                        read(&t);
                        text.set(t);
                    }
                    Err(e) => preview.set(Some(Err(e))),
                }
            });
        })
    };
    let on_keep = {
        let preview = preview.clone();
        let d = d.clone();
        Callback::from(move |_: MouseEvent| {
            if let Some(Ok(imported)) = &*preview {
                d.dispatch(Action::SetData {
                    data: Some(imported.data.clone()),
                    source: "the table".into(),
                });
                preview.set(None);
            }
        })
    };
    let on_clear = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| {
            d.dispatch(Action::SetData {
                data: None,
                source: String::new(),
            })
        })
    };
    let preview_html = (*preview).clone().map(|p| match p {
        Err(message) => html! { <p class="stop-warning" id="fit-import-error" role="alert">{ message }</p> },
        Ok(imported) => {
            let data = &imported.data;
            let header = data.series.iter().map(|s| html! { <th>{ problem.species.get(s.species).cloned().unwrap_or_default() }</th> });
            let rows = data.times.iter().enumerate().take(12).map(|(i, t)| {
                let cells = data.series.iter().map(|s| html! {
                    <td>{ s.counts.get(i).copied().flatten().map(|c| round_sig(c, 6)).unwrap_or_else(|| "missing".into()) }</td>
                });
                html! { <tr><td>{ round_sig(*t, 6) }</td>{ for cells }</tr> }
            });
            html! {
                <div class="preview" id="fit-preview">
                    <p>{ format!("Read {} rows ({} missing counts): {}.", imported.n_rows, imported.n_missing, imported.mapping_text) }</p>
                    <table class="events">
                        <thead><tr><th>{ format!("time ({})", problem.time_unit) }</th>{ for header }</tr></thead>
                        <tbody>{ for rows }</tbody>
                    </table>
                    if data.times.len() > 12 { <p class="hint">{ format!("…and {} more rows.", data.times.len() - 12) }</p> }
                    <button id="fit-keep" type="button" class="primary" onclick={on_keep}>{ "Use these counts" }</button>
                </div>
            }
        }
    });
    let choice_rows = form.choices.iter().enumerate().map(|(i, c)| {
        let toggle = {
            let form = form.clone();
            Callback::from(move |e: Event| {
                let input: HtmlInputElement = e.target_unchecked_into();
                let mut next = (*form).clone();
                next.choices[i].on = input.checked();
                form.set(next);
            })
        };
        let bound = |upper: bool| {
            let form = form.clone();
            Callback::from(move |e: InputEvent| {
                let input: HtmlInputElement = e.target_unchecked_into();
                let mut next = (*form).clone();
                if upper {
                    next.choices[i].upper = input.value();
                } else {
                    next.choices[i].lower = input.value();
                }
                form.set(next);
            })
        };
        html! {
            <tr>
                <td><label><input type="checkbox" id={format!("fit-on-{}", c.name)} checked={c.on} onchange={toggle} />
                    { " " }<span class="symbol">{ c.name.clone() }</span>{ format!(" {}", c.label) }</label></td>
                <td><input type="text" aria-label={format!("lower bound of {}", c.name)} placeholder="auto" value={c.lower.clone()} oninput={bound(false)} disabled={!c.on} /></td>
                <td><input type="text" aria-label={format!("upper bound of {}", c.name)} placeholder="auto" value={c.upper.clone()} oninput={bound(true)} disabled={!c.on} /></td>
            </tr>
        }
    });
    let on_objective = {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            next.objective = match sel.value().as_str() {
                "ls" => Objective::LeastSquares,
                "poisson" => Objective::Poisson,
                "negbin" => Objective::NegativeBinomial,
                _ => Objective::LogLeastSquares,
            };
            form.set(next);
        })
    };
    let set_text = |f: fn(&mut FitForm, String)| {
        let form = form.clone();
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            f(&mut next, input.value());
            form.set(next);
        })
    };
    let on_profiles = {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let input: HtmlInputElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            next.profiles = input.checked();
            form.set(next);
        })
    };
    let on_run = {
        let form = form.clone();
        let form_error = form_error.clone();
        let d = d.clone();
        let scenario = bench.scenario.clone();
        Callback::from(move |e: SubmitEvent| {
            e.prevent_default();
            let Some(data) = scenario.data.clone() else {
                form_error.set(Some("Import counts first.".into()));
                return;
            };
            match form.request() {
                Ok(request) => {
                    form_error.set(None);
                    launch(&d, &scenario, Task::Fit { data, request });
                }
                Err(m) => form_error.set(Some(m)),
            }
        })
    };
    let labels = Labels {
        species: problem.species.clone(),
        time_unit: problem.time_unit.clone(),
    };
    let saved = bench.scenario.fit.clone();
    let fit_rc = use_memo(saved.as_ref().map(|f| f.result.clone()), |r| {
        r.clone().map(Shared::new)
    });
    let results = (*fit_rc).clone().map(|fit: Shared<FitResult>| {
        let on_use = {
            let d = d.clone();
            Callback::from(move |_: MouseEvent| d.dispatch(Action::UseFitted))
        };
        let rows = fit.estimates.iter().map(|e| html! {
            <tr>
                <td><span class="symbol">{ e.name.clone() }</span>{ format!(" {}", e.label) }</td>
                <td>{ round_sig(e.value, 5) }</td>
                <td>{ e.se.map(|v| round_sig(v, 3)).unwrap_or_else(|| "–".into()) }</td>
                <td>{ interval_text(&e.ci) }</td>
                <td>{ format!("{} to {}", round_sig(e.lower, 3), round_sig(e.upper, 3)) }</td>
            </tr>
        });
        let names: Vec<String> = fit.estimates.iter().map(|e| e.name.clone()).collect();
        let correlations = (names.len() > 1).then(|| {
            let head = names.iter().map(|n| html! { <th>{ n.clone() }</th> });
            let body = fit.correlations.iter().take(names.len()).enumerate().map(|(i, row)| {
                let cells = row.iter().take(names.len()).map(|c| html! {
                    <td class={classes!(c.is_some_and(|c| c.abs() > 0.95).then_some("warn"))}>{ c.map(|c| round_sig(c, 2)).unwrap_or_else(|| "–".into()) }</td>
                });
                html! { <tr><th>{ names[i].clone() }</th>{ for cells }</tr> }
            });
            html! {
                <details><summary>{ "Correlations of the estimates" }</summary>
                    <table class="events"><thead><tr><th></th>{ for head }</tr></thead><tbody>{ for body }</tbody></table>
                </details>
            }
        });
        html! {
            <>
            <h3>{ "Estimates" }</h3>
            if fit.partial { <p class="stop-warning">{ "Stopped early: some starts or intervals are missing." }</p> }
            <table class="events results-table" id="fit-estimates">
                <thead><tr><th>{ "quantity" }</th><th>{ "estimate" }</th><th>{ "standard error" }</th><th>{ "95% profile interval" }</th><th>{ "searched" }</th></tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
            <CsvButton id="csv-fit" file="fit.csv" make={csv_of(fit.0.clone(), tussock_charts::tables::fit_csv)} />
            <p class="metric" id="fit-criteria">{ format!("{}: objective {}, log-likelihood {}, AIC {}, AICc {} ({} counts, {} estimated). Compare AIC only between fits to the same counts with the same objective.",
                objective_label(fit.objective_kind), round_sig(fit.objective, 6), round_sig(fit.log_likelihood, 6),
                round_sig(fit.aic, 6), fit.aicc.map(|a| round_sig(a, 6)).unwrap_or_else(|| "–".into()),
                fit.n_observations, fit.n_estimated) }</p>
            if !fit.warnings.is_empty() {
                <ul class="warnings" id="fit-warnings">{ for fit.warnings.iter().map(|w| html! { <li>{ w.message.clone() }</li> }) }</ul>
            }
            <button id="fit-use" type="button" class="primary" onclick={on_use}>{ "Use fitted values in the scenario" }</button>
            { for correlations }
            <h3>{ "Residuals" }</h3>
            <ChartCanvas id="chart-residuals" figure={Figure::Residuals { fit: fit.clone(), labels: labels.clone() }}
                summary={AttrValue::from(format!("Residuals of {} counts against time; a pattern over time means the model misses something.", fit.residuals.len()))} />
            </>
        }
    });
    let data_summary = bench.scenario.data.as_ref().map(|data| {
        html! {
            <p class="metric" id="fit-data">
                { format!("Counts kept with this scenario: {} at {} times from {} to {} {}. They are drawn on the charts of the Simulate view. ",
                    data.n_observations(), data.times.len(),
                    round_sig(data.times.first().copied().unwrap_or(0.0), 4),
                    round_sig(data.times.last().copied().unwrap_or(0.0), 4), problem.time_unit) }
                <button id="fit-clear-data" type="button" onclick={on_clear}>{ "Remove the counts" }</button>
            </p>
        }
    });
    html! {
        <section class="study" aria-labelledby="fit-title">
            <h2 id="fit-title">{ "Fit to counts" }</h2>
            <p class="hint">{ format!("Paste or upload a table: a time column ({}) and a column of counts per species, named like the species ({}) or in that order. Empty cells, NA or - mean missing; with ; separators decimal commas work.",
                problem.time_unit, problem.species.join(", ")) }</p>
            { for data_summary }
            <div class="import">
                <label for="fit-csv">{ "Counts (CSV)" }</label>
                <textarea id="fit-csv" rows="6" spellcheck="false" value={(*text).clone()} oninput={on_text}
                    placeholder={format!("day,{}\n0,20,2\n7,45,3", problem.species.join(","))} />
                <div class="toolbar">
                    <button id="fit-read" type="button" onclick={on_read}>{ "Read the pasted table" }</button>
                    <label class="button" for="fit-file">{ "Open a CSV file" }</label>
                    <input id="fit-file" class="visually-hidden" type="file" accept=".csv,.txt,text/csv,text/plain" onchange={on_file} />
                </div>
            </div>
            { for preview_html }
            <form class="study-form" onsubmit={on_run}>
                <table class="events" id="fit-choices">
                    <thead><tr><th>{ "estimate" }</th><th>{ "lower bound" }</th><th>{ "upper bound" }</th></tr></thead>
                    <tbody>{ for choice_rows }</tbody>
                </table>
                <p class="hint">{ "Unticked quantities keep the scenario's values; the search starts there. Bounds left on auto span the start ÷100 to ×100." }</p>
                <div class="setting">
                    <label for="fit-objective">{ "Objective" }</label>
                    <select id="fit-objective" onchange={on_objective}>
                        { for [Objective::LogLeastSquares, Objective::LeastSquares, Objective::Poisson, Objective::NegativeBinomial].into_iter().map(|o| html! {
                            <option value={o.key()} selected={form.objective == o}>{ objective_label(o) }</option>
                        }) }
                    </select>
                </div>
                <div class="setting"><label for="fit-starts">{ "Starts" }</label>
                    <input id="fit-starts" type="text" value={form.starts.clone()} oninput={set_text(|f, v| f.starts = v)} /></div>
                <div class="setting"><label for="fit-seed">{ "Seed" }</label>
                    <input id="fit-seed" type="text" value={form.seed.clone()} oninput={set_text(|f, v| f.seed = v)} /></div>
                <label class="toggle"><input id="fit-profiles" type="checkbox" checked={form.profiles} onchange={on_profiles} />{ " profile-likelihood intervals (slower)" }</label>
                if let Some(m) = (*form_error).clone() {
                    <p class="stop-warning" id="fit-form-error" role="alert">{ m }</p>
                }
                <button id="fit-run" type="submit" class="primary" disabled={bench.scenario.data.is_none()}>{ "Fit" }</button>
            </form>
            <JobBar bench={props.bench.clone()} kind={TaskKind::Fit} />
            { for results }
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_form_ticks_rates_and_capacities_and_builds_a_request() {
        let text = r#"{"model": "competition", "params": {"r1": 0.8, "r2": 0.5, "K1": 600, "K2": 400, "alpha12": 0.6, "alpha21": 0.9}, "initial": [20, 20], "t_end": 80}"#;
        let s = Scenario::from_json(text).unwrap();
        let form = FitForm::from_scenario(&s);
        let on: Vec<&str> = form
            .choices
            .iter()
            .filter(|c| c.on)
            .map(|c| c.name.as_str())
            .collect();
        assert_eq!(on, ["r1", "r2", "K1", "K2"]);
        assert!(form.choices.iter().any(|c| c.name == "init2"));
        let request = form.request().unwrap();
        assert_eq!(request.estimate.len(), 4);
        let mut bad = form.clone();
        bad.choices[0].lower = "x".into();
        assert!(bad.request().unwrap_err().starts_with("lower bound of r1"));
        let mut none = form;
        for c in &mut none.choices {
            c.on = false;
        }
        assert!(none.request().is_err());
        assert_eq!(interval_text(&[Some(0.2), None]), "[0.2, open]");
    }
}
