//! Loading: the demo, chosen or dropped files, and the streamed read of logits.
//!
//! Small files (taxonomy, labels, objectness, profile) are read whole and handed to the board
//! as `Action::File`. A logits file is only *chosen* (`Action::LogitsChosen`): its handle (or
//! the demo's bytes) is kept here by name, and whenever the board asks for paths
//! (`Board::wanted_ingest`: once a taxonomy is there, again after a temperature change) it is
//! read in chunks through `hedgerow_core::LogitsReader`, yielding to the browser between
//! chunks so the page stays responsive, with progress and a working Cancel.

use std::cell::{Cell, RefCell};
use std::collections::HashMap;
use std::rc::Rc;

use hedgerow_board::state::{recognise, Action, IngestKey, Slot};
use hedgerow_core::{
    Error, ErrorKind, Errors, Ingested, Location, LogitsReader, Taxonomy, Temperatures,
};
use web_sys::File;
use yew::prelude::*;

use crate::browser::{self, next_tick, read_range};
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

    async fn read(&self, start: u64, end: u64) -> Result<Vec<u8>, String> {
        match self {
            Source::File(f) => read_range(f, start, end).await,
            Source::Demo(b) => Ok(b
                .get(start as usize..end as usize)
                .unwrap_or_default()
                .to_vec()),
        }
    }
}

#[derive(Default)]
struct Shared {
    /// Logits sources by file name (the board refers to logits by name).
    sources: RefCell<HashMap<String, Source>>,
    /// The source the latest choice replaced under the same name, put back on Cancel.
    replaced: RefCell<Option<(String, Option<Source>)>>,
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
            Source::Demo(demo_data::LOGITS.bytes),
        );
        for f in [demo_data::LABELS, demo_data::OBJECTNESS] {
            self.dispatch(Action::File {
                name: f.name.into(),
                bytes: Rc::new(f.bytes.to_vec()),
            });
        }
    }

    /// Load chosen or dropped files: each is recognised from its first bytes, then they are
    /// handed over taxonomy first (labels and profiles are read against it).
    pub fn load_files(&self, files: Vec<File>) {
        let this = self.clone();
        wasm_bindgen_futures::spawn_local(async move {
            let mut known: Vec<(Slot, File)> = Vec::new();
            for file in files {
                let name = file.name();
                let size = file.size().max(0.0) as u64;
                match read_range(&file, 0, size.min(HEAD)).await {
                    Ok(head) => match recognise(&name, &head) {
                        Ok(slot) => known.push((slot, file)),
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
            known.sort_by_key(|(slot, _)| *slot);
            for (slot, file) in known {
                let name = file.name();
                if slot == Slot::Logits {
                    this.choose_logits(name, Source::File(file));
                    continue;
                }
                let size = file.size().max(0.0) as u64;
                match read_range(&file, 0, size).await {
                    Ok(bytes) => this.dispatch(Action::File {
                        name,
                        bytes: Rc::new(bytes),
                    }),
                    Err(e) => this.dispatch(Action::Unreadable {
                        slot: Some(slot),
                        message: format!("{name}: could not be read: {e}"),
                    }),
                }
            }
        });
    }

    fn choose_logits(&self, name: String, source: Source) {
        let total = source.len();
        let previous = self
            .shared
            .sources
            .borrow_mut()
            .insert(name.clone(), source);
        *self.shared.replaced.borrow_mut() = Some((name.clone(), previous));
        self.abandon();
        self.dispatch(Action::LogitsChosen { name, total });
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
            let result = match source {
                Some(source) => this.stream(&source, &name, &tax, &key, ticket).await,
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
            if result.is_ok() {
                this.shared.last_read_ms.set(Some(browser::now() - started));
                this.shared.replaced.borrow_mut().take();
            }
            this.dispatch(Action::LogitsDone { key, result });
        });
    }

    async fn stream(
        &self,
        source: &Source,
        name: &str,
        tax: &Taxonomy,
        key: &IngestKey,
        ticket: u64,
    ) -> Option<Result<Ingested, Errors>> {
        let live = || self.shared.ticket.get() == ticket;
        let total = source.len();
        let mut reader = LogitsReader::new(name, tax, &Temperatures(key.temperatures.clone()));
        self.dispatch(Action::LogitsProgress { done: 0 });
        let mut done = 0;
        while done < total {
            let end = (done + CHUNK).min(total);
            let chunk = source.read(done, end).await;
            if !live() {
                return None;
            }
            let chunk = match chunk {
                Ok(c) => c,
                Err(e) => {
                    return Some(Err(problem(
                        name,
                        Location::byte(done),
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
