//! Reading the input files and settings into a batch, collecting every problem with its place.

use std::fs::File;
use std::io::{Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};

use hedgerow_core::intake::{self, Bundle, Kind, LogitsFeed};
use hedgerow_core::{
    npz, Batch, Errors, Labels, LogitsReader, Objectness, Policy, Profile, Rule, Settings,
    Taxonomy, Temperatures,
};

use crate::{Input, SettingArgs};

/// Why a command failed: bad input (exit 2, one message per problem) or anything else.
pub enum Failure {
    Input(Vec<String>),
    /// `suggest` could not guarantee the target (exit 3).
    Unmet(String),
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

pub(crate) fn display(path: &Path) -> String {
    path.display().to_string()
}

pub(crate) fn read(path: &Path) -> Result<Vec<u8>, Failure> {
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
        Self::load_grouped(input, args, None).map(|(loaded, _)| loaded)
    }

    /// [`load`](Self::load), and with `group_column` the group of each row read from that
    /// column of the labels CSV (dense indices in order of first appearance).
    pub fn load_grouped(
        input: &Input,
        args: &SettingArgs,
        group_column: Option<&str>,
    ) -> Result<(Self, Option<Vec<u32>>), Failure> {
        let taxonomy = taxonomy(&input.taxonomy)?;
        let Chosen {
            settings,
            temperatures,
            profile,
        } = settings(&taxonomy, args)?;
        let sources = Sources::open(input)?;
        let mut problems = Vec::new();
        if let Some(line) = objectness_wanted(&profile, &sources, &settings, None) {
            problems.push(line);
        }
        let labels = match &sources.labels {
            Some(small) => keep(
                &mut problems,
                Labels::parse(&small.bytes, &small.name, &taxonomy),
            ),
            None => return Err(Failure::Input(vec![sources.no_labels()])),
        };
        let groups = match (group_column, &sources.labels) {
            (Some(column), Some(small)) => keep(
                &mut problems,
                hedgerow_core::suggest::groups::parse(&small.bytes, &small.name, column),
            ),
            _ => None,
        };
        let objectness = sources
            .objectness
            .as_ref()
            .map(|small| keep(&mut problems, Objectness::parse(&small.bytes, &small.name)));
        let ingested = keep(
            &mut problems,
            sources
                .logits
                .stream(&taxonomy, &temperatures, |_| Ok(()))?,
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
            &sources.logits.name,
            ingested,
            temperatures,
            labels,
            objectness,
        )?;
        if let Some(g) = &groups {
            if g.len() != batch.len() {
                let name = sources
                    .labels
                    .as_ref()
                    .map_or("labels", |s| s.name.as_str());
                return Err(Failure::Input(vec![format!(
                    "{name}: {} rows with a group, but the batch has {} rows",
                    g.len(),
                    batch.len()
                )]));
            }
        }
        Ok((
            Loaded {
                taxonomy,
                batch,
                settings,
            },
            groups,
        ))
    }
}

/// A profile scored with objectness needs objectness to be applied as it was scored: without
/// it every row would predict and the object threshold would be ignored without a word.
/// `escape` names a flag that lets the command go on without it (decode's `--no-objectness`).
pub(crate) fn objectness_wanted(
    profile: &Option<(String, Profile)>,
    sources: &Sources,
    settings: &Settings,
    escape: Option<&str>,
) -> Option<String> {
    let (name, p) = profile.as_ref()?;
    if p.objectness != Some(true) || sources.objectness.is_some() {
        return None;
    }
    let mut line = format!(
        "{name}: this profile was scored with objectness (object threshold {}): expected \
         --objectness FILE (or an `objectness` array in {})",
        settings.thresholds.object, sources.logits.name
    );
    if let Some(flag) = escape {
        line.push_str(&format!(
            "; pass {flag} to decode with P(root) = 1 and no object threshold"
        ));
    }
    Some(line)
}

/// The value, or its problems noted so every input's problems are reported together.
pub(crate) fn keep<T>(problems: &mut Vec<String>, r: hedgerow_core::Result<T>) -> Option<T> {
    match r {
        Ok(v) => Some(v),
        Err(e) => {
            problems.extend(e.iter().map(|e| e.to_string()));
            None
        }
    }
}

pub(crate) fn one(e: hedgerow_core::Error) -> Failure {
    Failure::from(Errors::from(e))
}

/// A small input read whole: a labels or objectness file, or a bundle's member.
pub struct Small {
    /// How messages name it: `labels.csv` or `bundle.npz:labels`.
    pub name: String,
    pub bytes: Vec<u8>,
}

