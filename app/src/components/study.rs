//! Pieces every study (planner, sweeps, fit, stochastic runs) shares:
//! starting a job in its worker, the progress bar with time left and a
//! stop button, and small labelled inputs for the study's settings.

use tussock_core::analysis::round_sig;
use tussock_core::Scenario;
use web_sys::HtmlInputElement;
use yew::prelude::*;

use std::rc::Rc;

use crate::figures::Shared;
use crate::jobs::{Job, Outcome, Task, TaskKind, Update};
use crate::state::{Action, JobStatus, Workbench};
use crate::workers;

/// Send `task` on `scenario` to its worker; updates come back as actions.
pub fn launch(dispatcher: &UseReducerDispatcher<Workbench>, scenario: &Scenario, task: Task) {
    let id = workers::next_id();
    let kind = task.kind();
    let job = Job {
        id,
        scenario: scenario.clone(),
        task: task.clone(),
    };
    dispatcher.dispatch(Action::JobStarted {
        id,
        task,
        now: js_sys::Date::now(),
    });
    let d = dispatcher.clone();
    let relay = move |update: Update| {
        d.dispatch(Action::JobUpdate {
            kind,
            update: Box::new(update),
            now: js_sys::Date::now(),
        })
    };
    if let Err(message) = workers::start(&job, relay) {
        dispatcher.dispatch(Action::JobUpdate {
            kind,
            update: Box::new(Update::Failed { id, message }),
            now: js_sys::Date::now(),
        });
    }
}

/// The latest result of a kind of job as the type a chart draws, made
/// once per new result (charts compare results by identity, so a fresh
/// copy on every render would redraw them every time).
#[hook]
pub fn use_outcome<T: Clone + 'static>(
    bench: &Workbench,
    kind: TaskKind,
    pick: fn(&Outcome) -> Option<&T>,
) -> Option<Rc<T>> {
    let latest = bench
        .jobs
        .get(&kind)
        .and_then(|s| s.outcome.clone())
        .map(Shared);
    let made = use_memo(latest, move |latest| {
        latest.as_ref().and_then(|o| pick(o).cloned()).map(Rc::new)
    });
    (*made).clone()
}

/// A duration in words: `about 12 s`, `about 3 min`.
pub fn duration(ms: f64) -> String {
    let s = ms / 1000.0;
    if s < 1.0 {
        "under a second".to_string()
    } else if s < 90.0 {
        format!("about {} s", s.round())
    } else {
        format!("about {} min", (s / 60.0).round())
    }
}

#[derive(Properties, PartialEq)]
pub struct JobBarProps {
    pub bench: UseReducerHandle<Workbench>,
    pub kind: TaskKind,
}

/// Progress, time left and a stop button while a job runs; afterwards
/// what happened (finished, stopped with partial results, failed, stale).
#[function_component(JobBar)]
pub fn job_bar(props: &JobBarProps) -> Html {
    let bench = &*props.bench;
    let Some(slot) = bench.jobs.get(&props.kind) else {
        return html! {};
    };
    let kind = props.kind;
    let id = format!("job-{}", kind_key(kind));
    let stop = {
        let d = props.bench.dispatcher();
        Callback::from(move |_: MouseEvent| {
            workers::cancel(kind);
            d.dispatch(Action::JobCancelled { kind });
        })
    };
    let stale = bench.is_stale(kind) && slot.outcome.is_some();
    let status = match &slot.status {
        JobStatus::Running => {
            let percent = (slot.fraction() * 100.0).round();
            let left = slot
                .eta_ms()
                .map(|ms| format!(" · {} left", duration(ms)))
                .unwrap_or_default();
            html! {
                <>
                <progress id={format!("{id}-progress")} max="100" value={percent.to_string()}
                    aria-label={format!("{} progress", kind.label())}></progress>
                <span class="job-text">{ format!("{} running: {percent}%{left}", capitalise(kind.label())) }</span>
                <button id={format!("{id}-stop")} type="button" onclick={stop}>{ "Stop" }</button>
                </>
            }
        }
        JobStatus::Finished => html! {
            <span class="job-text">{ format!("{} finished in {}.", capitalise(kind.label()),
                duration(slot.updated_ms - slot.started_ms).trim_start_matches("about ")) }</span>
        },
        JobStatus::Cancelled => html! {
            <span class="job-text warn">{ format!("{} stopped at {}%: {}",
                capitalise(kind.label()), round_sig(slot.fraction() * 100.0, 3),
                if slot.outcome.is_some() { "the results below are partial." } else { "no results were ready yet." }) }</span>
        },
        JobStatus::Failed(message) => html! {
            <span class="job-text warn" role="alert">{ format!("{} failed: {message}", capitalise(kind.label())) }</span>
        },
    };
    html! {
        <div class="job-bar" id={id} role="status" aria-live="polite">
            { status }
            if stale {
                <span class="job-text warn">{ " These results are for an earlier version of the scenario: run again to update them." }</span>
            }
        </div>
    }
}

