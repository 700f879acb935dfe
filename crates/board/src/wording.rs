//! What the page says in words beyond a number: the stop share beside a threshold, why a typed
//! value was not applied, the all-depths line when the depths differ, and the saved profile's
//! file name. Pure functions, so the page and the tests use the very same text.

use crate::state::{Board, Slot};

/// How a threshold is written in a field: the shortest text that reads back exactly.
pub fn show_threshold(v: f64) -> String {
    v.to_string()
}

/// The figure beside a depth's threshold: the share of predictions whose descent stops at that
/// depth ("12.3 % stop here"), when there are predictions.
pub fn stop_here(share: Option<f64>) -> Option<String> {
    share.map(|s| format!("{} stop here", percent(s)))
}

/// The figure beside the object threshold: the share of predictions that stop at the root.
pub fn stop_at_root(share: Option<f64>) -> Option<String> {
    share.map(|s| format!("{} stop at root", percent(s)))
}

/// What the stop-share figure of depth `depth` (0: the root) means, for its tooltip.
pub fn stop_help(depth: usize) -> String {
    if depth == 0 {
        "Share of predictions that stop at the root: an object of unknown type (the object \
         threshold was reached, no depth-1 node was)."
            .into()
    } else {
        format!(
            "Share of predictions whose descent stops at depth {depth}: their answer is a \
             depth-{depth} node. A higher threshold here stops more of them above depth {depth}."
        )
    }
}

fn percent(share: f64) -> String {
    format!("{:.1} %", share * 100.0)
}

/// What a typed threshold or temperature field holds.
#[derive(Debug, Clone, PartialEq)]
pub enum Typed {
    /// A value to apply.
    Value(f64),
    /// The field is empty: nothing to apply, nothing to say.
    Empty,
    /// The start of a number (`-`, `.`, `1e`) while typing: no message yet.
    Unfinished,
    /// Not applied, with the message to show beside the field.
    Refused(String),
}

/// Read a typed threshold, which must be a number in [0, 1]. `committed`: the entry is final
/// (the field's `change`), so an unfinished number is refused too.
pub fn read_threshold(raw: &str, committed: bool) -> Typed {
    match read_number(raw, committed) {
        Ok(v) if (0.0..=1.0).contains(&v) => Typed::Value(v),
        Ok(_) => Typed::Refused(format!(
            "{} is outside [0, 1]: not applied",
            shorten(raw.trim())
        )),
        Err(t) => t,
    }
}

/// Read a typed softmax temperature, which must be a positive finite number.
pub fn read_temperature(raw: &str, committed: bool) -> Typed {
    match read_number(raw, committed) {
        Ok(v) if v.is_finite() && v > 0.0 => Typed::Value(v),
        Ok(v) if !v.is_finite() => Typed::Refused(format!(
            "`{}` is not a finite number: not applied",
            shorten(raw.trim())
        )),
        Ok(_) => Typed::Refused(format!(
            "{} is not a positive number: not applied",
            shorten(raw.trim())
        )),
        Err(t) => t,
    }
}

/// A number as people type it (`0.5`, `.5`, `5e-1`, and `0,5` with a decimal comma), or what
/// to say instead. NaN is not a number; infinities are numbers (out of every range here).
fn read_number(raw: &str, committed: bool) -> Result<f64, Typed> {
    let text = raw.trim();
    if text.is_empty() {
        return Err(Typed::Empty);
    }
    let decimal_comma;
    let text = if !text.contains('.') && text.matches(',').count() == 1 {
        decimal_comma = text.replace(',', ".");
        decimal_comma.as_str()
    } else {
        text
    };
    match text.parse::<f64>() {
        Ok(v) if !v.is_nan() => Ok(v),
        _ if !committed && text.chars().all(|c| "0123456789.+-eE".contains(c)) => {
            Err(Typed::Unfinished)
        }
        _ => Err(Typed::Refused(format!(
            "`{}` is not a number: not applied",
            shorten(raw.trim())
        ))),
    }
}

/// At most 24 characters of what was typed (a pasted paragraph stays one short line).
fn shorten(text: &str) -> String {
    const MAX: usize = 24;
    if text.chars().count() <= MAX {
        text.to_string()
    } else {
        text.chars().take(MAX - 1).chain(['…']).collect()
    }
}

