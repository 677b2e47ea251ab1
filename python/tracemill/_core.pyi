# Type stubs of the native module tracemill._core (kept in step with src/python/).
from collections.abc import Callable
from typing import Any, final

import numpy as np
import numpy.typing as npt

__version__: str
EVENT_TABLE_COLUMNS: list[str]
CASE_TABLE_COLUMNS: list[str]

_ColumnTuple = tuple[str, str, np.ndarray, npt.NDArray[np.bool_] | None, list[str] | None]

@final
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
    def resource(self) -> _ColumnTuple | None: ...
    def lifecycle(self) -> _ColumnTuple | None: ...
    def event_attrs(self) -> list[_ColumnTuple]: ...
    def case_attrs(self) -> list[_ColumnTuple]: ...
    def variants(self) -> tuple[np.ndarray, ...]: ...
    def case_stats(self) -> tuple[np.ndarray, ...]: ...
    def activity_counts(self) -> tuple[np.ndarray, ...]: ...
    def directly_follows(self) -> tuple[np.ndarray, ...]: ...
    def df_counts(self) -> npt.NDArray[np.uint64]: ...
    def rework(self) -> tuple[np.ndarray, ...]: ...
    def activity_times(self) -> tuple[np.ndarray, ...]: ...
    def select_cases(self, cases: npt.NDArray[np.int64]) -> LogHandle: ...
    def select_events(self, mask: npt.NDArray[np.bool_]) -> tuple[LogHandle, int]: ...
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
    resource: _ColumnTuple | None = None,
    lifecycle: _ColumnTuple | None = None,
    event_attrs: list[_ColumnTuple] | None = None,
    case_attrs: list[_ColumnTuple] | None = None,
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

# --- simulator
def simulate(
    spec_json: str, n_cases: int, seed: int, progress: Callable[[int, int], Any] | None = None
) -> tuple[LogHandle, int, int, tuple[Any, ...]]: ...
def workshop_json() -> str: ...
def check_spec(spec_json: str) -> str: ...
# ---------------------------------------------------------------- discovery and conformance
_NetSpec = tuple[
    list[str], list[str], list[str | None], list[int], list[int], list[bool], list[int],
    list[int], list[int],
]
_TreeSpec = tuple[list[int] | bytes, list[int], list[str]]

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
def alpha(log: LogHandle, max_candidates: int = 100000) -> _NetSpec: ...
def inductive(
    log: LogHandle,
    noise_threshold: float = 0.0,
    progress: Callable[[int, int], Any] | None = None,
) -> _TreeSpec: ...
def tree_net(tree: _TreeSpec) -> _NetSpec: ...
def tree_text(tree: _TreeSpec) -> str: ...
def tree_bpmn(tree: _TreeSpec, name: str) -> str: ...
def pnml_read(text: str, net: str | None = None) -> _NetSpec: ...
def pnml_write(net: _NetSpec, name: str) -> str: ...
def net_check(net: _NetSpec) -> tuple[int, int]: ...
def replay(
    net: _NetSpec,
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
    net: _NetSpec,
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
    net: _NetSpec, log: LogHandle, max_silent_states: int = 10000
) -> tuple[float, int, int, int]: ...
def net_simplicity(net: _NetSpec) -> float: ...

# --- XES
def read_xes_file(
    path: str, progress: Callable[[int, int], Any] | None = None
) -> tuple[LogHandle, int, int, dict[str, Any], dict[str, Any]]: ...
def read_xes_data(data: bytes) -> tuple[LogHandle, int, int, dict[str, Any], dict[str, Any]]: ...
def write_xes_file(log: LogHandle, path: str, log_name: str | None = None) -> None: ...
# --- trees (src/python/tree.rs) ---------------------------------------------------------------
@final
class TreeHandle:
    @property
    def n_leaves(self) -> int: ...
    @property
    def depth(self) -> int: ...
    @property
    def n_nodes(self) -> int: ...
    def apply(
        self, x: npt.NDArray[np.float64], unseen_categories: str, names: list[str]
    ) -> tuple[npt.NDArray[np.int64], int]: ...
    def feature_importances(self) -> npt.NDArray[np.float64]: ...
    def pruning_path(self) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]: ...
    def prune(self, alpha: float) -> TreeHandle: ...
    def arrays(self) -> dict[str, Any]: ...

