//! The page's state and the pure `apply` that changes it. No browser types: the page's shell
//! reads files and storage, dispatches [`Action`]s, and renders what is here.
//!
//! Loading is staged: each file the user gives lands in its slot and is checked; whenever the
//! slots form a whole batch it becomes the *active* batch, the one the scores and the controls
//! belong to. A file that fails leaves its error beside its slot and the active batch, its
//! thresholds and everything tuned so far untouched. The rules of what forms one batch are the
//! engine's intake (`hedgerow_core::intake`); [`staging`] applies them to the slots.
//!
//! The parts: [`actions`] (what can happen), [`staging`] (slots, batches, set-aside files),
//! [`profiles`] (profiles for the batch in use or the staged one),
//! [`scores`] (metrics, curve and sweep from the active batch, never the softmax), [`text`]
//! (the words the page shows).

pub mod actions;
pub mod profiles;
pub mod scores;
pub mod staging;
pub mod text;

use std::collections::BTreeMap;
use std::rc::Rc;

use hedgerow_core::{
    Batch, CurvePoint, Ingested, Metrics, Objectness, Profile, Settings, Taxonomy, Temperatures,
};

pub use actions::{Action, IngestKey, Origin, Slot, Stored};
pub use profiles::PendingProfile;
pub use scores::Caches;
pub use staging::{LogitsFile, ParsedLabels, Snapshot, Staged};
pub use text::{show_precision_interval, show_ratio, thin_thousands, HELP};

use crate::charts::TradePoint;

/// A read in progress, for the progress bar.
#[derive(Debug, Clone, PartialEq)]
pub struct Progress {
    pub name: String,
    pub done: u64,
    pub total: u64,
}

/// The batch currently scored: it changes only when a complete, valid set of files is staged.
#[derive(Debug, Clone)]
pub struct Active {
    pub taxonomy: Rc<Taxonomy>,
    pub batch: Rc<Batch>,
    pub names: BTreeMap<Slot, String>,
    /// The demo's files, or the user's (any file of the user's makes it theirs).
    pub origin: Origin,
    /// Which staged files it was built from (their sequence numbers, and the paths' address):
    /// assembling the same files again is skipped.
    pub(crate) built_from: Vec<u64>,
    /// The logits' `.npy` header (a bundle member's own), so one row's bytes can be found
    /// again (`crate::runner_up`).
    pub logits_header: hedgerow_core::npy::Header,
}

#[derive(Debug, Clone, Default)]
pub struct Board {
    pub taxonomy: Option<Staged<Rc<Taxonomy>>>,
    /// Labels are kept as bytes so a new taxonomy can re-read them.
    pub labels: Option<Staged<Rc<Vec<u8>>>>,
    pub objectness: Option<Staged<Rc<Objectness>>>,
    pub logits: Option<Staged<LogitsFile>>,
    pub ingested: Option<(IngestKey, Rc<Ingested>)>,
    pub progress: Option<Progress>,
    pub errors: BTreeMap<Slot, Vec<String>>,
    /// What was recognised in each slot, in words.
    pub notes: BTreeMap<Slot, String>,
    /// Why a slot's file left it: set aside because it did not fit a newer file.
    pub set_aside: BTreeMap<Slot, String>,
    pub settings: Settings,
    pub temperatures: Temperatures,
    pub focus: usize,
    pub active: Option<Active>,
    pub metrics: Option<Metrics>,
    pub curve: Rc<Vec<CurvePoint>>,
    pub sweep: Rc<Vec<TradePoint>>,
    /// Where it fails, node by node, under the settings in use (kept in step with the rows
    /// that flip: `crate::nodes::NodeTracker`).
    pub node_report: Option<Rc<hedgerow_core::NodeReport>>,
    /// Per node, what happens to the rows labelled under it (the taxonomy view's colours).
    pub node_fates: Option<Rc<Vec<crate::nodes::Fate>>>,
    caches: Caches,
    /// Bumped whenever a new batch becomes active (for caches keyed on it).
    pub generation: usize,
    /// The key whose read failed or was cancelled, so it is not retried until something
    /// changes.
    no_read_for: Option<IngestKey>,
    pending_total: u64,
    /// The staged labels parsed against a taxonomy.
    labels_read: Option<ParsedLabels>,
    /// The slots as they were before a new logits file was chosen, put back by
    /// `LogitsCancelled`.
    before_choice: Option<Box<Snapshot>>,
    /// A profile made for the staged taxonomy, applied when its batch becomes active.
    pub pending_profile: Option<PendingProfile>,
    /// Numbers the staged files in the order they were given.
    seq: u64,
    /// When each set-aside line was made (`seq` then), and `seq` when the last batch became
    /// active: a line goes when the batch after the one it led to becomes active.
    aside_made: BTreeMap<Slot, u64>,
    last_activation: u64,
    /// The per-node overrides by node id, and the taxonomy they are placed on (see
    /// `crate::overrides`).
    pub(crate) node_ids: Option<crate::overrides::NodeIds>,
    /// The last suggestion asked for (see `crate::suggestion`), and why the last ask failed.
    pub suggestion: Option<Rc<crate::suggestion::Suggested>>,
    pub suggestion_error: Option<String>,
    /// The row open in the inspector and its runner-up siblings (see `crate::runner_up`).
    pub inspected: Option<crate::runner_up::Inspected>,
    /// The setting compared against (see `crate::baseline`), the transitions to the current
    /// settings, and why the last baseline could not be set.
    pub baseline: Option<Rc<crate::baseline::Baseline>>,
    pub comparison: Option<Rc<crate::baseline::Comparison>>,
    pub baseline_error: Option<String>,
}

