//! Per-node threshold overrides (`Thresholds::nodes`, by column) as the page keeps and shows
//! them: by node id across a reload or a new batch, so that they come back only on a taxonomy
//! that has those nodes, never on whatever node holds the same column in another taxonomy.
//!
//! The board keeps the overrides by id beside the taxonomy they are placed on ([`NodeIds`]). A
//! profile sets both ([`Board::adopt_nodes`]); stored settings set the ids only, to be placed
//! on the next taxonomy the controls belong to ([`Board::place_nodes`], from `fit_depths`); a
//! new batch's taxonomy takes the ids it has and drops the others.

use std::collections::BTreeMap;

use hedgerow_core::Taxonomy;

use crate::state::Board;

/// Overrides by column → by node id (columns the taxonomy does not have are left out).
pub fn to_ids(tax: &Taxonomy, nodes: &[(u32, f64)]) -> BTreeMap<String, f64> {
    nodes
        .iter()
        .filter_map(|&(v, t)| Some((tax.ids().get(v as usize)?.clone(), t)))
        .collect()
}

/// Overrides by node id → by column, in column order. Ids this taxonomy does not have, and
/// values outside [0, 1] (stored settings are user-editable), are dropped.
pub fn from_ids(tax: &Taxonomy, ids: &BTreeMap<String, f64>) -> Vec<(u32, f64)> {
    let mut nodes: Vec<(u32, f64)> = ids
        .iter()
        .filter(|(_, t)| (0.0..=1.0).contains(*t))
        .filter_map(|(id, &t)| Some((tax.lookup(id)?, t)))
        .collect();
    nodes.sort_by_key(|&(v, _)| v);
    nodes
}

/// The overrides by node id, and the fingerprint of the taxonomy whose columns
/// `Settings::thresholds.nodes` holds them in (`None`: not placed yet).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct NodeIds {
    pub placed_on: Option<String>,
    pub ids: BTreeMap<String, f64>,
}

impl NodeIds {
    /// Overrides to place on the next taxonomy (from stored settings).
    pub fn waiting(ids: BTreeMap<String, f64>) -> Self {
        NodeIds {
            placed_on: None,
            ids,
        }
    }
}

/// One override as the page lists it.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeOverride {
    pub id: String,
    /// The taxonomy's display name (empty when it is the id or missing).
    pub name: String,
    pub depth: usize,
    pub threshold: f64,
}

impl Board {
    /// The per-node overrides in use, by depth then id.
    pub fn node_overrides(&self) -> Vec<NodeOverride> {
        let Some(tax) = self.controls_taxonomy() else {
            return Vec::new();
        };
        let mut out: Vec<NodeOverride> = self
            .settings
            .thresholds
            .nodes
            .iter()
            .filter(|&&(v, _)| (v as usize) < tax.len())
            .map(|&(v, t)| {
                let (id, name) = (tax.id(v), tax.name(v));
                NodeOverride {
                    id: id.to_string(),
                    name: if name == id {
                        String::new()
                    } else {
                        name.into()
                    },
                    depth: tax.depth(v),
                    threshold: t,
                }
            })
            .collect();
        out.sort_by(|a, b| (a.depth, &a.id).cmp(&(b.depth, &b.id)));
        out
    }

    /// The overrides to store, by node id.
    pub(crate) fn stored_nodes(&self) -> BTreeMap<String, f64> {
        self.node_ids
            .as_ref()
            .map(|n| n.ids.clone())
            .unwrap_or_default()
    }

    /// The settings' overrides were just set for `tax` (a profile): keep them by id.
    pub(crate) fn adopt_nodes(&mut self, tax: &Taxonomy) {
        self.node_ids = Some(NodeIds {
            placed_on: Some(tax.fingerprint().to_string()),
            ids: to_ids(tax, &self.settings.thresholds.nodes),
        });
    }

    /// Set (or with `None` clear) node `id`'s own threshold, kept by id like a profile's.
    pub(crate) fn set_node(&mut self, id: &str, value: Option<f64>) {
        let Some(tax) = self.controls_taxonomy() else {
            return;
        };
        let Some(v) = tax.lookup(id) else {
            return;
        };
        if value.is_some_and(|t| !(0.0..=1.0).contains(&t)) {
            return;
        }
        self.place_nodes();
        let nodes = &mut self.settings.thresholds.nodes;
        nodes.retain(|&(c, _)| c != v);
        if let Some(t) = value {
            nodes.push((v, t));
            nodes.sort_by_key(|&(c, _)| c);
        }
        self.adopt_nodes(&tax);
        self.rescore();
    }

    /// Put the overrides on the taxonomy the controls belong to, when they are not on it yet
    /// (stored settings, or a new batch): the ids it has, in its columns; the others go.
    pub(crate) fn place_nodes(&mut self) {
        let Some(tax) = self.controls_taxonomy() else {
            return;
        };
        let Some(n) = &self.node_ids else {
            return;
        };
        if n.placed_on.as_deref() == Some(tax.fingerprint()) {
            return;
        }
        let nodes = from_ids(&tax, &n.ids);
        self.node_ids = Some(NodeIds {
            placed_on: Some(tax.fingerprint().to_string()),
            ids: to_ids(&tax, &nodes),
        });
        self.settings.thresholds.nodes = nodes;
    }
}
