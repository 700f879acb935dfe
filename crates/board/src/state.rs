//! The page's state, the actions that change it and the pure `apply` that does. No browser
//! types: the page's shell reads files and storage, dispatches actions, and renders what is here.
//!
//! Loading is staged: each file the user gives lands in its slot (taxonomy, logits, labels,
//! objectness, profile) and is checked; whenever the slots form a whole batch it becomes the
//! *active* batch. A file that fails leaves its error beside its slot and the active batch, its
//! thresholds and everything tuned so far untouched.
//!
//! An `.npz` bundle counts as a logits file: its `logits` member streams like a `.npy`
//! ([`Bundle`] and [`LogitsFeed`] are the steps the shell takes with `Blob.slice`), and its
//! `labels` and `objectness` members fill their slots unless those files were given alongside.

use std::collections::BTreeMap;
use std::rc::Rc;

use hedgerow_core::{
    npy, npz, Batch, CurveIndex, CurvePoint, DepthDrag, Error, ErrorKind, Errors, Ingested, Labels,
    Location, LogitsReader, Metrics, Objectness, Policy, Profile, Rule, Settings, Taxonomy,
    Temperatures,
};
use serde::{Deserialize, Serialize};

use crate::charts::{StopView, TradePoint, TradeoffView};

/// The kinds of file the page takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Slot {
    Taxonomy,
    Logits,
    Labels,
    Objectness,
    Profile,
    /// Files that were not recognised as any of the above.
    Other,
}

impl Slot {
    pub const ALL: [Slot; 6] = [
        Slot::Taxonomy,
        Slot::Logits,
        Slot::Labels,
        Slot::Objectness,
        Slot::Profile,
        Slot::Other,
    ];
    pub fn title(self) -> &'static str {
        match self {
            Slot::Taxonomy => "taxonomy",
            Slot::Logits => "logits",
            Slot::Labels => "labels",
            Slot::Objectness => "objectness",
            Slot::Profile => "profile",
            Slot::Other => "other",
        }
    }
}

/// Whether a file's first bytes are a zip archive's: an `.npz` bundle (`np.savez` and
/// `np.savez_compressed` write a local file header first). A bundle is a logits file.
pub fn is_bundle(head: &[u8]) -> bool {
    head.starts_with(b"PK\x03\x04")
}

/// Decide what a file is from its name and first bytes (at least the .npy header or the first
/// line of a text file). An `.npz` bundle is [`Slot::Logits`] (see [`is_bundle`]).
pub fn recognise(name: &str, head: &[u8]) -> Result<Slot, String> {
    let lower = name.to_ascii_lowercase();
    if is_bundle(head) {
        return Ok(Slot::Logits);
    }
    if head.starts_with(b"\x93NUMPY") {
        let header = match npy::parse_header(head) {
            Ok(Some(h)) => h,
            Ok(None) => return Err(format!("{name}: the .npy header is longer than the bytes read; expected a header under 64 KiB")),
            Err(k) => return Err(format!("{name}: {k}")),
        };
        let column = matches!(header.shape[..], [_] | [_, 1]);
        return match (header.shape.len(), header.dtype.scalar.is_float()) {
            (2, true) if !column => Ok(Slot::Logits),
            (_, true) if column => Ok(Slot::Objectness),
            (_, false) if column => Ok(Slot::Labels),
            _ => Err(format!(
                "{name}: a {} array of shape {}: expected logits (rows, nodes) of floats, objectness (rows,) of floats or labels (rows,) of integers",
                header.dtype.name(),
                header.shape_text()
            )),
        };
    }
    if lower.ends_with(".npz") {
        let first: String = head.iter().take(4).map(|b| format!("\\x{b:02x}")).collect();
        return Err(engine_error(
            name,
            bad_zip(&format!(
                "the first bytes {first} (a zip archive starts with PK\\x03\\x04)"
            )),
        ));
    }
    let text = String::from_utf8_lossy(head);
    let text = text.trim_start_matches('\u{feff}').trim_start();
    if text.starts_with('[') {
        return Ok(Slot::Taxonomy);
    }
    if text.starts_with('{') {
        return Ok(Slot::Profile);
    }
    let header: Vec<String> = text
        .lines()
        .next()
        .unwrap_or("")
        .split(',')
        .map(|h| h.trim().trim_matches('"').to_ascii_lowercase())
        .collect();
    let has = |c: &str| header.iter().any(|h| h == c);
    if has("id") && has("parent") {
        Ok(Slot::Taxonomy)
    } else if has("label") {
        Ok(Slot::Labels)
    } else {
        Err(format!(
            "{name}: not recognised: expected a .npy array, a taxonomy (CSV with id,parent columns or a JSON array), labels (CSV with a label column) or a profile (JSON object); the first line is `{}`",
            text.lines().next().unwrap_or("").chars().take(80).collect::<String>()
        ))
    }
}

/// An error in the engine's words (`file: what was expected, what was found`), as the page
/// shows it.
fn engine_error(file: &str, kind: ErrorKind) -> String {
    Error::new(file, Location::default(), kind).to_string()
}

/// A damaged or foreign zip archive, in the words of the engine's `npz` reader.
fn bad_zip(found: &str) -> ErrorKind {
    ErrorKind::Invalid {
        what: "zip bundle".into(),
        expected: "an archive as np.savez writes it".into(),
        found: found.into(),
    }
}

