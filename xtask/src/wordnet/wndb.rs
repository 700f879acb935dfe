//! A reader for WordNet's `data.noun` (the format of wndb(5WN), as Debian's `wordnet-base`
//! installs it): synsets with their lemmas, hypernym pointers and gloss.
//!
//! Each line past the license header (whose lines start with two spaces) is
//! `synset_offset lex_filenum ss_type w_cnt word lex_id [word lex_id...] p_cnt [ptr...] | gloss`
//! where `w_cnt` and `lex_id` are hexadecimal, `p_cnt` is three decimal digits, and each pointer
//! is `symbol synset_offset pos source/target`. Only `@` (hypernym) and `@i` (instance
//! hypernym) pointers to nouns are kept; noun lines carry no verb frames.

use std::collections::HashMap;

use anyhow::{bail, Context};

/// One noun synset.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Synset {
    /// Byte offset of the line in `data.noun`: the synset's identity.
    pub offset: u32,
    /// Lemmas as written in the file (case kept, spaces as `_`).
    pub words: Vec<String>,
    /// `@` pointers, in the order of the line.
    pub hypernyms: Vec<u32>,
    /// `@i` pointers: this synset is an instance (a named individual) of those.
    pub instance_of: Vec<u32>,
    pub gloss: String,
}

impl Synset {
    /// The lemmas for people: underscores as spaces.
    pub fn lemmas(&self) -> impl Iterator<Item = String> + '_ {
        self.words.iter().map(|w| w.replace('_', " "))
    }
}

/// Every synset of a `data.noun` text, in file order.
pub fn parse(text: &str) -> anyhow::Result<Vec<Synset>> {
    let mut out = Vec::new();
    for (i, line) in text.lines().enumerate() {
        if line.starts_with("  ") || line.trim().is_empty() {
            continue;
        }
        let synset = parse_line(line).with_context(|| format!("data.noun line {}", i + 1))?;
        out.push(synset);
    }
    Ok(out)
}

fn parse_line(line: &str) -> anyhow::Result<Synset> {
    let (fields, gloss) = match line.split_once(" | ") {
        Some((f, g)) => (f, g.trim_end()),
        None => (line.trim_end().trim_end_matches('|'), ""),
    };
    let mut it = fields.split_ascii_whitespace();
    let mut next = |what: &str| {
        it.next()
            .with_context(|| format!("the line ends before its {what}"))
    };
    let offset_text = next("synset_offset")?;
    let offset: u32 = offset_text
        .parse()
        .with_context(|| format!("synset_offset: expected 8 digits, found {offset_text:?}"))?;
    next("lex_filenum")?;
    let ss_type = next("ss_type")?;
    if ss_type != "n" {
        bail!("ss_type: expected `n` (a noun file), found {ss_type:?}");
    }
    let w_cnt_text = next("w_cnt")?;
    let w_cnt = usize::from_str_radix(w_cnt_text, 16)
        .with_context(|| format!("w_cnt: expected two hex digits, found {w_cnt_text:?}"))?;
    let mut words = Vec::with_capacity(w_cnt);
    for _ in 0..w_cnt {
        words.push(next("word")?.to_string());
        let lex_id = next("lex_id")?;
        if u8::from_str_radix(lex_id, 16).is_err() {
            bail!("lex_id: expected a hex digit, found {lex_id:?}");
        }
    }
    if words.is_empty() {
        bail!("w_cnt is 0: a synset without words");
    }
    let p_cnt_text = next("p_cnt")?;
    let p_cnt: usize = p_cnt_text
        .parse()
        .with_context(|| format!("p_cnt: expected 3 digits, found {p_cnt_text:?}"))?;
    let (mut hypernyms, mut instance_of) = (Vec::new(), Vec::new());
    for _ in 0..p_cnt {
        let symbol = next("pointer symbol")?;
        let target_text = next("pointer offset")?;
        let pos = next("pointer pos")?;
        next("pointer source/target")?;
        let target: u32 = target_text
            .parse()
            .with_context(|| format!("pointer offset: expected 8 digits, found {target_text:?}"))?;
        match (symbol, pos) {
            ("@", "n") => hypernyms.push(target),
            ("@i", "n") => instance_of.push(target),
            _ => {}
        }
    }
    Ok(Synset {
        offset,
        words,
        hypernyms,
        instance_of,
        gloss: gloss.to_string(),
    })
}

/// Synsets by offset, and the hyponyms (inverse `@`) of each in file order.
pub struct Noun {
    pub synsets: Vec<Synset>,
    pub by_offset: HashMap<u32, usize>,
    pub hyponyms: HashMap<u32, Vec<u32>>,
}

impl Noun {
    pub fn new(synsets: Vec<Synset>) -> anyhow::Result<Self> {
        let mut by_offset = HashMap::with_capacity(synsets.len());
        let mut hyponyms: HashMap<u32, Vec<u32>> = HashMap::new();
        for (k, s) in synsets.iter().enumerate() {
            if by_offset.insert(s.offset, k).is_some() {
                bail!("data.noun: synset {:08} appears twice", s.offset);
            }
            for &h in &s.hypernyms {
                hyponyms.entry(h).or_default().push(s.offset);
            }
        }
        Ok(Self {
            synsets,
            by_offset,
            hyponyms,
        })
    }

    pub fn get(&self, offset: u32) -> Option<&Synset> {
        self.by_offset
            .get(&offset)
            .and_then(|&k| self.synsets.get(k))
    }

