//! The taxonomy cut out of the noun hierarchy: the hyponyms below a chosen synset, made a tree
//! (one parent each), limited in depth and size, and written as `taxonomy.csv`.
//!
//! Rules, all deterministic:
//! - The subtree is every synset reached from the root through hyponym links (the inverse of
//!   `@`), not entering the excluded synsets. Instances (`@i`, named individuals) are left out:
//!   a classifier sorts kinds of things.
//! - A synset with several hypernyms inside the subtree keeps the first one its line lists.
//! - Nodes deeper than `max_depth` are cut. If more than `max_nodes` remain, every node keeps
//!   only its `k` largest child branches (ties by offset), with the largest `k` that fits: wide
//!   fans lose their small branches first, and the big branches keep their depth.
//! - Columns are in preorder, children by offset, so a branch's rows sit together in the file.

use std::collections::{HashMap, HashSet, VecDeque};

use anyhow::{bail, Context};

use super::wndb::Noun;

/// How large the taxonomy may be.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    pub max_depth: usize,
    pub max_nodes: usize,
}

/// The taxonomy, one entry per column (node).
#[derive(Debug, Clone)]
pub struct Tree {
    pub offsets: Vec<u32>,
    /// Parent column; `None` for the root's children.
    pub parent: Vec<Option<usize>>,
    /// Depth, 1 for the root's children.
    pub depth: Vec<usize>,
    pub children: Vec<Vec<usize>>,
    /// The root's children.
    pub top: Vec<usize>,
    pub ids: Vec<String>,
    pub names: Vec<String>,
    /// Synsets in the subtree before the depth cut and the fan-out cap.
    pub reached: usize,
    /// The fan-out cap applied to fit `max_nodes`, if one was needed.
    pub fanout_cap: Option<usize>,
}

