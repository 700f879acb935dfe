//! Reading the input files and settings into a batch, collecting every problem with its place.

use std::fs::File;
use std::io::{Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};

use hedgerow_core::{
    npz, Batch, ErrorKind, Errors, Labels, Location, LogitsReader, Objectness, Policy, Profile,
    Rule, Settings, Taxonomy, Temperatures, Thresholds,
};

use crate::{Input, SettingArgs};

/// Why a command failed: bad input (exit 2, one message per problem) or anything else.
pub enum Failure {
    Input(Vec<String>),
    Other(anyhow::Error),
}

impl From<Errors> for Failure {
    fn from(e: Errors) -> Self {
        Failure::Input(e.iter().map(|e| e.to_string()).collect())
    }
}

/// Everything a command works on.
pub struct Loaded {
    pub taxonomy: Taxonomy,
    pub batch: Batch,
    pub settings: Settings,
}

/// Bytes per read of the logits file: rows are decoded chunk by chunk and the chunk dropped.
const CHUNK: usize = 1 << 20;

fn display(path: &Path) -> String {
    path.display().to_string()
}

fn read(path: &Path) -> Result<Vec<u8>, Failure> {
    std::fs::read(path)
        .map_err(|e| Failure::Input(vec![format!("{}: cannot read: {e}", display(path))]))
}

fn numbers(flag: &str, text: &str) -> Result<Vec<f64>, String> {
    text.split(',')
        .map(|part| {
            let t = part.trim();
            t.parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| format!("{flag}: expected numbers separated by commas, found `{t}`"))
        })
        .collect()
}

impl Loaded {
    pub fn load(input: &Input, args: &SettingArgs) -> Result<Self, Failure> {
        let tax_name = display(&input.taxonomy);
        let taxonomy = Taxonomy::parse(&read(&input.taxonomy)?, &tax_name)?;
        let (settings, temperatures) = settings(&taxonomy, args)?;
        let logits_name = display(&input.logits);
        let bundle = Bundle::open(&input.logits, &logits_name)?;

        let mut problems = Vec::new();
        // A bundle's small members are capped by the logits' row count, read first.
        let rows = match &bundle {
            Some(b) if input.labels.is_none() || input.objectness.is_none() => b.logits_rows()?,
            _ => 0,
        };
        let labels = match (&input.labels, &bundle) {
            (Some(path), _) => keep(&mut problems, Labels::parse(&read(path)?, &display(path), &taxonomy)),
            (None, Some(b)) => match b.member_bytes("labels", Labels::npy_limit(rows, &b.logits_name()))? {
                Some((name, bytes)) => keep(&mut problems, Labels::parse(&bytes, &name, &taxonomy)),
                None => return Err(Failure::Input(vec![format!("--labels: expected a labels file, or a `labels` array in {logits_name} (it holds {})", b.keys())])),
            },
            (None, None) => return Err(Failure::Input(vec!["--labels: expected a labels file (or an .npz bundle holding `labels` as --logits)".into()])),
        };
        let objectness = match (&input.objectness, &bundle) {
            (Some(path), _) => Some(keep(
                &mut problems,
                Objectness::parse(&read(path)?, &display(path)),
            )),
            (None, Some(b)) => b
                .member_bytes("objectness", Objectness::npy_limit(rows, &b.logits_name()))?
                .map(|(name, bytes)| keep(&mut problems, Objectness::parse(&bytes, &name))),
            (None, None) => None,
        };
        let ingested = keep(
            &mut problems,
            match &bundle {
                Some(b) => b.stream_logits(&taxonomy, &temperatures)?,
                None => stream_logits(&input.logits, &logits_name, &taxonomy, &temperatures)?,
            },
        );
        if !problems.is_empty() {
            return Err(Failure::Input(problems));
        }
        let (Some(ingested), Some(labels)) = (ingested, labels) else {
            return Err(Failure::Other(anyhow::anyhow!(
                "inputs missing after loading"
            )));
        };
        let objectness = match objectness {
            Some(Some(o)) => Some(o),
            Some(None) => {
                return Err(Failure::Other(anyhow::anyhow!(
                    "objectness missing after loading"
                )))
            }
            None => None,
        };
        let batch = Batch::new(
            &taxonomy,
            &logits_name,
            ingested,
            temperatures,
            labels,
            objectness,
        )?;
        Ok(Loaded {
            taxonomy,
            batch,
            settings,
        })
    }
}

/// The value, or its problems noted so every input's problems are reported together.
fn keep<T>(problems: &mut Vec<String>, r: hedgerow_core::Result<T>) -> Option<T> {
    match r {
        Ok(v) => Some(v),
        Err(e) => {
            problems.extend(e.iter().map(|e| e.to_string()));
            None
        }
    }
}

