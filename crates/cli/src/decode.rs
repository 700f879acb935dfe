//! `hedgerow decode`: every row is decoded and written as the logits stream in, so memory does
//! not grow with the row count. Labels are optional; they and objectness are small (one value
//! per row) and read whole.

mod rows;

use std::cell::Cell;
use std::fs::File;
use std::io::{self, Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::rc::Rc;

use hedgerow_core::{
    npz, Decoder, Error, ErrorKind, Errors, Labels, Location, LogitsReader, Objectness, Paths,
    Profile, Step, Taxonomy,
};

pub use rows::Format;
use rows::{Row, RowWriter};

use crate::load::{self, display, input_error, keep, read, Bundle, Failure, CHUNK};
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
    let tax = Taxonomy::parse(&read(&input.taxonomy)?, &display(&input.taxonomy))?;
    let (settings, temps) = load::settings(&tax, req.settings)?;
    let profile = match &req.settings.profile {
        Some(path) => Some((
            display(path),
            Profile::from_json(&read(path)?, &display(path), &tax)?,
        )),
        None => None,
    };
    let logits_name = display(&input.logits);
    let bundle = Bundle::open(&input.logits, &logits_name)?;

    let mut problems = Vec::new();
    let labels = match (&input.labels, &bundle) {
        (Some(path), _) => keep(
            &mut problems,
            Labels::parse(&read(path)?, &display(path), &tax),
        ),
        (None, Some(b)) => match b.member_bytes("labels")? {
            Some((name, bytes)) => keep(&mut problems, Labels::parse(&bytes, &name, &tax)),
            None => None,
        },
        (None, None) => None,
    };
    let objectness = match (&input.objectness, &bundle) {
        _ if req.no_objectness => None,
        (Some(path), _) => keep(
            &mut problems,
            Objectness::parse(&read(path)?, &display(path)),
        ),
        (None, Some(b)) => match b.member_bytes("objectness")? {
            Some((name, bytes)) => keep(&mut problems, Objectness::parse(&bytes, &name)),
            None => None,
        },
        (None, None) => None,
    };
    let objectness_given = input.objectness.is_some()
        || bundle
            .as_ref()
            .is_some_and(|b| b.member("objectness").is_some());
    if let Some((name, p)) = &profile {
        if p.objectness == Some(true) && !objectness_given && !req.no_objectness {
            problems.push(format!(
                "{name}: this profile was scored with objectness (object threshold {}): expected \
                 --objectness FILE (or an `objectness` array in {logits_name}); pass \
                 --no-objectness to decode with P(root) = 1 and no object threshold",
                settings.thresholds.object
            ));
        }
    }

    let thresholds = settings.thresholds.resolve(&tax);
    let decoder = Decoder {
        tax: &tax,
        rule: settings.rule,
        thresholds: &thresholds,
        objectness: objectness.is_some(),
    };
    let mut source = match &bundle {
        Some(b) => Source::member(b)?,
        None => Source::plain(&input.logits, &logits_name)?,
    };
    let mut session = Session {
        decoder,
        labels: labels.as_ref(),
        objectness: objectness.as_ref(),
        logits_name: &logits_name,
        reader: Some(LogitsReader::new(source.name(), &tax, &temps)),
        problems,
        out: Out::Pending {
            path: req.out,
            format: req.format,
        },
        path: Vec::new(),
    };
    let outcome = session.stream(&mut source);
    match outcome {
        Ok(()) => Ok(()),
        Err(Halt::Closed) => Ok(()),
        Err(Halt::Fail(f)) => {
            session.discard_output();
            Err(f)
        }
    }
}

/// Why streaming stopped early.
enum Halt {
    /// The reader of standard output went away (`| head`): stop quietly.
    Closed,
    Fail(Failure),
}

impl From<Failure> for Halt {
    fn from(f: Failure) -> Self {
        Halt::Fail(f)
    }
}

/// Where the logits bytes come from: a plain `.npy`, or a bundle's `logits` member.
enum Source {
    Plain {
        file: File,
        name: String,
    },
    Member {
        file: File,
        name: String,
        left: u64,
        flow: Box<npz::Inflow>,
    },
}

impl Source {
    fn plain(path: &Path, name: &str) -> Result<Self, Failure> {
        let file = File::open(path).map_err(|e| cannot_read(name, e))?;
        Ok(Source::Plain {
            file,
            name: name.to_string(),
        })
    }

    fn member(b: &Bundle) -> Result<Self, Failure> {
        let Some(m) = b.member("logits") else {
            return Err(Failure::Input(vec![format!(
                "{}: expected a `logits` array in the bundle, found {}",
                b.name,
                b.keys()
            )]));
        };
        let name = format!("{}:logits", b.name);
        let mut file = File::open(&b.path).map_err(|e| cannot_read(&b.name, e))?;
        let start = b.data_start(&mut file, m)?;
        file.seek(SeekFrom::Start(start))
            .map_err(|e| cannot_read(&b.name, e))?;
        let flow = npz::Inflow::new(m).map_err(|k| input_error(&name, k))?;
        Ok(Source::Member {
            file,
            name,
            left: m.compressed,
            flow: Box::new(flow),
        })
    }

    /// The name errors in the logits carry (`bundle.npz:logits` for a member).
    fn name(&self) -> &str {
        match self {
            Source::Plain { name, .. } | Source::Member { name, .. } => name,
        }
    }