/// The line under the all-depths control when the depths' thresholds differ (its field is
/// empty then): their range, and what a value typed there does.
pub fn depths_differ(depths: &[f64]) -> Option<String> {
    let lo = depths.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = depths.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    (lo < hi).then(|| {
        format!(
            "depths differ ({} … {}): setting a value here sets every depth to it",
            show_threshold(lo),
            show_threshold(hi)
        )
    })
}

/// A local date and time, as the page's clock gives it (month 1–12).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LocalTime {
    pub year: i32,
    pub month: u32,
    pub day: u32,
    pub hour: u32,
    pub minute: u32,
}

/// The saved profile's file name: the taxonomy file's stem (reduced to `[A-Za-z0-9._-]`), then
/// the local time to the minute, e.g. `materials-profile-2026-12-02T0915.json`. Profiles of
/// different taxonomies and sessions then sort apart in a downloads folder.
pub fn profile_file_name(taxonomy_file: &str, at: LocalTime) -> String {
    format!(
        "{}-profile-{:04}-{:02}-{:02}T{:02}{:02}.json",
        file_stem(taxonomy_file),
        at.year,
        at.month,
        at.day,
        at.hour,
        at.minute
    )
}

/// The last path component without its extension, each run of other characters than
/// `[A-Za-z0-9._-]` made one `_`, no leading dot (not a hidden file), at most 64 characters;
/// `taxonomy` when nothing is left.
fn file_stem(name: &str) -> String {
    let base = name.rsplit(['/', '\\']).next().unwrap_or(name);
    let stem = match base.rfind('.') {
        Some(i) if i > 0 => &base[..i],
        _ => base,
    };
    let mut out = String::new();
    for c in stem.chars() {
        if c.is_ascii_alphanumeric() || "._-".contains(c) {
            out.push(c);
        } else if !out.ends_with('_') {
            out.push('_');
        }
    }
    let out: String = out
        .trim_start_matches(['.', '_'])
        .trim_end_matches('_')
        .chars()
        .take(64)
        .collect();
    if out.is_empty() {
        "taxonomy".into()
    } else {
        out
    }
}

