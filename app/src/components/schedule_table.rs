//! Interventions on the timeline (a compact table: add, edit, delete,
//! repeat) and the thresholds they are judged by.

use web_sys::{HtmlInputElement, HtmlSelectElement};
use yew::prelude::*;

use crate::state::{Action, EventField, EventKind, Field, ThresholdField, Workbench};

#[derive(Properties, PartialEq)]
pub struct ScheduleTableProps {
    pub bench: UseReducerHandle<Workbench>,
}

fn cell(
    bench: &Workbench,
    d: &UseReducerDispatcher<Workbench>,
    index: usize,
    which: EventField,
    label: &str,
    enabled: bool,
) -> Html {
    let field = Field::Event(index, which);
    let d = d.clone();
    let on_input = Callback::from(move |e: InputEvent| {
        let input: HtmlInputElement = e.target_unchecked_into();
        d.dispatch(Action::SetEvent {
            index,
            which,
            text: input.value(),
        });
    });
    let invalid = bench.error(&field).is_some();
    html! {
        <td>
            <input type="text" inputmode="decimal" class={classes!(invalid.then_some("invalid"))}
                aria-label={format!("event {} {label}", index + 1)} aria-invalid={invalid.to_string()}
                value={bench.text(&field)} oninput={on_input} disabled={!enabled}
                id={format!("event-{index}-{}", label.replace(' ', "-"))} />
        </td>
    }
}

fn threshold(
    bench: &Workbench,
    d: &UseReducerDispatcher<Workbench>,
    which: ThresholdField,
    id: &str,
    label: String,
    help: &str,
) -> Html {
    let field = Field::Threshold(which);
    let d = d.clone();
    let on_input = Callback::from(move |e: InputEvent| {
        let input: HtmlInputElement = e.target_unchecked_into();
        d.dispatch(Action::SetThreshold {
            which,
            text: input.value(),
        });
    });
    let message_id = format!("{id}-message");
    html! {
        <div class={classes!("field", bench.error(&field).is_some().then_some("invalid"))} title={help.to_string()}>
            <label for={id.to_string()}>{ label }</label>
            <input id={id.to_string()} type="text" inputmode="decimal" placeholder="none" value={bench.text(&field)}
                oninput={on_input} aria-describedby={message_id.clone()} />
            <span class="message" id={message_id}>{ bench.error(&field).map(str::to_string).unwrap_or_else(|| help.to_string()) }</span>
        </div>
    }
}

