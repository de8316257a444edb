//! "Sweep parameters": one parameter swept into a bifurcation diagram, or
//! two into an outcome map; both run in a worker, fill in as they go, and
//! a click loads the chosen values into the workbench.

use tussock_core::analysis::round_sig;
use tussock_core::model::ModelSpec;
use tussock_core::sweep::line::{BifurcationKind, LineRequest, LineSweep};
use tussock_core::sweep::map::{MapRequest, OutcomeClass};
use tussock_core::sweep::{AxisSpec, Spacing, SweepOptions};
use tussock_core::Scenario;
use web_sys::{HtmlInputElement, HtmlSelectElement};
use yew::prelude::*;

use crate::components::chart_canvas::ChartCanvas;
use crate::components::study::{
    csv_of, launch, parse_count, use_outcome, CsvButton, JobBar, Setting,
};
use crate::figures::{Figure, Labels, Shared};
use crate::jobs::{Outcome, Task, TaskKind};
use crate::state::{format_number, parse_number, Action, Workbench};

/// Largest grid side of an outcome map.
pub const MAX_MAP_SIDE: u64 = 300;

/// One axis as typed.
#[derive(Clone, Debug, PartialEq)]
pub struct AxisForm {
    pub param: String,
    pub from: String,
    pub to: String,
    pub steps: String,
    pub log: bool,
}

impl AxisForm {
    fn from_spec(a: &AxisSpec) -> AxisForm {
        AxisForm {
            param: a.param.clone(),
            from: format_number(a.from),
            to: format_number(a.to),
            steps: a.steps.to_string(),
            log: a.spacing == Spacing::Log,
        }
    }

    /// A range around the parameter's current value.
    fn around(model: &ModelSpec, s: &Scenario, index: usize, steps: usize) -> AxisForm {
        let spec = &model.params[index.min(model.params.len() - 1)];
        let value = s.params.get(spec.symbol).copied().unwrap_or(spec.default);
        let (from, to) = if value > 0.0 && value.is_finite() {
            (
                (value / 4.0).max(spec.min),
                (value * 4.0).min(spec.max).max(value),
            )
        } else {
            (spec.min.max(0.0), spec.min.max(0.0) + 1.0)
        };
        AxisForm {
            param: spec.symbol.to_string(),
            from: round_sig(from, 3),
            to: round_sig(to, 3),
            steps: steps.to_string(),
            log: false,
        }
    }

    fn spec(&self, prefix: &'static str, max_steps: u64) -> Result<AxisSpec, (String, String)> {
        let bad = |what: &str, e: String| (format!("{prefix}-{what}"), e);
        Ok(AxisSpec {
            param: self.param.clone(),
            from: parse_number(&self.from).map_err(|e| bad("from", e))?,
            to: parse_number(&self.to).map_err(|e| bad("to", e))?,
            steps: parse_count(&self.steps, 2, max_steps).map_err(|e| bad("steps", e))? as usize,
            spacing: if self.log {
                Spacing::Log
            } else {
                Spacing::Linear
            },
        })
    }
}

/// The sweep's settings as typed.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepForm {
    pub two: bool,
    pub x: AxisForm,
    pub y: AxisForm,
    /// Species drawn on the bifurcation diagram.
    pub species: usize,
}

/// A change to the form from one field's new value.
type Edit<T> = Box<dyn Fn(&mut SweepForm, T)>;

/// The axis a form field belongs to: `y` for the map's second parameter.
fn side(f: &mut SweepForm, y: bool) -> &mut AxisForm {
    if y {
        &mut f.y
    } else {
        &mut f.x
    }
}

