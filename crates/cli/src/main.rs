//! `hedgerow`: the command line over hedgerow-core: evaluate, decode, curve, nodes, suggest and profile.

mod bench;
mod decode;
mod load;
mod nodes;
mod report;
mod suggest;

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, Parser, Subcommand};
use hedgerow_core::{evaluate, exact_curve_for, Profile};

use crate::load::{Failure, Loaded};

#[derive(Parser)]
#[command(
    name = "hedgerow",
    version,
    about = "Decode taxonomy predictions under per-depth stopping thresholds and score them."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Score a batch: counts, precision, specificity (information gain), reward, stop shares,
    /// hierarchical P/R/F1.
    ///
    /// Specificity here is the mean normalised information gain of the predicted node (0 at the
    /// root, 1 at a leaf), not the true-negative rate; reward counts it for correct predictions
    /// only.
    Evaluate {
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        settings: SettingArgs,
        /// Print one JSON object instead of a table.
        #[arg(long)]
        json: bool,
    },
    /// Decode every row as it is read (production: labels optional): prediction, depth,
    /// probability and full path; label and outcome when labels are given.
    Decode {
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        settings: SettingArgs,
        /// Decode without objectness (P(root) = 1, no object threshold) even though the
        /// profile was scored with it; an `objectness` array in the bundle is ignored.
        #[arg(long, conflicts_with = "objectness")]
        no_objectness: bool,
        /// Output format: csv (a header, then one row per input row) or jsonl (one JSON
        /// object per line).
        #[arg(long, value_enum, default_value_t = decode::Format::Csv)]
        format: decode::Format,
        /// Output file (default: standard output).
        #[arg(long)]
        out: Option<PathBuf>,
    },
    /// Write the exact precision/specificity (information gain) curve for one threshold shared
    /// by all depths (CSV).
    ///
    /// Every distinct operating point as the shared threshold goes from 1 to 0, the object
    /// threshold, rule and policy held (--thresholds is what is swept, so it is not used). Nodes
    /// given --node-threshold (or a profile's node thresholds) keep their own threshold at every
    /// point: each row equals `evaluate --thresholds T` with the same overrides, T the row's
    /// threshold, and holds for every shared threshold down to the next row's.
    Curve {
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        settings: SettingArgs,
        #[arg(long)]
        out: Option<PathBuf>,
    },
    /// Per taxonomy node: predictions stopping there and their outcomes, precision with a
    /// Wilson 95 % interval, labelled rows at or below it, how many of those stopped above it,
    /// and the wrong answers most often given for rows labelled under it.
    ///
    /// One record per node in taxonomy file order, the root ("(root)", empty id in CSV and
    /// JSON) first. Default: a readable table on standard output.
    Nodes {
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        settings: SettingArgs,
        /// Print JSON instead of the table (to --out if given).
        #[arg(long)]
        json: bool,
        /// Write CSV (or JSON with --json) to this file instead of the table.
        #[arg(long)]
        out: Option<PathBuf>,
    },
    /// Time the engine on a batch: ingestion, re-evaluation after a threshold change, the exact
    /// curve; prints one JSON object (used by `cargo xtask bench`).
    Bench {
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        settings: SettingArgs,
        /// Threshold changes to time (the median is reported).
        #[arg(long, default_value_t = 50)]
        repeat: usize,
    },
    /// Suggest per-depth thresholds whose precision on new rows is at least --min-precision
    /// with probability --confidence (Pareto Testing, Learn-then-Test), and write them as a
    /// profile.
    ///
    /// The rule, policy, object threshold and --node-threshold overrides (or a profile's) are
    /// kept; the depth thresholds are chosen (--thresholds is not used). Prints the suggestion
    /// beside (a) one shared threshold certified the same way and (b) the in-sample optimum
    /// without a guarantee, with held-out results. Exit code 3 when the target cannot be
    /// guaranteed (no profile is written); 2 for bad input.
    Suggest {
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        settings: SettingArgs,
        /// The precision to guarantee, in (0, 1).
        #[arg(long, allow_hyphen_values = true)]
        min_precision: f64,
        /// Probability over the draw of the tuning rows that the guarantee holds, in (0, 1).
        #[arg(long, default_value_t = 0.9, allow_hyphen_values = true)]
        confidence: f64,
        /// What to make as large as the target allows: specificity or reward.
        #[arg(long, default_value = "specificity")]
        maximize: String,
        /// Share of rows (or groups) kept out of tuning and scored at the end, in [0, 1).
        #[arg(long, default_value_t = 0.0, allow_hyphen_values = true)]
        holdout: f64,
        /// Column of the labels CSV naming each row's group (an image, say): groups are kept
        /// whole when rows are split.
        #[arg(long)]
        group_column: Option<String>,
        /// Seed of the split.
        #[arg(long, default_value_t = 0)]
        seed: u64,
        /// Where to write the profile.
        #[arg(long)]
        out: PathBuf,
        /// Print JSON instead of the table.
        #[arg(long)]
        json: bool,
    },
    /// Write a threshold profile from the given settings, scored on the batch.
    Profile {
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        settings: SettingArgs,
        /// Output file (default: standard output).
        #[arg(long)]
        out: Option<PathBuf>,
    },
}

