//! "Start from an example": the demo scenarios and their descriptions.

use web_sys::HtmlSelectElement;
use yew::prelude::*;

use crate::examples::EXAMPLES;
use crate::state::{Action, Workbench};

#[derive(Properties, PartialEq)]
pub struct ExampleMenuProps {
    pub bench: UseReducerHandle<Workbench>,
}

#[function_component(ExampleMenu)]
pub fn example_menu(props: &ExampleMenuProps) -> Html {
    let current = props.bench.example;
    let dispatcher = props.bench.dispatcher();
    let on_change = Callback::from(move |e: Event| {
        let select: HtmlSelectElement = e.target_unchecked_into();
        if let Ok(index) = select.value().parse::<usize>() {
            dispatcher.dispatch(Action::LoadExample { index });
        }
    });
    html! {
        <section class="examples" aria-label="examples">
            <label for="example">{ "Start from an example" }</label>
            <select id="example" onchange={on_change}>
                <option value="" selected={current.is_none()} disabled=true>{ "Choose a worked scenario…" }</option>
                { for EXAMPLES.iter().enumerate().map(|(i, e)| html! {
                    <option value={i.to_string()} selected={current == Some(i)}>{ e.title }</option>
                }) }
            </select>
            { for current.and_then(|i| EXAMPLES.get(i)).map(|e| html! { <p class="example-text">{ e.description }</p> }) }
        </section>
    }
}
