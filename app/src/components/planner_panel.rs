//! "Plan a release": the smallest release that meets a goal, searched over
//! size, first release time and number of releases, with the response
//! curves that show the margin.

use tussock_core::analysis::round_sig;
use tussock_core::events::EventSpec;
use tussock_core::plan::{Goal, Plan, PlanRequest, PlanRow, SizeUnit};
use tussock_core::Scenario;
use web_sys::HtmlSelectElement;
use yew::prelude::*;

use crate::components::chart_canvas::ChartCanvas;
use crate::components::study::{
    csv_of, launch, parse_count, parse_list, use_outcome, CsvButton, JobBar, Setting,
};
use crate::figures::{Figure, Labels, Shared};
use crate::jobs::{Outcome, Task, TaskKind};
use crate::state::{format_number, parse_number, Action, Workbench};

/// The planner's settings as typed.
#[derive(Clone, Debug, PartialEq)]
pub struct PlanForm {
    pub persist: bool,
    pub by: String,
    pub until: String,
    pub species: usize,
    pub ratio: bool,
    pub max: String,
    pub times: String,
    pub counts: String,
    pub every: String,
    pub level: String,
    pub floor: String,
}

impl PlanForm {
    /// From the scenario's last request, else defaults that suit it.
    pub fn from_scenario(s: &Scenario, n_species: usize) -> PlanForm {
        let join = |v: &[f64]| {
            v.iter()
                .map(|x| format_number(*x))
                .collect::<Vec<_>>()
                .join(", ")
        };
        if let Some(r) = s.studies.as_ref().and_then(|st| st.plan.as_ref()) {
            let (persist, by, until, level, floor) = match &r.goal {
                Goal::PestBelowThreshold { by, until } => (false, *by, *until, 0.0, None),
                Goal::Persist {
                    level,
                    until,
                    floor,
                    ..
                } => (true, 0.0, *until, *level, floor.map(|f| f.1)),
            };
            return PlanForm {
                persist,
                by: format_number(by),
                until: format_number(until),
                species: r.species,
                ratio: r.unit == SizeUnit::RatioToOther,
                max: format_number(r.max_size),
                times: join(&r.times),
                counts: r
                    .counts
                    .iter()
                    .map(|c| c.to_string())
                    .collect::<Vec<_>>()
                    .join(", "),
                every: format_number(r.every),
                level: format_number(level),
                floor: floor.map(format_number).unwrap_or_default(),
            };
        }
        let has_threshold = s
            .thresholds
            .as_ref()
            .is_some_and(|t| t.economic_threshold.is_some());
        PlanForm {
            persist: !has_threshold,
            by: format_number((s.t_end / 3.0).round().min(28.0)),
            until: format_number(s.t_end),
            species: n_species.saturating_sub(1),
            ratio: n_species == 2 && has_threshold,
            max: if n_species == 2 && has_threshold {
                "1"
            } else {
                "100"
            }
            .to_string(),
            times: "0".to_string(),
            counts: "1, 2, 3".to_string(),
            every: "7".to_string(),
            level: "1".to_string(),
            floor: String::new(),
        }
    }

    /// The request, or the first setting that is wrong, by input id.
    pub fn request(&self, n_species: usize) -> Result<PlanRequest, (&'static str, String)> {
        let num = |id: &'static str, t: &str| parse_number(t).map_err(|e| (id, e));
        let until = num("plan-until", &self.until)?;
        let goal = if self.persist {
            let floor = if self.floor.trim().is_empty() {
                None
            } else {
                Some((1 - self.species.min(1), num("plan-floor", &self.floor)?))
            };
            Goal::Persist {
                species: self.species,
                level: num("plan-level", &self.level)?,
                until,
                floor: floor.filter(|_| n_species == 2),
            }
        } else {
            Goal::PestBelowThreshold {
                by: num("plan-by", &self.by)?,
                until,
            }
        };
        let counts = parse_list(&self.counts)
            .map_err(|e| ("plan-counts", e))?
            .into_iter()
            .map(|c| parse_count(&format_number(c), 1, 1000).map(|c| c as u32))
            .collect::<Result<Vec<u32>, String>>()
            .map_err(|e| ("plan-counts", e))?;
        Ok(PlanRequest {
            goal,
            species: self.species,
            unit: if self.ratio && n_species == 2 {
                SizeUnit::RatioToOther
            } else {
                SizeUnit::Individuals
            },
            max_size: num("plan-max", &self.max)?,
            times: parse_list(&self.times).map_err(|e| ("plan-times", e))?,
            counts,
            every: num("plan-every", &self.every)?,
            curve_points: 24,
        })
    }
}