impl SweepForm {
    pub fn from_scenario(model: &ModelSpec, s: &Scenario) -> SweepForm {
        let studies = s.studies.as_ref();
        let valid = |a: &AxisSpec| model.param_index(&a.param).is_some();
        let line = studies
            .and_then(|st| st.line.as_ref())
            .filter(|r| valid(&r.axis));
        let map = studies
            .and_then(|st| st.map.as_ref())
            .filter(|r| valid(&r.x) && valid(&r.y));
        // Carrying capacity first when there is one: the classic sweep.
        let first = model
            .params
            .iter()
            .position(|p| p.symbol.starts_with('K'))
            .unwrap_or(0);
        let second = (first + 1..model.params.len())
            .chain(0..first)
            .find(|&i| !model.params[i].optional)
            .unwrap_or(first);
        SweepForm {
            two: map.is_some() && line.is_none(),
            x: line
                .map(|r| AxisForm::from_spec(&r.axis))
                .or_else(|| map.map(|m| AxisForm::from_spec(&m.x)))
                .unwrap_or_else(|| AxisForm::around(model, s, first, 101)),
            y: map
                .map(|m| AxisForm::from_spec(&m.y))
                .unwrap_or_else(|| AxisForm::around(model, s, second, 60)),
            species: model.n_species().saturating_sub(1),
        }
    }

    pub fn task(&self) -> Result<Task, (String, String)> {
        if self.two {
            Ok(Task::Map {
                request: MapRequest {
                    x: self.x.spec("sweep-x", MAX_MAP_SIDE)?,
                    y: self.y.spec("sweep-y", MAX_MAP_SIDE)?,
                    options: SweepOptions::default(),
                    shard: None,
                },
            })
        } else {
            Ok(Task::Line {
                request: LineRequest {
                    axis: self.x.spec("sweep-x", 2001)?,
                    options: SweepOptions::default(),
                },
            })
        }
    }
}

/// Bifurcations in words.
pub fn bifurcation_sentences(sweep: &LineSweep) -> Vec<String> {
    sweep
        .bifurcations
        .iter()
        .map(|b| {
            let what = match b.kind {
                BifurcationKind::Hopf => {
                    "Hopf point: the equilibrium gives way to cycles (or back)"
                }
                BifurcationKind::Transcritical => {
                    "transcritical point: two equilibria cross and exchange stability"
                }
                BifurcationKind::SaddleNode => "saddle-node point: two equilibria meet and vanish",
            };
            format!("{} = {} — {what}", sweep.axis.param, round_sig(b.value, 6))
        })
        .collect()
}

/// The CSS class of an outcome class's legend swatch (`static/style.css`
/// colours it; no inline styles, so the page's CSP can forbid them).
pub fn swatch_class(class: OutcomeClass) -> String {
    let key = serde_json::to_value(class)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default();
    format!("class-{key}")
}

