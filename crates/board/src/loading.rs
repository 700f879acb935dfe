//! The page's loading steps, without a browser: a selection of files becomes the actions that
//! stage them, and a chosen logits file streams into paths. Generic over [`Source`] (the page
//! implements it with `Blob.slice`, the tests with bytes in memory), so the tests run exactly
//! the steps the page runs. Which file is what and which given file wins over a bundle member
//! are the engine's intake rules (`hedgerow_core::intake`).

use std::future::Future;
use std::rc::Rc;

use hedgerow_core::intake::{self, Bundle, Kind, LogitsFeed};
use hedgerow_core::{
    npz, siblings, Error, ErrorKind, Errors, Ingested, Location, Taxonomy, Temperatures,
};

use crate::runner_up::RowWanted;
use crate::state::{Action, IngestKey, Origin, Slot};

/// Bytes read from a logits file per step; the page yields to the browser after each.
pub const CHUNK: u64 = 2 << 20;

/// A file's bytes, read by range. `read` starts the read when called (the page's reads run in
/// the browser while the previous chunk is decoded) and the future finishes it.
pub trait Source: Clone {
    fn name(&self) -> String;
    fn len(&self) -> u64;
    fn is_empty(&self) -> bool {
        self.len() == 0
    }
    fn read(&self, start: u64, end: u64) -> impl Future<Output = Result<Vec<u8>, String>>;
}

/// A chosen logits file: where its bytes come from and which of them hold the array.
#[derive(Clone)]
pub struct LogitsPlan<S> {
    pub source: S,
    /// The bytes to stream: the whole file, or a bundle member's compressed data.
    pub range: (u64, u64),
    /// The bundle and its `logits` member, when `range` is one.
    pub member: Option<(Bundle, npz::Member)>,
}

impl<S: Source> LogitsPlan<S> {
    pub fn whole(source: S) -> Self {
        let len = source.len();
        LogitsPlan {
            source,
            range: (0, len),
            member: None,
        }
    }

    /// The bytes the read counts (its progress total).
    pub fn total(&self) -> u64 {
        self.range.1.saturating_sub(self.range.0)
    }
}

/// What a selection turns into: the logits plans to keep by name (the board refers to logits
/// by name), then the actions to dispatch in order.
pub struct Selection<S> {
    pub logits: Vec<(String, LogitsPlan<S>)>,
    pub actions: Vec<Action>,
}

async fn read<S: Source>(s: &S, start: u64, end: u64) -> Result<Vec<u8>, String> {
    s.read(start, end)
        .await
        .map_err(|e| format!("{}: could not be read: {e}", s.name()))
}

/// Recognise and read a selection: each file by its first bytes; small files whole, a
/// bundle's directory and small members (a file of the same kind in the selection wins over
/// the member), logits only located. The actions stage the taxonomy first (labels and profiles
/// are read against it), so the board never sees half a selection.
pub async fn select<S: Source>(files: Vec<S>, origin: Origin) -> Selection<S> {
    let mut out = Selection {
        logits: Vec::new(),
        actions: Vec::new(),
    };
    let mut known: Vec<(Kind, S, intake::Recognised)> = Vec::new();
    for file in files {
        let head = match read(&file, 0, file.len().min(intake::HEAD_BYTES)).await {
            Ok(h) => h,
            Err(message) => {
                out.actions.push(Action::Unreadable {
                    slot: None,
                    message,
                });
                continue;
            }
        };
        match intake::recognise(&file.name(), &head) {
            Ok(r) => known.push((r.kind, file, r)),
            Err(e) => out.actions.push(Action::Unreadable {
                slot: None,
                message: e.to_string(),
            }),
        }
    }
    known.sort_by_key(|(kind, _, _)| *kind);
    let given: Vec<Kind> = known
        .iter()
        .filter(|(_, _, r)| !r.bundle)
        .map(|(kind, _, _)| *kind)
        .collect();
    for (kind, file, r) in known {
        let name = file.name();
        if r.bundle {
            match open_bundle(&file, &given, origin).await {
                Ok((plan, actions)) => {
                    out.logits.push((name, plan));
                    out.actions.extend(actions);
                }
                Err(message) => out.actions.push(Action::Unreadable {
                    slot: Some(Slot::Logits),
                    message,
                }),
            }
            continue;
        }
        if kind == Kind::Logits {
            let plan = LogitsPlan::whole(file);
            let shape = r.header.as_ref().and_then(|h| match h.shape[..] {
                [rows, cols] => Some((rows, cols)),
                _ => None,
            });
            out.actions.push(Action::LogitsChosen {
                name: name.clone(),
                total: plan.total(),
                origin,
                shape,
            });
            out.logits.push((name, plan));
            continue;
        }
        match read(&file, 0, file.len()).await {
            Ok(bytes) => out.actions.push(Action::File {
                name,
                bytes: Rc::new(bytes),
                origin,
            }),
            Err(message) => out.actions.push(Action::Unreadable {
                slot: Some(Slot::of(kind)),
                message,
            }),
        }
    }
    out
}

