"""What the report is made from: :class:`ReportContent`, the results of a whole analysis.

The classes live with the analysis that fills them (:mod:`gnssrel.pipeline.results`);
the figure, table and HTML modules only read them.
"""

from gnssrel.pipeline.results import ReceiverFindings, ReportContent

__all__ = ["ReceiverFindings", "ReportContent"]
