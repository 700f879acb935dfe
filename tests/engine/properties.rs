//! Property tests: over random taxonomies, logits, objectness, thresholds, rules and policies,
//! every way the engine scores a batch gives the same counts and sums as a plain reference
//! written here from the definitions in the crate docs — the branch-free kernel (both of its
//! variants, up to six levels and deeper, and both rules), the general loop (forced by a per-node override equal to its depth's
//! threshold), `DepthDrag` moved to random values, and the exact curve's points.
//!
//! Cases per property: `PROPTEST_CASES`, else 10,000.

use hedgerow_core::{
    evaluate, exact_curve, npy, paths, Batch, DepthDrag, Labels, Metrics, Objectness, Policy, Rule,
    Settings, Taxonomy, Temperatures, Thresholds,
};
use proptest::prelude::*;
use proptest::test_runner::Config;

/// One generated input: the tree as a parent per column, then the batch and the settings.
#[derive(Debug, Clone)]
struct Case {
    parents: Vec<Option<usize>>,
    logits: Vec<Vec<f32>>,
    /// Column index, or `None` for background.
    labels: Vec<Option<usize>>,
    objectness: Option<Vec<f32>>,
    temperatures: Vec<f64>,
    rule: Rule,
    policy: Policy,
    object: Pick,
    depths: Vec<Pick>,
    overrides: Vec<(usize, Pick)>,
    /// Extra values to try (drag positions, curve probes).
    probes: Vec<Pick>,
    drag_depth: usize,
}

/// A threshold: a fixed value, or the value the rule compares for row `.0` at depth `.1`
/// (resolved once the batch exists), so that ties between a threshold and a probability occur.
#[derive(Debug, Clone, Copy)]
enum Pick {
    Fixed(f64),
    Hit(usize, usize),
}

/// A parent per column: a chain to the chosen depth (so it is reached), then nodes hung under
/// random nodes with room (depth and fan-out), then the columns shuffled (rows in any order).
fn tree(depth: usize, fanout: usize, hang: &[u32], shuffle: &[u32]) -> Vec<Option<usize>> {
    let mut parent: Vec<Option<usize>> = Vec::new();
    let mut node_depth: Vec<usize> = Vec::new();
    let mut kids: Vec<usize> = Vec::new();
    let mut root_kids = 0usize;
    for d in 1..=depth {
        let p = if d == 1 { None } else { Some(d - 2) };
        match p {
            None => root_kids += 1,
            Some(p) => kids[p] += 1,
        }
        parent.push(p);
        node_depth.push(d);
        kids.push(0);
    }
    for &h in hang {
        // Candidates: the root (index None) and every node with room below it.
        let mut candidates: Vec<Option<usize>> = Vec::new();
        if root_kids < fanout {
            candidates.push(None);
        }
        candidates.extend(
            (0..parent.len())
                .filter(|&v| node_depth[v] < depth && kids[v] < fanout)
                .map(Some),
        );
        if candidates.is_empty() {
            break;
        }
        let p = candidates[h as usize % candidates.len()];
        let d = match p {
            None => {
                root_kids += 1;
                1
            }
            Some(p) => {
                kids[p] += 1;
                node_depth[p] + 1
            }
        };
        parent.push(p);
        node_depth.push(d);
        kids.push(0);
    }
    // Shuffle columns: a permutation from the sort order of the keys.
    let m = parent.len();
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by_key(|&i| (shuffle.get(i).copied().unwrap_or(0), i));
    let mut new_of = vec![0; m];
    for (new, &old) in order.iter().enumerate() {
        new_of[old] = new;
    }
    let mut out = vec![None; m];
    for (old, p) in parent.iter().enumerate() {
        out[new_of[old]] = p.map(|p| new_of[p]);
    }
    out
}

