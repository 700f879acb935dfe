//! `hedgerow decode`: every row is decoded and written as the logits stream in, so memory does
//! not grow with the row count. Labels are optional; they and objectness are small (one value
//! per row) and read whole.

mod rows;

use std::cell::Cell;
use std::fs::File;
use std::io::{self, Write};
use std::path::PathBuf;
use std::rc::Rc;

use hedgerow_core::intake;
use hedgerow_core::{Decoder, Errors, Labels, Objectness, Paths, Step, Temperatures};

pub use rows::Format;
use rows::{Row, RowWriter};

use crate::load::{self, keep, Failure, Sources};
use crate::{Input, SettingArgs};

/// What `hedgerow decode` was asked for, beside the inputs and settings.
pub struct Request<'a> {
    pub input: &'a Input,
    pub settings: &'a SettingArgs,
    /// Decode with P(root) = 1 and no object threshold, whatever the profile was scored with.
    pub no_objectness: bool,
    pub out: Option<&'a PathBuf>,
    pub format: Format,
}

pub fn run(req: &Request) -> Result<(), Failure> {
    let input = req.input;
    let tax = load::taxonomy(&input.taxonomy)?;
    let load::Chosen {
        settings,
        temperatures: temps,
        profile,
    } = load::settings(&tax, req.settings)?;
    let sources = Sources::open(input)?;

    let mut problems = Vec::new();
    let labels = sources.labels.as_ref().and_then(|small| {
        keep(
            &mut problems,
            Labels::parse(&small.bytes, &small.name, &tax),
        )
    });
    let objectness = match &sources.objectness {
        Some(small) if !req.no_objectness => {
            keep(&mut problems, Objectness::parse(&small.bytes, &small.name))
        }
        _ => None,
    };
    if !req.no_objectness {
        problems.extend(load::objectness_wanted(
            &profile,
            &sources,
            &settings,
            Some("--no-objectness"),
        ));
    }

    let thresholds = settings.thresholds.resolve(&tax);
    let mut session = Session {
        decoder: Decoder {
            tax: &tax,
            rule: settings.rule,
            thresholds: &thresholds,
            objectness: objectness.is_some(),
        },
        labels: labels.as_ref(),
        objectness: objectness.as_ref(),
        logits_name: &sources.logits.name,
        problems,
        out: Out::Pending {
            path: req.out,
            format: req.format,
        },
        path: Vec::new(),
    };
    match session.stream(&sources, &temps) {
        Ok(()) => Ok(()),
        Err(Failure::Other(e)) if e.is::<Closed>() => Ok(()),
        Err(f) => {
            session.discard_output();
            Err(f)
        }
    }
}

/// The output: not opened until the inputs have been checked, so bad input writes nothing.
enum Out<'a> {
    Pending {
        path: Option<&'a PathBuf>,
        format: Format,
    },
    Open {
        writer: Box<RowWriter<'a, Gate>>,
        path: Option<&'a PathBuf>,
        shut: Rc<Cell<bool>>,
    },
    Done,
}

/// One decode run: where the rows go, and what each row is decoded with.
struct Session<'a> {
    decoder: Decoder<'a>,
    labels: Option<&'a Labels>,
    objectness: Option<&'a Objectness>,
    logits_name: &'a str,
    /// Problems found before the logits header was read; reported with the header's.
    problems: Vec<String>,
    out: Out<'a>,
    /// One row's path, reused.
    path: Vec<Step>,
}

impl<'a> Session<'a> {
    fn stream(&mut self, sources: &Sources, temps: &Temperatures) -> Result<(), Failure> {
        let tax = self.decoder.tax;
        let streamed = sources.logits.stream(tax, temps, |reader| {
            if matches!(self.out, Out::Pending { .. }) {
                let Some(rows) = reader.header().and_then(|h| h.shape.first().copied()) else {
                    return Ok(());
                };
                self.open(rows)?;
            }
            let (first, paths) = reader.take_paths();
            // After a NaN or ±inf no more rows are written: the rest of the file is only read
            // to report every problem.
            if reader.has_errors() {
                return Ok(());
            }
            self.write(first, &paths)
        })?;
        let rest = match streamed {
            Ok(rest) => rest,
            Err(e) => return Err(self.input_problems(e)),
        };
        let rows = rest.header.shape.first().copied().unwrap_or(0);
        if matches!(self.out, Out::Pending { .. }) {
            self.open(rows)?;
        }
        // The rows of a Fortran-order array arrive only now; otherwise there are none left.
        let first = rows.saturating_sub(rest.paths.len() as u64);
        self.write(first, &rest.paths)?;
        match std::mem::replace(&mut self.out, Out::Done) {
            Out::Open { writer, path, .. } => writer.finish().map_err(|e| write_error(path, e)),
            _ => Ok(()),
        }
    }

