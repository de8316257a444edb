//! "Report": one printable page with the scenario, its charts, the
//! analysis, the planning metrics, the latest study results, fitted values
//! and the cautions, stamped with Tussock's version and the date.

use tussock_core::analysis::round_sig;
use yew::prelude::*;

use crate::components::analysis_panel::AnalysisPanel;
use crate::components::chance_panel::risk_sentences;
use crate::components::chart_canvas::ChartCanvas;
use crate::components::fit_panel::interval_text;
use crate::components::planner_panel::answer;
use crate::components::sweep_panel::bifurcation_sentences;
use crate::figures::{Figure, Shared};
use crate::jobs::{Outcome, Task, TaskKind};
use crate::state::{format_number, Workbench};

#[derive(Properties, PartialEq)]
pub struct ReportViewProps {
    pub bench: UseReducerHandle<Workbench>,
}

/// Today's date as the browser knows it, `2026-12-02`.
fn today() -> String {
    let d = js_sys::Date::new_0();
    format!(
        "{:04}-{:02}-{:02}",
        d.get_full_year(),
        d.get_month() + 1,
        d.get_date()
    )
}

#[function_component(ReportView)]
pub fn report_view(props: &ReportViewProps) -> Html {
    let bench = &*props.bench;
    let run = bench.run.clone();
    let p = &run.problem;
    let model = p.model;
    let observed = use_memo(bench.scenario.data.clone(), |d| d.clone().map(Shared::new));
    let params = model.params.iter().enumerate().map(|(i, spec)| {
        html! {
            <tr><td class="symbol">{ spec.symbol }</td><td>{ spec.name }</td>
                <td>{ round_sig(p.params[i], 6) }</td><td>{ spec.unit.label(&p.time_unit) }</td></tr>
        }
    });
    let events = bench.scenario.events.iter().map(|e| {
        html! { <li>{ crate::components::schedule_table::describe_event(e, &p.species, &p.time_unit) }</li> }
    });
    let mut findings: Vec<String> = Vec::new();
    for (kind, slot) in &bench.jobs {
        let Some(outcome) = slot.outcome.as_deref() else {
            continue;
        };
        let stale = if bench.is_stale(*kind) {
            " (computed for an earlier version of the scenario)"
        } else {
            ""
        };
        let partial = if outcome.is_partial() {
            " (partial)"
        } else {
            ""
        };
        let lines: Vec<String> = match (outcome, &slot.task) {
            (Outcome::Plan(plan), Task::Plan { request }) => {
                vec![answer(plan, &p.species, request.species, &p.time_unit)]
            }
            (Outcome::Line(sweep), _) => {
                let b = bifurcation_sentences(sweep);
                if b.is_empty() {
                    vec![format!(
                        "No change of stability as {} varies over the range swept.",
                        sweep.axis.param
                    )]
                } else {
                    b
                }
            }
            (Outcome::Ensemble(summary), _) => risk_sentences(summary),
            (Outcome::Founders(table), _) => table
                .rows
                .iter()
                .map(|r| {
                    format!(
                        "{} founders in {} release(s): established in {} of runs{}.",
                        r.founders,
                        r.releases,
                        r.probability
                            .map(crate::figures::percent)
                            .unwrap_or_else(|| "–".into()),
                        r.ci.map(|[lo, hi]| format!(
                            " (95% interval {} to {})",
                            crate::figures::percent(lo),
                            crate::figures::percent(hi)
                        ))
                        .unwrap_or_default()
                    )
                })
                .collect(),
            _ => Vec::new(),
        };
        if *kind != TaskKind::Fit {
            findings.extend(lines.into_iter().map(|l| format!("{l}{partial}{stale}")));
        }
    }
    let fit = bench.scenario.fit.as_ref().map(|f| {
        let rows = f.result.estimates.iter().map(|e| html! {
            <tr><td class="symbol">{ e.name.clone() }</td><td>{ round_sig(e.value, 5) }</td>
                <td>{ e.se.map(|v| round_sig(v, 3)).unwrap_or_else(|| "–".into()) }</td><td>{ interval_text(&e.ci) }</td></tr>
        });
        html! {
            <>
            <h3>{ "Fitted values" }</h3>
            <table class="events"><thead><tr><th>{ "quantity" }</th><th>{ "estimate" }</th><th>{ "standard error" }</th><th>{ "95% profile interval" }</th></tr></thead>
                <tbody>{ for rows }</tbody></table>
            <p class="metric">{ format!("AIC {}, AICc {}, {} counts.", round_sig(f.result.aic, 6),
                f.result.aicc.map(|a| round_sig(a, 6)).unwrap_or_else(|| "–".into()), f.result.n_observations) }</p>
            { for f.result.warnings.iter().map(|w| html! { <p class="warn">{ w.message.clone() }</p> }) }
            </>
        }
    });
    let print = Callback::from(|_: MouseEvent| {
        if let Some(w) = web_sys::window() {
            let _ = w.print();
        }
    });
    html! {
        <section class="study report" aria-labelledby="report-title">
            <div class="chart-head">
                <h2 id="report-title">{ format!("Tussock report: {} — {}", model.title, p.species.join(" and ")) }</h2>
                <button id="report-print" type="button" onclick={print}>{ "Print or save as PDF" }</button>
            </div>
            <p class="metric" id="report-stamp">{ format!("Tussock {} · {} · time in {}", env!("CARGO_PKG_VERSION"), today(), p.time_unit) }</p>
            <pre class="equations">{ model.equations }</pre>
            <table class="events" id="report-params">
                <thead><tr><th>{ "symbol" }</th><th>{ "parameter" }</th><th>{ "value" }</th><th>{ "unit" }</th></tr></thead>
                <tbody>{ for params }</tbody>
            </table>
            <p class="metric">{ format!("Starting densities: {}. Horizon {} {}.",
                p.species.iter().enumerate().map(|(i, s)| format!("{s} {}", round_sig(p.initial[i], 6))).collect::<Vec<_>>().join(", "),
                format_number(p.t_end), p.time_unit) }</p>
            if !bench.scenario.events.is_empty() {
                <h3>{ "Interventions" }</h3>
                <ul>{ for events }</ul>
            }
            <AnalysisPanel run={run.clone()} />
            <ChartCanvas id="report-time" figure={Figure::TimeSeries { run: run.clone(), log_y: bench.log_scale, observed: (*observed).clone() }}
                summary={AttrValue::from("Densities over time.")} />
            if model.n_species() == 2 {
                <ChartCanvas id="report-phase" figure={Figure::PhasePlane { run: run.clone(), observed: (*observed).clone() }}
                    summary={AttrValue::from("Phase plane.")} />
            }
            { for fit }
            if !findings.is_empty() {
                <h3>{ "Studies" }</h3>
                <ul>{ for findings.iter().map(|f| html! { <li>{ f.clone() }</li> }) }</ul>
            }
        </section>
    }
}