impl Tree {
    pub fn build(noun: &Noun, root: u32, exclude: &[u32], limits: Limits) -> anyhow::Result<Tree> {
        if limits.max_depth == 0 || limits.max_nodes == 0 {
            bail!("the taxonomy limits must be positive: {limits:?}");
        }
        let excluded: HashSet<u32> = exclude.iter().copied().collect();
        if excluded.contains(&root) {
            bail!("the root {root:08} is also excluded");
        }
        // Everything reachable through hyponym links.
        let mut inside: HashSet<u32> = HashSet::from([root]);
        let mut queue = VecDeque::from([root]);
        while let Some(u) = queue.pop_front() {
            for &c in noun.hyponyms.get(&u).map(Vec::as_slice).unwrap_or(&[]) {
                if !excluded.contains(&c) && inside.insert(c) {
                    queue.push_back(c);
                }
            }
        }
        let mut members: Vec<u32> = inside.iter().copied().filter(|&o| o != root).collect();
        members.sort_unstable();
        if members.is_empty() {
            bail!("synset {root:08} has no hyponyms to make a taxonomy of");
        }

        // One parent each: the first hypernym inside the subtree. Children by offset.
        let mut kids: HashMap<u32, Vec<u32>> = HashMap::new();
        for &o in &members {
            let synset = noun
                .get(o)
                .with_context(|| format!("internal: synset {o:08} vanished"))?;
            let Some(&p) = synset
                .hypernyms
                .iter()
                .find(|&&h| h != o && inside.contains(&h))
            else {
                bail!("internal: synset {o:08} was reached but has no hypernym in the subtree");
            };
            kids.entry(p).or_default().push(o);
        }

        // Depths by a walk from the root (a cycle in a damaged file is never reached), cut at
        // max_depth; then branch sizes from the bottom up.
        let mut depth: HashMap<u32, usize> = HashMap::from([(root, 0)]);
        let mut order = vec![root];
        let mut head = 0;
        while let Some(&u) = order.get(head) {
            head += 1;
            let d = depth.get(&u).copied().unwrap_or(0) + 1;
            if d > limits.max_depth {
                continue;
            }
            for &c in kids.get(&u).map(Vec::as_slice).unwrap_or(&[]) {
                if let std::collections::hash_map::Entry::Vacant(e) = depth.entry(c) {
                    e.insert(d);
                    order.push(c);
                }
            }
        }
        let kept_children = |u: u32| -> Vec<u32> {
            kids.get(&u)
                .map(|cs| {
                    cs.iter()
                        .copied()
                        .filter(|c| depth.get(c) == depth.get(&u).map(|d| d + 1).as_ref())
                        .collect()
                })
                .unwrap_or_default()
        };
        let mut size: HashMap<u32, usize> = HashMap::new();
        for &u in order.iter().rev() {
            let s = 1 + kept_children(u)
                .iter()
                .map(|c| size.get(c).copied().unwrap_or(0))
                .sum::<usize>();
            size.insert(u, s);
        }
        // Children ranked by branch size (largest first, ties by offset).
        let ranked: HashMap<u32, Vec<u32>> = order
            .iter()
            .map(|&u| {
                let mut cs = kept_children(u);
                cs.sort_by_key(|c| (std::cmp::Reverse(size.get(c).copied().unwrap_or(0)), *c));
                (u, cs)
            })
            .collect();
        let count_with_cap = |k: usize| -> usize {
            let mut n = 0;
            let mut stack = vec![root];
            while let Some(u) = stack.pop() {
                for &c in ranked
                    .get(&u)
                    .map(Vec::as_slice)
                    .unwrap_or(&[])
                    .iter()
                    .take(k)
                {
                    n += 1;
                    stack.push(c);
                }
            }
            n
        };
        let widest = ranked.values().map(Vec::len).max().unwrap_or(0);
        let fanout_cap = if order.len() - 1 > limits.max_nodes {
            let k = (1..=widest)
                .rev()
                .find(|&k| count_with_cap(k) <= limits.max_nodes)
                .unwrap_or(1);
            Some(k)
        } else {
            None
        };

        // Columns in preorder, children by offset.
        let cap = fanout_cap.unwrap_or(usize::MAX);
        let mut tree = Tree {
            offsets: Vec::new(),
            parent: Vec::new(),
            depth: Vec::new(),
            children: Vec::new(),
            top: Vec::new(),
            ids: Vec::new(),
            names: Vec::new(),
            reached: members.len(),
            fanout_cap,
        };
        let chosen = |u: u32| -> Vec<u32> {
            let mut cs: Vec<u32> = ranked
                .get(&u)
                .map(|cs| cs.iter().copied().take(cap).collect())
                .unwrap_or_default();
            cs.sort_unstable();
            cs
        };
        // (synset, parent column); reversed onto the stack so the first child comes out first.
        let mut stack: Vec<(u32, Option<usize>)> =
            chosen(root).into_iter().rev().map(|c| (c, None)).collect();
        while let Some((o, parent)) = stack.pop() {
            let v = tree.offsets.len();
            let synset = noun
                .get(o)
                .with_context(|| format!("internal: synset {o:08} vanished"))?;
            let first = synset.words.first().map(String::as_str).unwrap_or("synset");
            tree.ids.push(format!("{}.{o:08}", first.to_lowercase()));
            tree.names
                .push(synset.lemmas().collect::<Vec<_>>().join(", "));
            tree.offsets.push(o);
            tree.parent.push(parent);
            tree.depth.push(parent.map_or(1, |p| tree.depth[p] + 1));
            tree.children.push(Vec::new());
            match parent {
                Some(p) => tree.children[p].push(v),
                None => tree.top.push(v),
            }
            stack.extend(chosen(o).into_iter().rev().map(|c| (c, Some(v))));
        }
        Ok(tree)
    }

    pub fn len(&self) -> usize {
        self.offsets.len()
    }

    pub fn max_depth(&self) -> usize {
        self.depth.iter().copied().max().unwrap_or(0)
    }

    pub fn is_leaf(&self, v: usize) -> bool {
        self.children[v].is_empty()
    }

    pub fn leaves(&self) -> Vec<usize> {
        (0..self.len()).filter(|&v| self.is_leaf(v)).collect()
    }

    /// Sibling groups: the root's children, then each internal node's children.
    pub fn groups(&self) -> usize {
        1 + (0..self.len()).filter(|&v| !self.is_leaf(v)).count()
    }

    /// `v` and its siblings.
    pub fn siblings(&self, v: usize) -> &[usize] {
        match self.parent[v] {
            Some(p) => &self.children[p],
            None => &self.top,
        }
    }

    /// Columns from depth 1 down to `v`.
    pub fn path(&self, v: usize) -> Vec<usize> {
        let mut path = vec![v];
        let mut u = v;
        while let Some(p) = self.parent[u] {
            path.push(p);
            u = p;
        }
        path.reverse();
        path
    }

