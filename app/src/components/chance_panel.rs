//! "Chance and risk": stochastic runs with whole individuals. How likely is
//! extinction, how wide is the spread around the deterministic curve, and
//! how many founders does a release need to establish?

use tussock_core::analysis::round_sig;
use tussock_core::stochastic::{
    EnsembleOptions, EnsembleSummary, EnvironmentalNoise, EstablishmentRequest, EstablishmentTable,
    Method, StochasticOptions,
};
use tussock_core::Scenario;
use web_sys::HtmlSelectElement;
use yew::prelude::*;

use crate::components::chart_canvas::ChartCanvas;
use crate::components::study::{
    csv_of, launch, parse_count, parse_list, use_outcome, CsvButton, JobBar, Setting,
};
use crate::figures::{percent, Figure, Shared};
use crate::jobs::{Outcome, Task, TaskKind};
use crate::state::{format_number, parse_number, Workbench};

/// Most runs the page asks for at once.
pub const MAX_BROWSER_RUNS: u64 = 10_000;

/// The settings as typed.
#[derive(Clone, Debug, PartialEq)]
pub struct ChanceForm {
    pub runs: String,
    pub seed: String,
    pub method: Method,
    pub noise: String,
    pub autocorrelation: String,
    pub pest_day: String,
    pub founders: String,
    pub releases: String,
    pub every: String,
    pub level: String,
    pub founder_species: usize,
}

impl ChanceForm {
    pub fn from_scenario(s: &Scenario, n_species: usize) -> ChanceForm {
        let st = s.studies.as_ref();
        let e = st.and_then(|st| st.ensemble.clone()).unwrap_or_default();
        let f = st.and_then(|st| st.founders.clone()).unwrap_or_default();
        let noise = e.simulation.noise;
        let join = |v: Vec<String>| v.join(", ");
        ChanceForm {
            runs: e.runs.min(MAX_BROWSER_RUNS).to_string(),
            seed: e.seed.to_string(),
            method: e.simulation.method,
            noise: noise.map(|n| format_number(n.sd)).unwrap_or_default(),
            autocorrelation: noise
                .map(|n| format_number(n.autocorrelation))
                .unwrap_or_default(),
            pest_day: e.pest_day.map(format_number).unwrap_or_default(),
            founders: join(f.founders.iter().map(|x| x.to_string()).collect()),
            releases: join(f.releases.iter().map(|x| x.to_string()).collect()),
            every: format_number(f.every),
            level: format_number(f.level),
            founder_species: f.species.min(n_species.saturating_sub(1)),
        }
    }

    fn simulation(&self) -> Result<StochasticOptions, (&'static str, String)> {
        let noise = if self.noise.trim().is_empty() {
            None
        } else {
            Some(EnvironmentalNoise {
                sd: parse_number(&self.noise).map_err(|e| ("chance-noise", e))?,
                autocorrelation: if self.autocorrelation.trim().is_empty() {
                    0.0
                } else {
                    parse_number(&self.autocorrelation).map_err(|e| ("chance-rho", e))?
                },
            })
        };
        Ok(StochasticOptions {
            method: self.method,
            noise,
            ..StochasticOptions::default()
        })
    }

    fn runs_and_seed(&self) -> Result<(u64, u64), (&'static str, String)> {
        Ok((
            parse_count(&self.runs, 1, MAX_BROWSER_RUNS).map_err(|e| ("chance-runs", e))?,
            parse_count(&self.seed, 0, u32::MAX as u64).map_err(|e| ("chance-seed", e))?,
        ))
    }

    pub fn ensemble(&self) -> Result<Task, (&'static str, String)> {
        let (runs, seed) = self.runs_and_seed()?;
        Ok(Task::Ensemble {
            options: EnsembleOptions {
                runs,
                seed,
                simulation: self.simulation()?,
                pest_day: if self.pest_day.trim().is_empty() {
                    None
                } else {
                    Some(parse_number(&self.pest_day).map_err(|e| ("chance-pest-day", e))?)
                },
                ..EnsembleOptions::default()
            },
        })
    }

