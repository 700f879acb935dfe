//! Reading the input files and settings into a batch, collecting every problem with its place.

use std::fs::File;
use std::io::Read;
use std::path::Path;

use hedgerow_core::{
    Batch, Errors, Labels, LogitsReader, Objectness, Policy, Profile, Rule, Settings, Taxonomy,
    Temperatures, Thresholds,
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

        let mut problems = Vec::new();
        let labels = match Labels::parse(&read(&input.labels)?, &display(&input.labels), &taxonomy)
        {
            Ok(l) => Some(l),
            Err(e) => {
                problems.extend(e.iter().map(|e| e.to_string()));
                None
            }
        };
        let objectness = match &input.objectness {
            None => None,
            Some(path) => match Objectness::parse(&read(path)?, &display(path)) {
                Ok(o) => Some(o),
                Err(e) => {
                    problems.extend(e.iter().map(|e| e.to_string()));
                    None
                }
            },
        };
        let logits_name = display(&input.logits);
        let ingested = match stream_logits(&input.logits, &logits_name, &taxonomy, &temperatures)? {
            Ok(i) => Some(i),
            Err(e) => {
                problems.extend(e.iter().map(|e| e.to_string()));
                None
            }
        };
        if !problems.is_empty() {
            return Err(Failure::Input(problems));
        }
        let (Some(ingested), Some(labels)) = (ingested, labels) else {
            return Err(Failure::Other(anyhow::anyhow!(
                "inputs missing after loading"
            )));
        };
        if input.objectness.is_some() && objectness.is_none() {
            return Err(Failure::Other(anyhow::anyhow!(
                "objectness missing after loading"
            )));
        }
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