/// Read a bundle's directory from its tail, locate its `logits` member and read the small
/// members wanted whole. An error, a small member's too, is the whole bundle's (shown beside
/// the logits).
async fn open_bundle<S: Source>(
    file: &S,
    given: &[Kind],
    origin: Origin,
) -> Result<(LogitsPlan<S>, Vec<Action>), String> {
    let name = file.name();
    let len = file.len();
    let (a, z) = Bundle::tail(len);
    let tail = read(file, a, z).await?;
    let (ds, de) = Bundle::directory(&name, &tail, len).map_err(|e| e.to_string())?;
    let bundle = Bundle::open(&name, len, &read(file, ds, de).await?).map_err(|e| e.to_string())?;
    let data_range = |m: npz::Member| {
        let bundle = &bundle;
        async move {
            let local = read(
                file,
                m.local_header,
                m.local_header + npz::LOCAL_HEADER_BYTES,
            )
            .await?;
            bundle.data_range(&m, &local).map_err(|e| e.to_string())
        }
    };
    let logits = bundle
        .member("logits")
        .cloned()
        .ok_or_else(|| format!("{name}: no logits member"))?;
    let range = data_range(logits.clone()).await?;
    let mut members = Vec::new();
    let mut problems = Vec::new();
    let wanted = bundle.members_wanted(given);
    // The small members are capped by the logits' row count, read from the start of the
    // `logits` member; without a readable header they are not read (the logits' own read
    // reports why).
    let rows = if wanted.is_empty() {
        None
    } else {
        let prefix = read(file, range.0, range.1.min(range.0 + npz::PEEK_BYTES)).await?;
        bundle.logits_rows(&logits, &prefix).ok()
    };
    for (kind, m) in wanted {
        let Some(rows) = rows else { break };
        let bytes = match data_range(m.clone()).await {
            Ok((s, e)) => match read(file, s, e).await {
                Ok(data) => bundle.inflate(&m, &data, rows).map_err(|e| e.to_string()),
                Err(e) => Err(e),
            },
            Err(e) => Err(e),
        };
        match bytes {
            Ok(b) => members.push((Slot::of(kind), Rc::new(b))),
            Err(message) => problems.push(message),
        }
    }
    // A damaged member refuses the whole bundle, as the command line does: staging only its
    // good parts would pair them with whatever the other slots hold, and the member's message
    // would go when that batch is assembled.
    if !problems.is_empty() {
        return Err(problems.join("; "));
    }
    let plan = LogitsPlan {
        source: file.clone(),
        range,
        member: Some((bundle.clone(), logits)),
    };
    let actions = vec![Action::BundleChosen {
        name,
        total: plan.total(),
        keys: bundle.keys(),
        members,
        origin,
    }];
    Ok((plan, actions))
}

/// How a read reports back: progress after each chunk, and whether to go on.
pub trait Progress {
    /// Called after each chunk with the bytes done; `false` abandons the read.
    fn done(&mut self, bytes: u64) -> bool;
    /// Between chunks (the page yields to the browser here).
    fn pause(&mut self) -> impl Future<Output = ()>;
}

/// Stream a chosen logits file into paths, chunk by chunk, the next chunk's read started
/// before the current one is decoded. `None`: abandoned.
pub async fn stream<S: Source>(
    plan: &LogitsPlan<S>,
    tax: &Taxonomy,
    key: &IngestKey,
    chunk: u64,
    progress: &mut impl Progress,
) -> Option<Result<Ingested, Errors>> {
    let name = plan.source.name();
    let temps = Temperatures(key.temperatures.clone());
    let mut feed = match &plan.member {
        None => LogitsFeed::npy(&name, tax, &temps),
        Some((bundle, member)) => match LogitsFeed::member(bundle, member, tax, &temps) {
            Ok(feed) => feed,
            Err(e) => return Some(Err(e)),
        },
    };
    let chunk = chunk.max(1);
    let (start, stop) = plan.range;
    let total = stop.saturating_sub(start);
    if !progress.done(0) {
        return None;
    }
    let mut done = 0;
    let mut next = Some(plan.source.read(start, start + chunk.min(total)));
    while done < total {
        let end = (done + chunk).min(total);
        let bytes = match next.take() {
            Some(read) => read.await,
            None => Ok(Vec::new()),
        };
        if end < total {
            next = Some(
                plan.source
                    .read(start + end, start + (end + chunk).min(total)),
            );
        }
        let bytes = match bytes {
            Ok(b) => b,
            Err(e) => {
                return Some(Err(Error::new(
                    &name,
                    Location::byte(start + done),
                    ErrorKind::Invalid {
                        what: "reading the file".into(),
                        expected: "its bytes".into(),
                        found: e,
                    },
                )
                .into()))
            }
        };
        if let Err(e) = feed.feed(tax, &bytes) {
            return Some(Err(e));
        }
        done = end;
        if !progress.done(done) {
            return None;
        }
        progress.pause().await;
    }
    Some(feed.finish(tax))
}

/// The bytes of one row of a chosen logits file, read alone: where they lie is the core's
/// `siblings::row_range` (a C-order `.npy`, or a bundle member stored uncompressed as
/// `np.savez` writes it); otherwise why they cannot be read, in words the inspector shows.
pub async fn read_row<S: Source>(
    plan: &LogitsPlan<S>,
    want: &RowWanted,
) -> Result<Vec<u8>, String> {
    let member = plan.member.as_ref().map(|(_, m)| m);
    let (start, end) = siblings::row_range(&want.header, plan.range.0, member, want.row as u64)
        .map_err(|e| e.to_string())?;
    let bytes = read(&plan.source, start, end).await?;
    if bytes.len() as u64 != end - start {
        return Err(format!(
            "{}: row {} is cut short ({} of {} bytes; was the file changed?)",
            plan.source.name(),
            want.row,
            bytes.len(),
            end - start
        ));
    }
    Ok(bytes)
}

/// [`read_row`] as the action that reports it.
pub async fn row_action<S: Source>(plan: Option<&LogitsPlan<S>>, want: &RowWanted) -> Action {
    let result = match plan {
        Some(plan) => read_row(plan, want).await,
        None => Err(format!(
            "{}: the file is no longer available to read a row from: choose it again",
            want.logits
        )),
    };
    Action::RowLogits {
        row: want.row,
        generation: want.generation,
        result,
    }
}
