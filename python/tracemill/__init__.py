"""tracemill: fast event-log analysis in parallel native kernels.

Load an event log from pandas, polars, pyarrow or XES; get variants, case statistics,
directly-follows counts with timing and selections in native code; simulate logs of our own
scenario for demos and tests.

Event logs often hold personal data: handle them under the data-protection rules that apply to
you. Statistics, rules and trees describe associations in past data, not causes.
"""

from __future__ import annotations

from . import _core
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

__version__: str = _core.__version__

__all__ = [
    "AssociationRules",
    "DataError",
    "DataQualityWarning",
    "Episodes",
    "EventLog",
    "FormatError",
    "FrequentItemsets",
    "InternalError",
    "LimitError",
    "NotFittedError",
    "ParameterError",
    "SchemaError",
    "SequentialPatterns",
    "TimestampError",
    "TracemillError",
    "TracemillIOError",
    "TracemillWarning",
    "Transactions",
    "__version__",
    "association_rules",
    "frequent_episodes",
    "frequent_itemsets",
    "frequent_sequences",
]
