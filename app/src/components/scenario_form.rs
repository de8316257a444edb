//! The parameter panel, generated from the model registry, plus initial
//! densities and the horizon.

use yew::prelude::*;

use tussock_core::{ParamSpec, Unit};

use super::number_field::{NumberField, SliderRange};
use crate::state::{Action, Field, Workbench};

#[derive(Properties, PartialEq)]
pub struct ScenarioFormProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(ScenarioForm)]
pub fn scenario_form(props: &ScenarioFormProps) -> Html {
    let bench = &*props.bench;
    let dispatcher = props.bench.dispatcher();
    let dispatch = Callback::from(move |action: Action| dispatcher.dispatch(action));
    let problem = &bench.run.problem;
    let model = problem.model;
    let time_unit = problem.time_unit.clone();

    let params = model.params.iter().map(|p| {
        let field = Field::Param(p.symbol.to_string());
        let dispatch = dispatch.clone();
        let symbol = p.symbol.to_string();
        let range = p.range_text();
        html! {
            <NumberField
                id={format!("param-{}", p.symbol)}
                label={html! { <><span class="symbol">{ p.symbol }</span>{ format!(" {}", p.name) }</> }}
                unit={p.unit.label(&time_unit)}
                help={format!("{} Valid range: {range}.", p.help)}
                text={bench.text(&field)}
                error={bench.error(&field).map(|e| AttrValue::from(e.to_string()))}
                placeholder={p.optional.then(|| AttrValue::from("none"))}
                slider={slider_for(p)}
                on_text={Callback::from(move |text| dispatch.emit(Action::SetParam { symbol: symbol.clone(), text }))}
            />
        }
    });

    let initial = problem.species.iter().enumerate().map(|(i, name)| {
        let field = Field::Initial(i);
        let dispatch = dispatch.clone();
        html! {
            <NumberField
                id={format!("initial-{i}")}
                label={html! { format!("Starting {name}") }}
                slider={Some(SliderRange { lo: 0.1, hi: 1e4, log: true })}
                unit="individuals"
                help={format!("Density of {name} at time 0.")}
                text={bench.text(&field)}
                error={bench.error(&field).map(|e| AttrValue::from(e.to_string()))}
                on_text={Callback::from(move |text| dispatch.emit(Action::SetInitial { index: i, text }))}
            />
        }
    });

    let horizon = {
        let dispatch = dispatch.clone();
        html! {
            <NumberField
                id="horizon"
                label={html! { "Horizon" }}
                unit={time_unit.clone()}
                help="How long to simulate."
                slider={Some(SliderRange { lo: 1.0, hi: 1e4, log: true })}
                text={bench.text(&Field::Horizon)}
                error={bench.error(&Field::Horizon).map(|e| AttrValue::from(e.to_string()))}
                on_text={Callback::from(move |text| dispatch.emit(Action::SetHorizon { text }))}
            />
        }
    };

    html! {
        <form class="scenario-form" onsubmit={Callback::from(|e: SubmitEvent| e.prevent_default())}>
            <fieldset>
                <legend>{ "Parameters" }</legend>
                { for params }
            </fieldset>
            <fieldset>
                <legend>{ "Start and horizon" }</legend>
                { for initial }
                { horizon }
            </fieldset>
        </form>
    }
}

/// A slider over a decade and more either side of the default, inside the
/// valid range; linear from zero for parameters whose default is zero.
fn slider_for(p: &ParamSpec) -> Option<SliderRange> {
    if p.default.is_finite() && p.default > 0.0 {
        let lo = (p.default / 20.0).max(p.min).max(1e-12);
        let hi = (p.default * 20.0).min(p.max);
        (hi > lo).then_some(SliderRange { lo, hi, log: true })
    } else if p.default == 0.0 {
        let hi = match p.unit {
            Unit::Individuals | Unit::IndividualsPerTime => 100.0_f64,
            _ => 1.0,
        }
        .min(p.max);
        Some(SliderRange {
            lo: p.min.max(0.0),
            hi,
            log: false,
        })
    } else if p.symbol == "K" {
        Some(SliderRange {
            lo: 1.0,
            hi: 1e5,
            log: true,
        })
    } else {
        None
    }
}