#[derive(Args, Clone)]
pub struct Input {
    /// Taxonomy: CSV with `id,parent[,name]` or a JSON array of {"id","parent","name"}.
    #[arg(long)]
    pub taxonomy: PathBuf,
    /// Logits: .npy of shape (rows, nodes), float16/32/64; or an .npz bundle (np.savez or
    /// np.savez_compressed) holding `logits` and optionally `labels` and `objectness`.
    #[arg(long)]
    pub logits: PathBuf,
    /// Labels: CSV with a `label` column (node id, empty = background) or .npy of column
    /// indices (-1 = background) or of id strings. Optional when the bundle holds `labels`,
    /// and for `decode`.
    #[arg(long)]
    pub labels: Option<PathBuf>,
    /// Objectness: .npy of shape (rows,), probabilities in [0, 1] (or `objectness` in the bundle).
    #[arg(long)]
    pub objectness: Option<PathBuf>,
}

#[derive(Args, Clone, Default)]
pub struct SettingArgs {
    /// Stopping rule: cumulative (P(node) ≥ t) or conditional (p(node | parent) ≥ t). Default cumulative.
    #[arg(long)]
    pub rule: Option<String>,
    /// Per-depth thresholds t_1,t_2,… (a shorter list repeats its last value). Default 0.5.
    #[arg(long, allow_hyphen_values = true)]
    pub thresholds: Option<String>,
    /// Object threshold t_0 on P(root) (only with --objectness). Default 0.5.
    #[arg(long, allow_hyphen_values = true)]
    pub object_threshold: Option<String>,
    /// Per-depth softmax temperatures T_1,T_2,… Default 1.
    #[arg(long, allow_hyphen_values = true)]
    pub temperatures: Option<String>,
    /// How precision counts predictions below a coarse label: credit, penalize or exclude. Default credit.
    #[arg(long)]
    pub unverifiable: Option<String>,
    /// Threshold for stepping into node ID, replacing its depth's (under either rule); repeat
    /// for more nodes. Adds to a profile's overrides, replacing its value for the same node.
    #[arg(
        long = "node-threshold",
        value_name = "ID=V",
        allow_hyphen_values = true
    )]
    pub node_threshold: Vec<String>,
    /// Start from a saved threshold profile; the flags above override its values.
    #[arg(long)]
    pub profile: Option<PathBuf>,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Input(messages)) => {
            for m in messages {
                eprintln!("error: {m}");
            }
            ExitCode::from(2)
        }
        Err(Failure::Unmet(message)) => {
            eprintln!("error: {message}");
            ExitCode::from(suggest::UNMET)
        }
        Err(Failure::Other(e)) => {
            eprintln!("error: {e:#}");
            ExitCode::from(1)
        }
    }
}

fn run(cli: Cli) -> Result<(), Failure> {
    match cli.command {
        Command::Evaluate {
            input,
            settings,
            json,
        } => {
            let loaded = Loaded::load(&input, &settings)?;
            let metrics = evaluate(&loaded.taxonomy, &loaded.batch, &loaded.settings);
            let text = if json {
                serde_json::to_string_pretty(&metrics).map_err(|e| Failure::Other(e.into()))? + "\n"
            } else {
                report::table(&loaded, &metrics)
            };
            write_out(None, text.as_bytes())
        }
        Command::Decode {
            input,
            settings,
            no_objectness,
            format,
            out,
        } => decode::run(&decode::Request {
            input: &input,
            settings: &settings,
            no_objectness,
            out: out.as_ref(),
            format,
        }),
        Command::Curve {
            input,
            settings,
            out,
        } => {
            let loaded = Loaded::load(&input, &settings)?;
            let points = exact_curve_for(&loaded.taxonomy, &loaded.batch, &loaded.settings);
            let bytes = report::curve_csv(&points).map_err(Failure::Other)?;
            write_out(out.as_ref(), &bytes)
        }
        Command::Nodes {
            input,
            settings,
            json,
            out,
        } => {
            let loaded = Loaded::load(&input, &settings)?;
            let bytes = match (json, &out) {
                (true, _) => nodes::json(&loaded).map_err(Failure::Other)?.into_bytes(),
                (false, Some(_)) => nodes::csv(&loaded).map_err(Failure::Other)?,
                (false, None) => nodes::table(&loaded).into_bytes(),
            };
            write_out(out.as_ref(), &bytes)
        }
        Command::Bench {
            input,
            settings,
            repeat,
        } => {
            let text = bench::run(&input, &settings, repeat)?;
            write_out(None, text.as_bytes())
        }
        Command::Suggest {
            input,
            settings,
            min_precision,
            confidence,
            maximize,
            holdout,
            group_column,
            seed,
            out,
            json,
        } => suggest::run(&suggest::Args {
            input: &input,
            settings: &settings,
            min_precision,
            confidence,
            maximize: &maximize,
            holdout,
            group_column: group_column.as_deref(),
            seed,
            out: &out,
            json,
        }),
        Command::Profile {
            input,
            settings,
            out,
        } => {
            let loaded = Loaded::load(&input, &settings)?;
            let metrics = evaluate(&loaded.taxonomy, &loaded.batch, &loaded.settings);
            let profile = Profile::new(
                &loaded.taxonomy,
                &loaded.settings,
                loaded.batch.temperatures(),
                Some((&loaded.batch, &metrics)),
            );
            write_out(out.as_ref(), (profile.to_json() + "\n").as_bytes())
        }
    }
}

fn write_out(path: Option<&PathBuf>, bytes: &[u8]) -> Result<(), Failure> {
    let result = match path {
        Some(p) => std::fs::write(p, bytes)
            .map_err(|e| anyhow::anyhow!("cannot write {}: {e}", p.display())),
        None => std::io::stdout()
            .lock()
            .write_all(bytes)
            .map_err(|e| anyhow::anyhow!("cannot write to standard output: {e}")),
    };
    result.map_err(Failure::Other)
}