fn kind_key(kind: TaskKind) -> &'static str {
    match kind {
        TaskKind::Plan => "plan",
        TaskKind::Line => "line",
        TaskKind::Map => "map",
        TaskKind::Fit => "fit",
        TaskKind::Ensemble => "ensemble",
        TaskKind::Founders => "founders",
    }
}

fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    c.next()
        .map(|f| f.to_uppercase().collect::<String>() + c.as_str())
        .unwrap_or_default()
}

#[derive(Properties, PartialEq)]
pub struct SettingProps {
    pub id: AttrValue,
    pub label: AttrValue,
    pub value: AttrValue,
    #[prop_or_default]
    pub help: AttrValue,
    #[prop_or_default]
    pub error: Option<AttrValue>,
    pub on_change: Callback<String>,
}

/// A labelled text input for a study setting, with its message.
#[function_component(Setting)]
pub fn setting(props: &SettingProps) -> Html {
    let on_input = {
        let cb = props.on_change.clone();
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            cb.emit(input.value());
        })
    };
    let invalid = props.error.is_some();
    let message_id = format!("{}-message", props.id);
    html! {
        <div class={classes!("setting", invalid.then_some("invalid"))} title={props.help.clone()}>
            <label for={props.id.clone()}>{ props.label.clone() }</label>
            <input id={props.id.clone()} type="text" autocomplete="off" spellcheck="false"
                value={props.value.clone()} oninput={on_input}
                aria-invalid={invalid.to_string()} aria-describedby={message_id.clone()} />
            <span class="message" id={message_id} aria-live="polite">
                { props.error.clone().unwrap_or_else(|| props.help.clone()) }
            </span>
        </div>
    }
}

#[derive(Properties, PartialEq)]
pub struct CsvButtonProps {
    pub id: AttrValue,
    /// File name offered, with `.csv`.
    pub file: AttrValue,
    /// Makes the table when clicked (not on every render).
    pub make: Callback<(), String>,
    #[prop_or(AttrValue::from("Download table (CSV)"))]
    pub label: AttrValue,
}

/// The `make` of a [`CsvButton`]: the table of `value`, written when clicked.
pub fn csv_of<T: 'static>(
    value: impl Into<std::rc::Rc<T>>,
    write: impl Fn(&T) -> String + 'static,
) -> Callback<(), String> {
    let value = value.into();
    Callback::from(move |_| write(&value))
}

/// A button that downloads a table as CSV.
#[function_component(CsvButton)]
pub fn csv_button(props: &CsvButtonProps) -> Html {
    let onclick = {
        let make = props.make.clone();
        let file = props.file.clone();
        Callback::from(move |_: MouseEvent| {
            let text = make.emit(());
            if let Err(e) = crate::browser::download(&file, "text/csv", &text) {
                web_sys::console::warn_1(&format!("download failed: {e}").into());
            }
        })
    };
    html! {
        <button id={props.id.clone()} type="button" class="small csv" {onclick}>{ props.label.clone() }</button>
    }
}

/// Parse `0, 7, 14` (or `0; 7; 14` with decimal commas) into numbers.
pub fn parse_list(text: &str) -> Result<Vec<f64>, String> {
    let separator = if text.contains(';') { ';' } else { ',' };
    let items: Vec<&str> = text
        .split(separator)
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .collect();
    if items.is_empty() {
        return Err("enter at least one number".to_string());
    }
    if items.len() > 1000 {
        return Err("at most 1000 values".to_string());
    }
    items
        .iter()
        .map(|s| crate::state::parse_number(s))
        .collect()
}

/// Parse a whole number within `lo..=hi`.
pub fn parse_count(text: &str, lo: u64, hi: u64) -> Result<u64, String> {
    let v = crate::state::parse_number(text)?;
    if v.fract() != 0.0 || v < lo as f64 || v > hi as f64 {
        return Err(format!("must be a whole number from {lo} to {hi}, got {v}"));
    }
    Ok(v as u64)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lists_and_counts_parse_or_say_why() {
        assert_eq!(parse_list("0, 7,14"), Ok(vec![0.0, 7.0, 14.0]));
        assert_eq!(parse_list("0,5; 1,5"), Ok(vec![0.5, 1.5]));
        assert!(parse_list(" , ").is_err());
        assert!(parse_list("1, x").unwrap_err().contains("\"x\""));
        assert_eq!(parse_count("200", 1, 10_000), Ok(200));
        assert!(parse_count("2.5", 1, 10).is_err());
        assert!(parse_count("0", 1, 10).is_err());
        assert_eq!(duration(400.0), "under a second");
        assert_eq!(duration(12_300.0), "about 12 s");
        assert_eq!(duration(600_000.0), "about 10 min");
    }
}
