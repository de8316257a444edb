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
            <details open=true>
                <summary>{ "Equilibria and their stability" }</summary>
                <ul class="equilibria" id="equilibria">{ for equilibria }</ul>
            </details>
        </section>
    }
}
