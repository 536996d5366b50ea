"""Quality report of an output folder: summary, HTML site, comparison with plain windows,
retrieval evaluation, and the CI check.

Python API:
    read_output(out, overrides) -> Output      chunk files, store rows, settings of the build
    summarise(output) -> Summary               the figures `segment report` prints
"""

from segment.report.output import NoOutput, Output, read_output
from segment.report.summary import Summary, summarise

__all__ = ["NoOutput", "Output", "Summary", "read_output", "summarise"]
