//! hedgerow-core: the decode engine for predictions over a label taxonomy.
//!
//! Pure computation: no file, network or browser access. Callers hand it bytes (or chunks of
//! bytes) and get values back, so the command line and the WebAssembly page share it unchanged.
//!
//! # Semantics
//! - **Taxonomy**: one row per node, in any order; node `k` owns logit column `k`. An implicit
//!   root (depth 0) sits above the top-level nodes (depth 1). D is the deepest depth.
//! - **Softmax** over every sibling group (the children of one parent, in column order), logits
//!   divided by the temperature of the children's depth, in f64: `exp(z − max z) / Σ exp(z − max z)`.
//!   A single child has probability 1. Conditionals on the path are stored as f32.
//! - **Greedy path**: from the root take the child with the highest conditional probability
//!   (ties: the lowest column) down to a leaf. The path does not depend on thresholds.
//! - **Probabilities**: P(root) = objectness (as f32), or 1 without it; P(child) =
//!   P(parent) · p(child | parent), multiplied in f64 from the root down.
//! - **Thresholds**: t_0 (object threshold: a row predicts only if P(root) ≥ t_0; applies only
//!   with objectness) and t_1…t_D (a shorter list repeats its last value). A per-node override
//!   replaces its depth's threshold for that node (in the curve too: see [`exact_curve_for`]).
//! - **Rules**: *cumulative* steps into the path's child at depth d iff P(child) ≥ t_d;
//!   *conditional* iff p(child | parent) ≥ t_d. The prediction is the node where descent stops
//!   (the root = "an object, type unknown").
//! - **Outcomes** (label g): *correct* if the prediction is g or an ancestor of g (the root
//!   counts as correct); *unverifiable* if strictly below g; *wrong* otherwise. A background row
//!   that predicts is wrong (a false alarm); one that abstains is a correct rejection and not a
//!   prediction.
//!
//! # Metrics (see [`eval::Metrics`])
//! precision under the unverifiable policy (credit: (correct+unverifiable)/predictions; penalize:
//! correct/predictions; exclude: correct/(correct+wrong)); specificity = mean normalised
//! information gain IG(v) = 1 − ln|leaves(v)|/ln|leaves(root)| (Deng, Krause, Berg & Fei-Fei,
//! CVPR 2012); reward = mean of IG(v)·[correct]; stop shares per depth and outcome;
//! hierarchical precision/recall/F1, micro-averaged over labelled rows with ancestor sets that
//! include the node and exclude the root (Kiritchenko, Matwin, Nock & Famili 2006); mistake
//! severity = mean tree distance between a wrong prediction and its label (Dekel, Keshet &
//! Singer 2004). A ratio with an empty denominator is `None`.

pub mod batch;
pub mod curve;
pub mod decode;
pub mod drag;
pub mod error;
pub mod eval;
pub mod intake;
pub mod nodes;
pub mod npy;
pub mod npz;
pub mod paths;
pub mod profile;
pub mod settings;
pub mod siblings;
pub mod stats;
pub mod suggest;
pub mod tally;
pub mod taxonomy;

pub use batch::{Batch, Labels, Objectness};
pub use curve::{depth_sweep, exact_curve, exact_curve_for, CurveIndex, CurvePoint};
pub use decode::{Decision, Decoder, Step};
pub use drag::DepthDrag;
pub use error::{Error, ErrorKind, Errors, Location, Result};
pub use eval::{decode_row, evaluate, tally, Metrics, Outcome, RowDecode};
pub use nodes::{node_counts, node_report, NodeCounts, NodeRecord, NodeReport};
pub use paths::{Ingested, LogitsReader, Paths};
pub use profile::Profile;
pub use settings::{Policy, Rule, Settings, Temperatures, Thresholds};
pub use suggest::{suggest, Maximize, Report, Request};
pub use tally::{Tallies, TallyStamp};
pub use taxonomy::Taxonomy;
