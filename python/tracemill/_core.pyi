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

# --- trace encoding, distances and clustering (tracemill.encode, tracemill.cluster) ---------
def ngram_fit(
    log: LogHandle,
    map: npt.NDArray[np.uint32],
    n_ref: int,
    n_min: int,
    n_max: int,
    max_features: int | None = None,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.uint32], npt.NDArray[np.uint64]]: ...
def activity_vocab(
    log: LogHandle, map: npt.NDArray[np.uint32], n_ref: int
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.uint32], npt.NDArray[np.uint64]]: ...
def ngram_transform(
    log: LogHandle,
    map: npt.NDArray[np.uint32],
    n_ref: int,
    vocab_offsets: npt.NDArray[np.int64],
    vocab_codes: npt.NDArray[np.uint32],
    binary: bool = False,
    idf: npt.NDArray[np.float64] | None = None,
    norm: str = "none",
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[np.ndarray, npt.NDArray[np.int32], npt.NDArray[np.float64], int, int]: ...
def performance_profile(
    log: LogHandle, map: npt.NDArray[np.uint32], n_ref: int
) -> tuple[npt.NDArray[np.float64], int]: ...
def pairwise_condensed(
    x: npt.NDArray[np.float64],
    n: int,
    d: int,
    metric: str,
    max_bytes: int,
    progress: Callable[[int, int], Any] | None = None,
) -> npt.NDArray[np.float64]: ...
def squareform(
    cond: npt.NDArray[np.float64], n: int, max_bytes: int
) -> npt.NDArray[np.float64]: ...
def edit_condensed(
    offsets: npt.NDArray[np.int64],
    codes: npt.NDArray[np.uint32],
    sub_cost: npt.NDArray[np.float64] | None,
    n_activities: int,
    normalised: bool,
    max_bytes: int,
    progress: Callable[[int, int], Any] | None = None,
) -> npt.NDArray[np.float64]: ...
def check_square(m: npt.NDArray[np.float64], n: int) -> None: ...
def kmeans_fit(
    x: npt.NDArray[np.float64] | None,
    indptr: npt.NDArray[np.int64] | None,
    indices: npt.NDArray[np.int32] | None,
    data: npt.NDArray[np.float64] | None,
    n: int,
    d: int,
    weights: npt.NDArray[np.float64] | None,
    n_clusters: int,
    init: str,
    init_centers: npt.NDArray[np.float64] | None,
    n_init: int,
    max_iter: int,
    tol: float,
    seed: int,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.uint32], float, int]: ...
def kmeans_predict(
    x: npt.NDArray[np.float64] | None,
    indptr: npt.NDArray[np.int64] | None,
    indices: npt.NDArray[np.int32] | None,
    data: npt.NDArray[np.float64] | None,
    n: int,
    d: int,
    weights: npt.NDArray[np.float64] | None,
    centers: npt.NDArray[np.float64],
) -> tuple[npt.NDArray[np.uint32], float]: ...
def fasterpam(
    m: npt.NDArray[np.float64],
    n: int,
    n_clusters: int,
    weights: npt.NDArray[np.float64] | None,
    init: str,
    init_medoids: npt.NDArray[np.int64] | None,
    seed: int,
    max_iter: int,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.uint32], float, int, int]: ...
def linkage_condensed(
    cond: npt.NDArray[np.float64],
    n: int,
    method: str,
    progress: Callable[[int, int], Any] | None = None,
) -> npt.NDArray[np.float64]: ...
def linkage_vectors(
    x: npt.NDArray[np.float64],
    n: int,
    d: int,
    method: str,
    progress: Callable[[int, int], Any] | None = None,
) -> npt.NDArray[np.float64]: ...
def cut_linkage(
    z: npt.NDArray[np.float64],
    n: int,
    n_clusters: int | None = None,
    threshold: float | None = None,
) -> npt.NDArray[np.int64]: ...
def dbscan(
    x: npt.NDArray[np.float64],
    n: int,
    d: int,
    metric: str,
    eps: float,
    min_samples: float,
    weights: npt.NDArray[np.float64] | None = None,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.bool_]]: ...
def silhouette_samples(
    x: npt.NDArray[np.float64],
    n: int,
    d: int,
    metric: str,
    labels: npt.NDArray[np.int64],
    progress: Callable[[int, int], Any] | None = None,
) -> npt.NDArray[np.float64]: ...
def mean_within_distance(
    x: npt.NDArray[np.float64],
    n: int,
    d: int,
    metric: str,
    labels: npt.NDArray[np.int64],
    progress: Callable[[int, int], Any] | None = None,
) -> float: ...
def davies_bouldin(
    x: npt.NDArray[np.float64], n: int, d: int, labels: npt.NDArray[np.int64]
) -> float: ...
def calinski_harabasz(
    x: npt.NDArray[np.float64], n: int, d: int, labels: npt.NDArray[np.int64]
) -> float: ...
