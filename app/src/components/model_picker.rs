//! Model, functional response, species names and time unit.

use tussock_core::models::MODELS;
use tussock_core::Group;
use web_sys::{HtmlInputElement, HtmlSelectElement};
use yew::prelude::*;

use crate::state::{Action, Field, Workbench};

/// Time units offered; a scenario file may carry any other.
pub const TIME_UNITS: [&str; 5] = ["hours", "days", "weeks", "months", "years"];

/// A `change` handler for a select that sends `action(value)`.
pub fn on_select(
    dispatcher: &UseReducerDispatcher<Workbench>,
    action: fn(String) -> Action,
) -> Callback<Event> {
    let d = dispatcher.clone();
    Callback::from(move |e: Event| {
        let select: HtmlSelectElement = e.target_unchecked_into();
        d.dispatch(action(select.value()));
    })
}

#[derive(Properties, PartialEq)]
pub struct ModelPickerProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(ModelPicker)]
pub fn model_picker(props: &ModelPickerProps) -> Html {
    let bench = &*props.bench;
    let problem = &bench.run.problem;
    let model = problem.model;
    let dispatcher = props.bench.dispatcher();

    let on_model = {
        let d = dispatcher.clone();
        Callback::from(move |e: Event| {
            let select: HtmlSelectElement = e.target_unchecked_into();
            d.dispatch(Action::SetModel {
                key: select.value(),
            });
        })
    };
    let groups = [
        Group::PredatorPrey,
        Group::Competition,
        Group::SinglePopulation,
    ]
    .map(|g| {
        html! {
            <optgroup label={g.label()}>
                { for MODELS.iter().filter(|m| m.group == g).map(|m| html! {
                    <option value={m.key} selected={m.key == model.key}>{ m.title }</option>
                }) }
            </optgroup>
        }
    });

    let choice = model.choice.map(|c| {
        let on_choice = on_select(&dispatcher, |key| Action::SetChoice { key });
        html! {
            <div class="row">
                <label for="choice">{ c.name }</label>
                <select id="choice" onchange={on_choice}>
                    { for c.options.iter().enumerate().map(|(i, (key, label))| html! {
                        <option value={*key} selected={i == problem.params.choice}>{ *label }</option>
                    }) }
                </select>
            </div>
        }
    });

    let names = problem.species.iter().enumerate().map(|(i, _)| {
        let field = Field::Species(i);
        let d = dispatcher.clone();
        let on_input = Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            d.dispatch(Action::SetSpecies { index: i, text: input.value() });
        });
        let id = format!("species-{i}");
        let role = model.species[i];
        html! {
            <div class={classes!("row", bench.error(&field).is_some().then_some("invalid"))}>
                <label for={id.clone()}>{ format!("Name of the {role}") }</label>
                <input id={id.clone()} type="text" maxlength="80" value={bench.text(&field)} oninput={on_input}
                    aria-describedby={format!("{id}-message")} />
                <span class="message" id={format!("{id}-message")}>{ bench.error(&field).unwrap_or_default().to_string() }</span>
            </div>
        }
    });

    let on_unit = {
        let d = dispatcher.clone();
        Callback::from(move |e: Event| {
            let select: HtmlSelectElement = e.target_unchecked_into();
            d.dispatch(Action::SetTimeUnit {
                unit: select.value(),
            });
        })
    };
    let current_unit = problem.time_unit.clone();
    let custom_unit = (!TIME_UNITS.contains(&current_unit.as_str())).then(|| current_unit.clone());

    html! {
        <fieldset class="model-picker">
            <legend>{ "Model" }</legend>
            <div class="row">
                <label for="model">{ "Question and model" }</label>
                <select id="model" onchange={on_model}>{ for groups }</select>
            </div>
            { for choice }
            { for names }
            <div class="row">
                <label for="time-unit">{ "Time unit" }</label>
                <select id="time-unit" onchange={on_unit}>
                    { for TIME_UNITS.iter().map(|u| html! { <option value={*u} selected={*u == current_unit}>{ *u }</option> }) }
                    { for custom_unit.map(|u| html! { <option value={u.clone()} selected=true>{ u }</option> }) }
                </select>
            </div>
        </fieldset>
    }
}