/// An `.npz` bundle as the page reads it, in the steps the shell takes with `Blob.slice` (it
/// never reads the whole file): the bytes [`Bundle::tail`] of the file, then the directory at
/// [`Bundle::directory`], then [`Bundle::open`]; for each member wanted, the
/// `npz::LOCAL_HEADER_BYTES` at its `local_header`, whose [`Bundle::data_range`] is the
/// member's compressed data. The `logits` member streams through a [`LogitsFeed`]; `labels`
/// and `objectness` (small) are inflated whole ([`Bundle::inflate`]). Every error is text in
/// the engine's words, naming the bundle (or `bundle.npz:member`).
#[derive(Debug, Clone, PartialEq)]
pub struct Bundle {
    pub name: String,
    /// The whole file's length.
    pub len: u64,
    pub members: Vec<npz::Member>,
}

impl Bundle {
    /// The byte range to read first: the end of the file, which holds the directory's end
    /// records.
    pub fn tail(len: u64) -> (u64, u64) {
        (len.saturating_sub(npz::TAIL_BYTES), len)
    }

    /// Where the directory lies (`start..end`), found in the tail's bytes.
    pub fn directory(name: &str, tail: &[u8], len: u64) -> Result<(u64, u64), String> {
        let (offset, size) = npz::directory_range(tail, len).map_err(|k| engine_error(name, k))?;
        match offset.checked_add(size) {
            Some(end) if end <= len => Ok((offset, end)),
            _ => Err(engine_error(
                name,
                bad_zip(&format!(
                    "a directory of {size} bytes at byte {offset}, past the end of the {len}-byte file"
                )),
            )),
        }
    }

    /// Read the directory. A bundle without a `logits` array, or whose `logits` are compressed
    /// in a way `np.savez` does not write, is refused here, before anything is read.
    pub fn open(name: &str, len: u64, directory: &[u8]) -> Result<Bundle, String> {
        let members = npz::parse_directory(directory).map_err(|k| engine_error(name, k))?;
        let bundle = Bundle {
            name: name.to_string(),
            len,
            members,
        };
        let Some(logits) = bundle.member("logits") else {
            return Err(format!(
                "{name}: expected a `logits` array in the bundle, found {}",
                bundle.keys_text()
            ));
        };
        npz::Inflow::new(logits).map_err(|k| engine_error(&bundle.member_name("logits"), k))?;
        Ok(bundle)
    }

    /// The member `np.load` would give as `key`.
    pub fn member(&self, key: &str) -> Option<&npz::Member> {
        self.members.iter().find(|m| m.key() == key)
    }

    /// The arrays' names, in the archive's order.
    pub fn keys(&self) -> Vec<String> {
        self.members.iter().map(|m| m.key().to_string()).collect()
    }

    fn keys_text(&self) -> String {
        if self.members.is_empty() {
            return "no arrays".into();
        }
        quoted(&self.keys())
    }

    /// How the page names a member: `bundle.npz:labels`.
    pub fn member_name(&self, key: &str) -> String {
        format!("{}:{key}", self.name)
    }

    /// Where a member's compressed data lies (`start..end`), from the first
    /// `npz::LOCAL_HEADER_BYTES` of its local header.
    pub fn data_range(&self, member: &npz::Member, local: &[u8]) -> Result<(u64, u64), String> {
        let start = npz::data_offset(member, local).map_err(|k| engine_error(&self.name, k))?;
        match start.checked_add(member.compressed) {
            Some(end) if end <= self.len => Ok((start, end)),
            _ => Err(engine_error(
                &self.name,
                bad_zip(&format!(
                    "member `{}` runs past the end of the file",
                    member.name
                )),
            )),
        }
    }

    /// The row count of the `logits` member, from the first (at most `npz::PEEK_BYTES`)
    /// bytes of its compressed data: what caps the small members.
    pub fn logits_rows(&self, member: &npz::Member, prefix: &[u8]) -> Result<u64, String> {
        let header = npz::peek_header(member, prefix)
            .map_err(|k| engine_error(&self.member_name(member.key()), k))?;
        Ok(header.shape.first().copied().unwrap_or(1))
    }

    /// A small member inflated whole from its compressed data (`data_range`'s bytes), refused
    /// before it is inflated when its header holds more than one value for each of the
    /// logits' `rows` ([`Bundle::logits_rows`]).
    pub fn inflate(&self, member: &npz::Member, data: &[u8], rows: u64) -> Result<Vec<u8>, String> {
        let name = self.member_name(member.key());
        let fail = |k| engine_error(&name, k);
        let logits = self.member_name("logits");
        let limit = match member.key() {
            "objectness" => Objectness::npy_limit(rows, &logits),
            _ => Labels::npy_limit(rows, &logits),
        };
        let mut flow = npz::Inflow::new(member).map_err(fail)?.limit(limit);
        let mut out = Vec::new();
        flow.feed(
            data,
            &mut |chunk: &[u8]| -> Result<(), ErrorKind> {
                out.extend_from_slice(chunk);
                Ok(())
            },
            |k| k,
        )
        .map_err(fail)?;
        flow.finish().map_err(fail)?;
        Ok(out)
    }
}

/// What the shell pushes a logits file's bytes through, chunk by chunk: a `.npy` straight into
/// the engine's `LogitsReader`, a bundle's `logits` member through its inflater first. The
/// decompressed array is never held: each chunk becomes greedy paths as it arrives.
pub struct LogitsFeed {
    reader: LogitsReader,
    /// The member's name (`bundle.npz:logits`, for errors) and its inflater.
    inflow: Option<(String, npz::Inflow)>,
}

