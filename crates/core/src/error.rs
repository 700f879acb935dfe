//! Errors the engine reports. Every error names the file it came from and where in it.

use std::fmt;

/// Where in a file a problem sits. Text files count `line`s from 1 (header included, as an
/// editor shows them); arrays count `row`s from 0 (as numpy indexes them); a JSON value checked
/// after parsing is named by its `key` path (`thresholds[1]`, `node_thresholds."glass"`).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Location {
    pub key: Option<String>,
    pub line: Option<u64>,
    pub row: Option<u64>,
    pub column: Option<String>,
    pub byte: Option<u64>,
    pub entry: Option<u64>,
}

impl Location {
    pub fn line(line: u64) -> Self {
        Location {
            line: Some(line),
            ..Self::default()
        }
    }
    pub fn row(row: u64) -> Self {
        Location {
            row: Some(row),
            ..Self::default()
        }
    }
    pub fn entry(entry: u64) -> Self {
        Location {
            entry: Some(entry),
            ..Self::default()
        }
    }
    pub fn byte(byte: u64) -> Self {
        Location {
            byte: Some(byte),
            ..Self::default()
        }
    }
    pub fn key(key: impl Into<String>) -> Self {
        Location {
            key: Some(key.into()),
            ..Self::default()
        }
    }
    pub fn column(mut self, column: impl Into<String>) -> Self {
        self.column = Some(column.into());
        self
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some(key) = &self.key {
            write!(f, ", key `{key}`")?;
        }
        if let Some(line) = self.line {
            write!(f, ", line {line}")?;
        }
        if let Some(entry) = self.entry {
            write!(f, ", entry {entry}")?;
        }
        if let Some(row) = self.row {
            write!(f, ", row {row}")?;
        }
        if let Some(column) = &self.column {
            write!(f, ", column {column}")?;
        }
        if let Some(byte) = self.byte {
            write!(f, ", byte {byte}")?;
        }
        Ok(())
    }
}

/// What went wrong. The `Display` text says what was expected and what was found.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ErrorKind {
    #[error("malformed CSV: {0}")]
    Csv(String),
    #[error("malformed JSON: {0}")]
    Json(String),
    #[error("expected a header with a `{expected}` column, found columns {found}")]
    MissingColumn {
        expected: &'static str,
        found: String,
    },
    #[error("expected a value, found an empty {what}")]
    Empty { what: &'static str },
    #[error("the taxonomy is empty: expected at least one node row")]
    EmptyTaxonomy,
    #[error("duplicate id `{id}` (first defined at {first})")]
    DuplicateId { id: String, first: String },
    #[error("parent `{parent}` of `{id}` is not a node of the taxonomy")]
    UnknownParent { id: String, parent: String },
    #[error("the parents form a cycle: {cycle}")]
    Cycle { cycle: String },
    #[error("the taxonomy is {depth} levels deep; at most {max} are supported")]
    TooDeep { depth: usize, max: usize },
    #[error("not a .npy file: expected the magic bytes \\x93NUMPY, found {found}")]
    NpyMagic { found: String },
    #[error("unsupported .npy format version {major}.{minor}: expected 1.0, 2.0 or 3.0")]
    NpyVersion { major: u8, minor: u8 },
    #[error("bad .npy header: {0}")]
    NpyHeader(String),
    #[error("dtype `{found}`: expected {expected}")]
    Dtype {
        found: String,
        expected: &'static str,
    },
    #[error("shape {found}: expected {expected}")]
    Shape { found: String, expected: String },
    #[error("{found} columns, but the taxonomy has {expected} nodes")]
    ColumnCount { found: u64, expected: u64 },
    #[error(
        "truncated: expected {expected} bytes of data for the shape in the header, found {found}"
    )]
    Truncated { expected: u64, found: u64 },
    #[error("{found} bytes of data after the last row: expected the file to end there")]
    TrailingBytes { found: u64 },
    #[error("expected a finite number, found {found}")]
    NonFinite { found: String },
    #[error("expected a probability in [0, 1], found {found}")]
    NotProbability { found: String },
    #[error("label `{found}` is not an id of the taxonomy")]
    UnknownLabel { found: String },
    #[error("label index {found}: expected -1 (background) or a column index 0..{nodes}")]
    LabelIndex { found: i128, nodes: u64 },
    #[error("{found} rows, but {other} has {expected} rows")]
    RowCount {
        found: u64,
        other: String,
        expected: u64,
    },
    #[error("{what} {found}: expected a number in [0, 1]")]
    ThresholdRange { what: String, found: String },
    #[error("temperature for depth {depth} {found}: expected a number from {min} to {max}")]
    TemperatureRange {
        depth: usize,
        found: String,
        min: f64,
        max: f64,
    },
    #[error("{what}: expected {expected}, found `{found}`")]
    Invalid {
        what: String,
        expected: String,
        found: String,
    },
    #[error("this profile was made for another taxonomy (fingerprint {found}, {found_nodes} nodes); the loaded taxonomy has fingerprint {expected} ({expected_nodes} nodes)")]
    ProfileTaxonomy {
        expected: String,
        expected_nodes: usize,
        found: String,
        found_nodes: usize,
    },
    #[error(
        "the member inflates past the {declared} bytes the bundle's directory declares for it"
    )]
    MemberOverflow { declared: u64 },
    #[error("the bundle's directory declares {declared} bytes for this member, but its .npy header implies {implied}")]
    MemberSize { declared: u64, implied: u64 },
    #[error("shape {shape} of {dtype} is {found} bytes of data; one value for each of the {rows} rows of {other} takes at most {limit}")]
    MemberTooLarge {
        shape: String,
        dtype: String,
        found: u64,
        limit: u64,
        rows: u64,
        other: String,
    },
    #[error("expected a `logits` array in the bundle, found {found}")]
    NoLogitsMember { found: String },
    #[error("{0} more problems not shown")]
    More(u64),
}

