//! One component per file.

pub mod analysis_panel;
pub mod chance_panel;
pub mod chart_canvas;
pub mod example_menu;
pub mod fit_panel;
pub mod model_picker;
pub mod number_field;
pub mod planner_panel;
pub mod report_view;
pub mod scenario_form;
pub mod schedule_table;
pub mod study;
pub mod sweep_panel;
pub mod toolbar;
pub mod variants_panel;
pub mod view_tabs;