def tree_fit(
    x: npt.NDArray[np.float64],
    kinds: list[int],
    names: list[str],
    y_class: npt.NDArray[np.uint32] | None,
    n_classes: int,
    y_value: npt.NDArray[np.float64] | None,
    sample_weight: npt.NDArray[np.float64] | None,
    criterion: str,
    max_depth: int | None,
    min_samples_split: int,
    min_samples_leaf: int,
    min_impurity_decrease: float,
    categorical_split: str,
    missing_values: str,
    ccp_alpha: float,
    progress: Callable[[int, int], Any] | None = None,
) -> TreeHandle: ...
def tree_fold_predict(
    x: npt.NDArray[np.float64],
    kinds: list[int],
    names: list[str],
    y_class: npt.NDArray[np.uint32] | None,
    n_classes: int,
    y_value: npt.NDArray[np.float64] | None,
    sample_weight: npt.NDArray[np.float64] | None,
    fold: npt.NDArray[np.uint32],
    n_folds: int,
    criterion: str,
    max_depth: int | None,
    min_samples_split: int,
    min_samples_leaf: int,
    min_impurity_decrease: float,
    categorical_split: str,
    missing_values: str,
    ccp_alpha: float,
    progress: Callable[[int, int], Any] | None = None,
) -> npt.NDArray[np.float64]: ...
def tree_root_scores(
    x: npt.NDArray[np.float64],
    kinds: list[int],
    names: list[str],
    y_class: npt.NDArray[np.uint32] | None,
    n_classes: int,
    y_value: npt.NDArray[np.float64] | None,
    sample_weight: npt.NDArray[np.float64] | None,
    criterion: str,
    categorical_split: str,
    missing_values: str,
    min_samples_leaf: int = 1,
) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]: ...
def tree_from_arrays(
    kinds: list[int],
    n_classes: int,
    missing_values: str,
    feature: npt.NDArray[np.int64],
    threshold: npt.NDArray[np.float64],
    missing_slot: npt.NDArray[np.uint8],
    child_ptr: npt.NDArray[np.int64],
    child_ids: npt.NDArray[np.int64],
    slot_ptr: npt.NDArray[np.int64],
    slots: npt.NDArray[np.uint8],
    depth: npt.NDArray[np.int64],
    n_samples: npt.NDArray[np.int64],
    weighted_n: npt.NDArray[np.float64],
    impurity: npt.NDArray[np.float64],
    value: npt.NDArray[np.float64],
    counts: npt.NDArray[np.uint64],
) -> TreeHandle: ...

# --- evaluation and drift (src/python/eval.rs) ------------------------------------------------
def confusion_scores(
    y_true: npt.NDArray[np.uint32],
    y_pred: npt.NDArray[np.uint32],
    n_labels: int,
    sample_weight: npt.NDArray[np.float64] | None = None,
    zero_division: float = 0.0,
) -> dict[str, Any]: ...
def kfold_ids(n: int, n_splits: int, seed: int | None = None) -> npt.NDArray[np.uint32]: ...
def stratified_ids(
    y: npt.NDArray[np.uint32], n_splits: int, seed: int | None = None
) -> npt.NDArray[np.uint32]: ...
def group_ids(groups: npt.NDArray[np.uint32], n_splits: int) -> npt.NDArray[np.uint32]: ...
def time_splits(
    n: int,
    n_splits: int,
    test_size: int | None = None,
    gap: int = 0,
    max_train_size: int | None = None,
) -> list[tuple[int, int, int, int]]: ...
def table_test(
    table: npt.NDArray[np.float64], g: bool = False
) -> tuple[float, int, float, int]: ...
def ks_2samp(
    a: npt.NDArray[np.float64], b: npt.NDArray[np.float64], exact_limit: int = 10_000_000
) -> tuple[float, float]: ...
def chi2_sf(x: float, dof: float) -> float: ...
def drift_series(
    log: LogHandle,
    window: int,
    step: int,
    g_test: bool = False,
    exact_limit: int = 10_000_000,
    progress: Callable[[int, int], Any] | None = None,
) -> tuple[
    npt.NDArray[np.int64],
    npt.NDArray[np.int64],
    npt.NDArray[np.float64],
    npt.NDArray[np.float64],
]: ...
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
def csr_hstack(
    indptrs: list[npt.NDArray[np.int64]],
    indices: list[npt.NDArray[np.int32]],
    data: list[npt.NDArray[np.float64]],
    n_cols: list[int],
    weights: list[float],
    n_rows: int,
) -> tuple[npt.NDArray[np.int32] | npt.NDArray[np.int64], npt.NDArray[np.int32],
           npt.NDArray[np.float64], int]: ...
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
# --- rules and sequences: frequent itemsets, association rules, PrefixSpan, episodes ---

@final
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
