//! Tussock's workbench in the browser.
//!
//! State lives in one place ([`state::Workbench`], a Yew reducer) and is pure
//! Rust, unit-tested natively. Components under `components/` receive data
//! down and send actions up. Figures ([`figures`]) are drawn by the functions
//! of `tussock-charts`, generic over plotters' `DrawingBackend`, so the same
//! code draws to the page's canvas and to SVG and PNG downloads.

pub mod app;
pub mod browser;
pub mod components;
pub mod examples;
pub mod figures;
pub mod jobs;
pub mod panic;
pub mod share;
pub mod spread;
pub mod state;
pub mod worker;
pub mod workers;

/// Start the app in the page's `<main id="app">` element.
pub fn start() {
    panic::install_hook();
    let root = web_sys::window()
        .and_then(|w| w.document())
        .and_then(|d| d.get_element_by_id("app"));
    match root {
        Some(root) => {
            yew::Renderer::<app::App>::with_root(root).render();
        }
        None => panic::show_fatal("the page has no element with id \"app\""),
    }
}
