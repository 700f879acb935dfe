//! Threshold profiles: the settings chosen on a validation batch, saved as versioned JSON that
//! the page writes and the command line applies identically.
//!
//! Schema (version 1):
//! ```json
//! {
//!   "kind": "hedgerow threshold profile",
//!   "version": 1,
//!   "rule": "cumulative",
//!   "object_threshold": 0.5,
//!   "thresholds": [0.9, 0.7, 0.5, 0.4],
//!   "node_thresholds": {},
//!   "temperatures": [1.0],
//!   "unverifiable": "credit",
//!   "objectness": true,
//!   "taxonomy": { "fingerprint": "…", "nodes": 160, "depth": 5 },
//!   "scored": { "data_fingerprint": "…", "metrics": { … } }
//! }
//! ```
//! `made_by` (optional) records how `hedgerow suggest` chose the thresholds (target,
//! confidence, methods, rows per part, the bound reached); older readers ignore it.
//!
//! `objectness` says whether the batch it was scored on had objectness (so `object_threshold`
//! took part in the decode); profiles saved before the field existed, and profiles not scored
//! on a batch, leave it out.
//!
//! Thresholds are stored as JSON numbers that round-trip exactly, so loading a profile gives
//! back bit-identical thresholds and therefore the same decode.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::batch::Batch;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::eval::Metrics;
use crate::settings::{Policy, Rule, Settings, Temperatures, Thresholds};
use crate::taxonomy::Taxonomy;

