//! The slots and the batches they form: files arrive, are checked, and join the staged batch;
//! a taxonomy or logits that do not fit the staged files start a new batch, and the files that
//! no longer fit leave their slots with a visible line; a complete staged batch becomes active.
//! Which file is what and what fits together are the engine's intake rules
//! (`hedgerow_core::intake`); this module keeps the slots.

use std::collections::BTreeMap;
use std::rc::Rc;

use hedgerow_core::intake::{self, Kind, Part};
use hedgerow_core::{Batch, Errors, Ingested, Labels, Objectness, Taxonomy, Temperatures};

use super::actions::{IngestKey, Origin, Slot};
use super::text::{messages, quoted};
use super::{Active, Board};

/// A file in its slot: its name, where it came from, when it was given, and what was read.
#[derive(Debug, Clone)]
pub struct Staged<T> {
    pub name: String,
    pub origin: Origin,
    /// Larger is newer (see `intake::Part::seq`).
    pub seq: u64,
    pub value: T,
}

impl<T> Staged<T> {
    /// How messages name it: `demo objectness` or `objectness.npy`.
    pub fn label(&self, slot: Slot) -> String {
        match self.origin {
            Origin::Demo => format!("demo {}", slot.title()),
            Origin::User => self.name.clone(),
        }
    }
}

/// The staged logits file: what is known of it before its paths are read.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LogitsFile {
    /// The arrays of the bundle, when it is one.
    pub bundle: Option<Vec<String>>,
    /// `(rows, columns)`, from the `.npy` header (a bundle's once its member is read).
    pub shape: Option<(u64, u64)>,
}

/// Staged labels parsed against one taxonomy (labels name nodes, so a new taxonomy re-reads
/// them).
#[derive(Debug, Clone)]
pub struct ParsedLabels {
    pub bytes: Rc<Vec<u8>>,
    /// The taxonomy's fingerprint.
    pub taxonomy: String,
    pub labels: Rc<Labels>,
}

/// The file a new labels or objectness file replaced in its slot (with the slot's note), put
/// back if the new one is refused.
#[derive(Debug, Clone)]
pub enum Replaced {
    Labels(Option<Staged<Rc<Vec<u8>>>>, Option<String>),
    Objectness(Option<Staged<Rc<Objectness>>>, Option<String>),
}

/// The slots as they were before a logits file was chosen (Cancel puts them back).
#[derive(Debug, Clone)]
pub struct Snapshot {
    taxonomy: Option<Staged<Rc<Taxonomy>>>,
    labels: Option<Staged<Rc<Vec<u8>>>>,
    objectness: Option<Staged<Rc<Objectness>>>,
    logits: Option<Staged<LogitsFile>>,
    ingested: Option<(IngestKey, Rc<Ingested>)>,
    notes: BTreeMap<Slot, String>,
    errors: BTreeMap<Slot, Vec<String>>,
    set_aside: BTreeMap<Slot, String>,
}

impl Board {
    fn next_seq(&mut self) -> u64 {
        self.seq += 1;
        self.seq
    }

    fn staged<T>(&mut self, name: String, origin: Origin, value: T) -> Staged<T> {
        Staged {
            name,
            origin,
            seq: self.next_seq(),
            value,
        }
    }

    /// The key logits must be (re)read with, when the staged paths do not match it.
    pub fn wanted_ingest(&self) -> Option<IngestKey> {
        let tax = &self.taxonomy.as_ref()?.value;
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

    /// Whether the staged files differ from the active batch's (a new batch is being staged
    /// or read while the active one stays in use).
    pub fn staging_differs(&self) -> bool {
        match &self.active {
            None => self.taxonomy.is_some() || self.logits.is_some(),
            Some(a) => a.built_from != self.built_from(),
        }
    }

    /// What the staged batch still lacks, in words (empty when it is whole).
    pub fn missing(&self) -> Vec<&'static str> {
        let mut out = Vec::new();
        if self.taxonomy.is_none() {
            out.push("a taxonomy");
        }
        if self.logits.is_none() {
            out.push("logits");
        }
        if self.labels.is_none() {
            out.push("labels");
        }
        out
    }

    fn snapshot(&self) -> Snapshot {
        Snapshot {
            taxonomy: self.taxonomy.clone(),
            labels: self.labels.clone(),
            objectness: self.objectness.clone(),
            logits: self.logits.clone(),
            ingested: self.ingested.clone(),
            notes: self.notes.clone(),
            errors: self.errors.clone(),
            set_aside: self.set_aside.clone(),
        }
    }

