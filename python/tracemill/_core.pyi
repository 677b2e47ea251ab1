# Type stubs of the native module tracemill._core (kept in step with src/python/).
from collections.abc import Callable
from typing import Any

import numpy as np
import numpy.typing as npt

__version__: str

ColumnTuple = tuple[str, str, np.ndarray, npt.NDArray[np.bool_] | None, list[str] | None]

class LogHandle:
    @property
    def n_cases(self) -> int: ...
    @property
    def n_events(self) -> int: ...
    @property
    def activity_names(self) -> list[str]: ...
    @property
    def case_names(self) -> list[str]: ...
    def core_arrays(
        self,
    ) -> tuple[
        npt.NDArray[np.int64],
        npt.NDArray[np.uint32],
        npt.NDArray[np.uint32],
        npt.NDArray[np.int64],
        npt.NDArray[np.uint64],
    ]: ...
    def case_of_events(self) -> npt.NDArray[np.uint32]: ...
    def resource(self) -> ColumnTuple | None: ...
    def lifecycle(self) -> ColumnTuple | None: ...
    def event_attrs(self) -> list[ColumnTuple]: ...
    def case_attrs(self) -> list[ColumnTuple]: ...
    def variants(self) -> tuple[np.ndarray, ...]: ...
    def case_stats(self) -> tuple[np.ndarray, ...]: ...
    def activity_counts(self) -> tuple[np.ndarray, ...]: ...
    def directly_follows(self) -> tuple[np.ndarray, ...]: ...
    def rework(self) -> tuple[np.ndarray, ...]: ...
    def activity_times(self) -> tuple[np.ndarray, ...]: ...
    def select_cases(self, cases: npt.NDArray[np.int64]) -> LogHandle: ...
    def select_mask(self, mask: npt.NDArray[np.bool_]) -> LogHandle: ...
    def window_mask(self, start: int, end: int, rule: str) -> npt.NDArray[np.bool_]: ...
    def top_variants_mask(self, share: float) -> npt.NDArray[np.bool_]: ...
    def length_mask(self, min: int, max: int) -> npt.NDArray[np.bool_]: ...
    def sample_cases(self, n: int, seed: int) -> npt.NDArray[np.int64]: ...
    def split(self, labels: npt.NDArray[np.int64]) -> list[tuple[int, LogHandle]]: ...

def build_log(
    case: npt.NDArray[np.uint32],
    case_names: list[str],
    activity: npt.NDArray[np.uint32],
    activity_names: list[str],
    time: npt.NDArray[np.int64],
    resource: ColumnTuple | None = None,
    lifecycle: ColumnTuple | None = None,
    event_attrs: list[ColumnTuple] | None = None,
    case_attrs: list[ColumnTuple] | None = None,
    case_attrs_per_case: bool = False,
    row: npt.NDArray[np.uint64] | None = None,
) -> tuple[LogHandle, int, int]: ...
def factorize_utf8(
    offsets: npt.NDArray[np.int64],
    data: npt.NDArray[np.uint8],
    valid: npt.NDArray[np.bool_] | None,
    column: str,
) -> tuple[npt.NDArray[np.uint32], list[str]]: ...
def factorize_i64(
    values: npt.NDArray[np.int64], valid: npt.NDArray[np.bool_] | None
) -> tuple[npt.NDArray[np.uint32], npt.NDArray[np.int64]]: ...
def _panic_for_test() -> None: ...
def _sleep_for_test(seconds: float, progress: Callable[[int, int], Any] | None = None) -> int: ...

# --- rules and sequences: frequent itemsets, association rules, PrefixSpan, episodes ---

class TransactionsHandle:
    @property
    def n_transactions(self) -> int: ...
    @property
    def n_items(self) -> int: ...
    @property
    def n_empty(self) -> int: ...
    def arrays(self) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.uint32]]: ...
    def item_counts(self) -> npt.NDArray[np.uint64]: ...

def build_transactions(
    offsets: npt.NDArray[np.int64], items: npt.NDArray[np.uint32], n_items: int
) -> TransactionsHandle: ...
def mine_itemsets(
    tx: TransactionsHandle,
    min_count: int | None = None,
    min_fraction: float | None = None,
    max_len: int | None = None,
    target: str = "all",
    algorithm: str = "fpgrowth",
    max_itemsets: int = 10_000_000,
    truncate: bool = False,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.uint32], npt.NDArray[np.uint64], bool, int]: ...
def mine_rules(
    offsets: npt.NDArray[np.int64],
    items: npt.NDArray[np.uint32],
    counts: npt.NDArray[np.uint64],
    n_transactions: int,
    complete: bool,
    min_confidence: float = 0.5,
    min_lift: float | None = None,
    consequent: list[int] | None = None,
    max_rules: int = 10_000_000,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[np.ndarray, ...]: ...
def rule_measures(
    n: int,
    n_x: npt.NDArray[np.uint64],
    n_y: npt.NDArray[np.uint64],
    n_xy: npt.NDArray[np.uint64],
) -> list[tuple[str, npt.NDArray[np.float64]]]: ...
def mine_sequences(
    seq_offsets: npt.NDArray[np.int64],
    elem_offsets: npt.NDArray[np.int64] | None,
    items: npt.NDArray[np.uint32],
    n_items: int,
    times: npt.NDArray[np.int64] | None = None,
    min_count: int | None = None,
    min_fraction: float | None = None,
    max_len: int | None = None,
    max_gap_events: int | None = None,
    max_gap_time: int | None = None,
    min_span: int | None = None,
    max_span: int | None = None,
    closed: bool = False,
    return_cases: bool = True,
    max_patterns: int = 10_000_000,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[Any, ...]: ...
def mine_episodes(
    offsets: npt.NDArray[np.int64],
    types: npt.NDArray[np.uint32],
    times: npt.NDArray[np.int64],
    n_types: int,
    window: int,
    kind: str = "serial",
    measure: str = "winepi",
    min_frequency: float = 0.1,
    max_size: int = 4,
    max_episodes: int = 1_000_000,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[Any, ...]: ...
def mine_episode_rules(
    offsets: npt.NDArray[np.int64],
    types: npt.NDArray[np.uint32],
    windows: npt.NDArray[np.float64],
    minimal_occurrences: npt.NDArray[np.uint64],
    measure: str,
    min_confidence: float,
) -> tuple[npt.NDArray[np.uint32], npt.NDArray[np.uint32], npt.NDArray[np.float64]]: ...