/// The files of one command, located by the intake's rules: the logits (a `.npy`, or a
/// bundle's `logits` member) to stream, and the small inputs read whole, a given file winning
/// over the bundle's member of the same kind.
pub struct Sources {
    pub logits: LogitsSource,
    pub labels: Option<Small>,
    pub objectness: Option<Small>,
    /// The bundle's arrays, when `--logits` is one (for messages).
    bundle_keys: Option<String>,
}

impl Sources {
    pub fn open(input: &Input) -> Result<Self, Failure> {
        let name = display(&input.logits);
        let cannot = |e: std::io::Error| Failure::Input(vec![format!("{name}: cannot read: {e}")]);
        let mut file = File::open(&input.logits).map_err(cannot)?;
        let len = file.metadata().map_err(cannot)?.len();
        let head = read_at(&mut file, 0, intake::HEAD_BYTES.min(len)).map_err(cannot)?;
        let mut given = Vec::new();
        let mut small = |kind: Kind, path: &Option<PathBuf>| -> Result<Option<Small>, Failure> {
            let Some(path) = path else { return Ok(None) };
            given.push(kind);
            let name = display(path);
            let bytes = read(path)?;
            intake::given_as(&name, &bytes, kind).map_err(one)?;
            Ok(Some(Small { name, bytes }))
        };
        let mut labels = small(Kind::Labels, &input.labels)?;
        let mut objectness = small(Kind::Objectness, &input.objectness)?;
        if !intake::is_bundle(&head) {
            intake::given_as(&name, &head, Kind::Logits).map_err(one)?;
            return Ok(Sources {
                logits: LogitsSource {
                    path: input.logits.clone(),
                    name,
                    range: (0, len),
                    member: None,
                },
                labels,
                objectness,
                bundle_keys: None,
            });
        }
        let (a, z) = Bundle::tail(len);
        let tail = read_at(&mut file, a, z - a).map_err(cannot)?;
        let (ds, de) = Bundle::directory(&name, &tail, len).map_err(one)?;
        let dir = read_at(&mut file, ds, de - ds).map_err(cannot)?;
        let bundle = Bundle::open(&name, len, &dir).map_err(one)?;
        let data_range = |file: &mut File, m: &npz::Member| -> Result<(u64, u64), Failure> {
            let local = read_at(file, m.local_header, npz::LOCAL_HEADER_BYTES).map_err(cannot)?;
            bundle.data_range(m, &local).map_err(one)
        };
        let logits = bundle
            .member("logits")
            .cloned()
            .ok_or_else(|| Failure::Other(anyhow::anyhow!("bundle opened without logits")))?;
        let range = data_range(&mut file, &logits)?;
        let wanted = bundle.members_wanted(&given);
        // The small members are capped by the logits' row count, read from the start of the
        // `logits` member (without it, they are not read: the logits' read says why).
        let rows = match wanted.is_empty() {
            true => None,
            false => {
                let peek = (range.1 - range.0).min(npz::PEEK_BYTES);
                let prefix = read_at(&mut file, range.0, peek).map_err(cannot)?;
                bundle.logits_rows(&logits, &prefix).ok()
            }
        };
        for (kind, m) in wanted {
            let Some(rows) = rows else { break };
            let (s, e) = data_range(&mut file, &m)?;
            let data = read_at(&mut file, s, e - s).map_err(cannot)?;
            let member = Small {
                name: bundle.member_name(m.key()),
                bytes: bundle.inflate(&m, &data, rows).map_err(one)?,
            };
            match kind {
                Kind::Labels => labels = Some(member),
                _ => objectness = Some(member),
            }
        }
        Ok(Sources {
            bundle_keys: Some(bundle.keys_text()),
            logits: LogitsSource {
                path: input.logits.clone(),
                name: name.clone(),
                range,
                member: Some((bundle, logits)),
            },
            labels,
            objectness,
        })
    }

    /// The message for a command that needs labels and has none.
    pub fn no_labels(&self) -> String {
        match &self.bundle_keys {
            Some(keys) => format!(
                "--labels: expected a labels file, or a `labels` array in {} (it holds {keys})",
                self.logits.name
            ),
            None => {
                "--labels: expected a labels file (or an .npz bundle holding `labels` as --logits)"
                    .into()
            }
        }
    }
}

/// Where the logits' bytes lie: the whole `.npy`, or a bundle member's compressed data.
pub struct LogitsSource {
    path: PathBuf,
    /// The file's name as given.
    pub name: String,
    range: (u64, u64),
    member: Option<(Bundle, npz::Member)>,
}

