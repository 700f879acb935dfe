//! The label tree: parsing (CSV or JSON, rows in any order), structure tables and fingerprint.
//!
//! Node `k` (for `k < len()`) is the `k`-th row of the taxonomy file and owns logit column `k`.
//! The implicit root is node `len()`, at depth 0; top-level nodes are at depth 1.

use std::collections::HashMap;

use crate::error::{Collector, Error, ErrorKind, Errors, Location, Result};

/// Deepest taxonomy the engine accepts (depths are stored in a `u8`).
pub const MAX_DEPTH: usize = 200;

/// Marks "no node" in the ancestor table.
pub const NONE: u32 = u32::MAX;

/// One row as read from a file, before the tree is built.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RawNode {
    pub id: String,
    pub parent: Option<String>,
    pub name: String,
    /// Where the row was read, for messages ("line 12", "entry 3").
    pub at: Location,
}

/// A validated label tree with the tables the decoder and metrics need.
#[derive(Debug, Clone)]
pub struct Taxonomy {
    ids: Vec<String>,
    names: Vec<String>,
    /// `parent[v]` for every node incl. the root (the root is its own parent).
    parent: Vec<u32>,
    depth: Vec<u8>,
    /// Children of node `v` are `children[child_start[v]..child_start[v + 1]]`, ascending.
    child_start: Vec<u32>,
    children: Vec<u32>,
    leaves: Vec<u32>,
    gain: Vec<f64>,
    /// `path_gain[v * (max_depth + 1) + d]`: the information gain of `v`'s ancestor at depth d
    /// (one load instead of two in the evaluation kernel).
    path_gain: Vec<f64>,
    /// `anc[v * (max_depth + 1) + d]`: the ancestor of `v` at depth `d` (`v` itself at its own
    /// depth), or [`NONE`] below `v`.
    anc: Vec<u32>,
    max_depth: usize,
    index: HashMap<String, u32>,
    fingerprint: String,
}

impl Taxonomy {
    /// Parse a taxonomy file, choosing CSV or JSON by its first non-blank byte.
    pub fn parse(bytes: &[u8], file: &str) -> Result<Self> {
        let first = bytes
            .iter()
            .copied()
            .find(|b| !(b.is_ascii_whitespace() || *b == 0xEF || *b == 0xBB || *b == 0xBF));
        if first == Some(b'[') {
            Self::from_json(bytes, file)
        } else {
            Self::from_csv(bytes, file)
        }
    }

    /// CSV with a header holding `id` and `parent` (and optionally `name`); RFC 4180 quoting.
    pub fn from_csv(bytes: &[u8], file: &str) -> Result<Self> {
        let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .flexible(false)
            .from_reader(bytes);
        let headers = reader
            .headers()
            .map_err(|e| Error::new(file, Location::line(1), ErrorKind::Csv(e.to_string())))?
            .clone();
        let find = |name: &str| {
            headers
                .iter()
                .position(|h| h.trim().eq_ignore_ascii_case(name))
        };
        let found = || {
            headers
                .iter()
                .map(|h| format!("`{h}`"))
                .collect::<Vec<_>>()
                .join(", ")
        };
        let mut errors = Collector::default();
        let id_col = find("id");
        let parent_col = find("parent");
        if id_col.is_none() {
            errors.push(Error::new(
                file,
                Location::line(1),
                ErrorKind::MissingColumn {
                    expected: "id",
                    found: found(),
                },
            ));
        }
        if parent_col.is_none() {
            errors.push(Error::new(
                file,
                Location::line(1),
                ErrorKind::MissingColumn {
                    expected: "parent",
                    found: found(),
                },
            ));
        }
        let (Some(id_col), Some(parent_col)) = (id_col, parent_col) else {
            errors.finish(file)?;
            return Err(Errors(vec![]));
        };
        let name_col = find("name");
        let mut raw = Vec::new();
        for record in reader.records() {
            match record {
                Ok(rec) => {
                    let line = rec.position().map(|p| p.line()).unwrap_or(0);
                    let get = |c: usize| rec.get(c).unwrap_or("").to_string();
                    let parent = get(parent_col);
                    raw.push(RawNode {
                        id: get(id_col),
                        parent: if parent.is_empty() {
                            None
                        } else {
                            Some(parent)
                        },
                        name: name_col.map(get).unwrap_or_default(),
                        at: Location::line(line),
                    });
                }
                Err(e) => {
                    let line = e.position().map(|p| p.line()).unwrap_or(0);
                    let kind = match e.kind() {
                        csv::ErrorKind::UnequalLengths {
                            expected_len, len, ..
                        } => ErrorKind::Invalid {
                            what: "row".into(),
                            expected: format!("{expected_len} fields as in the header"),
                            found: format!("{len} fields"),
                        },
                        _ => ErrorKind::Csv(e.to_string()),
                    };
                    errors.push(Error::new(file, Location::line(line), kind));
                }
            }
        }
        errors.finish(file)?;
        Self::build(raw, file)
    }

