//! Command-line flags of the generator tasks: `--flag value` or `--flag=value`, values taken
//! on demand, integers with `_` separators (and `0x` for hex).

use anyhow::Context;

pub struct Flags<'a> {
    it: std::slice::Iter<'a, String>,
    flag: &'a str,
    inline: Option<&'a str>,
}

impl<'a> Flags<'a> {
    pub fn new(args: &'a [String]) -> Self {
        Flags {
            it: args.iter(),
            flag: "",
            inline: None,
        }
    }

    /// The next flag (`--rows` of `--rows=5` too).
    #[allow(clippy::should_implement_trait)]
    pub fn next(&mut self) -> Option<&'a str> {
        let arg = self.it.next()?;
        (self.flag, self.inline) = match arg.split_once('=') {
            Some((f, v)) if f.starts_with("--") => (f, Some(v)),
            _ => (arg.as_str(), None),
        };
        Some(self.flag)
    }

    /// The current flag's value: after `=`, else the next argument.
    pub fn value(&mut self) -> anyhow::Result<String> {
        match self.inline.take() {
            Some(v) => Ok(v.to_string()),
            None => self
                .it
                .next()
                .cloned()
                .with_context(|| format!("{} needs a value", self.flag)),
        }
    }

    /// The current flag's value as a non-negative integer.
    pub fn number(&mut self) -> anyhow::Result<u64> {
        let v = self.value()?;
        parse_u64(self.flag, &v)
    }
}

/// A non-negative integer, `_` separators allowed, `0x` for hex.
pub fn parse_u64(flag: &str, v: &str) -> anyhow::Result<u64> {
    let v = v.replace('_', "");
    let parsed = match v.strip_prefix("0x") {
        Some(hex) => u64::from_str_radix(hex, 16),
        None => v.parse(),
    };
    parsed.with_context(|| format!("{flag}: expected a non-negative integer, found {v:?}"))
}