    /// A whole small file: recognised by its content and put into its slot.
    pub(crate) fn file(&mut self, name: String, bytes: Rc<Vec<u8>>, origin: Origin) {
        let head = &bytes[..bytes.len().min(intake::HEAD_BYTES as usize)];
        match intake::recognise(&name, head) {
            Ok(r) => self.fill(Slot::of(r.kind), name, bytes, origin),
            Err(e) => {
                self.errors.insert(Slot::Other, vec![e.to_string()]);
            }
        }
    }

    /// Put a whole file into its slot (recognised from its content, or a bundle's member by
    /// its key) and check it.
    pub(crate) fn fill(&mut self, slot: Slot, name: String, bytes: Rc<Vec<u8>>, origin: Origin) {
        self.errors.remove(&slot);
        match slot {
            Slot::Taxonomy => match Taxonomy::parse(&bytes, &name) {
                Ok(tax) => {
                    self.notes.insert(
                        slot,
                        format!(
                            "{name}: {} nodes, {} leaves, depth {}",
                            tax.len(),
                            tax.total_leaves(),
                            tax.max_depth()
                        ),
                    );
                    let staged = self.staged(name, origin, Rc::new(tax));
                    self.taxonomy = Some(staged);
                    self.settle();
                }
                Err(e) => {
                    self.errors.insert(slot, messages(&e));
                }
            },
            Slot::Labels => {
                let note = self.notes.insert(slot, format!("{name}: read"));
                let staged = self.staged(name, origin, bytes);
                let replaced = Replaced::Labels(self.labels.replace(staged), note);
                self.settle_replacing(Some(replaced));
            }
            Slot::Objectness => match Objectness::parse(&bytes, &name) {
                Ok(o) => {
                    let note = self.notes.get(&slot).cloned();
                    self.notes.insert(
                        slot,
                        format!("{name}: {} rows", intake::thousands(o.values.len() as u64)),
                    );
                    let staged = self.staged(name, origin, Rc::new(o));
                    let replaced = Replaced::Objectness(self.objectness.replace(staged), note);
                    self.settle_replacing(Some(replaced));
                }
                Err(e) => {
                    self.errors.insert(slot, messages(&e));
                }
            },
            Slot::Profile => self.load_profile(&name, &bytes),
            Slot::Logits => {
                // Logits are streamed by the shell; a whole file handed over is not read here.
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

    /// A new logits file (or bundle) is staged: its paths are to be read.
    fn choose(&mut self, name: String, total: u64, origin: Origin, file: LogitsFile) {
        self.before_choice = Some(Box::new(self.snapshot()));
        self.errors.remove(&Slot::Logits);
        let staged = self.staged(name, origin, file);
        self.logits = Some(staged);
        self.ingested = None;
        self.no_read_for = None;
        self.progress = None;
        self.pending_total = total;
    }

    pub(crate) fn choose_npy(
        &mut self,
        name: String,
        total: u64,
        origin: Origin,
        shape: Option<(u64, u64)>,
    ) {
        let note = match shape {
            Some((r, c)) => format!(
                "{name}: {} rows × {} nodes; waiting for a taxonomy",
                intake::thousands(r),
                intake::thousands(c)
            ),
            None => format!("{name}: waiting for a taxonomy"),
        };
        self.notes.insert(Slot::Logits, note);
        self.choose(
            name,
            total,
            origin,
            LogitsFile {
                bundle: None,
                shape,
            },
        );
        self.settle();
    }

    pub(crate) fn choose_bundle(
        &mut self,
        name: String,
        total: u64,
        keys: Vec<String>,
        members: Vec<(Slot, Rc<Vec<u8>>)>,
        origin: Origin,
    ) {
        self.notes.insert(
            Slot::Logits,
            format!(
                "{name}: a bundle of {}; waiting for a taxonomy",
                quoted(&keys)
            ),
        );
        let holds_objectness = keys.iter().any(|k| k == "objectness");
        self.choose(
            name.clone(),
            total,
            origin,
            LogitsFile {
                bundle: Some(keys),
                shape: None,
            },
        );
        let mut objectness_given = false;
        for (slot, bytes) in members {
            objectness_given |= slot == Slot::Objectness;
            let key = slot.title();
            self.fill(slot, format!("{name}:{key}"), bytes, origin);
        }
        if !holds_objectness && !objectness_given {
            // A bundle is one batch: objectness staged before it belongs to another.
            if let Some(o) = self.objectness.take() {
                self.note_aside(
                    Slot::Objectness,
                    format!(
                        "{} set aside: {name} holds no objectness",
                        o.label(Slot::Objectness)
                    ),
                );
            }
            self.errors.remove(&Slot::Objectness);
            self.notes.insert(
                Slot::Objectness,
                format!("none: {name} holds no objectness"),
            );
        }
        self.settle();
    }

    pub(crate) fn cancelled(&mut self) {
        self.progress = None;
        // Back to the slots from before the choice (a new file's read was cancelled) and to
        // the temperatures the paths were read with (a re-read for new temperatures was
        // cancelled), so that nothing asks for the read again.
        if let Some(s) = self.before_choice.take() {
            let s = *s;
            self.taxonomy = s.taxonomy;
            self.labels = s.labels;
            self.objectness = s.objectness;
            self.logits = s.logits;
            self.ingested = s.ingested;
            self.notes = s.notes;
            self.errors = s.errors;
            self.set_aside = s.set_aside;
        }
        if let Some((key, _)) = &self.ingested {
            self.temperatures = Temperatures(key.temperatures.clone());
        }
        self.notes.insert(
            Slot::Logits,
            "reading cancelled; the batch in use is kept".into(),
        );
        // A cancelled read does not start again by itself (e.g. the old file under a newly
        // staged taxonomy): choosing a file or new temperatures starts one.
        if let Some(key) = self.wanted_ingest() {
            self.no_read_for = Some(key);
        }
    }

    pub(crate) fn logits_done(&mut self, key: IngestKey, result: Result<Ingested, Errors>) {
        self.progress = None;
        self.before_choice = None;
        match result {
            Ok(ingested) => {
                let h = &ingested.header;
                let rows = h.shape.first().copied().unwrap_or(0);
                let cols = h.shape.get(1).copied().unwrap_or(0);
                if let Some(l) = self.logits.as_mut() {
                    l.value.shape = Some((rows, cols));
                    let bundle = l
                        .value
                        .bundle
                        .as_ref()
                        .map(|keys| format!(" (a bundle of {})", quoted(keys)))
                        .unwrap_or_default();
                    self.notes.insert(
                        Slot::Logits,
                        format!(
                            "{}: {} rows × {} nodes, {}{bundle}",
                            l.name,
                            intake::thousands(rows),
                            intake::thousands(cols),
                            h.dtype.name()
                        ),
                    );
                }
                self.errors.remove(&Slot::Logits);
                self.ingested = Some((key, Rc::new(ingested)));
                self.settle();
            }
            Err(e) => {
                self.no_read_for = Some(key);
                self.errors.insert(Slot::Logits, messages(&e));
            }
        }
    }

    /// The remove control of a slot.
    pub(crate) fn remove(&mut self, slot: Slot) {
        match slot {
            Slot::Taxonomy => self.taxonomy = None,
            Slot::Logits => {
                self.logits = None;
                self.ingested = None;
                self.progress = None;
                self.before_choice = None;
            }
            Slot::Labels => self.labels = None,
            Slot::Objectness => self.objectness = None,
            Slot::Profile => self.pending_profile = None,
            Slot::Other => {}
        }
        self.notes.remove(&slot);
        self.errors.remove(&slot);
        self.set_aside.remove(&slot);
        self.assemble();
    }

    /// The staged labels parsed against the staged taxonomy (once per pair), or their
    /// problems.
    fn parsed_labels(&mut self) -> Option<Result<Rc<Labels>, Errors>> {
        let tax = self.taxonomy.as_ref()?.value.clone();
        let staged = self.labels.as_ref()?;
        if let Some(p) = &self.labels_read {
            if Rc::ptr_eq(&p.bytes, &staged.value) && p.taxonomy == tax.fingerprint() {
                return Some(Ok(p.labels.clone()));
            }
        }
        Some(Labels::parse(&staged.value, &staged.name, &tax).map(|l| {
            let labels = Rc::new(l);
            self.labels_read = Some(ParsedLabels {
                bytes: staged.value.clone(),
                taxonomy: tax.fingerprint().to_string(),
                labels: labels.clone(),
            });
            labels
        }))
    }

    /// The staged files as the intake sees them.
    fn parts(&self, labels_rows: Option<u64>) -> Vec<Part> {
        let mut parts = Vec::new();
        if let Some(t) = &self.taxonomy {
            parts.push(Part {
                kind: Kind::Taxonomy,
                label: t.label(Slot::Taxonomy),
                count: Some(t.value.len() as u64),
                columns: None,
                seq: t.seq,
            });
        }
        if let Some(l) = &self.logits {
            parts.push(Part {
                kind: Kind::Logits,
                label: l.label(Slot::Logits),
                count: l.value.shape.map(|s| s.0),
                columns: l.value.shape.map(|s| s.1),
                seq: l.seq,
            });
        }
        if let Some(l) = &self.labels {
            parts.push(Part {
                kind: Kind::Labels,
                label: l.label(Slot::Labels),
                count: labels_rows,
                columns: None,
                seq: l.seq,
            });
        }
        if let Some(o) = &self.objectness {
            parts.push(Part {
                kind: Kind::Objectness,
                label: o.label(Slot::Objectness),
                count: Some(o.value.values.len() as u64),
                columns: None,
                seq: o.seq,
            });
        }
        parts
    }

    /// Apply the intake's batch rules to the slots after a change: labels that do not name
    /// nodes of a newer taxonomy, and files that do not fit a newer taxonomy or logits, are set
    /// aside with a line saying why; new labels or objectness that do not fit are refused.
    /// Then assemble.
    pub(crate) fn settle(&mut self) {
        self.settle_replacing(None);
    }

    /// [`Board::settle`] after a new labels or objectness file took the place of `replaced`,
    /// which goes back into its slot if the new file is refused.
    fn settle_replacing(&mut self, mut replaced: Option<Replaced>) {
        loop {
            let labels_rows = match self.parsed_labels() {
                Some(Ok(l)) => Some(l.nodes.len() as u64),
                Some(Err(e)) => {
                    let (Some(labels), Some(tax)) = (&self.labels, &self.taxonomy) else {
                        break;
                    };
                    if labels.seq < tax.seq {
                        let first = e.iter().next().map(|e| e.to_string()).unwrap_or_default();
                        self.note_aside(
                            Slot::Labels,
                            format!(
                                "{} set aside: they do not name nodes of the new taxonomy ({first})",
                                labels.label(Slot::Labels)
                            ),
                        );
                        self.notes.remove(&Slot::Labels);
                        self.errors.remove(&Slot::Labels);
                        self.labels = None;
                    } else {
                        self.errors.insert(Slot::Labels, messages(&e));
                        self.refuse(Slot::Labels, &mut replaced);
                    }
                    continue;
                }
                None => None,
            };
            let Some(m) = intake::mismatches(&self.parts(labels_rows))
                .into_iter()
                .next()
            else {
                break;
            };
            let leaving = Slot::of(m.gives_way());
            if m.gives_way() == m.older {
                let label = self.label_of(leaving).unwrap_or_default();
                let why = m
                    .reason
                    .strip_prefix(&format!("{label}: "))
                    .unwrap_or(&m.reason);
                self.note_aside(leaving, format!("{label} set aside: {why}"));
                self.notes.remove(&leaving);
                self.errors.remove(&leaving);
                self.unstage(leaving);
            } else {
                self.errors
                    .insert(leaving, vec![format!("{}: not used", m.refusal)]);
                self.refuse(leaving, &mut replaced);
            }
        }
        self.assemble();
    }

    /// A new labels or objectness file is refused: the file it was to replace goes back into
    /// the slot (a refused file must not change the batch).
    fn refuse(&mut self, slot: Slot, replaced: &mut Option<Replaced>) {
        let note = match (slot, replaced.take()) {
            (Slot::Labels, Some(Replaced::Labels(previous, note))) => {
                self.labels = previous;
                note
            }
            (Slot::Objectness, Some(Replaced::Objectness(previous, note))) => {
                self.objectness = previous;
                note
            }
            (_, other) => {
                *replaced = other;
                self.unstage(slot);
                None
            }
        };
        match note {
            Some(n) => self.notes.insert(slot, n),
            None => self.notes.remove(&slot),
        };
    }

    /// A line saying why a slot's file left it. Lines stay while the batch they led to is
    /// the newest, and go when the next batch becomes active.
    fn note_aside(&mut self, slot: Slot, line: String) {
        self.set_aside.insert(slot, line);
        self.aside_made.insert(slot, self.seq);
    }

    fn label_of(&self, slot: Slot) -> Option<String> {
        match slot {
            Slot::Taxonomy => self.taxonomy.as_ref().map(|s| s.label(slot)),
            Slot::Logits => self.logits.as_ref().map(|s| s.label(slot)),
            Slot::Labels => self.labels.as_ref().map(|s| s.label(slot)),
            Slot::Objectness => self.objectness.as_ref().map(|s| s.label(slot)),
            _ => None,
        }
    }

    fn unstage(&mut self, slot: Slot) {
        match slot {
            Slot::Taxonomy => self.taxonomy = None,
            Slot::Logits => {
                self.logits = None;
                self.ingested = None;
            }
            Slot::Labels => self.labels = None,
            Slot::Objectness => self.objectness = None,
            _ => {}
        }
    }

    /// Which staged files a batch would be built from.
    fn built_from(&self) -> Vec<u64> {
        vec![
            self.taxonomy.as_ref().map_or(0, |s| s.seq),
            self.logits.as_ref().map_or(0, |s| s.seq),
            self.labels.as_ref().map_or(0, |s| s.seq),
            self.objectness.as_ref().map_or(0, |s| s.seq),
            self.ingested
                .as_ref()
                .map_or(0, |(_, i)| Rc::as_ptr(i) as usize as u64),
        ]
    }

    /// Build a batch from the staged files when they are whole; it becomes active.
    fn assemble(&mut self) {
        let Some(tax) = self.taxonomy.clone() else {
            return;
        };
        let Some(Ok(labels)) = self.parsed_labels() else {
            return;
        };
        let Some((key, ingested)) = self.ingested.clone() else {
            return;
        };
        if key.taxonomy != tax.value.fingerprint() {
            return;
        }
        let built_from = self.built_from();
        if self
            .active
            .as_ref()
            .is_some_and(|a| a.built_from == built_from)
        {
            return;
        }
        let Some(logits) = self.logits.clone() else {
            return;
        };
        let labels_staged = self.labels.clone();
        let objectness = self.objectness.as_ref().map(|o| (*o.value).clone());
        let labels_name = labels.file.clone();
        match Batch::new(
            &tax.value,
            &logits.name,
            (*ingested).clone(),
            Temperatures(key.temperatures.clone()),
            (*labels).clone(),
            objectness,
        ) {
            Ok(batch) => {
                for slot in [Slot::Labels, Slot::Objectness] {
                    self.errors.remove(&slot);
                }
                let coarse = batch
                    .coarse_share(&tax.value)
                    .map_or("n/a".into(), |c| format!("{:.1} %", c * 100.0));
                self.notes.insert(
                    Slot::Labels,
                    format!(
                        "{labels_name}: {} rows, {} background, coarse labels {coarse}",
                        intake::thousands(batch.len() as u64),
                        intake::thousands(batch.background_rows() as u64)
                    ),
                );
                let mut names = BTreeMap::new();
                let mut origins = vec![tax.origin, logits.origin];
                names.insert(Slot::Taxonomy, tax.name.clone());
                names.insert(Slot::Logits, logits.name.clone());
                names.insert(Slot::Labels, labels_name);
                if let Some(l) = &labels_staged {
                    origins.push(l.origin);
                }
                if let Some(o) = &self.objectness {
                    names.insert(Slot::Objectness, o.name.clone());
                    origins.push(o.origin);
                }
                let origin = if origins.iter().all(|&o| o == Origin::Demo) {
                    Origin::Demo
                } else {
                    Origin::User
                };
                self.active = Some(Active {
                    taxonomy: tax.value.clone(),
                    batch: Rc::new(batch),
                    names,
                    origin,
                    built_from,
                    logits_header: ingested.header.clone(),
                });
                self.generation += 1;
                let previous = self.last_activation;
                let stale: Vec<Slot> = self
                    .aside_made
                    .iter()
                    .filter(|(_, &made)| made <= previous)
                    .map(|(&slot, _)| slot)
                    .collect();
                for slot in stale {
                    self.set_aside.remove(&slot);
                    self.aside_made.remove(&slot);
                }
                self.last_activation = self.seq;
                self.fit_depths();
                self.apply_pending_profile();
                self.rescore();
            }
            Err(e) => {
                for err in e.iter() {
                    let slot = if self.objectness.as_ref().is_some_and(|o| o.name == err.file) {
                        Slot::Objectness
                    } else if err.file == labels.file {
                        Slot::Labels
                    } else {
                        Slot::Logits
                    };
                    self.errors.entry(slot).or_default().push(err.to_string());
                }
            }
        }
    }
}
