//! One component per file.

pub mod chart_canvas;
pub mod number_field;
pub mod scenario_form;
