//! The rows `hedgerow decode` writes, one at a time: CSV or JSON Lines with the same fields.

use std::fmt::Write as _;
use std::io::{self, BufWriter, Write};

use hedgerow_core::{Decision, Outcome, Step, Taxonomy};
use serde::Serialize;

/// Output format of `hedgerow decode`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, clap::ValueEnum)]
pub enum Format {
    /// One CSV row per input row, after a header.
    #[default]
    Csv,
    /// One JSON object per line.
    Jsonl,
}

/// One decoded row and, when labels are given, its label and outcome.
pub struct Row<'a> {
    pub row: u64,
    pub decision: Decision,
    pub path: &'a [Step],
    pub label: Option<(u32, Outcome)>,
}

enum Sink<W: Write> {
    Csv(Box<csv::Writer<W>>),
    Jsonl(BufWriter<W>),
}

/// Writes decoded rows as they come; holds one row's text at a time.
pub struct RowWriter<'a, W: Write> {
    tax: &'a Taxonomy,
    labelled: bool,
    sink: Sink<W>,
    /// Reused for every number written to the CSV.
    text: String,
}

/// Bytes buffered before a write to the output.
const BUFFER: usize = 1 << 16;

impl<'a, W: Write> RowWriter<'a, W> {
    /// A writer over `out`; the CSV header is written at once.
    pub fn new(tax: &'a Taxonomy, format: Format, labelled: bool, out: W) -> io::Result<Self> {
        let sink = match format {
            Format::Csv => Sink::Csv(Box::new(
                csv::WriterBuilder::new()
                    .buffer_capacity(BUFFER)
                    .from_writer(out),
            )),
            Format::Jsonl => Sink::Jsonl(BufWriter::with_capacity(BUFFER, out)),
        };
        let mut w = RowWriter {
            tax,
            labelled,
            sink,
            text: String::new(),
        };
        if let Sink::Csv(csv) = &mut w.sink {
            let mut header = vec![
                "row".to_string(),
                "predicted".into(),
                "depth".into(),
                "probability".into(),
                "abstained".into(),
            ];
            for d in 1..=tax.max_depth() {
                header.extend([
                    format!("node_{d}"),
                    format!("conditional_{d}"),
                    format!("cumulative_{d}"),
                ]);
            }
            if labelled {
                header.extend(["label".into(), "outcome".into()]);
            }
            csv.write_record(&header).map_err(io_error)?;
        }
        Ok(w)
    }

    pub fn row(&mut self, row: &Row) -> io::Result<()> {
        match &mut self.sink {
            Sink::Csv(csv) => {
                csv_row(csv, &mut self.text, self.tax, self.labelled, row).map_err(io_error)
            }
            Sink::Jsonl(out) => {
                let d = &row.decision;
                let json = JsonRow {
                    row: row.row,
                    predicted: d.predicted.map(|v| self.tax.id(v)),
                    depth: (!d.abstained()).then_some(d.depth),
                    probability: d.probability,
                    abstained: d.abstained(),
                    path: JsonPath {
                        tax: self.tax,
                        steps: row.path,
                    },
                    label: row.label.map(|(g, _)| self.tax.id(g)),
                    outcome: row.label.map(|(_, o)| o.as_str()),
                };
                serde_json::to_writer(&mut *out, &json)?;
                out.write_all(b"\n")
            }
        }
    }

    /// Flush everything still buffered.
    pub fn finish(self) -> io::Result<()> {
        match self.sink {
            Sink::Csv(mut csv) => csv.flush(),
            Sink::Jsonl(mut out) => out.flush(),
        }
    }
}

fn csv_row<W: Write>(
    csv: &mut csv::Writer<W>,
    text: &mut String,
    tax: &Taxonomy,
    labelled: bool,
    row: &Row,
) -> csv::Result<()> {
    // Numbers as `{}` prints them, as before decode streamed: the shortest digits that read
    // back to the same value, never an exponent.
    let mut number = |csv: &mut csv::Writer<W>, v: &dyn std::fmt::Display| {
        text.clear();
        let _ = write!(text, "{v}");
        csv.write_field(text.as_bytes())
    };
    let d = &row.decision;
    number(csv, &row.row)?;
    csv.write_field(d.predicted.map_or("", |v| tax.id(v)))?;
    if d.abstained() {
        csv.write_field("")?;
    } else {
        number(csv, &d.depth)?;
    }
    number(csv, &d.probability)?;
    csv.write_field(if d.abstained() { "true" } else { "false" })?;
    for i in 0..tax.max_depth() {
        match row.path.get(i) {
            Some(step) => {
                csv.write_field(tax.id(step.node))?;
                number(csv, &step.conditional)?;
                number(csv, &step.cumulative)?;
            }
            None => {
                for _ in 0..3 {
                    csv.write_field("")?;
                }
            }
        }
    }
    if labelled {
        let (label, outcome) = row.label.map_or(("", ""), |(g, o)| (tax.id(g), o.as_str()));
        csv.write_field(label)?;
        csv.write_field(outcome)?;
    }
    csv.write_record(None::<&[u8]>)?;
    Ok(())
}

/// The I/O error inside a CSV error, so a closed pipe is still recognised as one.
fn io_error(e: csv::Error) -> io::Error {
    match e.into_kind() {
        csv::ErrorKind::Io(e) => e,
        other => io::Error::other(format!("{other:?}")),
    }
}

/// The path as an array of steps, serialised without building it first.
struct JsonPath<'a> {
    tax: &'a Taxonomy,
    steps: &'a [Step],
}

impl Serialize for JsonPath<'_> {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeSeq;
        let mut seq = s.serialize_seq(Some(self.steps.len()))?;
        for step in self.steps {
            seq.serialize_element(&JsonStep {
                id: self.tax.id(step.node),
                conditional: step.conditional,
                cumulative: step.cumulative,
            })?;
        }
        seq.end()
    }
}

#[derive(Serialize)]
struct JsonStep<'a> {
    id: &'a str,
    conditional: f64,
    cumulative: f64,
}

#[derive(Serialize)]
struct JsonRow<'a> {
    row: u64,
    /// The node id ("" at the root); `null` when the row abstained.
    predicted: Option<&'a str>,
    /// `null` when the row abstained.
    depth: Option<usize>,
    probability: f64,
    abstained: bool,
    path: JsonPath<'a>,
    #[serde(skip_serializing_if = "Option::is_none")]
    label: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    outcome: Option<&'static str>,
}
