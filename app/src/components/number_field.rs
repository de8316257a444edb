//! A labelled number field with a slider, its unit, explanation and error
//! message. The field holds the exact value; the slider moves it over a
//! sensible range (logarithmic for positive ranges).

use tussock_core::analysis::round_sig;
use web_sys::HtmlInputElement;
use yew::prelude::*;

/// Range of a slider: `lo` to `hi`, on a log scale when `log`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SliderRange {
    pub lo: f64,
    pub hi: f64,
    pub log: bool,
}

/// Steps of a slider.
const STEPS: f64 = 1000.0;

impl SliderRange {
    /// Slider position (0..=STEPS) of a value, pinned to the ends.
    pub fn position(&self, value: f64) -> f64 {
        let u = if self.log {
            (value.max(self.lo).ln() - self.lo.ln()) / (self.hi.ln() - self.lo.ln())
        } else {
            (value - self.lo) / (self.hi - self.lo)
        };
        (u.clamp(0.0, 1.0) * STEPS).round()
    }

    /// The value at a slider position, to four significant digits.
    pub fn value(&self, position: f64) -> f64 {
        let u = (position / STEPS).clamp(0.0, 1.0);
        let v = if self.log {
            (self.lo.ln() + u * (self.hi.ln() - self.lo.ln())).exp()
        } else {
            self.lo + u * (self.hi - self.lo)
        };
        round_sig(v, 4).parse().unwrap_or(v)
    }
}

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
    #[prop_or_default]
    pub slider: Option<SliderRange>,
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
    let slider = props.slider.map(|range| {
        let on_text = props.on_text.clone();
        let on_slide = Callback::from(move |e: InputEvent| {
            let input: HtmlInputElement = e.target_unchecked_into();
            if let Ok(position) = input.value().parse::<f64>() {
                on_text.emit(round_sig(range.value(position), 4));
            }
        });
        let current = crate::state::parse_number(&props.text).ok();
        let position = current.map(|v| range.position(v)).unwrap_or(0.0);
        html! {
            <input class="slider" type="range" min="0" max={STEPS.to_string()} step="1"
                value={position.to_string()} oninput={on_slide}
                aria-label={format!("{} slider", props.id)} aria-describedby={message_id.clone()} />
        }
    });
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
            { for slider }
            <span class="unit">{ props.unit.clone() }</span>
            <span class="message" id={message_id} aria-live="polite">
                { props.error.clone().unwrap_or_else(|| props.help.clone()) }
            </span>
        </div>
    }
}

#[cfg(test)]
mod tests {
    use super::SliderRange;

    #[test]
    fn slider_positions_round_trip() {
        let log = SliderRange {
            lo: 0.01,
            hi: 10.0,
            log: true,
        };
        assert_eq!(log.position(0.01), 0.0);
        assert_eq!(log.position(10.0), 1000.0);
        assert_eq!(log.position(1e6), 1000.0);
        assert!((log.value(log.position(0.3)) - 0.3).abs() / 0.3 < 0.01);
        let lin = SliderRange {
            lo: 0.0,
            hi: 50.0,
            log: false,
        };
        assert_eq!(lin.value(500.0), 25.0);
        assert_eq!(lin.position(-3.0), 0.0);
    }
}
