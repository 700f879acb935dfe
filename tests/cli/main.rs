//! Command-line tests: every bad input gets a located message and exit code 2; the happy paths
//! (evaluate, decode, curve, nodes, profile) agree with each other; decode streams in bounded memory.

mod bad_input;
#[path = "../common/catalogue.rs"]
mod catalogue;
mod decode;
mod happy;
mod harness;
mod limits;
mod nodes;
mod readme;
mod stream;
mod suggest;
#[path = "../common/zip.rs"]
mod zip;