impl LogitsSource {
    /// Stream the bytes chunk by chunk through the intake's [`LogitsFeed`]; `after_chunk` runs
    /// after each chunk (to drain the rows decoded so far). The outer error is I/O, the inner
    /// the file's problems.
    pub fn stream(
        &self,
        tax: &Taxonomy,
        temps: &Temperatures,
        mut after_chunk: impl FnMut(&mut LogitsReader) -> Result<(), Failure>,
    ) -> Result<hedgerow_core::Result<hedgerow_core::Ingested>, Failure> {
        let name = &self.name;
        let cannot = |e: std::io::Error| Failure::Input(vec![format!("{name}: cannot read: {e}")]);
        let mut feed = match &self.member {
            None => LogitsFeed::npy(name, tax, temps),
            Some((bundle, m)) => match LogitsFeed::member(bundle, m, tax, temps) {
                Ok(f) => f,
                Err(e) => return Ok(Err(e)),
            },
        };
        let mut file = File::open(&self.path).map_err(cannot)?;
        file.seek(SeekFrom::Start(self.range.0)).map_err(cannot)?;
        let mut left = self.range.1 - self.range.0;
        let mut buf = vec![0u8; CHUNK];
        while left > 0 {
            let want = (left as usize).min(CHUNK);
            let n = file.read(&mut buf[..want]).map_err(cannot)?;
            if n == 0 {
                break;
            }
            left -= n as u64;
            if let Err(e) = feed.feed(tax, &buf[..n]) {
                return Ok(Err(e));
            }
            after_chunk(feed.reader_mut())?;
        }
        Ok(feed.finish(tax))
    }
}

fn read_at(file: &mut File, offset: u64, len: u64) -> std::io::Result<Vec<u8>> {
    file.seek(SeekFrom::Start(offset))?;
    let mut out = Vec::new();
    file.take(len).read_to_end(&mut out)?;
    Ok(out)
}

/// One `--node-threshold ID=V`: the node's column and its threshold, or the message.
fn node_threshold(tax: &Taxonomy, text: &str) -> Result<(u32, f64), String> {
    let flag = format!("--node-threshold {text}");
    // Ids may hold `=`; the value cannot, so the last one separates them.
    let Some((id, value)) = text.rsplit_once('=') else {
        return Err(format!(
            "{flag}: expected ID=V, a node id and its threshold in [0, 1]"
        ));
    };
    let id = id.trim();
    let v = tax
        .lookup(id)
        .ok_or_else(|| format!("{flag}: {id} is not an id of the taxonomy"))?;
    let value = value.trim();
    let t = value
        .parse::<f64>()
        .ok()
        .filter(|t| t.is_finite())
        .ok_or_else(|| format!("{flag}: expected a number in [0, 1] after `=`, found `{value}`"))?;
    if !(0.0..=1.0).contains(&t) {
        return Err(format!(
            "{flag}: threshold for node {id} {value}: expected a number in [0, 1]"
        ));
    }
    Ok((v, t))
}

/// The settings a command runs with, and the profile they started from (its name and
/// contents), if one was given.
pub(crate) struct Chosen {
    pub settings: Settings,
    pub temperatures: Temperatures,
    pub profile: Option<(String, Profile)>,
}

/// The taxonomy file, refused when it is another kind of file.
pub(crate) fn taxonomy(path: &Path) -> Result<Taxonomy, Failure> {
    let name = display(path);
    let bytes = read(path)?;
    intake::given_as(&name, &bytes, Kind::Taxonomy).map_err(one)?;
    Ok(Taxonomy::parse(&bytes, &name)?)
}

/// Settings from the profile (if any), overridden by explicit flags.
pub(crate) fn settings(tax: &Taxonomy, args: &SettingArgs) -> Result<Chosen, Failure> {
    let (mut settings, mut temps, profile) = match &args.profile {
        Some(path) => {
            let profile = Profile::from_json(&read(path)?, &display(path), tax)?;
            let s = profile
                .settings(tax)
                .map_err(|k| Failure::Input(vec![format!("{}: {k}", display(path))]))?;
            let temps = profile.temperatures();
            (s, temps, Some((display(path), profile)))
        }
        None => (Settings::default(), Temperatures::default(), None),
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
    let mut thresholds = settings.thresholds.clone();
    for text in &args.node_threshold {
        match node_threshold(tax, text) {
            Ok((v, t)) => {
                thresholds.nodes.retain(|&(u, _)| u != v);
                thresholds.nodes.push((v, t));
            }
            Err(m) => problems.push(m),
        }
    }
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
        Ok(Chosen {
            settings,
            temperatures: temps,
            profile,
        })
    } else {
        Err(Failure::Input(problems))
    }
}