    /// JSON: an array of `{"id", "parent", "name"}` objects (`parent` null, empty or absent at
    /// the top level; ids may be strings or integers).
    pub fn from_json(bytes: &[u8], file: &str) -> Result<Self> {
        let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
        let value: serde_json::Value = serde_json::from_slice(bytes).map_err(|e| {
            Error::new(
                file,
                Location::line(e.line() as u64).column(e.column().to_string()),
                ErrorKind::Json(e.to_string()),
            )
        })?;
        let Some(items) = value.as_array() else {
            return Err(Error::new(
                file,
                Location::default(),
                ErrorKind::Invalid {
                    what: "top level".into(),
                    expected: "an array of node objects".into(),
                    found: kind_of(&value).into(),
                },
            )
            .into());
        };
        let mut errors = Collector::default();
        let mut raw = Vec::with_capacity(items.len());
        for (i, item) in items.iter().enumerate() {
            let at = Location::entry(i as u64);
            let Some(obj) = item.as_object() else {
                errors.push(Error::new(
                    file,
                    at,
                    ErrorKind::Invalid {
                        what: "entry".into(),
                        expected: "an object".into(),
                        found: kind_of(item).into(),
                    },
                ));
                continue;
            };
            let text = |key: &str| -> std::result::Result<Option<String>, ErrorKind> {
                match obj.get(key) {
                    None | Some(serde_json::Value::Null) => Ok(None),
                    Some(serde_json::Value::String(s)) => Ok(Some(s.clone())),
                    Some(serde_json::Value::Number(n)) if n.is_i64() || n.is_u64() => {
                        Ok(Some(n.to_string()))
                    }
                    Some(other) => Err(ErrorKind::Invalid {
                        what: format!("`{key}`"),
                        expected: "a string".into(),
                        found: kind_of(other).into(),
                    }),
                }
            };
            let (id, parent, name) = match (text("id"), text("parent"), text("name")) {
                (Ok(id), Ok(parent), Ok(name)) => (id, parent, name),
                (a, b, c) => {
                    for r in [a, b, c] {
                        if let Err(kind) = r {
                            errors.push(Error::new(file, at.clone(), kind));
                        }
                    }
                    continue;
                }
            };
            raw.push(RawNode {
                id: id.unwrap_or_default(),
                parent: parent.filter(|p| !p.is_empty()),
                name: name.unwrap_or_default(),
                at,
            });
        }
        errors.finish(file)?;
        Self::build(raw, file)
    }

