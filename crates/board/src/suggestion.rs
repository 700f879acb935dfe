//! The page's suggestion panel without a browser: what the user asks for ([`Ask`]), the
//! engine's answer on the batch in use ([`Suggested`], from `hedgerow_core::suggest`, the very
//! function `hedgerow suggest` calls, so the page and the command line agree for the same
//! files, settings and seed), the sliders moved to it, and the words the panel shows.

use std::rc::Rc;

use hedgerow_core::suggest::{self, Choice, Held, Maximize, Report, Request};
use hedgerow_core::{evaluate, Settings};

use crate::charts::TradePoint;
use crate::state::text::show_ratio;
use crate::state::Board;

/// What the user asks the engine to suggest: the command line's defaults, but 30 % held out so
/// the panel can show the held-out check.
#[derive(Debug, Clone, PartialEq)]
pub struct Ask {
    /// `--min-precision`.
    pub target: f64,
    /// `--confidence`.
    pub confidence: f64,
    pub maximize: Maximize,
    /// `--holdout`: share of rows (or groups) kept out of tuning.
    pub holdout: f64,
    pub seed: u64,
    /// `--group-column`: a column of the labels CSV naming each row's group.
    pub group_column: Option<String>,
}

impl Default for Ask {
    fn default() -> Self {
        Ask {
            target: 0.9,
            confidence: 0.9,
            maximize: Maximize::Specificity,
            holdout: 0.3,
            seed: 0,
            group_column: None,
        }
    }
}

impl Ask {
    pub fn request(&self) -> Request {
        Request {
            target: self.target,
            confidence: self.confidence,
            maximize: self.maximize,
            holdout: self.holdout,
            seed: self.seed,
        }
    }
}

/// A suggestion made on the batch in use, and where its settings land on the whole batch.
#[derive(Debug, Clone, PartialEq)]
pub struct Suggested {
    pub ask: Ask,
    pub report: Report,
    /// The batch it was made on (`Board::generation`): a newer batch makes it stale.
    pub generation: usize,
    /// The suggested and the shared settings on the precision/specificity chart, scored on
    /// every row of the batch in use (what the chart's other points are scored on).
    pub marks: Vec<(&'static str, TradePoint)>,
}

/// The chart's labels for the suggestion's marks.
pub const SUGGESTED_MARK: &str = "suggested";
pub const SHARED_MARK: &str = "shared, same guarantee";

impl Board {
    /// Ask the engine for a suggestion on the batch in use under the current rule, policy,
    /// object threshold and per-node thresholds; on success the depth sliders move to it.
    /// A problem (no batch, a bad value, a group column the labels lack) is kept in
    /// `suggestion_error` and nothing else changes.
    pub(crate) fn suggest(&mut self, ask: Ask) {
        self.suggestion_error = None;
        match self.try_suggest(&ask) {
            Ok(s) => {
                if let Some(c) = &s.report.suggestion {
                    self.settings.thresholds.depths = c.thresholds.depths.clone();
                    self.fit_depths();
                    self.rescore();
                }
                self.suggestion = Some(Rc::new(s));
            }
            Err(message) => self.suggestion_error = Some(message),
        }
    }

    fn try_suggest(&mut self, ask: &Ask) -> Result<Suggested, String> {
        let a = self
            .active
            .clone()
            .ok_or("no batch in use: load a taxonomy, logits and labels first")?;
        let request = ask.request();
        request.validate().map_err(|e| e.to_string())?;
        self.fit_depths();
        let groups = match &ask.group_column {
            Some(column) => Some(self.groups(column)?),
            None => None,
        };
        let report = suggest::suggest(
            &a.taxonomy,
            &a.batch,
            &self.settings,
            groups.as_deref(),
            &request,
        )
        .map_err(|e| e.to_string())?;
        let mark = |c: &Option<Choice>| {
            let c = c.as_ref()?;
            let settings = Settings {
                thresholds: c.thresholds.clone(),
                ..self.settings.clone()
            };
            let m = evaluate(&a.taxonomy, &a.batch, &settings);
            Some(TradePoint {
                threshold: f64::NAN,
                specificity: m.specificity?,
                precision: m.precision?,
            })
        };
        let mut marks = Vec::new();
        if let Some(p) = mark(&report.suggestion) {
            marks.push((SUGGESTED_MARK, p));
        }
        if let Some(p) = mark(&report.shared) {
            marks.push((SHARED_MARK, p));
        }
        Ok(Suggested {
            ask: ask.clone(),
            report,
            generation: self.generation,
            marks,
        })
    }