fn logit() -> impl Strategy<Value = f32> {
    prop_oneof![
        4 => prop::sample::select(vec![0.0f32, 1.0, -1.0, 0.5, 2.0, 20.0, -20.0]),
        1 => prop::sample::select(vec![1e4f32, -1e4, f32::MAX, f32::MIN, 1e-30, -0.0, 1e-45]),
        3 => -6.0f32..6.0,
    ]
}

fn probability() -> impl Strategy<Value = f32> {
    prop_oneof![
        2 => prop::sample::select(vec![0.0f32, -0.0, 1.0, 0.5, 1e-45, 1.0 - f32::EPSILON / 2.0]),
        3 => 0.0f32..=1.0,
    ]
}

fn pick() -> impl Strategy<Value = Pick> {
    prop_oneof![
        3 => prop::sample::select(vec![0.0, 1.0, 0.5, -0.0, 1e-300]).prop_map(Pick::Fixed),
        3 => (0.0f64..=1.0).prop_map(Pick::Fixed),
        4 => (0usize..64, 0usize..16).prop_map(|(r, d)| Pick::Hit(r, d)),
    ]
}

fn case() -> impl Strategy<Value = Case> {
    (
        1usize..=14,
        1usize..=8,
        prop::collection::vec(any::<u32>(), 0..40),
        prop::collection::vec(any::<u32>(), 60),
    )
        .prop_map(|(depth, fanout, hang, shuffle)| tree(depth, fanout, &hang, &shuffle))
        .prop_flat_map(|parents| {
            let m = parents.len();
            let label = prop_oneof![1 => Just(None), 4 => (0..m).prop_map(Some)];
            (1usize..=16).prop_flat_map(move |n| {
                (
                    Just(parents.clone()),
                    prop::collection::vec(prop::collection::vec(logit(), m), n),
                    prop::collection::vec(label.clone(), n),
                    prop::option::weighted(0.75, prop::collection::vec(probability(), n)),
                    prop::collection::vec(
                        prop::sample::select(vec![1.0, 1.0, 0.5, 2.0, 0.1, 1e-4]),
                        0..3,
                    ),
                    (
                        prop_oneof![Just(Rule::Cumulative), Just(Rule::Conditional)],
                        prop_oneof![
                            Just(Policy::Credit),
                            Just(Policy::Penalize),
                            Just(Policy::Exclude)
                        ],
                        pick(),
                        prop::collection::vec(pick(), 1..=16),
                        prop::collection::vec((0..m, pick()), 0..4),
                        prop::collection::vec(pick(), 1..6),
                        1usize..=14,
                    ),
                )
            })
        })
        .prop_map(
            |(
                parents,
                logits,
                labels,
                objectness,
                temperatures,
                (rule, policy, object, depths, overrides, probes, drag_depth),
            )| Case {
                parents,
                logits,
                labels,
                objectness,
                temperatures,
                rule,
                policy,
                object,
                depths,
                overrides,
                probes,
                drag_depth,
            },
        )
}

/// The tree as the reference sees it: computed here from the parent list alone.
struct Tree {
    parent: Vec<Option<usize>>,
    depth: Vec<usize>,
    /// Children of each node, and of the root at index `len`, in column order.
    children: Vec<Vec<usize>>,
    gain: Vec<f64>,
}