impl LogitsFeed {
    /// A plain `.npy` file.
    pub fn npy(name: &str, tax: &Taxonomy, temps: &Temperatures) -> Self {
        LogitsFeed {
            reader: LogitsReader::new(name, tax, temps),
            inflow: None,
        }
    }

    /// A bundle's member (its compressed data is what `feed` takes).
    pub fn member(
        bundle: &str,
        member: &npz::Member,
        tax: &Taxonomy,
        temps: &Temperatures,
    ) -> Result<Self, Errors> {
        let name = format!("{bundle}:{}", member.key());
        let inflow = npz::Inflow::new(member)
            .map_err(|k| Errors::from(Error::new(&name, Location::default(), k)))?;
        Ok(LogitsFeed {
            reader: LogitsReader::new(&name, tax, temps),
            inflow: Some((name, inflow)),
        })
    }

    /// Feed the next bytes (of the file, or of the member's compressed data).
    pub fn feed(&mut self, tax: &Taxonomy, chunk: &[u8]) -> Result<(), Errors> {
        let reader = &mut self.reader;
        match &mut self.inflow {
            None => reader.feed(tax, chunk),
            Some((name, inflow)) => {
                inflow.feed(chunk, &mut |out: &[u8]| reader.feed(tax, out), |k| {
                    Errors::from(Error::new(name.as_str(), Location::default(), k))
                })
            }
        }
    }

    /// Check that everything arrived and return the paths.
    pub fn finish(self, tax: &Taxonomy) -> Result<Ingested, Errors> {
        // The reader first: a cut member is best told by the row where the array stops.
        let ingested = self.reader.finish(tax)?;
        if let Some((name, inflow)) = &self.inflow {
            inflow
                .finish()
                .map_err(|k| Errors::from(Error::new(name.as_str(), Location::default(), k)))?;
        }
        Ok(ingested)
    }
}

/// Which taxonomy and temperatures a set of paths was computed for.
#[derive(Debug, Clone, PartialEq)]
pub struct IngestKey {
    pub taxonomy: String,
    pub temperatures: Vec<f64>,
}

/// A read in progress, for the progress bar.
#[derive(Debug, Clone, PartialEq)]
pub struct Progress {
    pub name: String,
    pub done: u64,
    pub total: u64,
}

/// The batch currently scored: it changes only when a complete, valid set of files is loaded.
#[derive(Debug, Clone)]
pub struct Active {
    pub taxonomy: Rc<Taxonomy>,
    pub batch: Rc<Batch>,
    pub names: BTreeMap<Slot, String>,
}

/// Settings kept across reloads (localStorage).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Stored {
    pub rule: Rule,
    pub object_threshold: f64,
    pub thresholds: Vec<f64>,
    pub temperatures: Vec<f64>,
    pub unverifiable: Policy,
}

/// What changes the state.
#[derive(Debug, Clone)]
pub enum Action {
    /// A whole small file (taxonomy, labels, objectness, profile). Logits stream instead.
    File {
        name: String,
        bytes: Rc<Vec<u8>>,
    },
    /// The shell could not read or recognise a file.
    Unreadable {
        slot: Option<Slot>,
        message: String,
    },
    /// A logits file was chosen; the shell streams it when `wanted_ingest` asks.
    LogitsChosen {
        name: String,
        total: u64,
    },
    /// An `.npz` bundle was chosen as the logits file: its `logits` member streams like a
    /// `.npy` (as after `LogitsChosen`), its `labels` and `objectness` members (read whole by
    /// the shell, `None` when the same selection gave those files separately, or the member
    /// could not be read) go into their slots as `bundle.npz:labels` and
    /// `bundle.npz:objectness`. A bundle without objectness leaves no objectness staged (as the
    /// command line reads it), unless that file was given alongside.
    BundleChosen {
        name: String,
        /// Compressed bytes of the `logits` member: what the shell reads and the progress counts.
        total: u64,
        /// Every array in the bundle (`np.load`'s keys).
        keys: Vec<String>,
        labels: Option<Rc<Vec<u8>>>,
        objectness: Option<Rc<Vec<u8>>>,
    },
    LogitsProgress {
        done: u64,
    },
    LogitsDone {
        key: IngestKey,
        result: Result<Ingested, Errors>,
    },
    LogitsCancelled,
    SetRule(Rule),
    SetPolicy(Policy),
    SetDepth {
        depth: usize,
        value: f64,
    },
    SetObject(f64),
    SetAllDepths(f64),
    SetTemperature {
        depth: usize,
        value: f64,
    },
    /// The depth whose control the user is on: chart 1 shows its sweep.
    Focus(usize),
    Restore(Stored),
    ClearErrors,
}