/// A release size in words: `0.05 per prey (1:20)` or `12 individuals`.
pub fn size_text(size: f64, unit: SizeUnit, other: &str) -> String {
    match unit {
        SizeUnit::Individuals => format!("{} individuals", round_sig(size, 3)),
        SizeUnit::RatioToOther if size > 0.0 => format!(
            "{} per {other} (1:{})",
            round_sig(size, 3),
            round_sig(1.0 / size, 3)
        ),
        SizeUnit::RatioToOther => format!("0 per {other}"),
    }
}

fn row_label(row: &PlanRow, time_unit: &str) -> String {
    let releases = if row.count == 1 {
        "1 release".to_string()
    } else {
        format!(
            "{} releases {} {time_unit} apart",
            row.count,
            format_number(row.every)
        )
    };
    format!("{releases} from t = {}", format_number(row.time))
}

/// The sentence that answers the planner's question.
pub fn answer(plan: &Plan, species: &[String], released: usize, time_unit: &str) -> String {
    let other = species
        .get(1 - released.min(1))
        .map_or("individual", String::as_str);
    let name = species.get(released).map_or("the release", String::as_str);
    match plan.best.and_then(|i| plan.rows.get(i)) {
        Some(row) => {
            let size = row.smallest.unwrap_or(0.0);
            let mut text = format!(
                "Smallest that meets the goal: {} of {name} at {}{}.",
                row_label(row, time_unit),
                size_text(size, plan.unit, other),
                if row.count > 1 { " each" } else { "" }
            );
            if row.at_lower_bound {
                text.push_str(" Even the smallest size searched works: the goal may be met without a release, or with less.");
            }
            if row.non_monotone {
                text.push_str(" Careful: some larger releases fail again (a boom and bust); check the curve.");
            }
            text
        }
        None => "No release in the searched range meets the goal: raise the largest size, release earlier or more often, or relax the goal.".to_string(),
    }
}

/// The scenario with the best row's releases added to its schedule.
pub fn with_best_release(s: &Scenario, plan: &Plan, released: usize) -> Option<Scenario> {
    let row = plan.rows.get(plan.best?)?;
    let size = row.smallest?;
    let mut out = s.clone();
    let mut e = EventSpec {
        time: row.time,
        species: released,
        label: Some("planned release".to_string()),
        ..EventSpec::default()
    };
    match plan.unit {
        SizeUnit::Individuals => e.add = Some(size),
        SizeUnit::RatioToOther => e.add_ratio = Some(size),
    }
    if row.count > 1 {
        e.every = Some(row.every);
        e.count = Some(row.count);
    }
    out.events.push(e);
    Some(out)
}