impl Tree {
    fn new(parent: &[Option<usize>]) -> Tree {
        let m = parent.len();
        let mut children = vec![Vec::new(); m + 1];
        for (k, p) in parent.iter().enumerate() {
            children[p.unwrap_or(m)].push(k);
        }
        let depth_of = |v: usize| {
            let mut d = 0;
            let mut u = Some(v).filter(|&v| v < m);
            while let Some(x) = u {
                d += 1;
                u = parent[x];
            }
            d
        };
        let depth: Vec<usize> = (0..=m).map(depth_of).collect();
        let mut leaves = vec![0u64; m + 1];
        for (k, ch) in children.iter().enumerate().take(m) {
            if ch.is_empty() {
                let mut v = Some(k);
                while let Some(u) = v {
                    leaves[u] += 1;
                    v = parent[u];
                }
                leaves[m] += 1;
            }
        }
        let total = leaves[m] as f64;
        // Information gain 1 − ln|leaves(v)| / ln|leaves(root)| (the crate docs' definition).
        let gain = (0..=m)
            .map(|v| {
                if v == m {
                    0.0
                } else if total <= 1.0 {
                    1.0
                } else {
                    // libm's log, as the engine takes it (the same bits on every target).
                    1.0 - libm::log(leaves[v] as f64) / libm::log(total)
                }
            })
            .collect();
        Tree {
            parent: parent.to_vec(),
            depth,
            children,
            gain,
        }
    }
    fn root(&self) -> usize {
        self.parent.len()
    }
    /// Ancestors of `v` from depth 1 down to `v` itself.
    fn path(&self, v: usize) -> Vec<usize> {
        let mut out = Vec::new();
        let mut u = Some(v).filter(|&v| v < self.root());
        while let Some(x) = u {
            out.push(x);
            u = self.parent[x];
        }
        out.reverse();
        out
    }
    fn lca_depth(&self, a: usize, b: usize) -> usize {
        self.path(a)
            .iter()
            .zip(self.path(b))
            .take_while(|(x, y)| **x == *y)
            .count()
    }
}

/// The greedy path of one row: softmax in f64 per sibling group, the most probable child
/// (ties: the lowest column), conditionals stored as f32.
fn reference_path(tree: &Tree, temps: &[f64], logits: &[f32]) -> (usize, Vec<f32>) {
    let mut v = tree.root();
    let mut cond = Vec::new();
    loop {
        let ch = &tree.children[v];
        if ch.is_empty() {
            return (v, cond);
        }
        let d = cond.len() + 1;
        let t = temps.get(d - 1).or(temps.last()).copied().unwrap_or(1.0);
        let (best, p) = if ch.len() == 1 {
            (ch[0], 1.0)
        } else {
            let z: Vec<f64> = ch.iter().map(|&c| logits[c] as f64 / t).collect();
            let max = z.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            // libm's exp, as the engine takes it (the same bits on every target).
            let e: Vec<f64> = z.iter().map(|&z| libm::exp(z - max)).collect();
            let sum: f64 = e.iter().sum();
            let mut best = (0, f64::NEG_INFINITY);
            for (i, e) in e.iter().enumerate() {
                if e / sum > best.1 {
                    best = (i, e / sum);
                }
            }
            (ch[best.0], best.1)
        };
        cond.push(p as f32);
        v = best;
    }
}

/// What the reference scores: every count and sum, and the ratios made from them.
#[derive(Debug, Clone, PartialEq)]
struct Scored {
    predictions: u64,
    abstained: u64,
    correct: u64,
    unverifiable: u64,
    wrong: u64,
    false_alarms: u64,
    stop_count: Vec<[u64; 3]>,
    precision: Option<f64>,
    specificity: Option<f64>,
    reward: Option<f64>,
    hierarchical_precision: Option<f64>,
    hierarchical_recall: Option<f64>,
    mistake_severity: Option<f64>,
}

fn ratio(a: f64, b: f64) -> Option<f64> {
    (b > 0.0).then(|| a / b)
}

impl Scored {
    fn of(m: &Metrics) -> Scored {
        Scored {
            predictions: m.predictions,
            abstained: m.abstained,
            correct: m.correct,
            unverifiable: m.unverifiable,
            wrong: m.wrong,
            false_alarms: m.false_alarms,
            stop_count: m
                .stop_count
                .iter()
                .map(|c| [c.correct, c.unverifiable, c.wrong])
                .collect(),
            precision: m.precision,
            specificity: m.specificity,
            reward: m.reward,
            hierarchical_precision: m.hierarchical_precision,
            hierarchical_recall: m.hierarchical_recall,
            mistake_severity: m.mistake_severity,
        }
    }
}

