//! Engine tests: hand-derived worked examples, every decode rule, the exact curve, profiles.

mod curve;
mod fuzz;
mod harness;
mod intervals;
mod invariants;
mod limits;
mod nodes;
mod numpy_files;
mod overrides;
mod profile;
mod properties;
mod robustness;
mod rules;
mod suggest;
mod tally;
mod worked;
#[path = "../common/zip.rs"]
mod zip;
