//! Loading: the demo, chosen or dropped files, and the streamed read of logits.
//!
//! Small files (taxonomy, labels, objectness, profile) are read whole and handed to the board
//! as `Action::File`. A logits file is only *chosen* (`Action::LogitsChosen`): its handle (or
//! the demo's bytes) is kept here by name, and whenever the board asks for paths
//! (`Board::wanted_ingest`: once a taxonomy is there, again after a temperature change) it is
//! read in chunks through `hedgerow_core::LogitsReader`, yielding to the browser between
//! chunks so the page stays responsive, with progress and a working Cancel.
//!
//! An `.npz` bundle is a logits file too: its tail and directory are read with `Blob.slice`
//! (`hedgerow_board::state::Bundle`), its `logits` member's compressed bytes are streamed in
//! the same chunks through the inflater (`LogitsFeed`), and its small `labels` and
//! `objectness` members are read whole into their slots (`Action::BundleChosen`), unless the
//! same selection holds those files. The whole bundle is never read into memory.

use std::cell::{Cell, RefCell};
use std::collections::HashMap;
use std::rc::Rc;

use hedgerow_board::state::{is_bundle, recognise, Action, Bundle, IngestKey, LogitsFeed, Slot};
use hedgerow_core::{npz, Error, ErrorKind, Errors, Ingested, Location, Taxonomy, Temperatures};
use web_sys::File;
use yew::prelude::*;

use crate::browser::{self, finish_read, next_tick, read_range, start_read};
use crate::demo_data;
use crate::store::BoardState;

/// Bytes read from a logits file per step; the page yields to the browser after each.
const CHUNK: u64 = 2 << 20;
/// Bytes read to recognise a file (enough for any .npy header or a CSV/JSON first line).
const HEAD: u64 = 64 << 10;

/// Where a logits file's bytes come from.
#[derive(Clone)]
enum Source {
    File(File),
    Demo(&'static [u8]),
}

impl Source {
    fn len(&self) -> u64 {
        match self {
            Source::File(f) => f.size().max(0.0) as u64,
            Source::Demo(b) => b.len() as u64,
        }
    }

    /// Start reading `start..end`: the browser reads a file's bytes while the page goes on
    /// (the next chunk is read while this one is decoded).
    fn start_read(&self, start: u64, end: u64) -> Pending {
        match self {
            Source::File(f) => Pending::Reading(start_read(f, start, end)),
            Source::Demo(b) => Pending::Ready(
                b.get(start as usize..end as usize)
                    .unwrap_or_default()
                    .to_vec(),
            ),
        }
    }
}

/// A read started by [`Source::start_read`].
enum Pending {
    Reading(Result<wasm_bindgen_futures::JsFuture, String>),
    Ready(Vec<u8>),
}

impl Pending {
    async fn bytes(self) -> Result<Vec<u8>, String> {
        match self {
            Pending::Reading(r) => finish_read(r?).await,
            Pending::Ready(b) => Ok(b),
        }
    }
}

/// A chosen logits file: where its bytes come from and which of them hold the array.
#[derive(Clone)]
struct Logits {
    source: Source,
    /// The bytes to stream: the whole file, or a bundle member's compressed data.
    range: (u64, u64),
    /// The bundle's name and its `logits` member, when `range` is one.
    member: Option<(String, npz::Member)>,
}

impl Logits {
    fn whole(source: Source) -> Self {
        let len = source.len();
        Logits {
            source,
            range: (0, len),
            member: None,
        }
    }
}

/// A file of a selection, recognised and (unless it is logits) read.
enum Picked {
    Whole(String, Rc<Vec<u8>>),
    Npy(File),
    Bundle(Box<OpenBundle>),
}

/// A bundle ready to choose: its directory read, the logits member located, the small
/// members read (or why not).
struct OpenBundle {
    name: String,
    keys: Vec<String>,
    logits: Logits,
    labels: Option<Rc<Vec<u8>>>,
    objectness: Option<Rc<Vec<u8>>>,
    problems: Vec<(Slot, String)>,
}

#[derive(Default)]
struct Shared {
    /// Logits sources by file name (the board refers to logits by name).
    sources: RefCell<HashMap<String, Logits>>,
    /// The source the latest choice replaced under the same name, put back on Cancel.
    replaced: RefCell<Option<(String, Option<Logits>)>>,
    /// The current read's ticket: bumping it abandons a read in flight.
    ticket: Cell<u64>,
    running: Cell<bool>,
    /// Duration of the last complete read, milliseconds.
    last_read_ms: Cell<Option<f64>>,
}

/// The loader's handle, for the load controls and the progress bar.
#[derive(Clone)]
pub struct Loader {
    shared: Rc<Shared>,
    dispatcher: UseReducerDispatcher<BoardState>,
}

impl PartialEq for Loader {
    fn eq(&self, other: &Self) -> bool {
        Rc::ptr_eq(&self.shared, &other.shared)
    }
}

impl Loader {
    fn dispatch(&self, action: Action) {
        self.dispatcher.dispatch(action);
    }