/// The inputs as plain vectors, and the engine's view of the same files.
struct Built {
    tree: Tree,
    tax: Taxonomy,
    batch: Batch,
    leaf: Vec<usize>,
    cond: Vec<Vec<f32>>,
    p_root: Vec<f64>,
}

fn build(case: &Case) -> Built {
    let tree = Tree::new(&case.parents);
    let mut csv = String::from("id,parent\n");
    for (k, p) in case.parents.iter().enumerate() {
        let parent = p.map(|p| format!("n{p}")).unwrap_or_default();
        csv.push_str(&format!("n{k},{parent}\n"));
    }
    let tax = Taxonomy::parse(csv.as_bytes(), "taxonomy.csv").expect("generated taxonomy");
    let m = case.parents.len();
    let n = case.logits.len();
    let mut logits = npy::header_bytes("<f4", &[n as u64, m as u64], false);
    for row in &case.logits {
        for v in row {
            logits.extend(v.to_le_bytes());
        }
    }
    let temps = Temperatures(case.temperatures.clone());
    let ingested =
        paths::ingest_bytes("logits.npy", &tax, &temps, &logits).expect("generated logits");
    let mut labels = npy::header_bytes("<i8", &[n as u64], false);
    for l in &case.labels {
        labels.extend(l.map_or(-1i64, |l| l as i64).to_le_bytes());
    }
    let labels = Labels::parse(&labels, "labels.npy", &tax).expect("generated labels");
    let objectness = case.objectness.as_ref().map(|o| {
        let mut bytes = npy::header_bytes("<f4", &[n as u64], false);
        for v in o {
            bytes.extend(v.to_le_bytes());
        }
        Objectness::parse(&bytes, "objectness.npy").expect("generated objectness")
    });
    let batch = Batch::new(&tax, "logits.npy", ingested, temps, labels, objectness)
        .expect("generated batch");
    let (leaf, cond) = case
        .logits
        .iter()
        .map(|row| reference_path(&tree, &case.temperatures, row))
        .unzip();
    let p_root = (0..n)
        .map(|r| case.objectness.as_ref().map_or(1.0, |o| o[r] as f64))
        .collect();
    Built {
        tree,
        tax,
        batch,
        leaf,
        cond,
        p_root,
    }
}

impl Built {
    /// The value the rule compares for row `r` at depth `d` (P(root) at depth 0).
    fn quantity(&self, rule: Rule, r: usize, d: usize) -> f64 {
        let r = r % self.leaf.len();
        let cond = &self.cond[r];
        let d = d.min(cond.len());
        if d == 0 {
            return self.p_root[r];
        }
        match rule {
            Rule::Conditional => cond[d - 1] as f64,
            Rule::Cumulative => cond[..d].iter().fold(self.p_root[r], |p, &c| p * c as f64),
        }
    }

    fn resolve(&self, rule: Rule, p: Pick) -> f64 {
        match p {
            Pick::Fixed(t) => t,
            Pick::Hit(r, d) => self.quantity(rule, r, d).clamp(0.0, 1.0),
        }
    }

    fn settings(&self, case: &Case) -> Settings {
        let at = |p| self.resolve(case.rule, p);
        Settings {
            rule: case.rule,
            thresholds: Thresholds {
                object: at(case.object),
                depths: case.depths.iter().map(|&p| at(p)).collect(),
                nodes: case
                    .overrides
                    .iter()
                    .map(|&(v, p)| (v as u32, at(p)))
                    .collect(),
            },
            policy: case.policy,
        }
    }

