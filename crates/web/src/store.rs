//! The page's one state: `hedgerow_board::state::Board` behind yew's `Reducible`. Every change
//! is an `Action` applied by the board's own pure `apply`; the board's large parts (taxonomy,
//! batch, curve, sweep) are `Rc`, so the clone each action makes is cheap.

use std::ops::Deref;
use std::rc::Rc;

use hedgerow_board::state::{Action, Board};
use yew::Reducible;

use crate::browser;

#[derive(Clone)]
pub struct BoardState(Board);

impl BoardState {
    /// A fresh board with the settings stored by an earlier visit restored (`Action::Restore`),
    /// before anything is loaded.
    pub fn restored() -> Self {
        let mut board = Board::new();
        if let Some(stored) = browser::load_settings() {
            board.apply(Action::Restore(stored));
        }
        BoardState(board)
    }
}

impl Deref for BoardState {
    type Target = Board;
    fn deref(&self) -> &Board {
        &self.0
    }
}

impl Reducible for BoardState {
    type Action = Action;

    fn reduce(self: Rc<Self>, action: Action) -> Rc<Self> {
        browser::stamp("apply-start");
        let mut board = Rc::unwrap_or_clone(self).0;
        board.apply(action);
        browser::stamp("apply-end");
        Rc::new(BoardState(board))
    }
}