    /// Build the tree from rows in any order, reporting every problem found.
    pub fn build(raw: Vec<RawNode>, file: &str) -> Result<Self> {
        let mut errors = Collector::default();
        if raw.is_empty() {
            errors.push(Error::new(
                file,
                Location::default(),
                ErrorKind::EmptyTaxonomy,
            ));
            return errors.finish(file).and(Err(Errors(vec![])));
        }
        let m = raw.len();
        let root = m as u32;
        let mut index: HashMap<String, u32> = HashMap::with_capacity(m);
        for (k, node) in raw.iter().enumerate() {
            if node.id.is_empty() {
                errors.push(Error::new(
                    file,
                    node.at.clone().column("id"),
                    ErrorKind::Empty { what: "id" },
                ));
                continue;
            }
            if let Some(&first) = index.get(&node.id) {
                let first_at = format!("{}", raw[first as usize].at);
                errors.push(Error::new(
                    file,
                    node.at.clone().column("id"),
                    ErrorKind::DuplicateId {
                        id: node.id.clone(),
                        first: first_at.trim_start_matches(", ").to_string(),
                    },
                ));
            } else {
                index.insert(node.id.clone(), k as u32);
            }
        }
        let mut parent = vec![root; m + 1];
        for (k, node) in raw.iter().enumerate() {
            if let Some(p) = &node.parent {
                match index.get(p) {
                    Some(&pk) => parent[k] = pk,
                    None => errors.push(Error::new(
                        file,
                        node.at.clone().column("parent"),
                        ErrorKind::UnknownParent {
                            id: node.id.clone(),
                            parent: p.clone(),
                        },
                    )),
                }
            }
        }
        errors.finish(file)?;

        // Children lists (ascending column order), then depths by a walk from the root;
        // nodes the walk never reaches hang on a cycle.
        let mut counts = vec![0u32; m + 2];
        for k in 0..m {
            counts[parent[k] as usize + 1] += 1;
        }
        for v in 0..=m {
            counts[v + 1] += counts[v];
        }
        let child_start = counts;
        let mut fill = child_start.clone();
        let mut children = vec![0u32; m];
        for (k, &p) in parent.iter().enumerate().take(m) {
            let p = p as usize;
            children[fill[p] as usize] = k as u32;
            fill[p] += 1;
        }
        let mut depth = vec![u8::MAX; m + 1];
        let mut reached = vec![false; m + 1];
        depth[m] = 0;
        reached[m] = true;
        let mut order = Vec::with_capacity(m + 1);
        order.push(root);
        let mut head = 0;
        let mut max_depth = 0usize;
        let mut too_deep = false;
        while head < order.len() {
            let v = order[head] as usize;
            head += 1;
            for &c in &children[child_start[v] as usize..child_start[v + 1] as usize] {
                let d = depth[v] as usize + 1;
                if d > MAX_DEPTH {
                    too_deep = true;
                    continue;
                }
                depth[c as usize] = d as u8;
                reached[c as usize] = true;
                max_depth = max_depth.max(d);
                order.push(c);
            }
        }
        if too_deep {
            errors.push(Error::new(
                file,
                Location::default(),
                ErrorKind::TooDeep {
                    depth: MAX_DEPTH + 1,
                    max: MAX_DEPTH,
                },
            ));
            return errors.finish(file).and(Err(Errors(vec![])));
        }
        // Every unreached node hangs on a cycle (or below one): follow parents until a node
        // repeats, and report each cycle once.
        let mut reported = vec![false; m];
        let mut walk_of = vec![usize::MAX; m];
        for start in 0..m {
            if reached[start] || reported[start] {
                continue;
            }
            let mut seen = Vec::new();
            let mut v = start;
            while !reported[v] && walk_of[v] != start {
                walk_of[v] = start;
                seen.push(v);
                v = parent[v] as usize;
            }
            if !reported[v] {
                let mut cycle = vec![v];
                let mut w = parent[v] as usize;
                while w != v {
                    cycle.push(w);
                    w = parent[w] as usize;
                }
                let first = cycle.iter().copied().min().unwrap_or(v);
                let text = cycle
                    .iter()
                    .chain(std::iter::once(&v))
                    .map(|&c| format!("`{}`", raw[c].id))
                    .collect::<Vec<_>>()
                    .join(" → ");
                errors.push(Error::new(
                    file,
                    raw[first].at.clone().column("parent"),
                    ErrorKind::Cycle { cycle: text },
                ));
            }
            for c in seen {
                reported[c] = true;
            }
        }
        errors.finish(file)?;

        let mut leaves = vec![0u32; m + 1];
        for &v in order.iter().rev() {
            let v = v as usize;
            if child_start[v] == child_start[v + 1] {
                leaves[v] = 1;
            }
            if v != m {
                let p = parent[v] as usize;
                leaves[p] += leaves[v];
            }
        }
        let total = leaves[m] as f64;
        let gain: Vec<f64> = (0..=m)
            .map(|v| {
                if v == m {
                    0.0
                } else if total <= 1.0 {
                    1.0
                } else {
                    // libm's log, not the platform's: the page (wasm) and the command line
                    // (native) then give the same bits.
                    1.0 - libm::log(leaves[v] as f64) / libm::log(total)
                }
            })
            .collect();
        let width = max_depth + 1;
        let mut anc = vec![NONE; (m + 1) * width];
        for &v in &order {
            let v = v as usize;
            let d = depth[v] as usize;
            if v != m {
                let p = parent[v] as usize;
                let (src, dst) = (p * width, v * width);
                for i in 0..d {
                    anc[dst + i] = anc[src + i];
                }
            }
            anc[v * width + d] = v as u32;
        }
        let path_gain = anc
            .iter()
            .map(|&a| if a == NONE { 0.0 } else { gain[a as usize] })
            .collect();
        let fingerprint = fingerprint(&raw);
        let (ids, names) = raw.into_iter().map(|r| (r.id, r.name)).unzip();
        Ok(Taxonomy {
            ids,
            names,
            parent,
            depth,
            child_start,
            children,
            leaves,
            gain,
            anc,
            path_gain,
            max_depth,
            index,
            fingerprint,
        })
    }