    /// `taxonomy.csv`: `id,parent,name`, quoted where RFC 4180 needs it (names hold commas).
    pub fn to_csv(&self) -> anyhow::Result<Vec<u8>> {
        let mut w = csv::Writer::from_writer(Vec::new());
        w.write_record(["id", "parent", "name"])?;
        for v in 0..self.len() {
            let parent = self.parent[v].map_or("", |p| self.ids[p].as_str());
            w.write_record([self.ids[v].as_str(), parent, self.names[v].as_str()])?;
        }
        w.into_inner()
            .context("taxonomy.csv: flushing the CSV writer")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::wordnet::wndb::{self, Synset};

    fn synset(offset: u32, word: &str, hypernyms: &[u32]) -> Synset {
        Synset {
            offset,
            words: vec![word.to_string(), format!("{word}_too")],
            hypernyms: hypernyms.to_vec(),
            instance_of: Vec::new(),
            gloss: String::new(),
        }
    }

    /// root(1) ─ a(10) ─ a1(11), a2(12), a3(13) ─ a3x(14)
    ///         ─ b(20) ─ b1(21)
    ///         ─ c(30)
    ///         ─ excluded(60) ─ gone(50)
    /// and `shared`(40) with the hypernyms 99 (outside), b, a.
    fn noun() -> Noun {
        Noun::new(vec![
            synset(1, "root", &[]),
            synset(10, "a", &[1]),
            synset(11, "a1", &[10]),
            synset(12, "a2", &[10]),
            synset(13, "a3", &[10]),
            synset(14, "a3x", &[13]),
            synset(20, "b", &[1]),
            synset(21, "b1", &[20]),
            synset(30, "c", &[1]),
            synset(40, "shared", &[99, 20, 10]),
            synset(60, "excluded", &[1]),
            synset(50, "gone", &[60]),
            synset(99, "elsewhere", &[]),
        ])
        .expect("noun")
    }

    const WIDE: Limits = Limits {
        max_depth: 8,
        max_nodes: 800,
    };

    #[test]
    fn first_hypernym_inside_wins_and_exclusions_prune() -> anyhow::Result<()> {
        let tree = Tree::build(&noun(), 1, &[60], WIDE)?;
        let ids: Vec<&str> = tree.ids.iter().map(String::as_str).collect();
        assert_eq!(
            ids,
            [
                "a.00000010",
                "a1.00000011",
                "a2.00000012",
                "a3.00000013",
                "a3x.00000014",
                "b.00000020",
                "b1.00000021",
                "shared.00000040",
                "c.00000030",
            ]
        );
        // `shared` hangs under b (its first hypernym inside), not a; 99 is outside.
        let shared = tree.offsets.iter().position(|&o| o == 40).expect("shared");
        assert_eq!(tree.parent[shared].map(|p| tree.offsets[p]), Some(20));
        assert_eq!(tree.max_depth(), 3);
        assert_eq!(tree.leaves().len(), 6);
        assert_eq!(tree.groups(), 4);
        assert_eq!(tree.reached, 9);
        assert_eq!(tree.fanout_cap, None);
        assert_eq!(tree.names[0], "a, a too");
        let csv = String::from_utf8(tree.to_csv()?)?;
        assert!(
            csv.starts_with("id,parent,name\na.00000010,,\"a, a too\"\n"),
            "{csv}"
        );
        Ok(())
    }

    #[test]
    fn depth_cut_and_fanout_cap() -> anyhow::Result<()> {
        let noun = noun();
        let shallow = Tree::build(
            &noun,
            1,
            &[60],
            Limits {
                max_depth: 2,
                max_nodes: 800,
            },
        )?;
        assert_eq!(shallow.len(), 8);
        assert_eq!(shallow.max_depth(), 2);
        // Seven nodes at most: every node keeps its two largest branches: a (5 nodes) and
        // b (3) at the top, a3 (2) and a1 (1, the lowest offset of the ties) under a.
        let capped = Tree::build(
            &noun,
            1,
            &[60],
            Limits {
                max_depth: 8,
                max_nodes: 7,
            },
        )?;
        assert_eq!(capped.fanout_cap, Some(2));
        assert_eq!(capped.offsets, [10, 11, 13, 14, 20, 21, 40]);
        // Six: one branch per node is all that fits.
        let chain = Tree::build(
            &noun,
            1,
            &[60],
            Limits {
                max_depth: 8,
                max_nodes: 6,
            },
        )?;
        assert_eq!(chain.fanout_cap, Some(1));
        assert_eq!(chain.offsets, [10, 13, 14]);
        assert!(Tree::build(&noun, 30, &[], WIDE).is_err(), "a leaf as root");
        assert!(
            Tree::build(&noun, 1, &[1], WIDE).is_err(),
            "the root excluded"
        );
        Ok(())
    }

    #[test]
    fn sample_lines_give_a_chain() -> anyhow::Result<()> {
        let noun = Noun::new(wndb::parse(include_str!("data.noun.sample"))?)?;
        let tree = Tree::build(&noun, 3_094_503, &[], WIDE)?;
        assert_eq!(tree.ids, ["vessel.04531098", "bottle.02876657"]);
        assert_eq!(tree.parent, [None, Some(0)]);
        Ok(())
    }
}