    /// Load the embedded demo batch (one click; also at startup).
    pub fn load_demo(&self) {
        let tax = demo_data::TAXONOMY;
        self.dispatch(Action::File {
            name: tax.name.into(),
            bytes: Rc::new(tax.bytes.to_vec()),
        });
        self.choose_logits(
            demo_data::LOGITS.name.into(),
            Logits::whole(Source::Demo(demo_data::LOGITS.bytes)),
        );
        for f in [demo_data::LABELS, demo_data::OBJECTNESS] {
            self.dispatch(Action::File {
                name: f.name.into(),
                bytes: Rc::new(f.bytes.to_vec()),
            });
        }
    }

    /// Load chosen or dropped files: each is recognised from its first bytes and read (a
    /// bundle's directory and small members; logits are only located), then they are handed
    /// over together, taxonomy first (labels and profiles are read against it), so the board
    /// never sees half a selection.
    pub fn load_files(&self, files: Vec<File>) {
        let this = self.clone();
        wasm_bindgen_futures::spawn_local(async move {
            let mut known: Vec<(Slot, File, bool)> = Vec::new();
            for file in files {
                let name = file.name();
                let size = file.size().max(0.0) as u64;
                match read_range(&file, 0, size.min(HEAD)).await {
                    Ok(head) => match recognise(&name, &head) {
                        Ok(slot) => known.push((slot, file, is_bundle(&head))),
                        Err(message) => this.dispatch(Action::Unreadable {
                            slot: None,
                            message,
                        }),
                    },
                    Err(e) => this.dispatch(Action::Unreadable {
                        slot: None,
                        message: format!("{name}: could not be read: {e}"),
                    }),
                }
            }
            known.sort_by_key(|(slot, _, _)| *slot);
            let given: Vec<Slot> = known.iter().map(|(slot, _, _)| *slot).collect();
            let mut picked: Vec<Picked> = Vec::new();
            for (slot, file, bundle) in known {
                let name = file.name();
                if bundle {
                    match open_bundle(&file, &given).await {
                        Ok(b) => picked.push(Picked::Bundle(Box::new(b))),
                        Err(message) => this.dispatch(Action::Unreadable {
                            slot: Some(Slot::Logits),
                            message,
                        }),
                    }
                    continue;
                }
                if slot == Slot::Logits {
                    picked.push(Picked::Npy(file));
                    continue;
                }
                let size = file.size().max(0.0) as u64;
                match read_range(&file, 0, size).await {
                    Ok(bytes) => picked.push(Picked::Whole(name, Rc::new(bytes))),
                    Err(e) => this.dispatch(Action::Unreadable {
                        slot: Some(slot),
                        message: format!("{name}: could not be read: {e}"),
                    }),
                }
            }
            for p in picked {
                match p {
                    Picked::Whole(name, bytes) => this.dispatch(Action::File { name, bytes }),
                    Picked::Npy(file) => {
                        this.choose_logits(file.name(), Logits::whole(Source::File(file)))
                    }
                    Picked::Bundle(b) => this.choose_bundle(*b),
                }
            }
        });
    }

    fn choose_logits(&self, name: String, logits: Logits) {
        let total = self.register(&name, logits);
        self.dispatch(Action::LogitsChosen { name, total });
    }