    /// The logits' problems, after those of the other inputs.
    fn input_problems(&mut self, e: Errors) -> Failure {
        let mut all = std::mem::take(&mut self.problems);
        all.extend(e.iter().map(|e| e.to_string()));
        Failure::Input(all)
    }

    /// Check the rows of labels and objectness against the logits' `rows`, then open the
    /// output.
    fn open(&mut self, rows: u64) -> Result<(), Failure> {
        let mut others = Vec::new();
        if let Some(l) = self.labels {
            others.push((l.file.as_str(), l.nodes.len() as u64));
        }
        if let Some(o) = self.objectness {
            others.push((o.file.as_str(), o.values.len() as u64));
        }
        let mismatched = intake::row_errors(self.logits_name, rows, &others);
        if !self.problems.is_empty() || !mismatched.is_empty() {
            return Err(self.input_problems(Errors(mismatched)));
        }
        let Out::Pending { path, format } = self.out else {
            return Ok(());
        };
        let target: Box<dyn Write> = match path {
            Some(p) => Box::new(File::create(p).map_err(|e| write_error(Some(p), e))?),
            None => Box::new(io::stdout().lock()),
        };
        let shut = Rc::new(Cell::new(false));
        let gate = Gate {
            inner: target,
            shut: Rc::clone(&shut),
        };
        let writer = RowWriter::new(self.decoder.tax, format, self.labels.is_some(), gate)
            .map_err(|e| write_error(path, e))?;
        self.out = Out::Open {
            writer: Box::new(writer),
            path,
            shut,
        };
        Ok(())
    }

    fn write(&mut self, first: u64, paths: &Paths) -> Result<(), Failure> {
        let Out::Open { writer, path, .. } = &mut self.out else {
            return Ok(());
        };
        for i in 0..paths.len() {
            let r = first + i as u64;
            let at = usize::try_from(r).unwrap_or(usize::MAX);
            let p_root = self
                .objectness
                .and_then(|o| o.values.get(at))
                .map_or(1.0, |&v| v as f64);
            let leaf = paths.leaf(i);
            let decision = self
                .decoder
                .decide(p_root, leaf, paths.cond(i), &mut self.path);
            let label = self.labels.map(|l| {
                let g = l
                    .nodes
                    .get(at)
                    .copied()
                    .unwrap_or(hedgerow_core::taxonomy::NONE);
                (g, self.decoder.outcome(&decision, leaf, g))
            });
            let row = Row {
                row: r,
                decision,
                path: &self.path,
                label,
            };
            writer.row(&row).map_err(|e| write_error(*path, e))?;
        }
        Ok(())
    }

    /// After a failure: what is still buffered is dropped, and a partly written `--out` file
    /// is removed, so no output looks complete.
    fn discard_output(&mut self) {
        if let Out::Open { path, shut, .. } = std::mem::replace(&mut self.out, Out::Done) {
            shut.set(true);
            if let Some(path) = path {
                if std::fs::metadata(path).is_ok_and(|m| m.is_file()) {
                    let _ = std::fs::remove_file(path);
                }
            }
        }
    }
}

/// The output behind the row writer's buffer; once `shut`, writes are dropped.
struct Gate {
    inner: Box<dyn Write>,
    shut: Rc<Cell<bool>>,
}

impl Write for Gate {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        if self.shut.get() {
            return Ok(buf.len());
        }
        self.inner.write(buf)
    }
    fn flush(&mut self) -> io::Result<()> {
        if self.shut.get() {
            return Ok(());
        }
        self.inner.flush()
    }
}

/// The reader of standard output went away (`hedgerow decode … | head`): the run ends quietly.
#[derive(Debug)]
struct Closed;

impl std::fmt::Display for Closed {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("standard output was closed")
    }
}

impl std::error::Error for Closed {}

/// A write error as a failure; a closed pipe is [`Closed`].
fn write_error(path: Option<&PathBuf>, e: io::Error) -> Failure {
    if e.kind() == io::ErrorKind::BrokenPipe && path.is_none() {
        return Failure::Other(anyhow::Error::new(Closed));
    }
    let to = path.map_or_else(
        || "standard output".to_string(),
        |p| p.display().to_string(),
    );
    Failure::Other(anyhow::anyhow!("cannot write to {to}: {e}"))
}