#[function_component(ScheduleTable)]
pub fn schedule_table(props: &ScheduleTableProps) -> Html {
    let bench = &*props.bench;
    let d = props.bench.dispatcher();
    let problem = &bench.run.problem;
    let species = &problem.species;
    let unit = &problem.time_unit;

    let rows = bench.scenario.events.iter().enumerate().map(|(i, e)| {
        let kind = EventKind::of(e);
        let on_kind = {
            let d = d.clone();
            Callback::from(move |ev: Event| {
                let s: HtmlSelectElement = ev.target_unchecked_into();
                d.dispatch(Action::SetEventKind { index: i, key: s.value() });
            })
        };
        let on_species = {
            let d = d.clone();
            Callback::from(move |ev: Event| {
                let s: HtmlSelectElement = ev.target_unchecked_into();
                if let Ok(species) = s.value().parse() {
                    d.dispatch(Action::SetEventSpecies { index: i, species });
                }
            })
        };
        let on_delete = {
            let d = d.clone();
            Callback::from(move |_: MouseEvent| d.dispatch(Action::DeleteEvent { index: i }))
        };
        let messages: Vec<String> = [EventField::Time, EventField::Amount, EventField::Every, EventField::Count, EventField::Until]
            .iter()
            .filter_map(|w| bench.error(&Field::Event(i, *w)).map(|m| format!("event {}: {m}", i + 1)))
            .collect();
        html! {
            <>
            <tr>
                { cell(bench, &d, i, EventField::Time, "time", true) }
                <td>
                    <select aria-label={format!("event {} species", i + 1)} onchange={on_species}>
                        { for species.iter().enumerate().map(|(k, name)| html! { <option value={k.to_string()} selected={k == e.species}>{ name.clone() }</option> }) }
                    </select>
                </td>
                <td>
                    <select aria-label={format!("event {} action", i + 1)} onchange={on_kind}>
                        { for EventKind::ALL.iter().map(|k| html! { <option value={k.key()} selected={*k == kind}>{ k.label() }</option> }) }
                    </select>
                </td>
                { cell(bench, &d, i, EventField::Amount, "amount", true) }
                { cell(bench, &d, i, EventField::Every, "every", !kind.is_rate()) }
                { cell(bench, &d, i, EventField::Count, "count", !kind.is_rate()) }
                { cell(bench, &d, i, EventField::Until, "until", kind.is_rate()) }
                <td><button type="button" onclick={on_delete} aria-label={format!("delete event {}", i + 1)}>{ "✕" }</button></td>
            </tr>
            if !messages.is_empty() {
                <tr class="row-message"><td colspan="8" role="alert">{ messages.join("; ") }</td></tr>
            }
            </>
        }
    });
    let on_add = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.dispatch(Action::AddEvent))
    };
    let pest = bench
        .scenario
        .thresholds
        .as_ref()
        .and_then(|t| t.pest)
        .unwrap_or(0);
    let pest_name = species.get(pest).cloned().unwrap_or_default();
    html! {
        <section class="schedule" aria-label="interventions">
            <h2>{ "Interventions and thresholds" }</h2>
            <table class="events">
                <thead><tr>
                    <th>{ format!("time ({unit})") }</th><th>{ "species" }</th><th>{ "action" }</th><th>{ "amount" }</th>
                    <th>{ "every" }</th><th>{ "times" }</th><th>{ "until" }</th><th></th>
                </tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
            <button id="add-event" type="button" onclick={on_add}>{ "+ Add an intervention" }</button>
            <p class="hint">{ "Amounts: individuals for a release, a number per individual of the other species for a ratio release (0.1 = 1:10), a fraction 0–1 for a removal, individuals per time unit for a rate." }</p>
            <div class="thresholds">
                { threshold(bench, &d, ThresholdField::Economic, "threshold-et", format!("Economic threshold ({pest_name})"), "Density at which control should start so the pest never reaches the injury level (Stern et al. 1959).") }
                { threshold(bench, &d, ThresholdField::InjuryLevel, "threshold-eil", format!("Economic injury level ({pest_name})"), "Lowest density at which damage costs as much as control (Stern et al. 1959).") }
                { for species.iter().enumerate().map(|(i, name)| threshold(bench, &d, ThresholdField::QuasiExtinction(i), &format!("threshold-q{i}"), format!("Quasi-extinction level ({name})"), "Below this density the species counts as functionally lost.")) }
            </div>
        </section>
    }
}

/// An event in words, for reports: `t = 7 days: release 0.5 predatory mite, every 7 days, 3 times`.
pub fn describe_event(
    e: &tussock_core::events::EventSpec,
    species: &[String],
    time_unit: &str,
) -> String {
    let name = species.get(e.species).map_or("?", String::as_str);
    let other = species
        .get(1 - e.species.min(1))
        .map_or("?", String::as_str);
    let what = match EventKind::of(e) {
        EventKind::Release => format!(
            "release {} {name}",
            crate::state::format_number(e.add.unwrap_or(0.0))
        ),
        EventKind::ReleaseRatio => format!(
            "release {} {name} per {other}",
            crate::state::format_number(e.add_ratio.unwrap_or(0.0))
        ),
        EventKind::Remove => format!(
            "remove {}% of {name}",
            tussock_core::analysis::round_sig(100.0 * e.remove_fraction.unwrap_or(0.0), 3)
        ),
        EventKind::HarvestRate => format!(
            "harvest {} {name} per {} until t = {}",
            crate::state::format_number(e.harvest_rate.unwrap_or(0.0)),
            time_unit.trim_end_matches('s'),
            crate::state::format_number(e.until.unwrap_or(0.0))
        ),
        EventKind::StockingRate => format!(
            "stock {} {name} per {} until t = {}",
            crate::state::format_number(e.stocking_rate.unwrap_or(0.0)),
            time_unit.trim_end_matches('s'),
            crate::state::format_number(e.until.unwrap_or(0.0))
        ),
    };
    let repeat = match (e.every, e.count) {
        (Some(every), Some(count)) if count > 1 => format!(
            ", every {} {time_unit}, {count} times",
            crate::state::format_number(every)
        ),
        (Some(every), None) => format!(
            ", every {} {time_unit} to the horizon",
            crate::state::format_number(every)
        ),
        _ => String::new(),
    };
    let label = e
        .label
        .as_ref()
        .map(|l| format!(" ({l})"))
        .unwrap_or_default();
    format!(
        "t = {} {time_unit}: {what}{repeat}{label}",
        crate::state::format_number(e.time)
    )
}