fn input_error(name: &str, kind: ErrorKind) -> Failure {
    Failure::from(Errors::from(hedgerow_core::Error::new(
        name,
        Location::default(),
        kind,
    )))
}

/// An `.npz` bundle given as `--logits`: its directory, read from the end of the file.
struct Bundle {
    path: PathBuf,
    name: String,
    members: Vec<npz::Member>,
}

impl Bundle {
    /// `Some` if the file is a zip archive (np.savez writes `PK\x03\x04` first).
    fn open(path: &Path, name: &str) -> Result<Option<Self>, Failure> {
        let cannot = |e: std::io::Error| Failure::Input(vec![format!("{name}: cannot read: {e}")]);
        let mut file = File::open(path).map_err(cannot)?;
        let mut magic = [0u8; 4];
        let n = file.read(&mut magic).map_err(cannot)?;
        if n < 4 || &magic != b"PK\x03\x04" {
            return Ok(None);
        }
        let len = file.metadata().map_err(cannot)?.len();
        let tail_len = len.min(npz::TAIL_BYTES);
        let tail = read_at(&mut file, len - tail_len, tail_len).map_err(cannot)?;
        let (offset, size) = npz::directory_range(&tail, len).map_err(|k| input_error(name, k))?;
        let dir = read_at(&mut file, offset, size).map_err(cannot)?;
        let members = npz::parse_directory(&dir).map_err(|k| input_error(name, k))?;
        Ok(Some(Bundle {
            path: path.to_path_buf(),
            name: name.to_string(),
            members,
        }))
    }

    fn keys(&self) -> String {
        self.members
            .iter()
            .map(|m| format!("`{}`", m.key()))
            .collect::<Vec<_>>()
            .join(", ")
    }

    fn member(&self, key: &str) -> Option<&npz::Member> {
        self.members.iter().find(|m| m.key() == key)
    }

    /// Where a member's compressed data starts.
    fn data_start(&self, file: &mut File, m: &npz::Member) -> Result<u64, Failure> {
        let local = read_at(file, m.local_header, npz::LOCAL_HEADER_BYTES)
            .map_err(|e| Failure::Input(vec![format!("{}: cannot read: {e}", self.name)]))?;
        npz::data_offset(m, &local).map_err(|k| input_error(&self.name, k))
    }

    fn logits_name(&self) -> String {
        format!("{}:logits", self.name)
    }

    /// The row count in the `logits` member's header, from its first compressed bytes.
    fn logits_rows(&self) -> Result<u64, Failure> {
        let Some(m) = self.member("logits") else {
            return Err(Failure::Input(vec![format!(
                "{}: expected a `logits` array in the bundle, found {}",
                self.name,
                self.keys()
            )]));
        };
        let name = self.logits_name();
        let cannot =
            |e: std::io::Error| Failure::Input(vec![format!("{}: cannot read: {e}", self.name)]);
        let mut file = File::open(&self.path).map_err(cannot)?;
        let start = self.data_start(&mut file, m)?;
        let data = read_at(&mut file, start, m.compressed.min(npz::PEEK_BYTES)).map_err(cannot)?;
        let header = npz::peek_header(m, &data).map_err(|k| input_error(&name, k))?;
        Ok(header.shape.first().copied().unwrap_or(1))
    }

    /// A small member read whole, refused past `limit`: `(display name, bytes)`.
    fn member_bytes(
        &self,
        key: &str,
        limit: npz::Limit,
    ) -> Result<Option<(String, Vec<u8>)>, Failure> {
        let Some(m) = self.member(key) else {
            return Ok(None);
        };
        let name = format!("{}:{key}", self.name);
        let cannot =
            |e: std::io::Error| Failure::Input(vec![format!("{}: cannot read: {e}", self.name)]);
        let mut file = File::open(&self.path).map_err(cannot)?;
        let start = self.data_start(&mut file, m)?;
        let data = read_at(&mut file, start, m.compressed).map_err(cannot)?;
        let mut out = Vec::new();
        let mut flow = npz::Inflow::new(m)
            .map_err(|k| input_error(&name, k))?
            .limit(limit);
        flow.feed(
            &data,
            &mut |c: &[u8]| -> Result<(), ErrorKind> {
                out.extend_from_slice(c);
                Ok(())
            },
            |k| k,
        )
        .map_err(|k| input_error(&name, k))?;
        flow.finish().map_err(|k| input_error(&name, k))?;
        Ok(Some((name, out)))
    }