    /// Score by the definitions: descend while the rule's quantity reaches the node's
    /// threshold (its override, else its depth's; a short list repeats its last value).
    fn reference(&self, s: &Settings) -> Scored {
        let tree = &self.tree;
        let t = &s.thresholds;
        let at_depth = |d: usize| t.depths[(d - 1).min(t.depths.len() - 1)];
        let node_threshold = |v: usize| {
            t.nodes
                .iter()
                .rev()
                .find(|&&(u, _)| u as usize == v)
                .map_or(at_depth(tree.depth[v]), |&(_, x)| x)
        };
        let levels = self.tax.max_depth() + 1;
        let mut out = Scored {
            predictions: 0,
            abstained: 0,
            correct: 0,
            unverifiable: 0,
            wrong: 0,
            false_alarms: 0,
            stop_count: vec![[0; 3]; levels],
            precision: None,
            specificity: None,
            reward: None,
            hierarchical_precision: None,
            hierarchical_recall: None,
            mistake_severity: None,
        };
        let m = tree.root();
        let (mut predicted_at, mut correct_at) = (vec![0u64; m + 1], vec![0u64; m + 1]);
        let (mut h_pred, mut h_inter, mut h_true, mut severity, mut severity_n) =
            (0u64, 0u64, 0u64, 0u64, 0u64);
        let labels = self.batch.labels();
        for (r, &l) in labels.iter().enumerate() {
            let label = (l != u32::MAX).then_some(l as usize);
            if let Some(g) = label {
                h_true += tree.depth[g] as u64;
            }
            let p_root = self.p_root[r];
            if self.batch.has_objectness() && (p_root < t.object || p_root.is_nan()) {
                out.abstained += 1;
                continue;
            }
            let path = tree.path(self.leaf[r]);
            let mut stop = 0;
            let mut p = p_root;
            for (i, &v) in path.iter().enumerate() {
                let c = self.cond[r][i] as f64;
                p *= c;
                let q = if s.rule == Rule::Cumulative { p } else { c };
                if q >= node_threshold(v) {
                    stop = i + 1;
                } else {
                    break;
                }
            }
            let node = if stop == 0 { m } else { path[stop - 1] };
            out.predictions += 1;
            predicted_at[node] += 1;
            let outcome = match label {
                None => {
                    out.false_alarms += 1;
                    2
                }
                Some(g) => {
                    let a = tree.lca_depth(self.leaf[r], g);
                    h_pred += stop as u64;
                    h_inter += stop.min(a) as u64;
                    if stop <= a {
                        0
                    } else if a == tree.depth[g] {
                        1
                    } else {
                        severity += (stop + tree.depth[g] - 2 * stop.min(a)) as u64;
                        severity_n += 1;
                        2
                    }
                }
            };
            out.stop_count[stop][outcome] += 1;
            if outcome == 0 {
                correct_at[node] += 1;
            }
        }
        out.correct = out.stop_count.iter().map(|c| c[0]).sum();
        out.unverifiable = out.stop_count.iter().map(|c| c[1]).sum();
        out.wrong = out.stop_count.iter().map(|c| c[2]).sum();
        let (c, u, w) = (
            out.correct as f64,
            out.unverifiable as f64,
            out.wrong as f64,
        );
        out.precision = match s.policy {
            Policy::Credit => ratio(c + u, c + u + w),
            Policy::Penalize => ratio(c, c + u + w),
            Policy::Exclude => ratio(c, c + w),
        };
        let weigh = |counts: &[u64]| -> f64 {
            counts
                .iter()
                .enumerate()
                .filter(|(_, &k)| k > 0)
                .map(|(v, &k)| k as f64 * tree.gain[v])
                .sum()
        };
        let n = out.predictions as f64;
        out.specificity = ratio(weigh(&predicted_at), n);
        out.reward = ratio(weigh(&correct_at), n);
        out.hierarchical_precision = ratio(h_inter as f64, h_pred as f64);
        out.hierarchical_recall = ratio(h_inter as f64, h_true as f64);
        out.mistake_severity = ratio(severity as f64, severity_n as f64);
        out
    }
}

fn config() -> Config {
    let cases = std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(10_000);
    Config {
        cases,
        max_shrink_iters: 4096,
        ..Config::default()
    }
}

