//! One component per file.

pub mod analysis_panel;
pub mod chart_canvas;
pub mod example_menu;
pub mod model_picker;
pub mod number_field;
pub mod scenario_form;
pub mod schedule_table;
pub mod toolbar;
