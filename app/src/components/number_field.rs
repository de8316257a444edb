//! A labelled number field with its unit, explanation and error message.

use web_sys::HtmlInputElement;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct NumberFieldProps {
    /// Unique id of the input; the label and message refer to it.
    pub id: AttrValue,
    pub label: Html,
    pub unit: AttrValue,
    /// One-line explanation, shown on hover and focus.
    pub help: AttrValue,
    pub text: AttrValue,
    #[prop_or_default]
    pub error: Option<AttrValue>,
    #[prop_or_default]
    pub placeholder: Option<AttrValue>,
    pub on_text: Callback<String>,
}

#[function_component(NumberField)]
pub fn number_field(props: &NumberFieldProps) -> Html {
    let on_input = {
        let on_text = props.on_text.clone();
        Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            on_text.emit(input.value());
        })
    };
    let message_id = format!("{}-message", props.id);
    let invalid = props.error.is_some();
    html! {
        <div class={classes!("field", invalid.then_some("invalid"))} title={props.help.clone()}>
            <label for={props.id.clone()}>{ props.label.clone() }</label>
            <input
                id={props.id.clone()}
                type="text"
                inputmode="decimal"
                autocomplete="off"
                spellcheck="false"
                value={props.text.clone()}
                placeholder={props.placeholder.clone()}
                aria-invalid={invalid.to_string()}
                aria-describedby={message_id.clone()}
                oninput={on_input}
            />
            <span class="unit">{ props.unit.clone() }</span>
            <span class="message" id={message_id} aria-live="polite">
                { props.error.clone().unwrap_or_else(|| props.help.clone()) }
            </span>
        </div>
    }
}
