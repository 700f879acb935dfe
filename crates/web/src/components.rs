//! The page's components, one per file.

pub mod advanced;
pub mod app;
pub mod chart;
pub mod compare_panel;
pub mod controls;
pub mod demo_button;
pub mod error_area;
pub mod file_picker;
pub mod files_panel;
pub mod headline;
pub mod icicle;
pub mod inspector;
pub mod metric;
pub mod node_overrides;
pub mod node_table;
pub mod read_progress;
pub mod suggest_panel;
pub mod temperature_field;
pub mod threshold_control;