/// One located problem.
#[derive(Debug, Clone, PartialEq)]
pub struct Error {
    pub file: String,
    pub at: Location,
    pub kind: ErrorKind,
}

impl Error {
    pub fn new(file: impl Into<String>, at: Location, kind: ErrorKind) -> Self {
        Error {
            file: file.into(),
            at,
            kind,
        }
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}{}: {}", self.file, self.at, self.kind)
    }
}

impl std::error::Error for Error {}

/// Every problem found in one input (parsers report all they can, not only the first).
#[derive(Debug, Clone, PartialEq)]
pub struct Errors(pub Vec<Error>);

impl Errors {
    pub fn iter(&self) -> impl Iterator<Item = &Error> {
        self.0.iter()
    }
}

impl From<Error> for Errors {
    fn from(e: Error) -> Self {
        Errors(vec![e])
    }
}

impl fmt::Display for Errors {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, e) in self.0.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{e}")?;
        }
        Ok(())
    }
}

impl std::error::Error for Errors {}

pub type Result<T> = std::result::Result<T, Errors>;

/// How many problems a parser lists before it only counts the rest.
pub const MAX_LISTED: usize = 20;

/// Collects problems up to [`MAX_LISTED`], then counts.
#[derive(Debug, Default)]
pub(crate) struct Collector {
    errors: Vec<Error>,
    more: u64,
}

impl Collector {
    pub fn push(&mut self, e: Error) {
        if self.errors.len() < MAX_LISTED {
            self.errors.push(e);
        } else {
            self.more += 1;
        }
    }
    pub fn is_empty(&self) -> bool {
        self.errors.is_empty() && self.more == 0
    }
    /// `Err` with everything collected so far (and empties the collector), or `Ok`.
    pub fn finish(&mut self, file: &str) -> Result<()> {
        if self.errors.is_empty() {
            return Ok(());
        }
        let mut errors = std::mem::take(&mut self.errors);
        if self.more > 0 {
            errors.push(Error::new(
                file,
                Location::default(),
                ErrorKind::More(self.more),
            ));
            self.more = 0;
        }
        Err(Errors(errors))
    }
}