    pub fn founders(&self) -> Result<Task, (&'static str, String)> {
        let (runs, seed) = self.runs_and_seed()?;
        let whole =
            |id: &'static str, text: &str, hi: u64| -> Result<Vec<u64>, (&'static str, String)> {
                parse_list(text)
                    .map_err(|e| (id, e))?
                    .into_iter()
                    .map(|v| parse_count(&format_number(v), 1, hi).map_err(|e| (id, e)))
                    .collect()
            };
        Ok(Task::Founders {
            request: EstablishmentRequest {
                species: self.founder_species,
                founders: whole("chance-founders", &self.founders, 1_000_000)?,
                releases: whole("chance-releases", &self.releases, 100)?
                    .into_iter()
                    .map(|r| r as u32)
                    .collect(),
                first_release: 0.0,
                every: parse_number(&self.every).map_err(|e| ("chance-every", e))?,
                level: parse_number(&self.level).map_err(|e| ("chance-level", e))?,
                horizon: None,
                runs,
                seed,
                simulation: self.simulation()?,
            },
        })
    }
}

/// The headline: extinction risk per species with its interval.
pub fn risk_sentences(summary: &EnsembleSummary) -> Vec<String> {
    let mut out: Vec<String> = summary
        .extinction
        .iter()
        .map(|p| match (p.probability, p.ci) {
            (Some(prob), Some([lo, hi])) => format!(
                "{} dies out by {} {} in {} of {} runs: {} (95% interval {} to {}).",
                p.species,
                format_number(summary.horizon),
                summary.time_unit,
                p.count,
                p.runs,
                percent(prob),
                percent(lo),
                percent(hi)
            ),
            _ => format!("{}: no finished runs.", p.species),
        })
        .collect();
    for q in &summary.quasi_extinction {
        if let (Some(prob), Some([lo, hi])) = (q.probability, q.ci) {
            out.push(format!(
                "{} falls below {} at some time in {} of runs (95% interval {} to {}).",
                q.species,
                round_sig(q.level, 4),
                percent(prob),
                percent(lo),
                percent(hi)
            ));
        }
    }
    if let Some(p) = &summary.pest_below_threshold {
        if let (Some(prob), Some([lo, hi])) = (p.probability, p.ci) {
            out.push(format!(
                "{} is under its economic threshold ({}) on {} {} in {} of runs (95% interval {} to {}).",
                p.species,
                round_sig(p.threshold, 4),
                summary.time_unit.trim_end_matches('s'),
                format_number(p.day),
                percent(prob),
                percent(lo),
                percent(hi)
            ));
        }
    }
    out
}

