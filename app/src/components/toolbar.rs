//! Undo and redo, files in and out, the share link and "start fresh".

use web_sys::HtmlInputElement;
use yew::prelude::*;

use crate::browser;
use crate::share::{encode_fragment, MAX_LINK_CHARS};
use crate::state::{Action, Workbench};

#[derive(Properties, PartialEq)]
pub struct ToolbarProps {
    pub bench: UseReducerHandle<Workbench>,
}

/// Open a file the user picked or dropped, reporting failures in the notice.
pub fn open_file(dispatcher: UseReducerDispatcher<Workbench>, file: web_sys::File) {
    let name = file.name();
    if file.size() > 5e6 {
        dispatcher.dispatch(Action::Notify {
            message: format!("{name} is too large to be a scenario file (over 5 MB)."),
        });
        return;
    }
    wasm_bindgen_futures::spawn_local(async move {
        let action = match browser::read_text(file).await {
            Ok(text) => match tussock_core::Scenario::from_json(&text)
                .and_then(|s| s.validate().map(|_| s))
            {
                Ok(scenario) => Action::Open {
                    scenario: Box::new(scenario),
                    source: name,
                },
                Err(e) => Action::Notify {
                    message: format!("Could not open {name}: {e}"),
                },
            },
            Err(e) => Action::Notify {
                message: format!("Could not open {name}: {e}."),
            },
        };
        dispatcher.dispatch(action);
    });
}

#[function_component(Toolbar)]
pub fn toolbar(props: &ToolbarProps) -> Html {
    let bench = &*props.bench;
    let d = props.bench.dispatcher();
    let link = use_state(|| None::<String>);

    let undo = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.dispatch(Action::Undo))
    };
    let redo = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.dispatch(Action::Redo))
    };
    let save = {
        let d = d.clone();
        let scenario = bench.scenario.clone();
        Callback::from(move |_: MouseEvent| {
            let name = format!("{}.tussock.json", scenario.model);
            if let Err(e) = browser::download(&name, "application/json", &scenario.to_json_pretty())
            {
                d.dispatch(Action::Notify {
                    message: format!("Could not save the file: {e}."),
                });
            }
        })
    };
    let open = {
        let d = d.clone();
        Callback::from(move |e: Event| {
            let input: HtmlInputElement = e.target_unchecked_into();
            if let Some(file) = input.files().and_then(|f| f.get(0)) {
                open_file(d.clone(), file);
            }
            input.set_value("");
        })
    };
    let share = {
        let link = link.clone();
        let d = d.clone();
        let scenario = bench.scenario.clone();
        Callback::from(move |_: MouseEvent| {
            let fragment = encode_fragment(&scenario);
            let url = browser::link_with(&fragment);
            if url.len() > MAX_LINK_CHARS {
                d.dispatch(Action::Notify {
                    message: format!("This scenario makes a link of {} characters, too long for some browsers; save it as a file instead.", url.len()),
                });
            }
            browser::set_fragment(&fragment);
            browser::copy_to_clipboard(&url);
            link.set(Some(url));
        })
    };
    let fresh = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| {
            if browser::confirm("Start fresh? This replaces the current scenario with the first example (Undo brings it back).") {
                browser::clear_saved();
                browser::set_fragment("");
                if let Some(s) = crate::examples::EXAMPLES[0].scenario() {
                    d.dispatch(Action::Open { scenario: Box::new(s), source: "a fresh copy of the first example".into() });
                }
            }
        })
    };
    html! {
        <nav class="toolbar" aria-label="scenario actions">
            <button id="undo" type="button" onclick={undo} disabled={bench.history.is_empty()} title="Undo (Ctrl+Z)">{ "↶ Undo" }</button>
            <button id="redo" type="button" onclick={redo} disabled={bench.future.is_empty()} title="Redo (Ctrl+Shift+Z)">{ "↷ Redo" }</button>
            <button id="save-file" type="button" onclick={save}>{ "Save scenario file" }</button>
            <label class="button" for="open-file">{ "Open scenario file" }</label>
            <input id="open-file" class="visually-hidden" type="file" accept=".json,application/json" onchange={open} />
            <button id="share" type="button" onclick={share}>{ "Copy share link" }</button>
            <button id="fresh" type="button" onclick={fresh}>{ "Start fresh" }</button>
            { for (*link).clone().map(|url| html! {
                <input class="share-link" id="share-link" type="text" readonly=true value={url} aria-label="share link" />
            }) }
        </nav>
    }
}
