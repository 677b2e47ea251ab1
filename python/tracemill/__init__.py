"""tracemill: fast event-log analysis in parallel native kernels.

Load an event log from pandas, polars, pyarrow or XES; get variants, case statistics,
directly-follows counts with timing and selections in native code; simulate logs of our own
scenario for demos and tests.

Event logs often hold personal data: handle them under the data-protection rules that apply to
you. Statistics, rules and trees describe associations in past data, not causes.
"""

from __future__ import annotations

from . import _core, cluster, drift, encode, evaluate, explain, tree
from .conform import align, precision, quality_table, simplicity, token_replay
from .discover import (
    AlphaDiscovery,
    DependencyDiscovery,
    DirectlyFollowsDiscovery,
    InductiveDiscovery,
    compare_directly_follows,
)
from .exceptions import (
    DataError,
    DataQualityWarning,
    FormatError,
    InternalError,
    LimitError,
    NotFittedError,
    ParameterError,
    SchemaError,
    TimestampError,
    TracemillError,
    TracemillIOError,
    TracemillWarning,
)
from .log import EventLog
from .models import DependencyGraph, DirectlyFollowsGraph, PetriNet, ProcessTree
from .rules import (
    AssociationRules,
    FrequentItemsets,
    Transactions,
    association_rules,
    frequent_itemsets,
)
from .sequences import (
    Episodes,
    SequentialPatterns,
    frequent_episodes,
    frequent_sequences,
)
from .simulation import Truth, simulate, workshop, workshop_spec
from .tree import TreeClassifier, TreeRegressor

__version__: str = _core.__version__

__all__ = [
    "AlphaDiscovery",
    "AssociationRules",
    "DataError",
    "DataQualityWarning",
    "DependencyDiscovery",
    "DependencyGraph",
    "DirectlyFollowsDiscovery",
    "DirectlyFollowsGraph",
    "Episodes",
    "EventLog",
    "FormatError",
    "FrequentItemsets",
    "InductiveDiscovery",
    "InternalError",
    "LimitError",
    "NotFittedError",
    "ParameterError",
    "PetriNet",
    "ProcessTree",
    "SchemaError",
    "SequentialPatterns",
    "TimestampError",
    "TracemillError",
    "TracemillIOError",
    "TracemillWarning",
    "Transactions",
    "TreeClassifier",
    "TreeRegressor",
    "Truth",
    "__version__",
    "align",
    "association_rules",
    "cluster",
    "compare_directly_follows",
    "drift",
    "encode",
    "evaluate",
    "explain",
    "frequent_episodes",
    "frequent_itemsets",
    "frequent_sequences",
    "precision",
    "quality_table",
    "simplicity",
    "simulate",
    "token_replay",
    "tree",
    "workshop",
    "workshop_spec",
]
