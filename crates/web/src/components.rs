//! The page's components, one per file.

pub mod app;
pub mod demo_button;
pub mod threshold_chart;
pub mod threshold_input;