    /// Stream the `logits` member through the inflater into greedy paths.
    fn stream_logits(
        &self,
        tax: &Taxonomy,
        temps: &Temperatures,
    ) -> Result<hedgerow_core::Result<hedgerow_core::Ingested>, Failure> {
        let Some(m) = self.member("logits") else {
            return Err(Failure::Input(vec![format!(
                "{}: expected a `logits` array in the bundle, found {}",
                self.name,
                self.keys()
            )]));
        };
        let name = format!("{}:logits", self.name);
        let cannot =
            |e: std::io::Error| Failure::Input(vec![format!("{}: cannot read: {e}", self.name)]);
        let mut file = File::open(&self.path).map_err(cannot)?;
        let start = self.data_start(&mut file, m)?;
        file.seek(SeekFrom::Start(start)).map_err(cannot)?;
        let mut reader = LogitsReader::new(&name, tax, temps);
        let mut flow = npz::Inflow::new(m).map_err(|k| input_error(&name, k))?;
        let wrap = |k| Errors::from(hedgerow_core::Error::new(&name, Location::default(), k));
        let mut left = m.compressed;
        let mut buf = vec![0u8; CHUNK];
        while left > 0 {
            let want = (left as usize).min(CHUNK);
            let n = file.read(&mut buf[..want]).map_err(cannot)?;
            if n == 0 {
                break;
            }
            left -= n as u64;
            if let Err(e) = flow.feed(&buf[..n], &mut |c: &[u8]| reader.feed(tax, c), wrap) {
                return Ok(Err(e));
            }
        }
        if let Err(k) = flow.finish() {
            return Ok(Err(wrap(k)));
        }
        Ok(reader.finish(tax))
    }
}

fn read_at(file: &mut File, offset: u64, len: u64) -> std::io::Result<Vec<u8>> {
    file.seek(SeekFrom::Start(offset))?;
    let mut out = Vec::new();
    file.take(len).read_to_end(&mut out)?;
    Ok(out)
}

/// Read the logits file chunk by chunk into greedy paths.
fn stream_logits(
    path: &Path,
    name: &str,
    tax: &Taxonomy,
    temps: &Temperatures,
) -> Result<hedgerow_core::Result<hedgerow_core::Ingested>, Failure> {
    let mut file =
        File::open(path).map_err(|e| Failure::Input(vec![format!("{name}: cannot read: {e}")]))?;
    let mut reader = LogitsReader::new(name, tax, temps);
    let mut buf = vec![0u8; CHUNK];
    loop {
        let n = file
            .read(&mut buf)
            .map_err(|e| Failure::Input(vec![format!("{name}: cannot read: {e}")]))?;
        if n == 0 {
            break;
        }
        if let Err(e) = reader.feed(tax, &buf[..n]) {
            return Ok(Err(e));
        }
    }
    Ok(reader.finish(tax))
}

/// Settings from the profile (if any), overridden by explicit flags.
fn settings(tax: &Taxonomy, args: &SettingArgs) -> Result<(Settings, Temperatures), Failure> {
    let (mut settings, mut temps) = match &args.profile {
        Some(path) => {
            let profile = Profile::from_json(&read(path)?, &display(path), tax)?;
            let s = profile
                .settings(tax)
                .map_err(|k| Failure::Input(vec![format!("{}: {k}", display(path))]))?;
            (s, profile.temperatures())
        }
        None => (Settings::default(), Temperatures::default()),
    };
    let mut problems = Vec::new();
    if let Some(rule) = &args.rule {
        match Rule::parse(rule) {
            Some(r) => settings.rule = r,
            None => problems.push(format!(
                "--rule: expected cumulative or conditional, found `{rule}`"
            )),
        }
    }
    if let Some(policy) = &args.unverifiable {
        match Policy::parse(policy) {
            Some(p) => settings.policy = p,
            None => problems.push(format!(
                "--unverifiable: expected credit, penalize or exclude, found `{policy}`"
            )),
        }
    }
    let nodes = settings.thresholds.nodes.clone();
    let mut thresholds = Thresholds {
        nodes,
        ..settings.thresholds.clone()
    };
    if let Some(text) = &args.thresholds {
        match numbers("--thresholds", text) {
            Ok(v) => thresholds.depths = v,
            Err(m) => problems.push(m),
        }
    }
    if let Some(text) = &args.object_threshold {
        match numbers("--object-threshold", text).as_deref() {
            Ok([v]) => thresholds.object = *v,
            Ok(_) => problems.push(format!(
                "--object-threshold: expected one number, found `{text}`"
            )),
            Err(m) => problems.push(m.clone()),
        }
    }
    if let Err(k) = thresholds.validate() {
        problems.push(format!("--thresholds: {k}"));
    }
    settings.thresholds = thresholds;
    if let Some(text) = &args.temperatures {
        match numbers("--temperatures", text) {
            Ok(v) => temps = Temperatures(v),
            Err(m) => problems.push(m),
        }
    }
    if let Err(k) = temps.validate() {
        problems.push(format!("--temperatures: {k}"));
    }
    if problems.is_empty() {
        Ok((settings, temps))
    } else {
        Err(Failure::Input(problems))
    }
}
