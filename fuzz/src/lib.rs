//! Fuzz targets for every parser a user's bytes reach; the bodies live in `targets.rs`, which
//! the engine's tests also include to replay the committed corpus.

pub mod targets;