    /// Number of nodes (rows of the file, logit columns), without the implicit root.
    pub fn len(&self) -> usize {
        self.ids.len()
    }
    pub fn is_empty(&self) -> bool {
        self.ids.is_empty()
    }
    /// The implicit root's index (`len()`).
    pub fn root(&self) -> u32 {
        self.ids.len() as u32
    }
    /// Depth D of the deepest node.
    pub fn max_depth(&self) -> usize {
        self.max_depth
    }
    /// The id of node `v`; the root's id is the empty string.
    pub fn id(&self, v: u32) -> &str {
        self.ids.get(v as usize).map(String::as_str).unwrap_or("")
    }
    pub fn name(&self, v: u32) -> &str {
        self.names.get(v as usize).map(String::as_str).unwrap_or("")
    }
    pub fn ids(&self) -> &[String] {
        &self.ids
    }
    pub fn lookup(&self, id: &str) -> Option<u32> {
        self.index.get(id).copied()
    }
    pub fn parent(&self, v: u32) -> u32 {
        self.parent[v as usize]
    }
    pub fn depth(&self, v: u32) -> usize {
        self.depth[v as usize] as usize
    }
    pub fn children(&self, v: u32) -> &[u32] {
        let v = v as usize;
        &self.children[self.child_start[v] as usize..self.child_start[v + 1] as usize]
    }
    pub fn is_leaf(&self, v: u32) -> bool {
        self.children(v).is_empty()
    }
    /// Number of leaves at or below `v`.
    pub fn leaf_count(&self, v: u32) -> u32 {
        self.leaves[v as usize]
    }
    /// Normalised information gain of predicting `v`: 1 − ln|leaves(v)| / ln|leaves(root)|
    /// (Deng, Krause, Berg & Fei-Fei, CVPR 2012): 0 at the root, 1 at a leaf. With a single leaf
    /// in the whole tree, every non-root node gets 1.
    pub fn gain(&self, v: u32) -> f64 {
        self.gain[v as usize]
    }
    /// Information gain of the ancestor of `v` at depth `d` (0 below `v`).
    #[inline]
    pub fn gain_at(&self, v: u32, d: usize) -> f64 {
        self.path_gain
            .get(v as usize * (self.max_depth + 1) + d)
            .copied()
            .unwrap_or(0.0)
    }
    /// The ancestor of `v` at depth `d` (`v` itself when `d == depth(v)`), [`NONE`] if `d` is
    /// below `v`.
    pub fn ancestor(&self, v: u32, d: usize) -> u32 {
        self.anc
            .get(v as usize * (self.max_depth + 1) + d)
            .copied()
            .unwrap_or(NONE)
    }
    /// The ancestors of `v` from depth 0 (the root) to `v` itself.
    pub fn path(&self, v: u32) -> &[u32] {
        let w = self.max_depth + 1;
        let start = v as usize * w;
        &self.anc[start..start + self.depth(v) + 1]
    }
    /// Depth of the lowest common ancestor of `a` and `b`.
    pub fn lca_depth(&self, a: u32, b: u32) -> usize {
        let (pa, pb) = (self.path(a), self.path(b));
        pa.iter()
            .zip(pb)
            .take_while(|(x, y)| x == y)
            .count()
            .saturating_sub(1)
    }
    /// Edges between `a` and `b` through their lowest common ancestor.
    pub fn distance(&self, a: u32, b: u32) -> usize {
        self.depth(a) + self.depth(b) - 2 * self.lca_depth(a, b)
    }
    /// Hex digest of ids, parents and row order (names excluded, so relabelling for display
    /// keeps profiles valid).
    pub fn fingerprint(&self) -> &str {
        &self.fingerprint
    }
    /// Number of leaves in the whole tree.
    pub fn total_leaves(&self) -> u32 {
        self.leaves[self.ids.len()]
    }
}

fn fingerprint(raw: &[RawNode]) -> String {
    let mut h = blake3::Hasher::new();
    h.update(b"hedgerow taxonomy v1\0");
    for node in raw {
        h.update(&(node.id.len() as u64).to_le_bytes());
        h.update(node.id.as_bytes());
        let parent = node.parent.as_deref().unwrap_or("");
        h.update(&(parent.len() as u64).to_le_bytes());
        h.update(parent.as_bytes());
    }
    h.finalize().to_hex().to_string()
}

fn kind_of(v: &serde_json::Value) -> &'static str {
    match v {
        serde_json::Value::Null => "null",
        serde_json::Value::Bool(_) => "a boolean",
        serde_json::Value::Number(_) => "a number",
        serde_json::Value::String(_) => "a string",
        serde_json::Value::Array(_) => "an array",
        serde_json::Value::Object(_) => "an object",
    }
}