/// Thresholds for every depth of the taxonomy, all `t`.
fn shared(s: &Settings, depth: usize, t: f64) -> Settings {
    let mut s = s.clone();
    s.thresholds.depths = vec![t; depth.max(1)];
    s.thresholds.nodes.clear();
    s
}

proptest! {
    #![proptest_config(config())]

    /// The kernel (no overrides), the general loop (an override that changes nothing) and the
    /// reference agree exactly; with random overrides, the general loop and the reference do.
    #[test]
    fn kernel_general_and_reference_agree(case in case()) {
        let b = build(&case);
        let mut plain = b.settings(&case);
        plain.thresholds.nodes.clear();
        let kernel = evaluate(&b.tax, &b.batch, &plain);
        let mut forced = plain.clone();
        let v = 0u32;
        forced.thresholds.nodes = vec![(v, plain.thresholds.at_depth(b.tax.depth(v)))];
        let general = evaluate(&b.tax, &b.batch, &forced);
        prop_assert_eq!(&kernel, &general);
        prop_assert_eq!(Scored::of(&kernel), b.reference(&plain));
        let overridden = b.settings(&case);
        prop_assert_eq!(
            Scored::of(&evaluate(&b.tax, &b.batch, &overridden)),
            b.reference(&overridden)
        );
    }

    /// `DepthDrag` set to random values equals a full evaluation (and the reference) there.
    #[test]
    fn drag_equals_evaluate(case in case()) {
        let b = build(&case);
        let settings = b.settings(&case);
        let depth = 1 + (case.drag_depth - 1) % b.tax.max_depth();
        let mut drag = DepthDrag::new(&b.tax, &b.batch, &settings, depth);
        for &p in &case.probes {
            let t = b.resolve(case.rule, p);
            let moved = drag.set(&b.tax, &b.batch, t);
            let full = evaluate(&b.tax, &b.batch, drag.settings());
            prop_assert_eq!(&moved, &full, "depth {} at {}", depth, t);
            prop_assert_eq!(Scored::of(&moved), b.reference(drag.settings()));
        }
    }

    /// Each point of the exact curve equals an evaluation at its threshold (shared by every
    /// depth), and so does a threshold between it and the next point.
    #[test]
    fn curve_points_equal_evaluate(case in case()) {
        let b = build(&case);
        let settings = b.settings(&case);
        let depth = b.tax.max_depth();
        let object = settings.thresholds.object;
        let points = exact_curve(&b.tax, &b.batch, case.rule, object, case.policy);
        prop_assert!(!points.is_empty());
        prop_assert_eq!(points[0].threshold, 1.0);
        for pair in points.windows(2) {
            prop_assert!(pair[1].threshold < pair[0].threshold, "{:?}", pair);
        }
        // Every point of a short curve; of a long one, eight spread over it.
        let stride = points.len().div_ceil(8);
        for (i, point) in points.iter().enumerate().step_by(stride) {
            let mut probes = vec![point.threshold];
            if let Some(next) = points.get(i + 1) {
                probes.push((point.threshold + next.threshold) / 2.0);
            }
            for t in probes {
                let s = shared(&settings, depth, t);
                let m = evaluate(&b.tax, &b.batch, &s);
                let want = b.reference(&s);
                prop_assert_eq!(Scored::of(&m), want.clone());
                prop_assert_eq!(
                    (point.predictions, point.correct, point.unverifiable, point.wrong),
                    (m.predictions, m.correct, m.unverifiable, m.wrong),
                    "point {} at {} (probe {})", i, point.threshold, t
                );
                prop_assert_eq!(point.precision, m.precision);
                // The curve sums information gain as it goes; evaluation per node at the end.
                for (a, e) in [(point.specificity, m.specificity), (point.reward, m.reward)] {
                    match (a, e) {
                        (Some(a), Some(e)) => prop_assert!((a - e).abs() < 1e-9, "{} vs {}", a, e),
                        (a, e) => prop_assert_eq!(a, e),
                    }
                }
            }
        }
    }
}
