//! The row of buttons that switches between the page's views.

use yew::prelude::*;

use crate::jobs::TaskKind;
use crate::state::{Action, View, Workbench};

#[derive(Properties, PartialEq)]
pub struct ViewTabsProps {
    pub bench: UseReducerHandle<Workbench>,
}

/// Jobs whose progress a view shows.
fn kinds(view: View) -> &'static [TaskKind] {
    match view {
        View::Planner => &[TaskKind::Plan],
        View::Sweep => &[TaskKind::Line, TaskKind::Map],
        View::Fit => &[TaskKind::Fit],
        View::Chance => &[TaskKind::Ensemble, TaskKind::Founders],
        View::Workbench | View::Variants | View::Report => &[],
    }
}

#[function_component(ViewTabs)]
pub fn view_tabs(props: &ViewTabsProps) -> Html {
    let bench = &*props.bench;
    let buttons = View::ALL.into_iter().map(|view| {
        let d = props.bench.dispatcher();
        let onclick = Callback::from(move |_: MouseEvent| d.dispatch(Action::SetView { view }));
        let busy = kinds(view)
            .iter()
            .any(|k| bench.jobs.get(k).is_some_and(|s| s.is_running()));
        let current = bench.view == view;
        html! {
            <button type="button" id={format!("view-{}", view.key())} class={classes!("view", current.then_some("current"))}
                aria-pressed={current.to_string()} onclick={onclick}>
                { view.label() }
                if busy { <span class="busy" aria-label="running">{ " ⏳" }</span> }
            </button>
        }
    });
    html! {
        <nav class="views" aria-label="views">{ for buttons }</nav>
    }
}
