//! What the page's shell (`crates/web/src/hooks/use_loader.rs`) does around the board's
//! `loading` steps, with files held in memory: keep the chosen logits by name, dispatch the
//! selection's actions, stream whenever the board asks for paths, read one row's logits when the
//! inspector opens it. The steps themselves are the
//! page's own code (`hedgerow_board::loading`).

use std::collections::HashMap;
use std::future::Future;
use std::pin::pin;
use std::rc::Rc;
use std::task::{Context, Poll, Waker};

use hedgerow_board::loading::{self, LogitsPlan, Source};
use hedgerow_board::state::{Action, Board, Origin};

/// A file in memory.
#[derive(Clone)]
pub struct Mem {
    pub name: String,
    pub bytes: Rc<Vec<u8>>,
}

impl Source for Mem {
    fn name(&self) -> String {
        self.name.clone()
    }
    fn len(&self) -> u64 {
        self.bytes.len() as u64
    }
    fn read(&self, start: u64, end: u64) -> impl Future<Output = Result<Vec<u8>, String>> {
        let (s, e) = (start as usize, (end as usize).min(self.bytes.len()));
        std::future::ready(
            self.bytes
                .get(s..e)
                .map(<[u8]>::to_vec)
                .ok_or_else(|| format!("bytes {s}..{e} are past the end")),
        )
    }
}

/// Run a future whose reads are all in memory (ready at once) to its end.
pub fn block_on<F: Future>(f: F) -> F::Output {
    let mut f = pin!(f);
    let mut cx = Context::from_waker(Waker::noop());
    loop {
        if let Poll::Ready(v) = f.as_mut().poll(&mut cx) {
            return v;
        }
    }
}

/// Progress into the board; `stop_at`: abandon the read once this many bytes are done.
struct Count<'a> {
    board: &'a mut Board,
    stop_at: Option<u64>,
}

impl loading::Progress for Count<'_> {
    fn done(&mut self, bytes: u64) -> bool {
        self.board.apply(Action::LogitsProgress { done: bytes });
        self.stop_at.is_none_or(|s| bytes < s)
    }
    fn pause(&mut self) -> impl Future<Output = ()> {
        std::future::ready(())
    }
}

pub struct Shell {
    plans: HashMap<String, LogitsPlan<Mem>>,
    /// Bytes per read step (the page's is `loading::CHUNK`).
    pub chunk: u64,
}

impl Shell {
    pub fn new() -> Self {
        Shell {
            plans: HashMap::new(),
            chunk: loading::CHUNK,
        }
    }

    /// One selection (files chosen or dropped together), then the reads the board asks for.
    pub fn give(&mut self, b: &mut Board, files: &[(&str, &[u8])]) {
        self.give_from(b, files, Origin::User);
    }

    pub fn give_from(&mut self, b: &mut Board, files: &[(&str, &[u8])], origin: Origin) {
        self.stage(b, files, origin);
        self.pump(b);
    }

    /// The selection's actions only: no read yet.
    pub fn stage(&mut self, b: &mut Board, files: &[(&str, &[u8])], origin: Origin) {
        let files = files
            .iter()
            .map(|(name, bytes)| Mem {
                name: name.to_string(),
                bytes: Rc::new(bytes.to_vec()),
            })
            .collect();
        let selection = block_on(loading::select(files, origin));
        for (name, plan) in selection.logits {
            self.plans.insert(name, plan);
        }
        for action in selection.actions {
            b.apply(action);
        }
    }

    /// Stream whenever the board asks for paths, then read the inspected row's logits when
    /// the board asks for them (as the loader hook does after each render).
    pub fn pump(&mut self, b: &mut Board) {
        while self.read(b, None) {}
        while let Some(want) = b.wanted_row() {
            let action = block_on(loading::row_action(self.plans.get(&want.logits), &want));
            b.apply(action);
        }
    }

    /// Start the read the board asks for and abandon it after `bytes` (as Cancel does).
    pub fn cancel_after(&mut self, b: &mut Board, bytes: u64) {
        self.read(b, Some(bytes));
        b.apply(Action::LogitsCancelled);
    }

    /// One read; `false` when none was wanted.
    fn read(&mut self, b: &mut Board, stop_at: Option<u64>) -> bool {
        let Some(key) = b.wanted_ingest() else {
            return false;
        };
        let tax = b.taxonomy.as_ref().expect("a taxonomy").value.clone();
        let name = b.logits.as_ref().expect("logits").name.clone();
        let plan = self.plans.get(&name).expect("the chosen file").clone();
        let result = block_on(loading::stream(
            &plan,
            &tax,
            &key,
            self.chunk,
            &mut Count { board: b, stop_at },
        ));
        match result {
            Some(result) => b.apply(Action::LogitsDone { key, result }),
            None => return false,
        }
        true
    }
}
