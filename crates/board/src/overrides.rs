//! Per-node threshold overrides (`Thresholds::nodes`, by column) as the page keeps and shows
//! them: by node id across a reload or a change of taxonomy, so that they come back only on a
//! taxonomy that has those nodes, never on whatever node holds the same column elsewhere.

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

/// One override as the page lists it.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeOverride {
    pub id: String,
    /// The taxonomy's display name (empty when it has none).
    pub name: String,
    pub depth: usize,
    pub threshold: f64,
}

impl Board {
    /// The per-node overrides in use, by depth then id, against the staged taxonomy (whose
    /// columns they are).
    pub fn node_overrides(&self) -> Vec<NodeOverride> {
        let Some((_, tax)) = &self.taxonomy else {
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

    /// The overrides to store, by node id: those waiting for a taxonomy if any, else those in
    /// use.
    pub(crate) fn stored_nodes(&self) -> BTreeMap<String, f64> {
        match (&self.pending_nodes, &self.taxonomy) {
            (Some(ids), _) => ids.clone(),
            (None, Some((_, tax))) => to_ids(tax, &self.settings.thresholds.nodes),
            (None, None) => BTreeMap::new(),
        }
    }

    /// Remember the overrides by id before the staged taxonomy is replaced (unless some are
    /// already waiting), so [`Board::resolve_nodes`] can place them on the new one.
    pub(crate) fn hold_nodes(&mut self) {
        if self.pending_nodes.is_none() {
            if let Some((_, tax)) = &self.taxonomy {
                self.pending_nodes = Some(to_ids(tax, &self.settings.thresholds.nodes));
            }
        }
    }

    /// Place the waiting overrides on the staged taxonomy, if there is one.
    pub(crate) fn resolve_nodes(&mut self) {
        if let (Some(ids), Some((_, tax))) = (&self.pending_nodes, &self.taxonomy) {
            self.settings.thresholds.nodes = from_ids(tax, ids);
            self.pending_nodes = None;
        }
    }
}