    /// A synset named by its offset (digits) or by a lemma (case-insensitive, spaces or `_`).
    /// A lemma shared by several synsets is an error that lists them with their offsets.
    pub fn resolve(&self, name: &str) -> anyhow::Result<u32> {
        let name = name.trim();
        if !name.is_empty() && name.bytes().all(|b| b.is_ascii_digit()) {
            let offset: u32 = name.parse().with_context(|| format!("synset {name:?}"))?;
            if self.get(offset).is_none() {
                bail!("no noun synset at offset {name} in data.noun");
            }
            return Ok(offset);
        }
        let want = name.replace(' ', "_");
        let found: Vec<&Synset> = self
            .synsets
            .iter()
            .filter(|s| s.words.iter().any(|w| w.eq_ignore_ascii_case(&want)))
            .collect();
        match found.as_slice() {
            [] => bail!("no noun synset has the lemma {name:?}"),
            [one] => Ok(one.offset),
            many => {
                let list: Vec<String> = many
                    .iter()
                    .map(|s| {
                        let gloss: String = s.gloss.chars().take(60).collect();
                        format!("  {:08}  {}: {gloss}", s.offset, s.words.join(", "))
                    })
                    .collect();
                bail!(
                    "the lemma {name:?} names {} synsets; pass one by its offset:\n{}",
                    many.len(),
                    list.join("\n")
                )
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Whole lines copied from Debian's wordnet-base 3.0 `/usr/share/wordnet/data.noun`: its
    /// license header, then six synsets in file order (an instance, ashcan, bottle, container,
    /// stele, vessel).
    pub const SAMPLE: &str = include_str!("data.noun.sample");

    #[test]
    fn parses_lemmas_pointers_and_gloss() -> anyhow::Result<()> {
        let synsets = parse(SAMPLE)?;
        let offsets: Vec<u32> = synsets.iter().map(|s| s.offset).collect();
        assert_eq!(
            offsets,
            [641_693, 2_747_177, 2_876_657, 3_094_503, 4_313_628, 4_531_098]
        );
        let container = &synsets[3];
        assert_eq!(container.words, ["container"]);
        // 55 pointers, one of them a hypernym; the verb pointers (`+ ... v`) and the hyponyms
        // (`~`) are not kept.
        assert_eq!(container.hypernyms, [3_575_240]);
        assert!(container
            .gloss
            .starts_with("any object that can be used to hold things"));
        let stele = &synsets[4];
        assert_eq!(stele.words, ["stele", "stela"]);
        assert_eq!(stele.hypernyms, [4_326_084, 2_724_026]);
        // `~i` points down to an instance, not up.
        assert!(stele.instance_of.is_empty());
        // w_cnt is hexadecimal: 0a = 10 lemmas.
        let ashcan = &synsets[1];
        assert_eq!(ashcan.words.len(), 10);
        assert_eq!(ashcan.words[9], "trash_bin");
        assert_eq!(ashcan.hypernyms, [2_839_910]);
        assert_eq!(
            ashcan.lemmas().take(2).collect::<Vec<_>>(),
            ["ashcan", "trash can"]
        );
        assert_eq!(
            ashcan.gloss,
            "a bin that holds rubbish until it is collected"
        );
        // An instance: `@i` only.
        assert!(synsets[0].hypernyms.is_empty());
        assert_eq!(synsets[0].instance_of, [641_820]);
        Ok(())
    }

    #[test]
    fn hyponyms_and_resolution() -> anyhow::Result<()> {
        let noun = Noun::new(parse(SAMPLE)?)?;
        assert_eq!(noun.hyponyms.get(&3_094_503), Some(&vec![4_531_098]));
        assert_eq!(noun.hyponyms.get(&4_531_098), Some(&vec![2_876_657]));
        assert_eq!(noun.resolve("container")?, 3_094_503);
        assert_eq!(noun.resolve("Trash Can")?, 2_747_177);
        assert_eq!(noun.resolve("02876657")?, 2_876_657);
        assert!(noun.resolve("99999999").is_err());
        assert!(noun.resolve("teapot").is_err());
        Ok(())
    }

    #[test]
    fn a_shared_lemma_lists_its_synsets() -> anyhow::Result<()> {
        // Two lines of the installed file, their pointers dropped (p_cnt set to 000).
        let text = format!(
            "{SAMPLE}03438257 06 n 02 glass 0 drinking_glass 0 000 | a container for holding \
             liquids while drinking  \n14881303 27 n 01 glass 0 000 | a brittle transparent solid \
             with irregular atomic structure  \n"
        );
        let noun = Noun::new(parse(&text)?)?;
        let err = noun.resolve("glass").expect_err("two synsets").to_string();
        assert!(err.contains("names 2 synsets"), "{err}");
        assert!(
            err.contains("03438257  glass, drinking_glass: a container for holding"),
            "{err}"
        );
        assert!(err.contains("14881303"), "{err}");
        Ok(())
    }

    #[test]
    fn malformed_lines_name_their_line_and_field() {
        for (line, needle) in [
            ("0309450x 06 n 01 container 0 000 | g", "synset_offset"),
            ("03094503 06 n zz container 0 000 | g", "w_cnt"),
            ("03094503 06 n 02 container 0 000 | g", "lex_id"),
            (
                "03094503 06 n 01 container 0 001 @ 03575240 | g",
                "line ends",
            ),
            ("03094503 06 v 01 hold 0 000 | g", "ss_type"),
        ] {
            let text = format!("  1 license\n{line}\n");
            let err = format!("{:#}", parse(&text).expect_err(line));
            assert!(err.contains("data.noun line 2"), "{err}");
            assert!(err.contains(needle), "{line}: {err}");
        }
    }
}
