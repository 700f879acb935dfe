//! The page's hooks, one per file.

pub mod use_file_drop;
pub mod use_loader;
pub mod use_window_width;
