//! Loading in the page: the demo, chosen or dropped files, and the streamed read of logits.
//! The steps are the board's `loading` module (the same code the board's tests drive), over
//! [`PageSource`]: a chosen file read with `Blob.slice`, or the embedded demo's bytes. This
//! hook keeps the chosen logits by name, starts a read whenever the board asks for paths
//! (`Board::wanted_ingest`: once a taxonomy is there, again after a temperature change) and one
//! row's bytes when the inspector opens it (`Board::wanted_row`),
//! yields to the browser between chunks so the page stays responsive, and makes Cancel work.

use std::cell::{Cell, RefCell};
use std::collections::HashMap;
use std::future::Future;
use std::rc::Rc;

use hedgerow_board::loading::{self, LogitsPlan, Source, CHUNK};
use hedgerow_board::state::{Action, Origin, Slot};
use hedgerow_core::{Error, ErrorKind, Location};
use web_sys::File;
use yew::prelude::*;

use crate::browser::{self, finish_read, next_tick, start_read};
use crate::demo_data::{self, DemoFile};
use crate::store::BoardState;

/// Where a file's bytes come from.
#[derive(Clone)]
pub enum PageSource {
    File(File),
    Demo(&'static DemoFile),
}

/// A read started by [`PageSource::read`].
enum Pending {
    Reading(Result<wasm_bindgen_futures::JsFuture, String>),
    Ready(Vec<u8>),
}

impl Source for PageSource {
    fn name(&self) -> String {
        match self {
            PageSource::File(f) => f.name(),
            PageSource::Demo(d) => d.name.to_string(),
        }
    }

    fn len(&self) -> u64 {
        match self {
            PageSource::File(f) => f.size().max(0.0) as u64,
            PageSource::Demo(d) => d.bytes.len() as u64,
        }
    }

    /// The browser starts reading at once; the page goes on while it reads.
    fn read(&self, start: u64, end: u64) -> impl Future<Output = Result<Vec<u8>, String>> {
        let pending = match self {
            PageSource::File(f) => Pending::Reading(start_read(f, start, end)),
            PageSource::Demo(d) => Pending::Ready(
                d.bytes
                    .get(start as usize..end.min(d.bytes.len() as u64) as usize)
                    .unwrap_or_default()
                    .to_vec(),
            ),
        };
        async move {
            match pending {
                Pending::Reading(r) => finish_read(r?).await,
                Pending::Ready(b) => Ok(b),
            }
        }
    }
}

#[derive(Default)]
struct Shared {
    /// Logits plans by file name (the board refers to logits by name).
    plans: RefCell<HashMap<String, LogitsPlan<PageSource>>>,
    /// The plan the latest choice replaced under the same name, put back on Cancel.
    replaced: RefCell<Option<(String, Option<LogitsPlan<PageSource>>)>>,
    /// The current read's ticket: bumping it abandons a read in flight.
    ticket: Cell<u64>,
    running: Cell<bool>,
    /// The inspected row being read (`(row, generation)`), so it is read once.
    row_reading: Cell<Option<(usize, usize)>>,
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

/// Reports a read's progress to the board and checks it is still wanted.
struct ReadProgress<'a> {
    loader: &'a Loader,
    ticket: u64,
}

impl loading::Progress for ReadProgress<'_> {
    fn done(&mut self, bytes: u64) -> bool {
        if self.loader.shared.ticket.get() != self.ticket {
            return false;
        }
        self.loader.dispatch(Action::LogitsProgress { done: bytes });
        true
    }

    fn pause(&mut self) -> impl Future<Output = ()> {
        next_tick()
    }
}

impl Loader {
    fn dispatch(&self, action: Action) {
        self.dispatcher.dispatch(action);
    }