    fn choose_bundle(&self, b: OpenBundle) {
        let total = self.register(&b.name, b.logits);
        self.dispatch(Action::BundleChosen {
            name: b.name,
            total,
            keys: b.keys,
            labels: b.labels,
            objectness: b.objectness,
        });
        for (slot, message) in b.problems {
            self.dispatch(Action::Unreadable {
                slot: Some(slot),
                message,
            });
        }
    }

    /// Keep a chosen logits file by name, remembering what it replaced (for Cancel), and stop
    /// any read in flight. Returns the bytes its read will count.
    fn register(&self, name: &str, logits: Logits) -> u64 {
        let total = logits.range.1.saturating_sub(logits.range.0);
        let previous = self
            .shared
            .sources
            .borrow_mut()
            .insert(name.to_string(), logits);
        *self.shared.replaced.borrow_mut() = Some((name.to_string(), previous));
        self.abandon();
        total
    }

    /// Stop the read in flight (it dispatches nothing more).
    fn abandon(&self) {
        self.shared
            .ticket
            .set(self.shared.ticket.get().wrapping_add(1));
        self.shared.running.set(false);
    }

    /// The Cancel button: stop reading and keep the batch in use.
    pub fn cancel(&self) {
        self.abandon();
        if let Some((name, previous)) = self.shared.replaced.borrow_mut().take() {
            let mut sources = self.shared.sources.borrow_mut();
            match previous {
                Some(s) => sources.insert(name, s),
                None => sources.remove(&name),
            };
        }
        self.dispatch(Action::LogitsCancelled);
    }

    /// How long the last complete logits read took, in milliseconds.
    pub fn last_read_ms(&self) -> Option<f64> {
        self.shared.last_read_ms.get()
    }

    /// After every render: start reading logits if the board wants paths and no read runs.
    fn pump(&self, board: &BoardState) {
        if self.shared.running.get() {
            return;
        }
        let Some(key) = board.wanted_ingest() else {
            return;
        };
        let (Some(name), Some((_, tax))) = (board.logits.clone(), board.taxonomy.clone()) else {
            return;
        };
        let source = self.shared.sources.borrow().get(&name).cloned();
        let ticket = self.shared.ticket.get().wrapping_add(1);
        self.shared.ticket.set(ticket);
        self.shared.running.set(true);
        let this = self.clone();
        wasm_bindgen_futures::spawn_local(async move {
            let started = browser::now();
            browser::mark("hedgerow:logits-read-start");
            let result = match source {
                Some(logits) => this.stream(&logits, &name, &tax, &key, ticket).await,
                None => Some(Err(problem(
                    &name,
                    Location::default(),
                    "the file to read",
                    "a file chosen in this page",
                    "it is no longer available: choose it again",
                ))),
            };
            // `None`: abandoned (cancelled, or another file chosen meanwhile).
            let Some(result) = result else { return };
            if this.shared.ticket.get() != ticket {
                return;
            }
            this.shared.running.set(false);
            browser::mark("hedgerow:logits-read-end");
            if result.is_ok() {
                this.shared.last_read_ms.set(Some(browser::now() - started));
                this.shared.replaced.borrow_mut().take();
            }
            this.dispatch(Action::LogitsDone { key, result });
        });
    }

