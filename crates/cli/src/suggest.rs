//! `hedgerow suggest`: per-depth thresholds for a precision target with a finite-sample
//! guarantee (the core's `suggest`), written as an ordinary profile, with the baselines and the
//! held-out check printed beside it.

use std::fmt::Write as _;
use std::path::PathBuf;

use hedgerow_core::suggest::{Choice, Held, Maximize, Report, Request};
use hedgerow_core::{evaluate, suggest, Profile, Settings};

use crate::load::{Failure, Loaded};
use crate::report::show;
use crate::{Input, SettingArgs};

/// Exit code when the target cannot be guaranteed on this batch.
pub const UNMET: u8 = 3;

pub struct Args<'a> {
    pub input: &'a Input,
    pub settings: &'a SettingArgs,
    pub min_precision: f64,
    pub confidence: f64,
    pub maximize: &'a str,
    pub holdout: f64,
    pub group_column: Option<&'a str>,
    pub seed: u64,
    pub out: &'a PathBuf,
    pub json: bool,
}

pub fn run(a: &Args<'_>) -> Result<(), Failure> {
    let maximize = Maximize::parse(a.maximize).ok_or_else(|| {
        Failure::Input(vec![format!(
            "--maximize: expected specificity or reward, found `{}`",
            a.maximize
        )])
    })?;
    let request = Request {
        target: a.min_precision,
        confidence: a.confidence,
        maximize,
        holdout: a.holdout,
        seed: a.seed,
    };
    request.validate().map_err(|e| {
        let flag = match &e {
            hedgerow_core::ErrorKind::Invalid { what, .. } if what == "confidence" => {
                "--confidence"
            }
            hedgerow_core::ErrorKind::Invalid { what, .. } if what == "hold-out share" => {
                "--holdout"
            }
            _ => "--min-precision",
        };
        Failure::Input(vec![format!("{flag}: {e}")])
    })?;
    let (loaded, groups) = Loaded::load_grouped(a.input, a.settings, a.group_column)?;
    let report = suggest(
        &loaded.taxonomy,
        &loaded.batch,
        &loaded.settings,
        groups.as_deref(),
        &request,
    )
    .map_err(|e| Failure::Input(vec![e.to_string()]))?;
    let text = if a.json {
        serde_json::to_string_pretty(&report).map_err(|e| Failure::Other(e.into()))? + "\n"
    } else {
        table(&loaded, &report)
    };
    crate::write_out(None, text.as_bytes())?;
    let Some(chosen) = &report.suggestion else {
        return Err(Failure::Unmet(format!(
            "precision {} cannot be guaranteed with confidence {} on this batch: the highest \
             precision that can be is {:.4} (no profile written)",
            request.target, request.confidence, report.guaranteeable
        )));
    };
    let settings = Settings {
        thresholds: chosen.thresholds.clone(),
        ..loaded.settings.clone()
    };
    let metrics = evaluate(&loaded.taxonomy, &loaded.batch, &settings);
    let mut profile = Profile::new(
        &loaded.taxonomy,
        &settings,
        loaded.batch.temperatures(),
        Some((&loaded.batch, &metrics)),
    );
    profile.made_by = Some(report.record.clone());
    crate::write_out(Some(a.out), (profile.to_json() + "\n").as_bytes())
}

fn interval(i: Option<hedgerow_core::stats::Interval>) -> String {
    i.map_or_else(|| "n/a".into(), |i| format!("{:.4}–{:.4}", i.low, i.high))
}

fn line(out: &mut String, name: &str, c: Option<&Choice>) {
    let Some(c) = c else {
        let _ = writeln!(out, "{name:<15}none certified");
        return;
    };
    let t: Vec<String> = c
        .thresholds
        .depths
        .iter()
        .map(|t| format!("{t:.4}"))
        .collect();
    let _ = writeln!(out, "{name:<15}thresholds {}", t.join(", "));
    let _ = writeln!(
        out,
        "{:<15}calibration {}/{} = {}, lower bound {}; all tuning rows {}",
        "",
        c.calibration.k,
        c.calibration.n,
        show(c.calibration.precision),
        show(c.bound),
        show(c.tuning.precision)
    );
    if let Some(h) = &c.holdout {
        held_line(out, h);
    }
}

fn held_line(out: &mut String, h: &Held) {
    let _ = writeln!(
        out,
        "{:<15}held out: precision {} ({}/{}; Wilson 95 % {}, Clopper–Pearson 95 % {}), specificity {}, reward {}",
        "",
        show(h.precision),
        h.k,
        h.n,
        interval(h.wilson),
        interval(h.clopper_pearson),
        show(h.specificity),
        show(h.reward)
    );
}

pub fn table(loaded: &Loaded, r: &Report) -> String {
    let rec = &r.record;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "target precision ≥ {} with confidence {}, maximize {}, rule {}, unverifiable {}",
        rec.target,
        rec.confidence,
        match rec.maximize {
            Maximize::Specificity => "specificity",
            Maximize::Reward => "reward",
        },
        loaded.settings.rule.as_str(),
        loaded.settings.policy.as_str()
    );
    let groups = rec.groups.map_or(String::new(), |g| {
        format!(
            " (groups {} / {} / {})",
            g.optimisation, g.calibration, g.holdout
        )
    });
    let _ = writeln!(
        out,
        "rows: optimisation {}, calibration {}, held out {}{groups}; seed {}",
        rec.rows.optimisation, rec.rows.calibration, rec.rows.holdout, rec.seed
    );
    let _ = writeln!(
        out,
        "path: {} settings, {} tested; highest precision this batch can guarantee {:.4}",
        rec.path_length, rec.tested, r.guaranteeable
    );
    let _ = writeln!(out);
    line(&mut out, "suggestion", r.suggestion.as_ref());
    line(&mut out, "(a) shared", r.shared.as_ref());
    line(&mut out, "(b) in-sample", r.in_sample.as_ref());
    out
}
