"""Write a notebook from a list of (kind, source) cells: ``python tools/make_notebook.py``.

Notebooks are generated from the cell lists below so that their source stays reviewable as
plain Python; CI executes every notebook in ``notebooks/``.
"""

from __future__ import annotations

import sys
from pathlib import Path

import nbformat

EXPLORE = [
    ("md", "# Exploring the workshop scenario\n\n"
           "tracemill ships a simulated bicycle-repair workshop (invented data, for demos only). "
           "This notebook loads it **through pandas**, as you would load an export of a real "
           "system, and explores it with the log views: variants, case durations, "
           "directly-follows timing and waiting times.\n\n"
           "*Real event logs hold personal data: follow the data-protection rules that apply "
           "to you.*"),
    ("code", "import numpy as np\nimport pandas as pd\nimport tracemill as tm\n\n"
             "sim_log, truth = tm.workshop(n_cases=5_000, random_state=11)\n"
             "frame = sim_log.to_frame('pandas')   # stands in for a CSV or Parquet export\n"
             "frame.head()"),
    ("code", "log = tm.EventLog.from_frame(\n"
             "    frame, case='case', activity='activity', timestamp='timestamp',\n"
             "    resource='resource', lifecycle='lifecycle' if 'lifecycle' in frame else None,\n"
             "    case_attributes=[c for c in frame.columns if c not in\n"
             "                     ('case', 'activity', 'timestamp', 'resource', 'lifecycle')\n"
             "                     and frame.groupby('case')[c].nunique().max() <= 1],\n"
             ")\n"
             "log"),
    ("md", "## Variants\nDistinct activity sequences, most frequent first."),
    ("code", "v = log.variants()\nv.head(8)"),
    ("code", "print(f\"{len(v)} variants; the top 5 cover {v['share'].head(5).sum():.0%} of cases\")"),
    ("md", "## Case durations"),
    ("code", "cases = log.case_table()\n"
             "days = cases['duration'].dt.total_seconds() / 86400\n"
             "days.describe(percentiles=[0.5, 0.9, 0.99])"),
    ("code", "import matplotlib\nmatplotlib.use('Agg')\nimport matplotlib.pyplot as plt\n\n"
             "fig, ax = plt.subplots(figsize=(7, 3))\n"
             "ax.hist(days, bins=60, color='#3b7d8c')\n"
             "ax.set_xlabel('case duration (days)'); ax.set_ylabel('cases')\n"
             "plt.show()"),
    ("md", "The planted segments explain much of the spread (the simulator's ground truth):"),
    ("code", "cases['segment'] = truth.segment_labels\n"
             "cases.groupby('segment')['duration'].median()"),
    ("md", "## Directly-follows timing and waiting"),
    ("code", "log.directly_follows().sort_values('count', ascending=False).head(10)"),
    ("code", "log.activity_stats().sort_values('wait_total', ascending=False)[\n"
             "    ['activity', 'events', 'cases', 'wait_median', 'wait_mean', 'rework_cases']].head(8)"),
    ("md", "## Selections\nSlow cases, a time window, the most common behaviour, and one "
           "sub-log per segment."),
    ("code", "slow = log.where(lambda t: t['duration'] > t['duration'].quantile(0.9))\n"
             "common = log.top_variants(0.8)\n"
             "first_month = log.within('2025-01-06', '2025-02-06', rule='started')\n"
             "by_segment = log.split(truth.segment_labels)\n"
             "slow, common, first_month, {k: g.n_cases for k, g in by_segment.items()}"),
]

NOTEBOOKS = {"01_explore_workshop.ipynb": EXPLORE}


def build(cells: list[tuple[str, str]]) -> nbformat.NotebookNode:
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_markdown_cell(s) if k == "md" else nbformat.v4.new_code_cell(s)
                for k, s in cells]
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3",
                                 "language": "python"}
    return nb


def main() -> int:
    out = Path(__file__).resolve().parent.parent / "notebooks"
    for name, cells in NOTEBOOKS.items():
        nbformat.write(build(cells), out / name)
    return 0


if __name__ == "__main__":
    sys.exit(main())