pub const KIND: &str = "hedgerow threshold profile";
pub const VERSION: u32 = 1;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TaxonomyStamp {
    pub fingerprint: String,
    pub nodes: usize,
    pub depth: usize,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Scored {
    pub data_fingerprint: String,
    pub metrics: Metrics,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Profile {
    pub kind: String,
    pub version: u32,
    pub rule: Rule,
    pub object_threshold: f64,
    pub thresholds: Vec<f64>,
    /// Per-node overrides by node id (replace the node's depth threshold).
    #[serde(default)]
    pub node_thresholds: BTreeMap<String, f64>,
    #[serde(default)]
    pub temperatures: Vec<f64>,
    pub unverifiable: Policy,
    /// Whether P(root) came from objectness in the batch the profile was scored on (so the
    /// object threshold applied); `None` when unknown.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub objectness: Option<bool>,
    pub taxonomy: TaxonomyStamp,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scored: Option<Scored>,
    /// How `hedgerow suggest` made these thresholds; absent in profiles made by hand.
    /// Readers that predate the field ignore it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub made_by: Option<crate::suggest::Record>,
}

impl Profile {
    /// A profile of `settings` for `tax`, with the metrics they scored on `batch` if given.
    pub fn new(
        tax: &Taxonomy,
        settings: &Settings,
        temperatures: &Temperatures,
        scored: Option<(&Batch, &Metrics)>,
    ) -> Self {
        Profile {
            kind: KIND.to_string(),
            version: VERSION,
            rule: settings.rule,
            object_threshold: settings.thresholds.object,
            thresholds: settings.thresholds.depths.clone(),
            node_thresholds: settings
                .thresholds
                .nodes
                .iter()
                .map(|&(v, t)| (tax.id(v).to_string(), t))
                .collect(),
            temperatures: temperatures.0.clone(),
            unverifiable: settings.policy,
            objectness: scored.map(|(b, _)| b.has_objectness()),
            taxonomy: TaxonomyStamp {
                fingerprint: tax.fingerprint().to_string(),
                nodes: tax.len(),
                depth: tax.max_depth(),
            },
            scored: scored.map(|(b, m)| Scored {
                data_fingerprint: b.fingerprint().to_string(),
                metrics: m.clone(),
            }),
            made_by: None,
        }
    }

    pub fn to_json(&self) -> String {
        serde_json::to_string_pretty(self).unwrap_or_default()
    }

    /// Parse and check a profile against the loaded taxonomy.
    pub fn from_json(bytes: &[u8], file: &str, tax: &Taxonomy) -> Result<Self> {
        let at =
            |e: &serde_json::Error| Location::line(e.line() as u64).column(e.column().to_string());
        let value: serde_json::Value = serde_json::from_slice(bytes)
            .map_err(|e| Error::new(file, at(&e), ErrorKind::Json(e.to_string())))?;
        let kind = value.get("kind").and_then(|k| k.as_str()).unwrap_or("");
        if kind != KIND {
            return Err(Error::new(
                file,
                Location::key("kind"),
                ErrorKind::Invalid {
                    what: "not a threshold profile".into(),
                    expected: format!("\"{KIND}\""),
                    found: kind.to_string(),
                },
            )
            .into());
        }
        let version = value.get("version").and_then(|v| v.as_u64()).unwrap_or(0);
        if version != VERSION as u64 {
            return Err(Error::new(
                file,
                Location::key("version"),
                ErrorKind::Invalid {
                    what: "profile version".into(),
                    expected: VERSION.to_string(),
                    found: version.to_string(),
                },
            )
            .into());
        }
        // Typed from the bytes again (not from `value`), so a missing field or a wrong type
        // is located by line and column too.
        let profile: Profile = serde_json::from_slice(bytes)
            .map_err(|e| Error::new(file, at(&e), ErrorKind::Json(e.to_string())))?;
        if profile.taxonomy.fingerprint != tax.fingerprint() {
            return Err(Error::new(
                file,
                Location::key("taxonomy.fingerprint"),
                ErrorKind::ProfileTaxonomy {
                    expected: short(tax.fingerprint()),
                    expected_nodes: tax.len(),
                    found: short(&profile.taxonomy.fingerprint),
                    found_nodes: profile.taxonomy.nodes,
                },
            )
            .into());
        }
        profile.check_values(file, tax)?;
        Ok(profile)
    }

    /// Every threshold in [0, 1], every node id in the taxonomy, every temperature valid: each
    /// problem named by its key in the file.
    fn check_values(&self, file: &str, tax: &Taxonomy) -> Result<()> {
        let mut errors = Vec::new();
        let mut range = |key: String, what: String, t: f64| {
            if !(0.0..=1.0).contains(&t) {
                errors.push(Error::new(
                    file,
                    Location::key(key),
                    ErrorKind::ThresholdRange {
                        what,
                        found: t.to_string(),
                    },
                ));
            }
        };
        range(
            "object_threshold".into(),
            "object threshold".into(),
            self.object_threshold,
        );
        for (i, &t) in self.thresholds.iter().enumerate() {
            range(
                format!("thresholds[{i}]"),
                format!("threshold for depth {}", i + 1),
                t,
            );
        }
        for (id, &t) in &self.node_thresholds {
            range(
                format!("node_thresholds.\"{id}\""),
                format!("threshold for node {id}"),
                t,
            );
        }
        if self.thresholds.is_empty() {
            errors.push(Error::new(
                file,
                Location::key("thresholds"),
                ErrorKind::Invalid {
                    what: "thresholds".into(),
                    expected: "at least one value".into(),
                    found: "none".into(),
                },
            ));
        }
        for id in self.node_thresholds.keys() {
            if tax.lookup(id).is_none() {
                errors.push(Error::new(
                    file,
                    Location::key(format!("node_thresholds.\"{id}\"")),
                    ErrorKind::Invalid {
                        what: "node id".into(),
                        expected: "an id of the taxonomy".into(),
                        found: id.clone(),
                    },
                ));
            }
        }
        for (i, &t) in self.temperatures.iter().enumerate() {
            if let Err(kind) = Temperatures(vec![t]).validate() {
                let kind = match kind {
                    ErrorKind::TemperatureRange {
                        found, min, max, ..
                    } => ErrorKind::TemperatureRange {
                        depth: i + 1,
                        found,
                        min,
                        max,
                    },
                    other => other,
                };
                errors.push(Error::new(
                    file,
                    Location::key(format!("temperatures[{i}]")),
                    kind,
                ));
            }
        }
        if errors.is_empty() {
            // What the checks above cover, `settings` checks again for its other callers.
            self.settings(tax)
                .map_err(|k| Error::new(file, Location::default(), k))?;
            Ok(())
        } else {
            Err(crate::error::Errors(errors))
        }
    }

    /// The decode settings this profile holds.
    pub fn settings(&self, tax: &Taxonomy) -> std::result::Result<Settings, ErrorKind> {
        let mut nodes = Vec::with_capacity(self.node_thresholds.len());
        for (id, &t) in &self.node_thresholds {
            let v = tax
                .lookup(id)
                .ok_or_else(|| ErrorKind::UnknownLabel { found: id.clone() })?;
            nodes.push((v, t));
        }
        let thresholds = Thresholds {
            object: self.object_threshold,
            depths: self.thresholds.clone(),
            nodes,
        };
        thresholds.validate()?;
        Ok(Settings {
            rule: self.rule,
            thresholds,
            policy: self.unverifiable,
        })
    }

    pub fn temperatures(&self) -> Temperatures {
        Temperatures(self.temperatures.clone())
    }
}

fn short(fingerprint: &str) -> String {
    fingerprint.chars().take(12).collect()
}