    async fn stream(
        &self,
        logits: &Logits,
        name: &str,
        tax: &Taxonomy,
        key: &IngestKey,
        ticket: u64,
    ) -> Option<Result<Ingested, Errors>> {
        let live = || self.shared.ticket.get() == ticket;
        let temps = Temperatures(key.temperatures.clone());
        let mut reader = match &logits.member {
            None => LogitsFeed::npy(name, tax, &temps),
            Some((bundle, member)) => match LogitsFeed::member(bundle, member, tax, &temps) {
                Ok(feed) => feed,
                Err(e) => return Some(Err(e)),
            },
        };
        let (start, stop) = logits.range;
        let total = stop.saturating_sub(start);
        self.dispatch(Action::LogitsProgress { done: 0 });
        let mut done = 0;
        let mut next = Some(logits.source.start_read(start, start + CHUNK.min(total)));
        while done < total {
            let end = (done + CHUNK).min(total);
            let chunk = match next.take() {
                Some(read) => read.bytes().await,
                None => Ok(Vec::new()),
            };
            // The browser reads the next chunk while this one is decoded.
            if end < total {
                next = Some(
                    logits
                        .source
                        .start_read(start + end, start + (end + CHUNK).min(total)),
                );
            }
            if !live() {
                return None;
            }
            let chunk = match chunk {
                Ok(c) => c,
                Err(e) => {
                    return Some(Err(problem(
                        name,
                        Location::byte(start + done),
                        "reading the file",
                        "its bytes",
                        &e,
                    )))
                }
            };
            if let Err(e) = reader.feed(tax, &chunk) {
                return Some(Err(e));
            }
            done = end;
            self.dispatch(Action::LogitsProgress { done });
            next_tick().await;
            if !live() {
                return None;
            }
        }
        Some(reader.finish(tax))
    }
}

/// Read a bundle's directory from its tail, locate its `logits` member and read the small
/// members whole (unless `given` holds their slot: files chosen alongside win). An error is
/// the whole bundle's (shown beside the logits); a small member's problem is kept for its slot.
async fn open_bundle(file: &File, given: &[Slot]) -> Result<OpenBundle, String> {
    let name = file.name();
    let len = file.size().max(0.0) as u64;
    let read = |start: u64, end: u64| {
        let name = name.clone();
        async move {
            read_range(file, start, end)
                .await
                .map_err(|e| format!("{name}: could not be read: {e}"))
        }
    };
    let (a, z) = Bundle::tail(len);
    let tail = read(a, z).await?;
    let (ds, de) = Bundle::directory(&name, &tail, len)?;
    let bundle = Bundle::open(&name, len, &read(ds, de).await?)?;
    let data_range = |m: npz::Member| {
        let bundle = &bundle;
        async move {
            let local = read(m.local_header, m.local_header + npz::LOCAL_HEADER_BYTES).await?;
            bundle.data_range(&m, &local)
        }
    };
    let member = bundle.member("logits").cloned().ok_or("no logits member")?;
    let range = data_range(member.clone()).await?;
    // The small members are capped by the logits' row count, read from the member's header;
    // without a readable header they are not read (the logits' own read reports why).
    let prefix = read(range.0, range.1.min(range.0 + npz::PEEK_BYTES)).await?;
    let rows = bundle.logits_rows(&member, &prefix).ok();
    let mut problems = Vec::new();
    let mut small = Vec::new();
    for (slot, key) in [(Slot::Labels, "labels"), (Slot::Objectness, "objectness")] {
        let (m, rows) = match (bundle.member(key), rows) {
            (Some(m), Some(rows)) if !given.contains(&slot) => (m.clone(), rows),
            _ => {
                small.push(None);
                continue;
            }
        };
        let bytes = match data_range(m.clone()).await {
            Ok((s, e)) => match read(s, e).await {
                Ok(data) => bundle.inflate(&m, &data, rows),
                Err(e) => Err(e),
            },
            Err(e) => Err(e),
        };
        match bytes {
            Ok(b) => small.push(Some(Rc::new(b))),
            Err(message) => {
                problems.push((slot, message));
                small.push(None);
            }
        }
    }
    let mut small = small.into_iter();
    Ok(OpenBundle {
        keys: bundle.keys(),
        logits: Logits {
            source: Source::File(file.clone()),
            range,
            member: Some((name.clone(), member)),
        },
        labels: small.next().flatten(),
        objectness: small.next().flatten(),
        problems,
        name,
    })
}

fn problem(file: &str, at: Location, what: &str, expected: &str, found: &str) -> Errors {
    Error::new(
        file,
        at,
        ErrorKind::Invalid {
            what: what.into(),
            expected: expected.into(),
            found: found.into(),
        },
    )
    .into()
}

/// The loader of the page. Call once, at the root, with the board's reducer handle.
#[hook]
pub fn use_loader(board: &UseReducerHandle<BoardState>) -> Loader {
    let shared = use_memo((), |()| Shared::default());
    let loader = Loader {
        shared: Rc::clone(&shared),
        dispatcher: board.dispatcher(),
    };
    {
        let loader = loader.clone();
        let board = board.clone();
        use_effect(move || loader.pump(&board));
    }
    loader
}
