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

# ---------------------------------------------------------------- discovery and conformance
NetSpec = tuple[
    list[str], list[str], list[str | None], list[int], list[int], list[bool], list[int],
    list[int], list[int],
]
TreeSpec = tuple[list[int] | bytes, list[int], list[str]]

def dfg(
    log: LogHandle,
    min_activity_count: int = 0,
    min_edge_count: int = 0,
    path_coverage: float = 1.0,
    performance: bool = True,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[
    npt.NDArray[np.bool_], npt.NDArray[np.uint64], npt.NDArray[np.uint64],
    npt.NDArray[np.uint64], npt.NDArray[np.uint32], npt.NDArray[np.uint32],
    npt.NDArray[np.uint64], npt.NDArray[np.uint64], npt.NDArray[np.float64],
    npt.NDArray[np.float64], npt.NDArray[np.float64], int,
]: ...
def dependency(
    log: LogHandle,
    dependency_threshold: float,
    min_observations: int,
    relative_to_best: float,
    loop1_threshold: float,
    loop2_threshold: float,
    all_connected: bool,
) -> tuple[
    npt.NDArray[np.uint64], npt.NDArray[np.float64], npt.NDArray[np.float64],
    npt.NDArray[np.uint32], npt.NDArray[np.uint32], npt.NDArray[np.uint64],
    npt.NDArray[np.uint64], npt.NDArray[np.uint64],
]: ...
def alpha(log: LogHandle, max_candidates: int = 100000) -> NetSpec: ...
def inductive(
    log: LogHandle,
    noise_threshold: float = 0.0,
    progress: Callable[[int, int], Any] | None = None,
) -> TreeSpec: ...
def tree_net(tree: TreeSpec) -> NetSpec: ...
def tree_text(tree: TreeSpec) -> str: ...
def tree_bpmn(tree: TreeSpec, name: str) -> str: ...
def pnml_read(text: str) -> NetSpec: ...
def pnml_write(net: NetSpec, name: str) -> str: ...
def net_check(net: NetSpec) -> tuple[int, int]: ...
def replay(
    net: NetSpec,
    log: LogHandle,
    max_silent_states: int = 10000,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[
    npt.NDArray[np.uint64], npt.NDArray[np.uint64], npt.NDArray[np.uint64],
    npt.NDArray[np.uint64], npt.NDArray[np.uint64], npt.NDArray[np.int64],
    npt.NDArray[np.uint32], npt.NDArray[np.uint32], npt.NDArray[np.uint32],
    npt.NDArray[np.uint64], tuple[int, int, int, int], float,
]: ...
def align(
    net: NetSpec,
    log: LogHandle,
    max_states: int = 200000,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[
    npt.NDArray[np.int64], npt.NDArray[np.bool_], npt.NDArray[np.uint64],
    npt.NDArray[np.int64], npt.NDArray[np.uint8], npt.NDArray[np.int32],
    npt.NDArray[np.int32], npt.NDArray[np.uint32], npt.NDArray[np.uint64],
    npt.NDArray[np.uint64], tuple[int, float, float, int],
]: ...
def precision(
    net: NetSpec, log: LogHandle, max_silent_states: int = 10000
) -> tuple[float, int, int, int]: ...
def net_simplicity(net: NetSpec) -> float: ...
