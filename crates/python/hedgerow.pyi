"""hedgerow: decode and score numpy logits over a label taxonomy with a threshold profile.

The engine is the one behind the `hedgerow` command line (hedgerow-core), so a decode here
equals `hedgerow decode` on the same data row for row, and `evaluate` returns the dict
`hedgerow evaluate --json` prints.
"""

import os
from typing import Any, Dict, List, Mapping, Optional, Sequence, Union

import numpy as np
import numpy.typing as npt

__version__: str
#: `column` of a row that stopped at the root.
ROOT: int
#: `column` of a row that abstained (P(root) under the object threshold).
ABSTAINED: int

# A path (str or os.PathLike), the file's text (CSV or JSON), or its bytes.
_Source = Union[str, "os.PathLike[str]", bytes, bytearray]
# A path, JSON text or bytes, or the profile as a dict.
_Profile = Union[_Source, Mapping[str, Any]]
# A path to a labels file (CSV with a `label` column, or .npy), or one label per row:
# column indices (-1 = background) or node ids ("" or None = background).
_Labels = Union[str, "os.PathLike[str]", bytes, npt.ArrayLike, Sequence[Optional[str]]]
# A path to an objectness .npy, or one probability in [0, 1] per row.
_Objectness = Union[str, "os.PathLike[str]", bytes, npt.ArrayLike]
_Thresholds = Union[float, Sequence[float]]

class Decoder:
    """Decodes logits with a taxonomy and a threshold profile.

    Keyword settings (rule, thresholds, object_threshold, temperatures, unverifiable,
    node_thresholds) override the profile's, as the command line's flags override --profile.
    A profile made for another taxonomy raises ValueError with the command line's message.
    """

    def __init__(
        self,
        taxonomy: _Source,
        profile: Optional[_Profile] = None,
        *,
        rule: Optional[str] = None,
        thresholds: Optional[_Thresholds] = None,
        object_threshold: Optional[float] = None,
        temperatures: Optional[_Thresholds] = None,
        unverifiable: Optional[str] = None,
        node_thresholds: Optional[Mapping[str, float]] = None,
    ) -> None: ...
    def decode(
        self,
        logits: np.ndarray,
        objectness: Optional[_Objectness] = None,
        *,
        no_objectness: bool = False,
        threads: int = 1,
    ) -> Dict[str, np.ndarray]:
        """Decode every row of `logits` ([N, M] float16/32/64, C or Fortran order, not copied).

        Returns `column` (int64: the predicted node's column, ROOT = -1, ABSTAINED = -2),
        `depth` (int32) and `probability` (float64). The GIL is released while rows are
        decoded; `threads` > 1 decodes blocks of rows in parallel. Raises ValueError for a
        wrong shape or dtype, a value that is not finite (naming its row and column), or
        objectness of the wrong length.
        """
    def tally(
        self,
        logits: np.ndarray,
        labels: _Labels,
        objectness: Optional[_Objectness] = None,
        *,
        threads: int = 1,
    ) -> Tally:
        """The integer sums behind the metrics of this batch (they add across batches)."""
    def evaluate(
        self,
        logits: np.ndarray,
        labels: _Labels,
        objectness: Optional[_Objectness] = None,
        *,
        threads: int = 1,
    ) -> Dict[str, Any]:
        """The metrics: the dict `hedgerow evaluate --json` prints for the same data."""
    @property
    def node_ids(self) -> List[str]:
        """Node ids in column order."""
    @property
    def depth(self) -> int:
        """The taxonomy's depth."""
    @property
    def fingerprint(self) -> str:
        """The taxonomy's fingerprint, as profiles record it."""
    def ids(self, columns: npt.ArrayLike) -> List[Optional[str]]:
        """The node id of each `column` entry: "" for the root, None when abstained."""

class Tally:
    """The integer sums behind one evaluation's metrics.

    `a + b` adds the tallies of two parts of a batch (same taxonomy and settings, else
    ValueError) and `sum(tallies)` works; the parts' sum gives exactly the metrics of the whole
    batch. Picklable.
    """

    @property
    def rows(self) -> int: ...
    def metrics(self) -> Dict[str, Any]:
        """The dict `hedgerow.evaluate` returns."""
    def __add__(self, other: Union[Tally, int]) -> Tally: ...
    def __radd__(self, other: Union[Tally, int]) -> Tally: ...

def evaluate(
    *,
    taxonomy: _Source,
    logits: np.ndarray,
    labels: _Labels,
    objectness: Optional[_Objectness] = None,
    profile: Optional[_Profile] = None,
    threads: int = 1,
    rule: Optional[str] = None,
    thresholds: Optional[_Thresholds] = None,
    object_threshold: Optional[float] = None,
    temperatures: Optional[_Thresholds] = None,
    unverifiable: Optional[str] = None,
    node_thresholds: Optional[Mapping[str, float]] = None,
) -> Dict[str, Any]:
    """The metrics of a batch: the dict `hedgerow evaluate --json` prints."""

def tally(
    *,
    taxonomy: _Source,
    logits: np.ndarray,
    labels: _Labels,
    objectness: Optional[_Objectness] = None,
    profile: Optional[_Profile] = None,
    threads: int = 1,
    rule: Optional[str] = None,
    thresholds: Optional[_Thresholds] = None,
    object_threshold: Optional[float] = None,
    temperatures: Optional[_Thresholds] = None,
    unverifiable: Optional[str] = None,
    node_thresholds: Optional[Mapping[str, float]] = None,
) -> Tally:
    """The tallies of a batch; same arguments as `evaluate`."""