#[derive(Debug, Clone, Default)]
pub struct Board {
    pub taxonomy: Option<(String, Rc<Taxonomy>)>,
    /// Labels are kept as bytes so a new taxonomy can re-read them.
    pub labels: Option<(String, Rc<Vec<u8>>)>,
    pub objectness: Option<(String, Rc<Objectness>)>,
    pub logits: Option<String>,
    /// The arrays of the bundle in the logits slot, when it holds one.
    pub bundle: Option<Vec<String>>,
    pub ingested: Option<(IngestKey, Rc<Ingested>)>,
    pub progress: Option<Progress>,
    pub errors: BTreeMap<Slot, Vec<String>>,
    /// What was recognised in each slot, in words.
    pub notes: BTreeMap<Slot, String>,
    pub settings: Settings,
    pub temperatures: Temperatures,
    pub focus: usize,
    pub active: Option<Active>,
    pub metrics: Option<Metrics>,
    pub curve: Rc<Vec<CurvePoint>>,
    curve_key: Option<(Rule, u64, Policy, usize)>,
    curve_index: Option<(usize, Rule, Rc<CurveIndex>)>,
    pub sweep: Rc<Vec<TradePoint>>,
    sweep_key: Option<SweepKey>,
    /// The focused depth's drag index: a cache shared by the clones of one board (replacing or
    /// moving it changes no field an older board shows).
    drag: Rc<std::cell::RefCell<Option<DepthDrag>>>,
    /// Bumped whenever a new batch becomes active (for caches keyed on it).
    pub generation: usize,
    /// The key whose read failed or was cancelled, so it is not retried until something
    /// changes.
    no_read_for: Option<IngestKey>,
    pending_total: u64,
    /// The staged labels parsed against a taxonomy (by its fingerprint).
    labels_read: Option<(Rc<Vec<u8>>, String, Rc<Labels>)>,
    /// What a `LogitsChosen` or `BundleChosen` replaced, put back by `LogitsCancelled`.
    before_choice: Option<BeforeChoice>,
}

/// The staged logits file, its paths and (when a bundle's members replaced them) the labels and
/// objectness slots, as they were before a new logits file was chosen.
#[derive(Debug, Clone)]
struct BeforeChoice {
    logits: Option<String>,
    bundle: Option<Vec<String>>,
    ingested: Option<(IngestKey, Rc<Ingested>)>,
    members: Option<MemberSlots>,
}

/// The labels and objectness slots with their notes and errors.
#[derive(Debug, Clone)]
struct MemberSlots {
    labels: Option<(String, Rc<Vec<u8>>)>,
    objectness: Option<(String, Rc<Objectness>)>,
    notes: Vec<(Slot, Option<String>)>,
    errors: Vec<(Slot, Option<Vec<String>>)>,
}

const MEMBER_SLOTS: [Slot; 2] = [Slot::Labels, Slot::Objectness];

/// The chart's curve keeps a point once precision or specificity moved by this much: finer
/// than a pixel at any sensible chart size, and a million-row curve stays a few thousand points.
const CURVE_RESOLUTION: f64 = 1.0 / 2000.0;

#[derive(Debug, Clone, PartialEq)]
struct SweepKey {
    depth: usize,
    generation: usize,
    rule: Rule,
    policy: Policy,
    thresholds: Vec<u64>,
}

impl Board {
    pub fn new() -> Self {
        Board {
            settings: Settings::default(),
            focus: 1,
            ..Board::default()
        }
    }

    /// Depth D of the taxonomy in use (staged, else active), or 0.
    pub fn depth(&self) -> usize {
        self.taxonomy
            .as_ref()
            .map(|(_, t)| t.max_depth())
            .or(self.active.as_ref().map(|a| a.taxonomy.max_depth()))
            .unwrap_or(0)
    }

    /// The key logits must be (re)read with, when the staged paths do not match it.
    pub fn wanted_ingest(&self) -> Option<IngestKey> {
        let (_, tax) = self.taxonomy.as_ref()?;
        self.logits.as_ref()?;
        if self.progress.is_some() {
            return None;
        }
        let key = IngestKey {
            taxonomy: tax.fingerprint().to_string(),
            temperatures: self.temperatures.expand(tax.max_depth()),
        };
        match &self.ingested {
            Some((k, _)) if *k == key => None,
            // A read that failed is not retried until the file or the key changes (dismissing
            // its error does not ask for it again).
            _ if self.no_read_for.as_ref() == Some(&key) => None,
            _ => Some(key),
        }
    }

    pub fn stored(&self) -> Stored {
        Stored {
            rule: self.settings.rule,
            object_threshold: self.settings.thresholds.object,
            thresholds: self.settings.thresholds.depths.clone(),
            temperatures: self.temperatures.0.clone(),
            unverifiable: self.settings.policy,
        }
    }

    /// The profile to download: current settings, scored on the active batch.
    pub fn profile(&self) -> Option<Profile> {
        let a = self.active.as_ref()?;
        let m = self.metrics.as_ref()?;
        Some(Profile::new(
            &a.taxonomy,
            &self.settings,
            a.batch.temperatures(),
            Some((&a.batch, m)),
        ))
    }