    /// Hand the logits bytes to `sink` chunk by chunk until they end.
    fn pump(&mut self, sink: &mut impl FnMut(&[u8]) -> Result<(), Halt>) -> Result<(), Halt> {
        let mut buf = vec![0u8; CHUNK];
        match self {
            Source::Plain { file, name } => loop {
                let n = file.read(&mut buf).map_err(|e| cannot_read(name, e))?;
                if n == 0 {
                    return Ok(());
                }
                sink(&buf[..n])?;
            },
            Source::Member {
                file,
                name,
                left,
                flow,
            } => {
                let wrap = |k| Halt::Fail(input_error(name, k));
                while *left > 0 {
                    let want = usize::try_from(*left).unwrap_or(CHUNK).min(CHUNK);
                    let n = file
                        .read(&mut buf[..want])
                        .map_err(|e| cannot_read(name, e))?;
                    if n == 0 {
                        break;
                    }
                    *left -= n as u64;
                    flow.feed(&buf[..n], sink, wrap)?;
                }
                flow.finish().map_err(wrap)
            }
        }
    }
}

fn cannot_read(name: &str, e: io::Error) -> Failure {
    Failure::Input(vec![format!("{name}: cannot read: {e}")])
}

/// The output: not opened until the inputs have been checked, so bad input writes nothing.
enum Out<'a> {
    Pending {
        path: Option<&'a PathBuf>,
        format: Format,
    },
    Open {
        writer: RowWriter<'a, Gate>,
        path: Option<&'a PathBuf>,
        shut: Rc<Cell<bool>>,
    },
    Done,
}

/// One decode run: the reader the logits stream through and where the rows go.
struct Session<'a> {
    decoder: Decoder<'a>,
    labels: Option<&'a Labels>,
    objectness: Option<&'a Objectness>,
    logits_name: &'a str,
    /// `None` once finished.
    reader: Option<LogitsReader>,
    /// Problems found before the logits header was read; reported with the header's.
    problems: Vec<String>,
    out: Out<'a>,
    /// One row's path, reused.
    path: Vec<Step>,
}

impl<'a> Session<'a> {
    fn stream(&mut self, source: &mut Source) -> Result<(), Halt> {
        let tax = self.decoder.tax;
        source.pump(&mut |chunk| {
            let reader = self.reader.as_mut().ok_or_else(lost)?;
            if let Err(e) = reader.feed(tax, chunk) {
                return Err(self.input_problems(e));
            }
            if matches!(self.out, Out::Pending { .. }) {
                if reader.header().is_none() {
                    return Ok(());
                }
                self.open()?;
            }
            let reader = self.reader.as_mut().ok_or_else(lost)?;
            let (first, paths) = reader.take_paths();
            // After a NaN or ±inf no more rows are written: the rest of the file is only read
            // to report every problem.
            if reader.has_errors() {
                return Ok(());
            }
            self.write(first, &paths)
        })?;
        let mut reader = self.reader.take().ok_or_else(lost)?;
        let (first, _) = reader.take_paths();
        let rest = match reader.finish(tax) {
            Ok(rest) => rest,
            Err(e) => return Err(self.input_problems(e)),
        };
        if matches!(self.out, Out::Pending { .. }) {
            self.open()?;
        }
        // The rows of a Fortran-order array arrive only now; otherwise there are none left.
        self.write(first, &rest.paths)?;
        match std::mem::replace(&mut self.out, Out::Done) {
            Out::Open { writer, path, .. } => writer.finish().map_err(|e| write_error(path, e)),
            _ => Ok(()),
        }
    }

    /// The logits' problems, after those of the other inputs.
    fn input_problems(&mut self, e: Errors) -> Halt {
        let mut all = std::mem::take(&mut self.problems);
        all.extend(e.iter().map(|e| e.to_string()));
        Halt::Fail(Failure::Input(all))
    }

    /// Check the rows of labels and objectness against the logits header, then open the output.
    fn open(&mut self) -> Result<(), Halt> {
        let rows = self
            .reader
            .as_ref()
            .and_then(|r| r.header())
            .and_then(|h| h.shape.first().copied())
            .unwrap_or(0);
        let mut problems = std::mem::take(&mut self.problems);
        let mut check = |file: &str, found: usize| {
            if found as u64 != rows {
                problems.push(
                    Error::new(
                        file,
                        Location::default(),
                        ErrorKind::RowCount {
                            found: found as u64,
                            other: self.logits_name.to_string(),
                            expected: rows,
                        },
                    )
                    .to_string(),
                );
            }
        };
        if let Some(l) = self.labels {
            check(&l.file, l.nodes.len());
        }
        if let Some(o) = self.objectness {
            check(&o.file, o.values.len());
        }
        if !problems.is_empty() {
            return Err(Halt::Fail(Failure::Input(problems)));
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
        self.out = Out::Open { writer, path, shut };
        Ok(())
    }

    fn write(&mut self, first: u64, paths: &Paths) -> Result<(), Halt> {
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

fn lost() -> Halt {
    Halt::Fail(Failure::Other(anyhow::anyhow!(
        "the logits reader was already finished"
    )))
}

/// A closed pipe ends the run quietly; any other write error is reported.
fn write_error(path: Option<&PathBuf>, e: io::Error) -> Halt {
    if e.kind() == io::ErrorKind::BrokenPipe && path.is_none() {
        return Halt::Closed;
    }
    let to = path.map_or_else(
        || "standard output".to_string(),
        |p| p.display().to_string(),
    );
    Halt::Fail(Failure::Other(anyhow::anyhow!("cannot write to {to}: {e}")))
}

impl From<Errors> for Halt {
    fn from(e: Errors) -> Self {
        Halt::Fail(Failure::from(e))
    }
}
