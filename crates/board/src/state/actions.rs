//! What changes the page's state: the slots files go into, where a file came from, the actions
//! the shell dispatches, and the settings kept across reloads.

use std::collections::BTreeMap;
use std::rc::Rc;

use hedgerow_core::intake::Kind;
use hedgerow_core::{Errors, Ingested, Policy, Rule};
use serde::{Deserialize, Serialize};

/// The kinds of file the page takes, one slot each.
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
            Slot::Other => "other",
            s => s.kind().map_or("other", Kind::title),
        }
    }
    /// The intake's kind of file for this slot.
    pub fn kind(self) -> Option<Kind> {
        match self {
            Slot::Taxonomy => Some(Kind::Taxonomy),
            Slot::Logits => Some(Kind::Logits),
            Slot::Labels => Some(Kind::Labels),
            Slot::Objectness => Some(Kind::Objectness),
            Slot::Profile => Some(Kind::Profile),
            Slot::Other => None,
        }
    }
    pub fn of(kind: Kind) -> Slot {
        match kind {
            Kind::Taxonomy => Slot::Taxonomy,
            Kind::Logits => Slot::Logits,
            Kind::Labels => Slot::Labels,
            Kind::Objectness => Slot::Objectness,
            Kind::Profile => Slot::Profile,
        }
    }
    /// Slots that hold a part of a batch (and so can be removed or set aside).
    pub fn is_batch_part(self) -> bool {
        matches!(
            self,
            Slot::Taxonomy | Slot::Logits | Slot::Labels | Slot::Objectness
        )
    }
}

/// Where a staged file came from: the page's embedded demo or the user.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Origin {
    Demo,
    #[default]
    User,
}

/// Which taxonomy and temperatures a set of paths was computed for.
#[derive(Debug, Clone, PartialEq)]
pub struct IngestKey {
    pub taxonomy: String,
    pub temperatures: Vec<f64>,
}

/// Settings kept across reloads (localStorage).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Stored {
    pub rule: Rule,
    pub object_threshold: f64,
    pub thresholds: Vec<f64>,
    pub temperatures: Vec<f64>,
    pub unverifiable: Policy,
    /// Per-node overrides by node id (placed only on a taxonomy that has those ids). Absent in
    /// settings stored before overrides were kept.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub nodes: BTreeMap<String, f64>,
}

impl Default for Stored {
    /// The settings of a fresh page (the command line's defaults).
    fn default() -> Self {
        Stored {
            rule: Rule::Cumulative,
            object_threshold: 0.5,
            thresholds: vec![0.5],
            temperatures: Vec::new(),
            unverifiable: Policy::Credit,
            nodes: BTreeMap::new(),
        }
    }
}

/// What changes the state.
#[derive(Debug, Clone)]
pub enum Action {
    /// A whole small file (taxonomy, labels, objectness, profile). Logits stream instead.
    File {
        name: String,
        bytes: Rc<Vec<u8>>,
        origin: Origin,
    },
    /// The shell could not read or recognise a file.
    Unreadable {
        slot: Option<Slot>,
        message: String,
    },
    /// A logits `.npy` was chosen; the shell streams it when `wanted_ingest` asks. `shape` is
    /// `(rows, columns)` from its header.
    LogitsChosen {
        name: String,
        total: u64,
        origin: Origin,
        shape: Option<(u64, u64)>,
    },
    /// An `.npz` bundle was chosen as the logits file: its `logits` member streams like a
    /// `.npy` (as after `LogitsChosen`); `members` are the small members read whole, by slot
    /// (`bundle.npz:labels`), minus those whose file the same selection gave (it wins). A
    /// bundle without objectness leaves no objectness staged, unless that file was given.
    BundleChosen {
        name: String,
        /// Compressed bytes of the `logits` member: what the shell reads and the progress counts.
        total: u64,
        /// Every array in the bundle (`np.load`'s keys).
        keys: Vec<String>,
        members: Vec<(Slot, Rc<Vec<u8>>)>,
        origin: Origin,
    },
    LogitsProgress {
        done: u64,
    },
    LogitsDone {
        key: IngestKey,
        result: Result<Ingested, Errors>,
    },
    LogitsCancelled,
    /// The slot's remove control: its file leaves the staged batch.
    Remove(Slot),
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
    /// Node `id`'s own threshold (it replaces its depth's for stepping into it); `None`
    /// clears it. A value outside [0, 1] or an id the taxonomy lacks changes nothing.
    SetNodeThreshold {
        id: String,
        value: Option<f64>,
    },
    /// Ask for depth thresholds that hold a precision target with a guarantee
    /// (`crate::suggestion`); the depth sliders move to the suggestion.
    Suggest(crate::suggestion::Ask),
    /// Open row `r` in the inspector; the shell reads its logits when `Board::wanted_row`
    /// asks (`crate::runner_up`).
    Inspect(usize),
    /// The bytes of one row of the active batch's logits (`generation`: the batch they were
    /// read for), or why they could not be read.
    RowLogits {
        row: usize,
        generation: usize,
        result: Result<Vec<u8>, String>,
    },
    /// Pin the current settings or load a profile as the baseline to compare against, or
    /// clear it (`crate::baseline`).
    Baseline(crate::baseline::BaselineAction),
    /// The depth whose control the user is on: chart 1 shows its sweep.
    Focus(usize),
    Restore(Stored),
    /// Back to the defaults (`Stored::default()`), per-node overrides cleared; the files and
    /// the batch stay.
    Reset,
    ClearErrors,
}