    pub fn apply(&mut self, action: Action) {
        match action {
            Action::File { name, bytes } => self.file(name, bytes),
            Action::Unreadable { slot, message } => {
                self.errors
                    .insert(slot.unwrap_or(Slot::Other), vec![message]);
            }
            Action::LogitsChosen { name, total } => {
                self.choose(&name, total, None);
                self.notes
                    .insert(Slot::Logits, format!("{name}: waiting for a taxonomy"));
            }
            Action::BundleChosen {
                name,
                total,
                keys,
                labels,
                objectness,
            } => {
                let members = MemberSlots {
                    labels: self.labels.clone(),
                    objectness: self.objectness.clone(),
                    notes: MEMBER_SLOTS
                        .map(|s| (s, self.notes.get(&s).cloned()))
                        .to_vec(),
                    errors: MEMBER_SLOTS
                        .map(|s| (s, self.errors.get(&s).cloned()))
                        .to_vec(),
                };
                self.choose(&name, total, Some(members));
                self.notes.insert(
                    Slot::Logits,
                    format!(
                        "{name}: a bundle of {}; waiting for a taxonomy",
                        quoted(&keys)
                    ),
                );
                let holds = |key: &str| keys.iter().any(|k| k == key);
                if let Some(bytes) = labels {
                    self.fill(Slot::Labels, format!("{name}:labels"), bytes);
                }
                match objectness {
                    Some(bytes) => self.fill(Slot::Objectness, format!("{name}:objectness"), bytes),
                    None if !holds("objectness") => {
                        self.objectness = None;
                        self.errors.remove(&Slot::Objectness);
                        self.notes.insert(
                            Slot::Objectness,
                            format!("none: {name} holds no objectness"),
                        );
                    }
                    None => {}
                }
                self.bundle = Some(keys);
            }
            Action::LogitsProgress { done } => {
                if let Some(name) = &self.logits {
                    self.progress = Some(Progress {
                        name: name.clone(),
                        done,
                        total: self.pending_total,
                    });
                }
            }
            Action::LogitsCancelled => {
                self.progress = None;
                // Back to the file and paths from before the choice (a new file's read was
                // cancelled) and to the temperatures those paths were read with (a re-read for
                // new temperatures was cancelled), so that nothing asks for the read again.
                if let Some(before) = self.before_choice.take() {
                    self.logits = before.logits;
                    self.bundle = before.bundle;
                    self.ingested = before.ingested;
                    if let Some(m) = before.members {
                        self.labels = m.labels;
                        self.objectness = m.objectness;
                        for (slot, note) in m.notes {
                            match note {
                                Some(n) => self.notes.insert(slot, n),
                                None => self.notes.remove(&slot),
                            };
                        }
                        for (slot, errors) in m.errors {
                            match errors {
                                Some(e) => self.errors.insert(slot, e),
                                None => self.errors.remove(&slot),
                            };
                        }
                    }
                }
                match &self.ingested {
                    Some((key, _)) => self.temperatures = Temperatures(key.temperatures.clone()),
                    None => {
                        self.logits = self
                            .active
                            .as_ref()
                            .and_then(|a| a.names.get(&Slot::Logits).cloned())
                    }
                }
                self.notes.insert(
                    Slot::Logits,
                    "reading cancelled; the batch in use is kept".into(),
                );
                // A cancelled read does not start again by itself (e.g. the old file under a
                // newly staged taxonomy): choosing a file or new temperatures start one.
                if let Some(key) = self.wanted_ingest() {
                    self.no_read_for = Some(key);
                }
            }
            Action::LogitsDone { key, result } => {
                self.progress = None;
                self.before_choice = None;
                match result {
                    Ok(ingested) => {
                        let h = &ingested.header;
                        let bundle = self
                            .bundle
                            .as_ref()
                            .map(|keys| format!(" (a bundle of {})", quoted(keys)))
                            .unwrap_or_default();
                        self.notes.insert(
                            Slot::Logits,
                            format!(
                                "{}: {} rows × {} nodes, {}{bundle}",
                                self.logits.clone().unwrap_or_default(),
                                h.shape.first().copied().unwrap_or(0),
                                h.shape.get(1).copied().unwrap_or(0),
                                h.dtype.name()
                            ),
                        );
                        self.errors.remove(&Slot::Logits);
                        self.ingested = Some((key, Rc::new(ingested)));
                        self.assemble();
                    }
                    Err(e) => {
                        self.no_read_for = Some(key);
                        self.errors.insert(Slot::Logits, messages(&e));
                    }
                }
            }
            Action::SetRule(rule) => {
                self.settings.rule = rule;
                self.rescore();
            }
            Action::SetPolicy(policy) => {
                self.settings.policy = policy;
                self.rescore();
            }
            Action::SetDepth { depth, value } => {
                if depth >= 1 {
                    self.fit_depths();
                    if let Some(slot) = self.settings.thresholds.depths.get_mut(depth - 1) {
                        *slot = clamp01(value);
                    }
                    self.focus = depth;
                    self.rescore();
                }
            }
            Action::SetObject(value) => {
                self.settings.thresholds.object = clamp01(value);
                self.rescore();
            }
            Action::SetAllDepths(value) => {
                self.fit_depths();
                for t in &mut self.settings.thresholds.depths {
                    *t = clamp01(value);
                }
                self.rescore();
            }
            Action::SetTemperature { depth, value } => {
                if depth >= 1 && Temperatures::valid(value) {
                    let d = self.depth().max(depth);
                    let mut temps = self.temperatures.expand(d);
                    temps[depth - 1] = value;
                    self.temperatures = Temperatures(temps);
                }
            }
            Action::Focus(depth) => {
                self.focus = depth;
                self.rescore();
            }
            Action::Restore(stored) => {
                self.settings.rule = stored.rule;
                self.settings.policy = stored.unverifiable;
                self.settings.thresholds.object = clamp01(stored.object_threshold);
                if !stored.thresholds.is_empty() {
                    self.settings.thresholds.depths =
                        stored.thresholds.iter().map(|&t| clamp01(t)).collect();
                }
                if stored.temperatures.iter().all(|&t| Temperatures::valid(t)) {
                    self.temperatures = Temperatures(stored.temperatures);
                }
                self.fit_depths();
                self.rescore();
            }
            Action::ClearErrors => self.errors.clear(),
        }
    }