    /// Each row's group from a column of the labels CSV of the batch in use.
    fn groups(&self, column: &str) -> Result<Vec<u32>, String> {
        let labels =
            match (&self.labels, self.staging_differs()) {
                (Some(l), false) => l,
                _ => return Err(
                    "a group column needs the labels CSV of the batch in use: the staged files \
                     are not that batch"
                        .into(),
                ),
            };
        let name = self
            .active
            .as_ref()
            .and_then(|a| a.names.get(&crate::state::Slot::Labels).cloned())
            .unwrap_or_else(|| "labels".into());
        suggest::groups::parse(&labels.value, &name, column).map_err(|e| {
            e.iter()
                .map(|e| e.to_string())
                .collect::<Vec<_>>()
                .join("; ")
        })
    }

    /// The suggestion, while the batch it was made on is in use.
    pub fn current_suggestion(&self) -> Option<&Rc<Suggested>> {
        self.suggestion
            .as_ref()
            .filter(|s| s.generation == self.generation && self.active.is_some())
    }

    /// The columns of the labels CSV in use other than `label`: the candidates for a group
    /// column (empty for a `.npy` labels file).
    pub fn label_columns(&self) -> Vec<String> {
        let Some(l) = &self.labels else {
            return Vec::new();
        };
        if l.value.starts_with(b"\x93NUMPY") {
            return Vec::new();
        }
        let bytes = l.value.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(&l.value);
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(bytes);
        reader.headers().map_or_else(
            |_| Vec::new(),
            |h| {
                h.iter()
                    .map(|c| c.trim().to_string())
                    .filter(|c| !c.is_empty() && !c.eq_ignore_ascii_case("label"))
                    .collect()
            },
        )
    }

