//! hedgerow-board: everything the page shows and does, without a browser. The state, the
//! actions that change it and a pure `apply` live in `state`; per-node overrides by node id in
//! `overrides`; the per-node table kept in step with the thresholds in `nodes`; the row
//! inspector in `inspect`, the inspected row's runner-up siblings (read from that row's logits
//! alone) in `runner_up`; the comparison with a baseline setting in `baseline`; what the controls say beyond a number (stop shares, refused entries, the
//! profile's file name) in `wording`; the charts are drawing functions generic over the
//! plotters backend (`charts`), so native tests render them to SVG.

pub mod baseline;
pub mod charts;
pub mod inspect;
pub mod loading;
pub mod nodes;
pub mod overrides;
pub mod runner_up;
pub mod state;
pub mod suggestion;
pub mod wording;