    /// A new logits file (or bundle) is staged: its paths are to be read.
    fn choose(&mut self, name: &str, total: u64, members: Option<MemberSlots>) {
        self.before_choice = Some(BeforeChoice {
            logits: self.logits.take(),
            bundle: self.bundle.take(),
            ingested: self.ingested.take(),
            members,
        });
        self.logits = Some(name.to_string());
        self.errors.remove(&Slot::Logits);
        self.no_read_for = None;
        self.progress = None;
        self.pending_total = total;
    }

    fn file(&mut self, name: String, bytes: Rc<Vec<u8>>) {
        match recognise(&name, &bytes[..bytes.len().min(1 << 16)]) {
            Ok(slot) => self.fill(slot, name, bytes),
            Err(message) => {
                self.errors.insert(Slot::Other, vec![message]);
            }
        }
    }

    /// Put a whole file into its slot (recognised from its content, or a bundle's member by
    /// its key) and check it.
    fn fill(&mut self, slot: Slot, name: String, bytes: Rc<Vec<u8>>) {
        self.errors.remove(&slot);
        match slot {
            Slot::Taxonomy => match Taxonomy::parse(&bytes, &name) {
                Ok(tax) => {
                    let leaves = tax.total_leaves();
                    self.notes.insert(
                        slot,
                        format!(
                            "{name}: {} nodes, {leaves} leaves, depth {}",
                            tax.len(),
                            tax.max_depth()
                        ),
                    );
                    self.taxonomy = Some((name, Rc::new(tax)));
                    self.fit_depths();
                    self.assemble();
                }
                Err(e) => {
                    self.errors.insert(slot, messages(&e));
                }
            },
            Slot::Labels => {
                self.labels = Some((name.clone(), bytes));
                self.notes.insert(slot, format!("{name}: read"));
                self.assemble();
            }
            Slot::Objectness => match Objectness::parse(&bytes, &name) {
                Ok(o) => {
                    self.notes
                        .insert(slot, format!("{name}: {} rows", o.values.len()));
                    self.objectness = Some((name, Rc::new(o)));
                    self.assemble();
                }
                Err(e) => {
                    self.errors.insert(slot, messages(&e));
                }
            },
            Slot::Profile => self.load_profile(&name, &bytes),
            Slot::Logits => {
                // Logits are streamed by the shell; a whole file handed over is read here.
                self.errors.insert(
                    slot,
                    vec![format!(
                        "{name}: logits must be streamed (internal: use LogitsChosen)"
                    )],
                );
            }
            Slot::Other => {}
        }
    }

    fn load_profile(&mut self, name: &str, bytes: &[u8]) {
        let Some((_, tax)) = self.taxonomy.clone().or(self
            .active
            .as_ref()
            .map(|a| (String::new(), a.taxonomy.clone())))
        else {
            self.errors.insert(Slot::Profile, vec![format!("{name}: load a taxonomy first: a profile is checked against the taxonomy it was made for")]);
            return;
        };
        match Profile::from_json(bytes, name, &tax) {
            Ok(p) => match p.settings(&tax) {
                Ok(s) => {
                    self.settings = s;
                    self.temperatures = p.temperatures();
                    self.fit_depths();
                    self.notes.insert(
                        Slot::Profile,
                        format!(
                            "{name}: {} rule, thresholds {}",
                            p.rule.as_str(),
                            join(&p.thresholds)
                        ),
                    );
                    self.rescore();
                }
                Err(k) => {
                    self.errors
                        .insert(Slot::Profile, vec![format!("{name}: {k}")]);
                }
            },
            Err(e) => {
                self.errors.insert(Slot::Profile, messages(&e));
            }
        }
    }

    /// Make the per-depth list exactly D long (repeating the last value), so every depth has
    /// its own control.
    fn fit_depths(&mut self) {
        let d = self.depth();
        if d == 0 {
            return;
        }
        let t = &self.settings.thresholds;
        let depths: Vec<f64> = (1..=d).map(|i| t.at_depth(i)).collect();
        self.settings.thresholds.depths = depths;
        // Overrides by column index belong to the taxonomy they were set for.
        let m = self.taxonomy.as_ref().map_or(0, |(_, t)| t.len() as u32);
        self.settings.thresholds.nodes.retain(|&(v, _)| v < m);
        if self.focus == 0 || self.focus > d {
            self.focus = 1;
        }
    }