impl Board {
    /// The file name to save the current profile under: named after the active batch's
    /// taxonomy file (the one the profile is checked against).
    pub fn profile_file_name(&self, at: LocalTime) -> String {
        let taxonomy = self
            .active
            .as_ref()
            .and_then(|a| a.names.get(&Slot::Taxonomy).cloned())
            .or_else(|| self.taxonomy.as_ref().map(|t| t.name.clone()))
            .unwrap_or_default();
        profile_file_name(&taxonomy, at)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const AT: LocalTime = LocalTime {
        year: 2026,
        month: 12,
        day: 2,
        hour: 9,
        minute: 5,
    };

    #[test]
    fn the_profile_file_is_named_after_the_taxonomy_and_the_minute() {
        assert_eq!(
            profile_file_name("materials.csv", AT),
            "materials-profile-2026-12-02T0905.json"
        );
        for (given, stem) in [
            ("taxonomy.csv", "taxonomy"),
            ("line 3 (v2).json", "line_3_v2"),
            ("dir/sub\\tree.v2.csv", "tree.v2"),
            ("Wertstoffe-äöü.csv", "Wertstoffe-"),
            (".hidden.csv", "hidden"),
            ("...", "taxonomy"),
            ("", "taxonomy"),
            ("no-extension", "no-extension"),
        ] {
            assert_eq!(
                profile_file_name(given, AT),
                format!("{stem}-profile-2026-12-02T0905.json"),
                "{given:?}"
            );
        }
        let long = "x".repeat(300) + ".csv";
        assert_eq!(profile_file_name(&long, AT).len(), 64 + 29);
        let late = LocalTime {
            year: 2027,
            month: 1,
            day: 31,
            hour: 23,
            minute: 59,
        };
        assert_eq!(
            profile_file_name("m.csv", late),
            "m-profile-2027-01-31T2359.json"
        );
    }

    #[test]
    fn file_names_hold_only_portable_characters() {
        for given in ["a b", "a/b:c", "<>|?*\"'", "tab\there", "ünï.cöde"] {
            let name = profile_file_name(given, AT);
            assert!(
                name.chars()
                    .all(|c| c.is_ascii_alphanumeric() || "._-".contains(c)),
                "{given:?} gives {name:?}"
            );
        }
    }

    #[test]
    fn typed_thresholds_are_applied_or_refused_with_a_reason() {
        assert_eq!(read_threshold("0.35", true), Typed::Value(0.35));
        assert_eq!(read_threshold(" .5 ", true), Typed::Value(0.5));
        assert_eq!(read_threshold("0,25", true), Typed::Value(0.25));
        assert_eq!(read_threshold("1", true), Typed::Value(1.0));
        assert_eq!(read_threshold("0", true), Typed::Value(0.0));
        assert_eq!(read_threshold("5e-1", true), Typed::Value(0.5));
        assert_eq!(
            read_threshold("1.7", true),
            Typed::Refused("1.7 is outside [0, 1]: not applied".into())
        );
        assert_eq!(
            read_threshold("-0.1", false),
            Typed::Refused("-0.1 is outside [0, 1]: not applied".into())
        );
        assert_eq!(
            read_threshold("inf", true),
            Typed::Refused("inf is outside [0, 1]: not applied".into())
        );
        assert_eq!(
            read_threshold("abc", true),
            Typed::Refused("`abc` is not a number: not applied".into())
        );
        assert_eq!(
            read_threshold("NaN", true),
            Typed::Refused("`NaN` is not a number: not applied".into())
        );
        assert_eq!(
            read_threshold("1,2,3", true),
            Typed::Refused("`1,2,3` is not a number: not applied".into())
        );
        assert_eq!(read_threshold("", true), Typed::Empty);
        assert_eq!(read_threshold("  ", false), Typed::Empty);
        // The start of a number is not an error while typing, only when committed.
        for partial in ["-", ".", "1e", "1e-", "+"] {
            assert_eq!(
                read_threshold(partial, false),
                Typed::Unfinished,
                "{partial}"
            );
            assert_eq!(
                read_threshold(partial, true),
                Typed::Refused(format!("`{partial}` is not a number: not applied"))
            );
        }
        assert_eq!(
            read_threshold("abc", false),
            Typed::Refused("`abc` is not a number: not applied".into())
        );
        let pasted = "a very long line that someone pasted by mistake";
        assert_eq!(
            read_threshold(pasted, true),
            Typed::Refused("`a very long line that s…` is not a number: not applied".into())
        );
    }

    #[test]
    fn typed_temperatures_must_be_positive_and_finite() {
        assert_eq!(read_temperature("2", true), Typed::Value(2.0));
        assert_eq!(read_temperature("0.05", true), Typed::Value(0.05));
        assert_eq!(
            read_temperature("0", true),
            Typed::Refused("0 is not a positive number: not applied".into())
        );
        assert_eq!(
            read_temperature("-1", true),
            Typed::Refused("-1 is not a positive number: not applied".into())
        );
        assert_eq!(
            read_temperature("1e999", true),
            Typed::Refused("`1e999` is not a finite number: not applied".into())
        );
        assert_eq!(
            read_temperature("warm", true),
            Typed::Refused("`warm` is not a number: not applied".into())
        );
        assert_eq!(read_temperature("", true), Typed::Empty);
    }

    #[test]
    fn stop_shares_say_what_they_are() {
        assert_eq!(stop_here(Some(0.123)).as_deref(), Some("12.3 % stop here"));
        assert_eq!(stop_here(None), None);
        assert_eq!(
            stop_at_root(Some(0.05)).as_deref(),
            Some("5.0 % stop at root")
        );
        assert!(stop_help(2).starts_with("Share of predictions whose descent stops at depth 2"));
        assert!(stop_help(0).contains("root"));
    }

    #[test]
    fn the_all_depths_line_gives_the_range_when_depths_differ() {
        assert_eq!(depths_differ(&[0.5, 0.5, 0.5]), None);
        assert_eq!(depths_differ(&[]), None);
        assert_eq!(
            depths_differ(&[0.9, 0.8, 0.6, 0.5, 0.5]).as_deref(),
            Some("depths differ (0.5 … 0.9): setting a value here sets every depth to it")
        );
    }
}