    /// Whether the sliders still hold the suggestion (so a saved profile records how it was
    /// made).
    pub fn sliders_hold_suggestion(&self) -> bool {
        self.current_suggestion()
            .and_then(|s| s.report.suggestion.as_ref())
            .is_some_and(|c| {
                c.thresholds.depths == self.settings.thresholds.depths
                    && c.thresholds.object == self.settings.thresholds.object
                    && c.thresholds.nodes == self.settings.thresholds.nodes
            })
    }
}

/// The panel's sentence on what is guaranteed, or why nothing is.
pub fn guarantee_line(s: &Suggested) -> String {
    let r = &s.report.record;
    match &s.report.suggestion {
        Some(_) => format!(
            "With probability at least {} over the draw of the tuning rows, precision on new \
             rows from the same distribution is at least {} (assuming rows{} are exchangeable). \
             Certified on {} calibration rows; its lower bound there is {}.",
            percent(r.confidence),
            r.target,
            if r.groups.is_some() {
                " grouped by the group column"
            } else {
                ""
            },
            r.rows.calibration,
            show_ratio(r.bound)
        ),
        None => format!(
            "Precision {} cannot be guaranteed with confidence {} on this batch: the highest \
             precision that can be is {:.4}. The sliders were not moved.",
            r.target,
            percent(r.confidence),
            s.report.guaranteeable
        ),
    }
}

/// How the suggestion was made, in one line.
pub fn method_line(s: &Suggested) -> String {
    let r = &s.report.record;
    let groups = r.groups.map_or(String::new(), |g| {
        format!(
            " ({} / {} / {} groups)",
            g.optimisation, g.calibration, g.holdout
        )
    });
    format!(
        "Pareto Testing path of {} settings on {} optimisation rows, Learn-then-Test \
         fixed-sequence test with Clopper–Pearson p-values on {} calibration rows ({} tested), \
         {} rows held out{groups}; seed {}.",
        r.path_length, r.rows.optimisation, r.rows.calibration, r.tested, r.rows.holdout, r.seed
    )
}

fn percent(v: f64) -> String {
    format!("{} %", (v * 1000.0).round() / 10.0)
}

/// One row of the panel's comparison: the suggestion, (a) the shared threshold with the same
/// guarantee, (b) the in-sample optimum without one.
#[derive(Debug, Clone, PartialEq)]
pub struct ComparisonRow {
    pub name: &'static str,
    /// Per-depth thresholds, or "none certified".
    pub thresholds: String,
    pub calibration: String,
    pub bound: String,
    pub tuning: String,
    pub held_precision: String,
    pub held_wilson: String,
    pub held_clopper_pearson: String,
    pub held_specificity: String,
}

/// The comparison table's rows.
pub fn comparison(s: &Suggested) -> Vec<ComparisonRow> {
    let r = &s.report;
    [
        ("suggestion", &r.suggestion),
        ("(a) one shared threshold", &r.shared),
        ("(b) in-sample optimum, no guarantee", &r.in_sample),
    ]
    .into_iter()
    .map(|(name, c)| row(name, c.as_ref()))
    .collect()
}

fn interval(i: Option<hedgerow_core::stats::Interval>) -> String {
    i.map_or_else(|| "n/a".into(), |i| format!("{:.4}–{:.4}", i.low, i.high))
}

fn row(name: &'static str, c: Option<&Choice>) -> ComparisonRow {
    let dash = || "–".to_string();
    let Some(c) = c else {
        return ComparisonRow {
            name,
            thresholds: "none certified".into(),
            calibration: dash(),
            bound: dash(),
            tuning: dash(),
            held_precision: dash(),
            held_wilson: dash(),
            held_clopper_pearson: dash(),
            held_specificity: dash(),
        };
    };
    let held = |f: fn(&Held) -> String| c.holdout.as_ref().map_or_else(dash, f);
    ComparisonRow {
        name,
        thresholds: c
            .thresholds
            .depths
            .iter()
            .map(|t| format!("{t:.4}"))
            .collect::<Vec<_>>()
            .join(", "),
        calibration: format!(
            "{} ({}/{})",
            show_ratio(c.calibration.precision),
            c.calibration.k,
            c.calibration.n
        ),
        bound: show_ratio(c.bound),
        tuning: show_ratio(c.tuning.precision),
        held_precision: held(|h| format!("{} ({}/{})", show_ratio(h.precision), h.k, h.n)),
        held_wilson: held(|h| interval(h.wilson)),
        held_clopper_pearson: held(|h| interval(h.clopper_pearson)),
        held_specificity: held(|h| show_ratio(h.specificity)),
    }
}

/// The panel's fields as typed, before they make an [`Ask`].
#[derive(Debug, Clone, PartialEq, Default)]
pub struct AskText {
    pub target: String,
    pub confidence: String,
    pub holdout: String,
    pub seed: String,
    pub maximize: String,
    /// Empty: rows one by one.
    pub group_column: String,
}

impl From<&Ask> for AskText {
    fn from(a: &Ask) -> Self {
        AskText {
            target: a.target.to_string(),
            confidence: a.confidence.to_string(),
            holdout: a.holdout.to_string(),
            seed: a.seed.to_string(),
            maximize: match a.maximize {
                Maximize::Specificity => "specificity".into(),
                Maximize::Reward => "reward".into(),
            },
            group_column: a.group_column.clone().unwrap_or_default(),
        }
    }
}

impl AskText {
    /// The ask, or one message per field that does not read (named as the command line's
    /// flag beside the page's label, with what was expected and found).
    pub fn parse(&self) -> Result<Ask, Vec<String>> {
        let mut problems = Vec::new();
        let mut number =
            |label: &str, flag: &str, text: &str, ok: fn(f64) -> bool, want: &str| match text
                .trim()
                .parse::<f64>()
            {
                Ok(v) if ok(v) => v,
                _ => {
                    problems.push(format!(
                        "{label} ({flag}): expected {want}, found `{}`",
                        text.trim()
                    ));
                    f64::NAN
                }
            };
        let open = |v: f64| v > 0.0 && v < 1.0;
        let target = number(
            "target precision",
            "--min-precision",
            &self.target,
            open,
            "a number strictly between 0 and 1",
        );
        let confidence = number(
            "confidence",
            "--confidence",
            &self.confidence,
            open,
            "a number strictly between 0 and 1",
        );
        let holdout = number(
            "held out",
            "--holdout",
            &self.holdout,
            |v| (0.0..1.0).contains(&v),
            "a share from 0 up to (not including) 1",
        );
        let seed = match self.seed.trim().parse::<u64>() {
            Ok(s) => s,
            Err(_) => {
                problems.push(format!(
                    "seed (--seed): expected a whole number from 0 to {}, found `{}`",
                    u64::MAX,
                    self.seed.trim()
                ));
                0
            }
        };
        let maximize = Maximize::parse(&self.maximize).unwrap_or_else(|| {
            problems.push(format!(
                "maximize (--maximize): expected specificity or reward, found `{}`",
                self.maximize.trim()
            ));
            Maximize::Specificity
        });
        let group = self.group_column.trim();
        if problems.is_empty() {
            Ok(Ask {
                target,
                confidence,
                maximize,
                holdout,
                seed,
                group_column: (!group.is_empty()).then(|| group.to_string()),
            })
        } else {
            Err(problems)
        }
    }
}