    /// Try to build a batch from the staged files; on success it becomes active.
    fn assemble(&mut self) {
        let Some((tax_name, tax)) = self.taxonomy.clone() else {
            return;
        };
        let labels = match &self.labels {
            // Parsed once per (labels file, taxonomy): assembling runs again as the other
            // files arrive, and a large CSV is not worth reading twice.
            Some((_, bytes))
                if self
                    .labels_read
                    .as_ref()
                    .is_some_and(|(b, f, _)| Rc::ptr_eq(b, bytes) && f == tax.fingerprint()) =>
            {
                self.labels_read.as_ref().map(|(_, _, l)| (**l).clone())
            }
            Some((name, bytes)) => match Labels::parse(bytes, name, &tax) {
                Ok(l) => {
                    self.errors.remove(&Slot::Labels);
                    self.labels_read = Some((
                        bytes.clone(),
                        tax.fingerprint().to_string(),
                        Rc::new(l.clone()),
                    ));
                    Some(l)
                }
                Err(e) => {
                    self.errors.insert(Slot::Labels, messages(&e));
                    return;
                }
            },
            None => None,
        };
        let (Some(labels), Some((key, ingested))) = (labels, self.ingested.clone()) else {
            return;
        };
        if key.taxonomy != tax.fingerprint() {
            return;
        }
        let logits_name = self.logits.clone().unwrap_or_default();
        let objectness = self.objectness.as_ref().map(|(_, o)| (**o).clone());
        let labels_name = labels.file.clone();
        let temps = Temperatures(key.temperatures.clone());
        match Batch::new(
            &tax,
            &logits_name,
            (*ingested).clone(),
            temps,
            labels,
            objectness,
        ) {
            Ok(batch) => {
                for slot in [Slot::Labels, Slot::Objectness] {
                    self.errors.remove(&slot);
                }
                let coarse = batch
                    .coarse_share(&tax)
                    .map_or("n/a".into(), |c| format!("{:.1} %", c * 100.0));
                self.notes.insert(
                    Slot::Labels,
                    format!(
                        "{labels_name}: {} rows, {} background, coarse labels {coarse}",
                        batch.len(),
                        batch.background_rows()
                    ),
                );
                let mut names = BTreeMap::new();
                names.insert(Slot::Taxonomy, tax_name);
                names.insert(Slot::Logits, logits_name);
                names.insert(Slot::Labels, labels_name);
                if let Some((n, _)) = &self.objectness {
                    names.insert(Slot::Objectness, n.clone());
                }
                self.active = Some(Active {
                    taxonomy: tax,
                    batch: Rc::new(batch),
                    names,
                });
                self.generation += 1;
                self.rescore();
            }
            Err(e) => {
                for err in e.iter() {
                    let slot = if self
                        .objectness
                        .as_ref()
                        .is_some_and(|(n, _)| *n == err.file)
                    {
                        Slot::Objectness
                    } else if err.file == labels_name {
                        Slot::Labels
                    } else {
                        Slot::Logits
                    };
                    self.errors.entry(slot).or_default().push(err.to_string());
                }
            }
        }
    }

    /// Recompute everything shown from the active batch (never the softmax).
    fn rescore(&mut self) {
        let Some(a) = self.active.clone() else {
            self.metrics = None;
            return;
        };
        if self.settings.thresholds.validate().is_err() {
            return;
        }
        let object = if a.batch.has_objectness() {
            self.settings.thresholds.object
        } else {
            0.0
        };
        let curve_key = (
            self.settings.rule,
            object.to_bits(),
            self.settings.policy,
            self.generation,
        );
        if self.curve_key != Some(curve_key) {
            // Breakpoints are sorted once per (batch, rule); the object threshold and the
            // policy only re-sweep them.
            let index = match &self.curve_index {
                Some((g, rule, index)) if *g == self.generation && *rule == self.settings.rule => {
                    index.clone()
                }
                _ => {
                    let index = Rc::new(CurveIndex::new(&a.taxonomy, &a.batch, self.settings.rule));
                    self.curve_index = Some((self.generation, self.settings.rule, index.clone()));
                    index
                }
            };
            self.curve = Rc::new(index.sweep_within(
                &a.taxonomy,
                &a.batch,
                object,
                self.settings.policy,
                CURVE_RESOLUTION,
            ));
            self.curve_key = Some(curve_key);
        }
        let depth = self.focus.clamp(1, a.taxonomy.max_depth().max(1));
        let mut others: Vec<u64> = self
            .settings
            .thresholds
            .depths
            .iter()
            .map(|t| t.to_bits())
            .collect();
        if let Some(x) = others.get_mut(depth - 1) {
            *x = 0;
        }
        others.push(object.to_bits());
        others.extend(
            self.settings
                .thresholds
                .nodes
                .iter()
                .flat_map(|&(v, t)| [v as u64, t.to_bits()]),
        );
        let key = SweepKey {
            depth,
            generation: self.generation,
            rule: self.settings.rule,
            policy: self.settings.policy,
            thresholds: others,
        };
        let t = self.settings.thresholds.at_depth(depth);
        let mut drag = self.drag.borrow_mut();
        match drag.as_mut() {
            // Only the focused depth moved: re-score just the rows that flip.
            Some(d) if self.sweep_key.as_ref() == Some(&key) && d.depth() == depth => {
                self.metrics = Some(d.set(&a.taxonomy, &a.batch, t));
            }
            _ => {
                // Exact: one breakpoint per row that reaches the depth (not a sampled grid).
                let mut d = DepthDrag::new(&a.taxonomy, &a.batch, &self.settings, depth);
                let points = d
                    .sweep_within(&a.taxonomy, &a.batch, CURVE_RESOLUTION)
                    .into_iter()
                    .filter_map(|p| {
                        Some(TradePoint {
                            threshold: p.threshold,
                            specificity: p.specificity?,
                            precision: p.precision?,
                        })
                    })
                    .collect();
                self.sweep = Rc::new(points);
                self.sweep_key = Some(key);
                self.metrics = Some(d.set(&a.taxonomy, &a.batch, t));
                *drag = Some(d);
            }
        }
    }

    /// Chart 1's data.
    pub fn tradeoff_view(&self) -> TradeoffView {
        let curve = self
            .curve
            .iter()
            .filter_map(|p| {
                Some(TradePoint {
                    threshold: p.threshold,
                    specificity: p.specificity?,
                    precision: p.precision?,
                })
            })
            .collect();
        let current = self.metrics.as_ref().and_then(|m| {
            Some(TradePoint {
                threshold: f64::NAN,
                specificity: m.specificity?,
                precision: m.precision?,
            })
        });
        let sweep = (!self.sweep.is_empty()).then(|| (self.focus, (*self.sweep).clone()));
        TradeoffView {
            curve,
            current,
            sweep,
            rule: self.settings.rule.as_str().to_string(),
        }
    }

