//! The analysis in plain words and in numbers: the verdict, the long run and
//! every equilibrium with its eigenvalues and class.

use std::rc::Rc;

use tussock_core::analysis::{describe_equilibrium, round_sig, LongRunKind};
use yew::prelude::*;

use crate::state::Run;

#[derive(Properties, PartialEq)]
pub struct AnalysisPanelProps {
    pub run: Rc<Run>,
}

/// The long-run behaviour as one sentence.
pub fn long_run_sentence(run: &Run) -> String {
    let p = &run.problem;
    let core = long_run_core(run);
    if p.schedule.is_empty() {
        core
    } else {
        format!("{core} (Continued from the state the interventions leave at the horizon.)")
    }
}

fn long_run_core(run: &Run) -> String {
    let p = &run.problem;
    let lr = &run.analysis.long_run;
    let unit = &p.time_unit;
    let names = &p.species;
    let range = |i: usize| {
        format!(
            "{} between {} and {}",
            names[i],
            round_sig(lr.min[i], 4),
            round_sig(lr.max[i], 4)
        )
    };
    match lr.kind {
        LongRunKind::Equilibrium => {
            let values: Vec<String> = (0..names.len())
                .map(|i| format!("{} {}", names[i], round_sig(lr.max[i], 4)))
                .collect();
            format!(
                "In the long run the populations settle: {}.",
                values.join(", ")
            )
        }
        LongRunKind::Cycle => {
            let ranges: Vec<String> = (0..names.len()).map(range).collect();
            format!(
                "In the long run the populations cycle with a period of about {} {unit}: {}. Troughs are where losses by chance are most likely.",
                round_sig(lr.period.unwrap_or(f64::NAN), 3),
                ranges.join("; ")
            )
        }
        LongRunKind::Extinction => {
            let gone: Vec<&str> = names
                .iter()
                .zip(&lr.extinct)
                .filter(|(_, x)| **x)
                .map(|(s, _)| s.as_str())
                .collect();
            let kept: Vec<String> = (0..names.len())
                .filter(|&i| !lr.extinct[i])
                .map(|i| format!("{} settles near {}", names[i], round_sig(lr.max[i], 4)))
                .collect();
            let rest = if kept.is_empty() {
                String::new()
            } else {
                format!("; {}", kept.join(", "))
            };
            format!("In the long run {} die(s) out{rest}.", gone.join(" and "))
        }
        LongRunKind::Unbounded => {
            "The populations grow without bound: nothing in this model limits them.".to_string()
        }
        LongRunKind::Failed => format!(
            "The long-run simulation did not finish: {}.",
            lr.stop.describe(names, unit)
        ),
    }
}

fn eigen_text(eigs: &[(f64, f64)]) -> String {
    eigs.iter()
        .map(|&(re, im)| {
            if im == 0.0 {
                round_sig(re, 4)
            } else {
                format!(
                    "{} {} {}i",
                    round_sig(re, 4),
                    if im < 0.0 { "−" } else { "+" },
                    round_sig(im.abs(), 4)
                )
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// The run against its thresholds, in words; empty without thresholds.
pub fn metrics_sentences(run: &Run) -> Vec<String> {
    let p = &run.problem;
    let unit = &p.time_unit;
    let m = &run.metrics;
    let mut out = Vec::new();
    if let Some(pest) = &m.pest {
        let name = &p.species[pest.species];
        let et = round_sig(pest.economic_threshold, 4);
        out.push(match (pest.first_above_threshold, pest.below_threshold_from) {
            (None, _) => format!("{name} stays below its economic threshold ({et}) throughout."),
            (Some(up), Some(down)) => format!(
                "{name} first reaches its economic threshold ({et}) at t = {} {unit}, and is below it from t = {} {unit} to the horizon ({} {unit} above it in all).",
                round_sig(up, 4),
                round_sig(down, 4),
                round_sig(pest.time_above_threshold, 3)
            ),
            (Some(up), None) => format!(
                "{name} first reaches its economic threshold ({et}) at t = {} {unit} and is above it at the horizon.",
                round_sig(up, 4)
            ),
        });
        if let Some(t) = pest.first_above_injury_level {
            out.push(format!(
                "It reaches the economic injury level at t = {} {unit}.",
                round_sig(t, 4)
            ));
        }
        let peak = m.peak[pest.species];
        out.push(format!(
            "Peak {name}: {} at t = {} {unit}.",
            round_sig(peak.value, 4),
            round_sig(peak.time, 4)
        ));
    }
    for (i, below) in m.time_below_quasi_extinction.iter().enumerate() {
        if let Some(b) = below {
            out.push(format!(
                "{} spends {} {unit} below its quasi-extinction level (lowest {}).",
                p.species[i],
                round_sig(*b, 3),
                round_sig(m.minimum[i].value, 3)
            ));
        }
    }
    out
}

#[function_component(AnalysisPanel)]
pub fn analysis_panel(props: &AnalysisPanelProps) -> Html {
    let run = &props.run;
    let p = &run.problem;
    let verdict = run.analysis.outcome.as_ref().map(|o| {
        let mut text = o.text.clone();
        for (i, name) in p.species.iter().enumerate() {
            text = text.replace(&format!("species {}", i + 1), name);
            text = text.replace(&format!("Species {}", i + 1), name);
        }
        html! { <p class="verdict" id="verdict">{ text }</p> }
    });
    let equilibria = run.analysis.equilibria.iter().map(|e| {
        html! {
            <li class={classes!((!e.feasible).then_some("infeasible"))}>
                { describe_equilibrium(e, &p.species, &p.time_unit) }
                <span class="numbers">{ format!(" Eigenvalues: {}.", eigen_text(&e.eigenvalues)) }</span>
            </li>
        }
    });
    html! {
        <section class="analysis" aria-label="analysis" aria-live="polite">
            <h2>{ "What the model says" }</h2>
            { for verdict }
            <p id="long-run">{ long_run_sentence(run) }</p>
            { for metrics_sentences(run).into_iter().map(|m| html! { <p class="metric">{ m }</p> }) }
            <details open=true>
                <summary>{ "Equilibria and their stability" }</summary>
                <ul class="equilibria" id="equilibria">{ for equilibria }</ul>
            </details>
        </section>
    }
}