#[derive(Properties, PartialEq)]
pub struct ChancePanelProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(ChancePanel)]
pub fn chance_panel(props: &ChancePanelProps) -> Html {
    let bench = &*props.bench;
    let problem = &bench.run.problem;
    let n = problem.model.n_species();
    let form = {
        let s = bench.scenario.clone();
        use_state(move || ChanceForm::from_scenario(&s, n))
    };
    let error = use_state(|| None::<(&'static str, String)>);
    let err_for = |id: &str| {
        (*error)
            .as_ref()
            .filter(|(i, _)| *i == id)
            .map(|(_, m)| AttrValue::from(m.clone()))
    };
    let update = |f: fn(&mut ChanceForm, String)| {
        let form = form.clone();
        Callback::from(move |v: String| {
            let mut next = (*form).clone();
            f(&mut next, v);
            form.set(next);
        })
    };
    let on_method = {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            next.method = match sel.value().as_str() {
                "exact" => Method::Exact,
                "tau_leap" => Method::TauLeap,
                _ => Method::Auto,
            };
            form.set(next);
        })
    };
    let on_founder_species = {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            next.founder_species = sel.value().parse().unwrap_or(0);
            form.set(next);
        })
    };
    let run = |make: fn(&ChanceForm) -> Result<Task, (&'static str, String)>| {
        let form = form.clone();
        let error = error.clone();
        let d = props.bench.dispatcher();
        let scenario = bench.scenario.clone();
        move || match make(&form) {
            Ok(task) => {
                error.set(None);
                launch(&d, &scenario, task);
            }
            Err(problem) => error.set(Some(problem)),
        }
    };
    let on_ensemble = {
        let go = run(ChanceForm::ensemble);
        Callback::from(move |e: SubmitEvent| {
            e.prevent_default();
            go()
        })
    };
    let on_founders = {
        let go = run(ChanceForm::founders);
        Callback::from(move |_: MouseEvent| go())
    };
    let summary = use_outcome(bench, TaskKind::Ensemble, |o| match o {
        Outcome::Ensemble(e) => Some(e),
        _ => None,
    });
    let table = use_outcome(bench, TaskKind::Founders, |o| match o {
        Outcome::Founders(t) => Some(t),
        _ => None,
    });
    let ensemble_view = summary.map(|summary| {
        let sentences = risk_sentences(&summary);
        let fans = (0..summary.fan.len()).map(|i| {
            let name = summary.species.get(i).cloned().unwrap_or_default();
            html! {
                <>
                <h3>{ format!("Spread of {name}") }</h3>
                <ChartCanvas id={format!("chart-fan-{i}")} figure={Figure::Fan { summary: Shared(summary.clone()), species: i }}
                    summary={AttrValue::from(format!("Fan chart of {name} over {} runs: median, middle 50% and 90% of runs, and the deterministic model.", summary.runs))} />
                </>
            }
        });
        let stops = summary.stops;
        html! {
            <>
            if summary.partial { <p class="stop-warning">{ format!("Partial: {} of {} runs.", summary.simulated, summary.requested) }</p> }
            <ul class="verdicts" id="chance-risks">{ for sentences.iter().map(|s| html! { <li>{ s.clone() }</li> }) }</ul>
            if stops.total() > stops.finished {
                <p class="stop-warning">{ format!("{} runs stopped early (too many events or a blow-up) and are left out of the probabilities.", stops.total() - stops.finished) }</p>
            }
            { for fans }
            <h3>{ "Chance of extinction by each time" }</h3>
            <ChartCanvas id="chart-extinction" figure={Figure::Extinction { summary: Shared(summary.clone()) }}
                summary={AttrValue::from(sentences.join(" "))} />
            <CsvButton id="csv-ensemble" file="stochastic-runs.csv" make={csv_of(summary.clone(), tussock_charts::tables::ensemble_csv)} />
            </>
        }
    });
    let founders_view = table.map(|table: std::rc::Rc<EstablishmentTable>| {
        let rows = table.rows.iter().map(|r| html! {
            <tr>
                <td>{ r.founders }</td><td>{ r.releases }</td>
                <td>{ r.probability.map(percent).unwrap_or_else(|| "–".into()) }</td>
                <td>{ r.ci.map(|[lo, hi]| format!("{} to {}", percent(lo), percent(hi))).unwrap_or_else(|| "–".into()) }</td>
                <td>{ r.other.as_ref().and_then(|o| o.extinction).map(percent).unwrap_or_else(|| "–".into()) }</td>
                <td>{ format!("{}{}", r.runs, if r.partial { " (partial)" } else { "" }) }</td>
            </tr>
        });
        let other = table.rows.first().and_then(|r| r.other.as_ref()).map(|o| o.species.clone()).unwrap_or_else(|| "other species".into());
        html! {
            <>
            <h3>{ format!("{} established at {} {} (at least {} individuals)", table.species, format_number(table.horizon), table.time_unit, round_sig(table.level, 4)) }</h3>
            <table class="events results-table" id="founders-table">
                <thead><tr><th>{ "founders" }</th><th>{ "releases" }</th><th>{ "established" }</th><th>{ "95% interval" }</th><th>{ format!("{other} extinct") }</th><th>{ "runs" }</th></tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
            <CsvButton id="csv-founders" file="founders.csv" make={csv_of(table.clone(), tussock_charts::tables::founders_csv)} />
            <ChartCanvas id="chart-establishment" figure={Figure::Establishment { table: Shared(table.clone()) }}
                summary={AttrValue::from(format!("Establishment probability of {} against founder numbers, with 95% intervals.", table.species))} />
            </>
        }
    });
    let species_options = problem.species.iter().enumerate().map(|(i, s)| {
        html! { <option value={i.to_string()} selected={form.founder_species == i}>{ s.clone() }</option> }
    });
    html! {
        <section class="study" id="chance-study" aria-labelledby="chance-title">
            <h2 id="chance-title">{ "Chance and risk" }</h2>
            <p class="hint">{ "Small populations live or die by chance. Each run follows whole individuals through random births, deaths and predation (Gillespie's method, with tau-leaps where populations are large); the same seed always gives the same runs." }</p>
            <form class="study-form" onsubmit={on_ensemble}>
                <Setting id="chance-runs" label="Runs" value={form.runs.clone()} error={err_for("chance-runs")} help="1 to 10000" on_change={update(|f, v| f.runs = v)} />
                <Setting id="chance-seed" label="Seed" value={form.seed.clone()} error={err_for("chance-seed")} on_change={update(|f, v| f.seed = v)} />
                <div class="setting">
                    <label for="chance-method">{ "Simulation" }</label>
                    <select id="chance-method" onchange={on_method}>
                        <option value="auto" selected={form.method == Method::Auto}>{ "automatic (exact when small, leaps when large)" }</option>
                        <option value="exact" selected={form.method == Method::Exact}>{ "exact, one event at a time (slow for large populations)" }</option>
                        <option value="tau_leap" selected={form.method == Method::TauLeap}>{ "tau-leaping throughout" }</option>
                    </select>
                </div>
                <Setting id="chance-noise" label={format!("Noise on birth rates (SD of log, per {})", problem.time_unit.trim_end_matches('s'))} value={form.noise.clone()} error={err_for("chance-noise")}
                    help="Empty for none; 0.2 means birth rates typically vary by about ±20% per time unit." on_change={update(|f, v| f.noise = v)} />
                <Setting id="chance-rho" label={format!("…correlation from one {} to the next", problem.time_unit.trim_end_matches('s'))} value={form.autocorrelation.clone()} error={err_for("chance-rho")} on_change={update(|f, v| f.autocorrelation = v)} />
                if problem.thresholds.economic_threshold.is_some() {
                    <Setting id="chance-pest-day" label={format!("Pest under its threshold on day ({})", problem.time_unit)} value={form.pest_day.clone()} error={err_for("chance-pest-day")}
                        help="Empty for the horizon" on_change={update(|f, v| f.pest_day = v)} />
                }
                <button id="chance-run" type="submit" class="primary">{ "Run the ensemble" }</button>
            </form>
            <JobBar bench={props.bench.clone()} kind={TaskKind::Ensemble} />
            { for ensemble_view }
            <h3>{ "How many founders?" }</h3>
            <p class="hint">{ "Compare founder numbers, and one release against several smaller ones, by the chance the released species is still there at the horizon. Translocations follow the IUCN/SSC guidelines (2013) and national wildlife law." }</p>
            <div class="study-form">
                <div class="setting">
                    <label for="chance-founder-species">{ "Released species" }</label>
                    <select id="chance-founder-species" onchange={on_founder_species}>{ for species_options }</select>
                </div>
                <Setting id="chance-founders" label="Founders in all" value={form.founders.clone()} error={err_for("chance-founders")} help="e.g. 12, 20, 40" on_change={update(|f, v| f.founders = v)} />
                <Setting id="chance-releases" label="Split into this many releases" value={form.releases.clone()} error={err_for("chance-releases")} help="e.g. 1, 2, 4" on_change={update(|f, v| f.releases = v)} />
                <Setting id="chance-every" label={format!("Between releases ({})", problem.time_unit)} value={form.every.clone()} error={err_for("chance-every")} on_change={update(|f, v| f.every = v)} />
                <Setting id="chance-level" label="Established means at least (individuals)" value={form.level.clone()} error={err_for("chance-level")} on_change={update(|f, v| f.level = v)} />
                <button id="chance-founders-run" type="button" class="primary" onclick={on_founders}>{ "Compare founder numbers" }</button>
            </div>
            <JobBar bench={props.bench.clone()} kind={TaskKind::Founders} />
            { for founders_view }
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn reserve() -> Scenario {
        let text = std::fs::read_to_string(format!(
            "{}/../examples/reserve-reintroduction.json",
            env!("CARGO_MANIFEST_DIR")
        ))
        .unwrap();
        Scenario::from_json(&text).unwrap()
    }

    #[test]
    fn the_forms_give_tasks_or_name_the_setting() {
        let s = reserve();
        let form = ChanceForm::from_scenario(&s, 2);
        assert!(matches!(form.ensemble(), Ok(Task::Ensemble { .. })));
        let Ok(Task::Founders { request }) = form.founders() else {
            panic!("founders task")
        };
        assert_eq!(request.species, 1);
        let bad = ChanceForm {
            runs: "20000".into(),
            ..form.clone()
        };
        assert_eq!(bad.ensemble().unwrap_err().0, "chance-runs");
        let bad = ChanceForm {
            founders: "12, 0".into(),
            ..form
        };
        assert_eq!(bad.founders().unwrap_err().0, "chance-founders");
    }

    #[test]
    fn risks_are_stated_with_intervals() {
        let s = reserve();
        let Ok(Task::Ensemble { mut options }) = ChanceForm::from_scenario(&s, 2).ensemble() else {
            unreachable!()
        };
        options.runs = 40;
        let summary = tussock_core::stochastic::run_ensemble(
            &s.validate().unwrap(),
            &options,
            &mut |_, _| true,
        )
        .unwrap();
        let text = risk_sentences(&summary).join("\n");
        assert!(
            text.contains("reintroduced marten dies out by 60 years in"),
            "{text}"
        );
        assert!(text.contains("95% interval"), "{text}");
    }
}