    /// Chart 2's data.
    pub fn stop_view(&self) -> StopView {
        let shares = self
            .metrics
            .as_ref()
            .map(|m| {
                m.stop_outcome
                    .iter()
                    .map(|o| {
                        (
                            o.correct.unwrap_or(0.0),
                            o.unverifiable.unwrap_or(0.0),
                            o.wrong.unwrap_or(0.0),
                        )
                    })
                    .collect()
            })
            .unwrap_or_default();
        StopView { shares }
    }
}

fn clamp01(v: f64) -> f64 {
    if v.is_nan() {
        0.0
    } else {
        v.clamp(0.0, 1.0)
    }
}

fn messages(e: &Errors) -> Vec<String> {
    e.iter().map(|e| e.to_string()).collect()
}

/// Names as the page quotes them: `` `logits`, `labels` ``.
fn quoted(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

fn join(values: &[f64]) -> String {
    values
        .iter()
        .map(|v| v.to_string())
        .collect::<Vec<_>>()
        .join(", ")
}

/// A ratio as the page shows it: 4 decimals, or "n/a" with no denominator.
pub fn show_ratio(v: Option<f64>) -> String {
    v.map_or_else(|| "n/a".to_string(), |v| format!("{v:.4}"))
}

/// One line explaining each headline number.
pub const HELP: &[(&str, &str, &str)] = &[
    ("predictions", "predictions", "rows that predict: P(root) reached the object threshold"),
    ("precision", "precision", "share of predictions that are right: the true node or one of its ancestors (unverifiable ones per the policy)"),
    ("specificity", "specificity", "mean information gain of the predicted node: 0 at the root, 1 at a leaf"),
    ("reward", "reward", "mean information gain counted only for correct predictions"),
    ("hierarchical-precision", "hier. precision", "shared ancestors of prediction and label over the prediction's ancestors (micro, root excluded)"),
    ("hierarchical-recall", "hier. recall", "shared ancestors of prediction and label over the label's ancestors (micro, root excluded)"),
    ("hierarchical-f1", "hier. F1", "harmonic mean of hierarchical precision and recall"),
    ("mistake-severity", "mistake severity", "mean tree distance between a wrong prediction and its label, in edges"),
];

#[cfg(test)]
mod tests {
    use super::*;
    use hedgerow_core::paths::ingest_bytes;

    fn demo(name: &str) -> Rc<Vec<u8>> {
        let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-data/");
        Rc::new(std::fs::read(format!("{path}{name}")).unwrap_or_else(|e| panic!("{name}: {e}")))
    }

    /// What the page's shell does when the board asks for paths (in one piece here).
    fn pump(b: &mut Board) {
        while let Some(key) = b.wanted_ingest() {
            let tax = b
                .taxonomy
                .as_ref()
                .map(|(_, t)| t.clone())
                .expect("taxonomy");
            let temps = Temperatures(key.temperatures.clone());
            b.apply(Action::LogitsProgress { done: 0 });
            let result = ingest_bytes("logits.npy", &tax, &temps, &demo("logits.npy"));
            b.apply(Action::LogitsDone { key, result });
        }
    }

    fn loaded() -> Board {
        let mut b = Board::new();
        b.apply(Action::File {
            name: "taxonomy.csv".into(),
            bytes: demo("taxonomy.csv"),
        });
        b.apply(Action::LogitsChosen {
            name: "logits.npy".into(),
            total: 1,
        });
        b.apply(Action::File {
            name: "labels.csv".into(),
            bytes: demo("labels.csv"),
        });
        pump(&mut b);
        assert!(b.active.is_some());
        b
    }

    #[test]
    fn cancelling_a_new_file_keeps_the_previous_paths_and_asks_for_no_read() {
        let mut b = loaded();
        let before = b.ingested.as_ref().map(|(k, i)| (k.clone(), Rc::as_ptr(i)));
        b.apply(Action::LogitsChosen {
            name: "other.npy".into(),
            total: 10,
        });
        assert!(b.wanted_ingest().is_some());
        b.apply(Action::LogitsProgress { done: 5 });
        b.apply(Action::LogitsCancelled);
        assert_eq!(b.logits.as_deref(), Some("logits.npy"));
        assert_eq!(
            b.ingested.as_ref().map(|(k, i)| (k.clone(), Rc::as_ptr(i))),
            before
        );
        assert!(b.progress.is_none());
        assert_eq!(b.wanted_ingest(), None, "no re-read after a cancel");
    }

    #[test]
    fn cancelling_a_re_read_for_new_temperatures_restores_the_temperatures() {
        let mut b = loaded();
        b.apply(Action::SetTemperature {
            depth: 2,
            value: 1.5,
        });
        assert!(b.wanted_ingest().is_some());
        b.apply(Action::LogitsProgress { done: 5 });
        b.apply(Action::LogitsCancelled);
        assert_eq!(b.temperatures.expand(b.depth()), vec![1.0; b.depth()]);
        assert_eq!(b.wanted_ingest(), None, "no re-read after a cancel");
        assert!(b.metrics.is_some());
    }
}