#[derive(Properties, PartialEq)]
pub struct SweepPanelProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(SweepPanel)]
pub fn sweep_panel(props: &SweepPanelProps) -> Html {
    let bench = &*props.bench;
    let problem = &bench.run.problem;
    let model = problem.model;
    let form = {
        let s = bench.scenario.clone();
        use_state(move || SweepForm::from_scenario(model, &s))
    };
    // A model switch makes the form's parameters meaningless: start over.
    {
        let form = form.clone();
        let s = bench.scenario.clone();
        use_effect_with(model.key, move |_| {
            if model.param_index(&form.x.param).is_none() {
                form.set(SweepForm::from_scenario(model, &s));
            }
        });
    }
    let error = use_state(|| None::<(String, String)>);
    let err_for = |id: &str| {
        (*error)
            .as_ref()
            .filter(|(i, _)| i == id)
            .map(|(_, m)| AttrValue::from(m.clone()))
    };
    let update = |f: Edit<String>| {
        let form = form.clone();
        Callback::from(move |v: String| {
            let mut next = (*form).clone();
            f(&mut next, v);
            form.set(next);
        })
    };
    let on_select = |f: Edit<String>| {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            f(&mut next, sel.value());
            form.set(next);
        })
    };
    let on_check = |f: Edit<bool>| {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let input: HtmlInputElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            f(&mut next, input.checked());
            form.set(next);
        })
    };
    let on_run = {
        let form = form.clone();
        let error = error.clone();
        let d = props.bench.dispatcher();
        let scenario = bench.scenario.clone();
        Callback::from(move |e: SubmitEvent| {
            e.prevent_default();
            match form.task() {
                Ok(task) => {
                    error.set(None);
                    launch(&d, &scenario, task);
                }
                Err(problem) => error.set(Some(problem)),
            }
        })
    };
    let param_options = |selected: &str| {
        model
            .params
            .iter()
            .map(|p| {
                html! { <option value={p.symbol} selected={p.symbol == selected}>{ format!("{} — {}", p.symbol, p.name) }</option> }
            })
            .collect::<Html>()
    };
    let axis_fields = |prefix: &'static str, axis: &AxisForm, which: bool| {
        let on_param = on_select(Box::new(move |f, v| side(f, which).param = v));
        let on_from = update(Box::new(move |f, v| side(f, which).from = v));
        let on_to = update(Box::new(move |f, v| side(f, which).to = v));
        let on_steps = update(Box::new(move |f, v| side(f, which).steps = v));
        let on_log = on_check(Box::new(move |f, v| side(f, which).log = v));
        html! {
            <fieldset>
                <legend>{ if which { "Up the side" } else { "Along the bottom" } }</legend>
                <div class="setting">
                    <label for={format!("{prefix}-param")}>{ "Parameter" }</label>
                    <select id={format!("{prefix}-param")} onchange={on_param}>{ param_options(&axis.param) }</select>
                </div>
                <Setting id={format!("{prefix}-from")} label="From" value={axis.from.clone()} error={err_for(&format!("{prefix}-from"))} on_change={on_from} />
                <Setting id={format!("{prefix}-to")} label="To" value={axis.to.clone()} error={err_for(&format!("{prefix}-to"))} on_change={on_to} />
                <Setting id={format!("{prefix}-steps")} label="Values" value={axis.steps.clone()} error={err_for(&format!("{prefix}-steps"))}
                    help={if which || form.two { "2 to 300 per side" } else { "2 to 2001" }} on_change={on_steps} />
                <label class="toggle"><input id={format!("{prefix}-log")} type="checkbox" checked={axis.log} onchange={on_log} />{ " log spacing" }</label>
            </fieldset>
        }
    };
    let labels = Labels {
        species: problem.species.clone(),
        time_unit: problem.time_unit.clone(),
    };
    let on_pick_line = {
        let d = props.bench.dispatcher();
        Callback::from(move |(param, value): (String, f64)| {
            d.dispatch(Action::SetParams {
                values: vec![(param, value)],
            })
        })
    };
    let line = use_outcome(bench, TaskKind::Line, |o| match o {
        Outcome::Line(l) => Some(l),
        _ => None,
    });
    let map = use_outcome(bench, TaskKind::Map, |o| match o {
        Outcome::Map(m) => Some(m),
        _ => None,
    });
    let line_view = (!form.two).then(|| {
        let Some(sweep) = line.clone() else { return html! {} };
        let param = sweep.axis.param.clone();
        let on_click = {
            let pick = on_pick_line.clone();
            let param = param.clone();
            Callback::from(move |(x, _): (f64, f64)| pick.emit((param.clone(), x)))
        };
        let sentences = bifurcation_sentences(&sweep);
        let species_options = labels.species.iter().enumerate().map(|(i, n)| {
            html! { <option value={i.to_string()} selected={form.species == i}>{ n.clone() }</option> }
        });
        let summary = format!(
            "Bifurcation diagram of {} against {param} from {} to {}: {}",
            labels.species.get(form.species).cloned().unwrap_or_default(),
            round_sig(sweep.axis.values.first().copied().unwrap_or(0.0), 4),
            round_sig(sweep.axis.values.last().copied().unwrap_or(0.0), 4),
            if sentences.is_empty() { "no change of stability found.".to_string() } else { sentences.join("; ") }
        );
        html! {
            <>
            <div class="chart-head">
                <h3>{ format!("Long-run densities against {param}") }</h3>
                <label>{ "Show " }<select id="sweep-species" onchange={on_select(Box::new(|f, v| f.species = v.parse().unwrap_or(0)))}>{ for species_options }</select></label>
            </div>
            <ChartCanvas id="chart-bifurcation" figure={Figure::Bifurcation { sweep: Shared(sweep.clone()), labels: labels.clone(), species: form.species.min(labels.species.len().saturating_sub(1)), param: param.clone() }}
                summary={AttrValue::from(summary)} on_click={on_click} />
            <CsvButton id="csv-line" file="one-parameter-sweep.csv" make={{ let species = labels.species.clone(); csv_of(sweep.clone(), move |s| tussock_charts::tables::line_csv(s, &species)) }} />
            <p class="key">{ "Solid: stable equilibrium; dashed: unstable; dots: lowest and highest densities in the long run (apart when the populations cycle). Click to use a value." }</p>
            <ul class="bifurcations" id="sweep-bifurcations">
                { for sentences.iter().map(|t| html! { <li>{ t.clone() }</li> }) }
                if sentences.is_empty() && !sweep.partial {
                    <li>{ "No change of stability in this range." }</li>
                }
            </ul>
            </>
        }
    });
    let map_view = form.two.then(|| {
        let Some(map) = map.clone() else { return html! {} };
        let on_click = {
            let d = props.bench.dispatcher();
            let map = map.clone();
            Callback::from(move |(x, y): (f64, f64)| {
                if let Some(cell) = crate::figures::map_cell(&map, x, y) {
                    d.dispatch(Action::SetParams {
                        values: vec![(map.x.param.clone(), cell.x), (map.y.param.clone(), cell.y)],
                    });
                }
            })
        };
        let classes = tussock_charts::legend_classes(&map);
        let counted: Vec<(String, String, usize)> = classes
            .iter()
            .map(|c| {
                let n = map.rows.iter().flat_map(|r| &r.cells).filter(|cell| cell.class == *c).count();
                (swatch_class(*c), tussock_charts::class_label(*c, &labels.species), n)
            })
            .collect();
        let cells: usize = map.rows.iter().map(|r| r.cells.len()).sum();
        let summary = format!(
            "Outcome map over {} and {}: {}.",
            map.x.param,
            map.y.param,
            counted.iter().map(|(_, l, n)| format!("{l} in {n} of {cells} cells")).collect::<Vec<_>>().join(", ")
        );
        html! {
            <>
            <h3>{ format!("What happens, by {} and {}", map.x.param, map.y.param) }</h3>
            <ChartCanvas id="chart-map" figure={Figure::OutcomeMap { map: Shared(map.clone()), labels: labels.clone() }}
                summary={AttrValue::from(summary)} on_click={on_click} />
            <CsvButton id="csv-map" file="outcome-map.csv" make={{ let species = labels.species.clone(); csv_of(map.clone(), move |m| tussock_charts::tables::map_csv(m, &species)) }} />
            <ul class="legend" id="map-legend">
                { for counted.iter().map(|(colour, label, n)| html! {
                    <li><span class={classes!("swatch", colour.clone())}></span>{ format!("{label} ({n} cells)") }</li>
                }) }
            </ul>
            <p class="key">{ "Black lines: where the outcome changes by formula. Hover to read a cell; click to use its values." }</p>
            </>
        }
    });
    html! {
        <section class="study" aria-labelledby="sweep-title">
            <h2 id="sweep-title">{ "Sweep parameters" }</h2>
            <p class="hint">{ "Vary one parameter to see where equilibria appear, change stability or give way to cycles; vary two to map which outcome you get where." }</p>
            <form class="study-form" onsubmit={on_run}>
                <div class="setting">
                    <label for="sweep-mode">{ "Sweep" }</label>
                    <select id="sweep-mode" onchange={on_select(Box::new(|f, v| f.two = v == "two"))}>
                        <option value="one" selected={!form.two}>{ "one parameter (bifurcation diagram)" }</option>
                        <option value="two" selected={form.two}>{ "two parameters (outcome map)" }</option>
                    </select>
                </div>
                { axis_fields("sweep-x", &form.x, false) }
                if form.two {
                    { axis_fields("sweep-y", &form.y, true) }
                }
                <button id="sweep-run" type="submit" class="primary">{ if form.two { "Map the outcomes" } else { "Sweep" } }</button>
            </form>
            <JobBar bench={props.bench.clone()} kind={if form.two { TaskKind::Map } else { TaskKind::Line }} />
            { for line_view }
            { for map_view }
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use tussock_core::models;

    #[test]
    fn the_form_defaults_to_the_carrying_capacity_and_checks_its_ranges() {
        let model = models::find("rosenzweig_macarthur").unwrap();
        let s = Scenario::with_defaults(model, vec![100.0, 10.0], 100.0);
        let form = SweepForm::from_scenario(model, &s);
        assert_eq!(form.x.param, "K");
        let Ok(Task::Line { request }) = form.task() else {
            panic!("a line sweep")
        };
        assert_eq!(request.axis.from, 125.0);
        assert_eq!(request.axis.to, 2000.0);
        let two = SweepForm {
            two: true,
            y: AxisForm {
                steps: "301".into(),
                ..form.y.clone()
            },
            ..form.clone()
        };
        assert_eq!(two.task().unwrap_err().0, "sweep-y-steps");
        let bad = SweepForm {
            x: AxisForm {
                from: "abc".into(),
                ..form.x
            },
            ..form
        };
        assert_eq!(bad.task().unwrap_err().0, "sweep-x-from");
    }

    #[test]
    fn legend_swatches_have_the_map_colours() {
        let css = include_str!("../../../static/style.css");
        for class in [
            OutcomeClass::Extinct,
            OutcomeClass::OnlySpecies1,
            OutcomeClass::OnlySpecies2,
            OutcomeClass::Coexistence,
            OutcomeClass::LimitCycle,
            OutcomeClass::FounderControl,
            OutcomeClass::Unbounded,
            OutcomeClass::Unresolved,
        ] {
            let c = tussock_charts::class_colour(class);
            let rule = format!(
                ".swatch.{} {{ background: rgb({}, {}, {}); }}",
                swatch_class(class),
                c.0,
                c.1,
                c.2
            );
            assert!(css.contains(&rule), "missing or different: {rule}");
        }
    }

    #[test]
    fn bifurcations_are_described_with_their_values() {
        // Rosenzweig–MacArthur over K: the predator's transcritical point
        // at N* and the Hopf point at K_H (Rosenzweig 1971).
        let model = models::find("rosenzweig_macarthur").unwrap();
        let s = Scenario::with_defaults(model, vec![100.0, 10.0], 100.0);
        let problem = s.validate().unwrap();
        let request = LineRequest {
            axis: AxisSpec {
                param: "K".into(),
                from: 50.0,
                to: 1000.0,
                steps: 40,
                spacing: Spacing::Linear,
            },
            options: SweepOptions::default(),
        };
        let sweep =
            tussock_core::sweep::line::sweep_line(&problem, &request, &mut |_, _| true).unwrap();
        let k_h =
            tussock_core::models::rosenzweig_macarthur::hopf_threshold(&problem.params).unwrap();
        let sentences = bifurcation_sentences(&sweep);
        let hopf = sentences
            .iter()
            .find(|t| t.contains("Hopf point"))
            .unwrap_or_else(|| panic!("no Hopf point in {sentences:?}"));
        let value: f64 = hopf
            .trim_start_matches("K = ")
            .split(' ')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        assert!((value - k_h).abs() / k_h < 1e-5, "{hopf} vs K_H = {k_h}");
    }
}
