//! The inspected row's runner-up siblings. The page keeps only each row's greedy path, so when
//! a row is opened in the inspector ([`Action::Inspect`](crate::state::Action::Inspect)) the
//! shell reads just that row's bytes from the logits file ([`Board::wanted_row`], then
//! `loading::read_row`, then `Action::RowLogits`) and the core's
//! `siblings::row_runner_ups` gives the chosen child and the runner-up at every step. The chosen
//! children are checked against the stored path, bit for bit (the same softmax gives the same
//! bits), so a file that changed since it was read is told rather than shown.

use std::rc::Rc;

use hedgerow_core::npy::Header;
use hedgerow_core::siblings::{row_runner_ups, Choice};

use crate::state::{Board, Slot};

/// The runner-ups of the inspected row, as far as they are known.
#[derive(Debug, Clone, PartialEq)]
pub enum RunnerUps {
    /// The row's bytes are being read.
    Reading,
    /// One choice per depth of the path, depth 1 first.
    Found(Rc<Vec<Choice>>),
    /// Why they cannot be shown, in words.
    Unavailable(String),
}

/// The row open in the inspector.
#[derive(Debug, Clone, PartialEq)]
pub struct Inspected {
    pub row: usize,
    /// The batch (`Board::generation`) the runner-ups belong to: a new batch reads them again.
    pub generation: usize,
    pub runner_ups: RunnerUps,
}

/// The read the shell is asked for: row `row` of the active batch's logits file `logits`.
#[derive(Debug, Clone, PartialEq)]
pub struct RowWanted {
    pub row: usize,
    pub generation: usize,
    pub logits: String,
    pub header: Header,
}

/// One runner-up as the inspector shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct RunnerUpCell {
    pub id: String,
    pub name: String,
    /// p(sibling | parent), as f32 like the path's own conditionals.
    pub conditional: f64,
}

/// The inspector's runner-up column for the row it shows.
#[derive(Debug, Clone, PartialEq)]
pub enum RunnerUpColumn {
    Reading,
    /// Per depth of the path (depth 1 first); `None`: the parent has one child.
    Shown(Vec<Option<RunnerUpCell>>),
    /// Why the column is empty.
    Note(String),
}

impl Board {
    /// Open row `row` in the inspector.
    pub(crate) fn inspect(&mut self, row: usize) {
        if self
            .inspected
            .as_ref()
            .is_some_and(|i| i.row == row && i.generation == self.generation)
        {
            return;
        }
        self.inspected = Some(Inspected {
            row,
            generation: self.generation,
            runner_ups: RunnerUps::Reading,
        });
    }

    /// The row whose logits the shell should read: the inspected row, while its runner-ups are
    /// unknown for the active batch.
    pub fn wanted_row(&self) -> Option<RowWanted> {
        let i = self.inspected.as_ref()?;
        let a = self.active.as_ref()?;
        let stale = i.generation != self.generation || i.runner_ups == RunnerUps::Reading;
        (stale && i.row < a.batch.len()).then(|| RowWanted {
            row: i.row,
            generation: self.generation,
            logits: a.names.get(&Slot::Logits).cloned().unwrap_or_default(),
            header: a.logits_header.clone(),
        })
    }

    /// A row's bytes arrived (or could not be read): its runner-ups, checked against the path.
    pub(crate) fn row_logits(
        &mut self,
        row: usize,
        generation: usize,
        result: Result<Vec<u8>, String>,
    ) {
        let Some(a) = self.active.as_ref() else {
            return;
        };
        if generation != self.generation || self.inspected.as_ref().is_none_or(|i| i.row != row) {
            return;
        }
        let name = a.names.get(&Slot::Logits).cloned().unwrap_or_default();
        let runner_ups = match result {
            Err(why) => RunnerUps::Unavailable(why),
            Ok(bytes) => {
                let (tax, batch) = (&a.taxonomy, &a.batch);
                match row_runner_ups(tax, batch.temperatures(), a.logits_header.dtype, &bytes) {
                    Err(k) => RunnerUps::Unavailable(format!("{name}: row {row}: {k}")),
                    Ok(choices) => {
                        let paths = batch.paths();
                        let (leaf, cond) = (paths.leaf(row), paths.cond(row));
                        let same = choices.last().map(|c| c.chosen.node) == Some(leaf)
                            && choices.iter().all(|c| {
                                cond.get(c.depth - 1)
                                    .is_some_and(|p| p.to_bits() == c.chosen.conditional.to_bits())
                                    && tax.ancestor(leaf, c.depth) == c.chosen.node
                            });
                        if same {
                            RunnerUps::Found(Rc::new(choices))
                        } else {
                            RunnerUps::Unavailable(format!(
                                "{name}: row {row} no longer gives the path read earlier (was the file changed?)"
                            ))
                        }
                    }
                }
            }
        };
        self.inspected = Some(Inspected {
            row,
            generation,
            runner_ups,
        });
    }

    /// The runner-up column for the inspected row (`None` when no row is open).
    pub fn runner_up_column(&self) -> Option<RunnerUpColumn> {
        let i = self.inspected.as_ref()?;
        let a = self.active.as_ref()?;
        if i.generation != self.generation {
            return Some(RunnerUpColumn::Reading);
        }
        Some(match &i.runner_ups {
            RunnerUps::Reading => RunnerUpColumn::Reading,
            RunnerUps::Unavailable(why) => RunnerUpColumn::Note(why.clone()),
            RunnerUps::Found(choices) => RunnerUpColumn::Shown(
                choices
                    .iter()
                    .map(|c| {
                        c.runner_up.map(|p| RunnerUpCell {
                            id: a.taxonomy.id(p.node).to_string(),
                            name: a.taxonomy.name(p.node).to_string(),
                            conditional: p.conditional as f64,
                        })
                    })
                    .collect(),
            ),
        })
    }
}
