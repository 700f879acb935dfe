//! hedgerow-core