impl Board {
    pub fn new() -> Self {
        Board {
            settings: Settings::default(),
            focus: 1,
            ..Board::default()
        }
    }

    /// Depth D of the batch the controls belong to: the active batch's taxonomy, else the
    /// staged one (before any batch is complete), else 0.
    pub fn depth(&self) -> usize {
        self.active
            .as_ref()
            .map(|a| a.taxonomy.max_depth())
            .or(self.taxonomy.as_ref().map(|t| t.value.max_depth()))
            .unwrap_or(0)
    }

    /// The taxonomy the controls belong to (the active batch's, else the staged one).
    pub fn controls_taxonomy(&self) -> Option<Rc<Taxonomy>> {
        self.active
            .as_ref()
            .map(|a| a.taxonomy.clone())
            .or(self.taxonomy.as_ref().map(|t| t.value.clone()))
    }

    pub fn stored(&self) -> Stored {
        Stored {
            rule: self.settings.rule,
            object_threshold: self.settings.thresholds.object,
            thresholds: self.settings.thresholds.depths.clone(),
            temperatures: self.temperatures.0.clone(),
            unverifiable: self.settings.policy,
            nodes: self.stored_nodes(),
        }
    }

    /// The profile to download: current settings, scored on the active batch.
    pub fn profile(&self) -> Option<Profile> {
        let a = self.active.as_ref()?;
        let m = self.metrics.as_ref()?;
        let mut profile = Profile::new(
            &a.taxonomy,
            &self.settings,
            a.batch.temperatures(),
            Some((&a.batch, m)),
        );
        // Saved while the sliders hold a suggestion: record how it was made, as
        // `hedgerow suggest` does.
        if self.sliders_hold_suggestion() {
            profile.made_by = self.current_suggestion().map(|s| s.report.record.clone());
        }
        Some(profile)
    }

    pub fn apply(&mut self, action: Action) {
        match action {
            Action::File {
                name,
                bytes,
                origin,
            } => self.file(name, bytes, origin),
            Action::Unreadable { slot, message } => {
                self.errors
                    .insert(slot.unwrap_or(Slot::Other), vec![message]);
            }
            Action::LogitsChosen {
                name,
                total,
                origin,
                shape,
            } => self.choose_npy(name, total, origin, shape),
            Action::BundleChosen {
                name,
                total,
                keys,
                members,
                origin,
            } => self.choose_bundle(name, total, keys, members, origin),
            Action::LogitsProgress { done } => {
                if let Some(l) = &self.logits {
                    self.progress = Some(Progress {
                        name: l.name.clone(),
                        done,
                        total: self.pending_total,
                    });
                }
            }
            Action::LogitsCancelled => self.cancelled(),
            Action::LogitsDone { key, result } => self.logits_done(key, result),
            Action::Remove(slot) => self.remove(slot),
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
                        *slot = text::clamp01(value);
                    }
                    self.focus = depth;
                    self.rescore();
                }
            }
            Action::SetObject(value) => {
                self.settings.thresholds.object = text::clamp01(value);
                self.rescore();
            }
            Action::SetAllDepths(value) => {
                self.fit_depths();
                for t in &mut self.settings.thresholds.depths {
                    *t = text::clamp01(value);
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
                self.settings.thresholds.object = text::clamp01(stored.object_threshold);
                if !stored.thresholds.is_empty() {
                    self.settings.thresholds.depths = stored
                        .thresholds
                        .iter()
                        .map(|&t| text::clamp01(t))
                        .collect();
                }
                if stored.temperatures.iter().all(|&t| Temperatures::valid(t)) {
                    self.temperatures = Temperatures(stored.temperatures);
                }
                self.node_ids = Some(crate::overrides::NodeIds::waiting(stored.nodes));
                self.fit_depths();
                self.rescore();
            }
            Action::SetNodeThreshold { id, value } => self.set_node(&id, value),
            Action::Suggest(ask) => self.suggest(ask),
            Action::Inspect(row) => self.inspect(row),
            Action::RowLogits {
                row,
                generation,
                result,
            } => self.row_logits(row, generation, result),
            Action::Baseline(b) => self.baseline_action(b),
            Action::Reset => {
                self.settings.thresholds.nodes.clear();
                self.apply(Action::Restore(Stored::default()));
            }
            Action::ClearErrors => {
                self.errors.clear();
                self.set_aside.clear();
            }
        }
    }

    /// Make the per-depth list exactly D long (repeating the last value), so every depth has
    /// its own control.
    pub(crate) fn fit_depths(&mut self) {
        self.place_nodes();
        let d = self.depth();
        if d == 0 {
            return;
        }
        let t = &self.settings.thresholds;
        let depths: Vec<f64> = (1..=d).map(|i| t.at_depth(i)).collect();
        self.settings.thresholds.depths = depths;
        // Overrides by column index belong to the taxonomy they were set for.
        let m = self.controls_taxonomy().map_or(0, |t| t.len() as u32);
        self.settings.thresholds.nodes.retain(|&(v, _)| v < m);
        if self.focus == 0 || self.focus > d {
            self.focus = 1;
        }
    }
}