#[derive(Properties, PartialEq)]
pub struct PlannerPanelProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(PlannerPanel)]
pub fn planner_panel(props: &PlannerPanelProps) -> Html {
    let bench = &*props.bench;
    let problem = &bench.run.problem;
    let n = problem.model.n_species();
    let form = {
        let s = bench.scenario.clone();
        use_state(move || PlanForm::from_scenario(&s, n))
    };
    let error = use_state(|| None::<(&'static str, String)>);
    let err_for = |id: &str| {
        (*error)
            .as_ref()
            .filter(|(i, _)| *i == id)
            .map(|(_, m)| AttrValue::from(m.clone()))
    };
    let set = |f: fn(&mut PlanForm, String)| {
        let form = form.clone();
        Callback::from(move |v: String| {
            let mut next = (*form).clone();
            f(&mut next, v);
            form.set(next);
        })
    };
    let on_goal = {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            next.persist = sel.value() == "persist";
            form.set(next);
        })
    };
    let on_species = {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            next.species = sel.value().parse().unwrap_or(0);
            form.set(next);
        })
    };
    let on_unit = {
        let form = form.clone();
        Callback::from(move |e: Event| {
            let sel: HtmlSelectElement = e.target_unchecked_into();
            let mut next = (*form).clone();
            next.ratio = sel.value() == "ratio";
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
            match form.request(n) {
                Ok(request) => {
                    error.set(None);
                    launch(&d, &scenario, Task::Plan { request });
                }
                Err(problem) => error.set(Some(problem)),
            }
        })
    };
    let species_options = problem
        .species
        .iter()
        .enumerate()
        .map(|(i, name)| {
            html! { <option value={i.to_string()} selected={form.species == i}>{ name.clone() }</option> }
        });
    let other = problem
        .species
        .get(1 - form.species.min(1))
        .cloned()
        .unwrap_or_default();
    let labels = Labels {
        species: problem.species.clone(),
        time_unit: problem.time_unit.clone(),
    };
    let slot = bench.jobs.get(&TaskKind::Plan);
    let plan = use_outcome(bench, TaskKind::Plan, |o| match o {
        Outcome::Plan(p) => Some(p),
        _ => None,
    });
    let released = slot
        .and_then(|s| match &s.task {
            Task::Plan { request } => Some(request.species),
            _ => None,
        })
        .unwrap_or(form.species);
    let results = plan.map(|plan| {
        let shared = Shared(plan.clone());
        let adopt = with_best_release(&bench.scenario, &plan, released).map(|s| {
            let d = props.bench.dispatcher();
            Callback::from(move |_: MouseEvent| {
                d.dispatch(Action::Adopt {
                    scenario: Box::new(s.clone()),
                    message: "The planned release is now in the schedule (Undo takes it out).".into(),
                })
            })
        });
        let rows = plan.rows.iter().enumerate().map(|(i, row)| {
            let best = plan.best == Some(i);
            html! {
                <tr class={classes!(best.then_some("best"))}>
                    <td>{ format_number(row.time) }</td>
                    <td>{ row.count }</td>
                    <td>{ row.smallest.map(|s| size_text(s, plan.unit, &other)).unwrap_or_else(|| "none in range".into()) }</td>
                    <td>{ row.total.map(|t| round_sig(t, 3)).unwrap_or_else(|| "–".into()) }</td>
                    <td>{ if row.non_monotone { "larger releases can fail again" } else if row.at_lower_bound { "smallest size searched already works" } else { "" } }</td>
                </tr>
            }
        });
        html! {
            <>
            <p class="verdict" id="plan-answer">{ answer(&plan, &labels.species, released, &labels.time_unit) }</p>
            if let Some(on_adopt) = adopt {
                <button id="plan-adopt" type="button" onclick={on_adopt}>{ "Add this release to the schedule" }</button>
            }
            <table class="events results-table" id="plan-table">
                <thead><tr>
                    <th>{ format!("first release ({})", labels.time_unit) }</th><th>{ "releases" }</th>
                    <th>{ "smallest size each" }</th><th>{ "total" }</th><th>{ "note" }</th>
                </tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
            <CsvButton id="csv-plan" file="release-plan.csv" make={csv_of(plan.clone(), tussock_charts::tables::plan_csv)} />
            <h3>{ "Response: how far from failing, by release size" }</h3>
            <ChartCanvas id="chart-plan-response" figure={Figure::ResponseCurves { plan: shared.clone(), labels: labels.clone(), released }}
                summary={AttrValue::from(format!("Goal margin against release size for {} release plans. {}", plan.rows.len(), answer(&plan, &labels.species, released, &labels.time_unit)))} />
            <h3>{ "Timing: smallest release by first release time" }</h3>
            <ChartCanvas id="chart-plan-timing" figure={Figure::ReleaseTiming { plan: shared, labels: labels.clone(), released }}
                summary={AttrValue::from("Smallest release that meets the goal against the time of the first release, one series per number of releases.")} />
            </>
        }
    });
    html! {
        <section class="study" aria-labelledby="plan-title">
            <h2 id="plan-title">{ "Plan a release" }</h2>
            <p class="hint">{ "Tussock tries release sizes from a thousandth of the largest up to it, for every first release time and number of releases you list, and finds the smallest that meets the goal." }</p>
            <form class="study-form" onsubmit={on_run}>
                <div class="setting">
                    <label for="plan-goal">{ "Goal" }</label>
                    <select id="plan-goal" onchange={on_goal}>
                        <option value="pest" selected={!form.persist}>{ "the pest stays under its economic threshold" }</option>
                        <option value="persist" selected={form.persist}>{ "a species persists above a level" }</option>
                    </select>
                </div>
                if form.persist {
                    <Setting id="plan-level" label="Keep it at or above (individuals)" value={form.level.clone()} error={err_for("plan-level")} on_change={set(|f, v| f.level = v)} />
                    if n == 2 {
                        <Setting id="plan-floor" label={format!("…and {other} never below (optional)")} value={form.floor.clone()} error={err_for("plan-floor")} on_change={set(|f, v| f.floor = v)} />
                    }
                } else {
                    <Setting id="plan-by" label={format!("Under the threshold from ({})", problem.time_unit)} value={form.by.clone()} error={err_for("plan-by")} on_change={set(|f, v| f.by = v)} />
                }
                <Setting id="plan-until" label={format!("…until ({})", problem.time_unit)} value={form.until.clone()} error={err_for("plan-until")} on_change={set(|f, v| f.until = v)} />
                <div class="setting">
                    <label for="plan-species">{ "Species released" }</label>
                    <select id="plan-species" onchange={on_species}>{ for species_options }</select>
                </div>
                if n == 2 {
                    <div class="setting">
                        <label for="plan-unit">{ "Count the release" }</label>
                        <select id="plan-unit" onchange={on_unit}>
                            <option value="ratio" selected={form.ratio}>{ format!("per individual of {other} at release (a ratio)") }</option>
                            <option value="individuals" selected={!form.ratio}>{ "in individuals (per plant, m² or site)" }</option>
                        </select>
                    </div>
                }
                <Setting id="plan-max" label="Largest size per release" value={form.max.clone()} error={err_for("plan-max")}
                    help="As a ratio 1 means one released per individual of the other species (1:1)." on_change={set(|f, v| f.max = v)} />
                <Setting id="plan-times" label={format!("First release times ({})", problem.time_unit)} value={form.times.clone()} error={err_for("plan-times")}
                    help="Comma-separated, e.g. 0, 7, 14" on_change={set(|f, v| f.times = v)} />
                <Setting id="plan-counts" label="Numbers of releases" value={form.counts.clone()} error={err_for("plan-counts")}
                    help="Comma-separated, e.g. 1, 2, 3" on_change={set(|f, v| f.counts = v)} />
                <Setting id="plan-every" label={format!("Between repeated releases ({})", problem.time_unit)} value={form.every.clone()} error={err_for("plan-every")} on_change={set(|f, v| f.every = v)} />
                <button id="plan-run" type="submit" class="primary">{ "Find the smallest release" }</button>
            </form>
            <p class="hint">{ "Predatory mite releases are often quoted as predator:prey ratios between 1:10 and 1:50 (common practice; the supplier's label and local advice take precedence). Releasing natural enemies is regulated: follow the product label and your plant-protection authority, and never release a non-native agent without a permit." }</p>
            <JobBar bench={props.bench.clone()} kind={TaskKind::Plan} />
            { for results }
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scenario() -> Scenario {
        let text = std::fs::read_to_string(format!(
            "{}/../examples/greenhouse-plan.json",
            env!("CARGO_MANIFEST_DIR")
        ))
        .unwrap();
        Scenario::from_json(&text).unwrap()
    }

    #[test]
    fn the_form_gives_a_request_or_names_the_bad_setting() {
        let s = scenario();
        let form = PlanForm::from_scenario(&s, 2);
        assert!(
            !form.persist,
            "a scenario with a threshold plans for the pest"
        );
        let request = form.request(2).unwrap();
        assert_eq!(request.unit, SizeUnit::RatioToOther);
        assert_eq!(request.counts, vec![1, 2, 3]);
        let bad = PlanForm {
            counts: "1, 2.5".into(),
            ..form.clone()
        };
        assert_eq!(bad.request(2).unwrap_err().0, "plan-counts");
        let bad = PlanForm {
            max: "lots".into(),
            ..form
        };
        assert_eq!(bad.request(2).unwrap_err().0, "plan-max");
    }

    #[test]
    fn the_answer_and_the_release_it_adds() {
        let s = scenario();
        let request = PlanForm::from_scenario(&s, 2).request(2).unwrap();
        let plan = tussock_core::plan::plan(&s.validate().unwrap(), &request).unwrap();
        let names = vec!["spider mite".to_string(), "predatory mite".to_string()];
        let text = answer(&plan, &names, 1, "days");
        assert!(text.starts_with("Smallest that meets the goal"), "{text}");
        assert!(text.contains("per spider mite (1:"), "{text}");
        let adopted = with_best_release(&s, &plan, 1).unwrap();
        let added = adopted.events.last().unwrap();
        let best = &plan.rows[plan.best.unwrap()];
        assert_eq!(added.add_ratio, best.smallest);
        // The adopted schedule meets the goal when simulated.
        let problem = adopted.validate().unwrap();
        let traj = tussock_core::solve(&problem);
        let margin = tussock_core::plan::margin(&problem, &request.goal, best.time, &traj);
        assert!(margin > 0.0, "margin {margin}");
        assert_eq!(
            size_text(0.05, SizeUnit::RatioToOther, "prey"),
            "0.05 per prey (1:20)"
        );
    }
}
