//! Engine tests: hand-derived worked examples, every decode rule, the exact curve, profiles.

mod curve;
mod harness;
mod invariants;
mod nodes;
mod numpy_files;
mod overrides;
mod profile;
mod robustness;
mod rules;
mod worked;