    /// Load the embedded demo batch (one click; also at startup), through the same steps as
    /// the user's files.
    pub fn load_demo(&self) {
        let files = [
            &demo_data::TAXONOMY,
            &demo_data::LOGITS,
            &demo_data::LABELS,
            &demo_data::OBJECTNESS,
        ]
        .map(PageSource::Demo)
        .to_vec();
        self.load(files, Origin::Demo);
    }

    /// Load chosen or dropped files.
    pub fn load_files(&self, files: Vec<File>) {
        self.load(
            files.into_iter().map(PageSource::File).collect(),
            Origin::User,
        );
    }

    fn load(&self, files: Vec<PageSource>, origin: Origin) {
        let this = self.clone();
        wasm_bindgen_futures::spawn_local(async move {
            let selection = loading::select(files, origin).await;
            for (name, plan) in selection.logits {
                this.register(&name, plan);
            }
            for action in selection.actions {
                this.dispatch(action);
            }
        });
    }

    /// Keep a chosen logits file by name, remembering what it replaced (for Cancel), and stop
    /// any read in flight.
    fn register(&self, name: &str, plan: LogitsPlan<PageSource>) {
        let previous = self
            .shared
            .plans
            .borrow_mut()
            .insert(name.to_string(), plan);
        *self.shared.replaced.borrow_mut() = Some((name.to_string(), previous));
        self.abandon();
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
            let mut plans = self.shared.plans.borrow_mut();
            match previous {
                Some(s) => plans.insert(name, s),
                None => plans.remove(&name),
            };
        }
        self.dispatch(Action::LogitsCancelled);
    }

    /// A slot's remove control: a removed logits file's read stops.
    pub fn remove(&self, slot: Slot) {
        if slot == Slot::Logits {
            self.abandon();
        }
        self.dispatch(Action::Remove(slot));
    }

    /// How long the last complete logits read took, in milliseconds.
    pub fn last_read_ms(&self) -> Option<f64> {
        self.shared.last_read_ms.get()
    }

    /// After every render: start reading logits if the board wants paths and no read runs.
    fn pump(&self, board: &BoardState) {
        self.pump_row(board);
        if self.shared.running.get() {
            return;
        }
        let Some(key) = board.wanted_ingest() else {
            return;
        };
        let (Some(logits), Some(tax)) = (board.logits.clone(), board.taxonomy.clone()) else {
            return;
        };
        let name = logits.name;
        let tax = tax.value;
        let plan = self.shared.plans.borrow().get(&name).cloned();
        let ticket = self.shared.ticket.get().wrapping_add(1);
        self.shared.ticket.set(ticket);
        self.shared.running.set(true);
        let this = self.clone();
        wasm_bindgen_futures::spawn_local(async move {
            let started = browser::now();
            browser::mark("hedgerow:logits-read-start");
            let mut progress = ReadProgress {
                loader: &this,
                ticket,
            };
            let result = match plan {
                Some(plan) => loading::stream(&plan, &tax, &key, CHUNK, &mut progress).await,
                None => Some(Err(Error::new(
                    &name,
                    Location::default(),
                    ErrorKind::Invalid {
                        what: "the file to read".into(),
                        expected: "a file chosen in this page".into(),
                        found: "it is no longer available: choose it again".into(),
                    },
                )
                .into())),
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
}

impl Loader {
    /// After every render: read the inspected row's logits if the board wants them (just that
    /// row's bytes, `loading::read_row`).
    fn pump_row(&self, board: &BoardState) {
        let Some(want) = board.wanted_row() else {
            return;
        };
        let key = Some((want.row, want.generation));
        if self.shared.row_reading.get() == key {
            return;
        }
        self.shared.row_reading.set(key);
        let plan = self.shared.plans.borrow().get(&want.logits).cloned();
        let this = self.clone();
        wasm_bindgen_futures::spawn_local(async move {
            let action = loading::row_action(plan.as_ref(), &want).await;
            if this.shared.row_reading.get() == key {
                this.shared.row_reading.set(None);
            }
            this.dispatch(action);
        });
    }
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
