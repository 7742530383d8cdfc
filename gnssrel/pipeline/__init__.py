"""The analysis as a library: the stages every caller runs, in one code path.

The command line (``gnssrel.jobs``), the report, the demo, the tests and any batch
runner call these functions; they take and return the data model of DEVELOPERS.md.
Layer: above the stages (io, orbits, relativity, clocks, audit), below the report
and the command line.

* :mod:`~gnssrel.pipeline.inputs`: files to data (navigation files merged, precise
  products told apart, a receiver clock table cut to the window, overlap checks).
* :mod:`~gnssrel.pipeline.grid`: the epoch grid (size limit, at least 3 epochs) and
  decimation of a log to a step.
* :mod:`~gnssrel.pipeline.stages`: ``relativity_terms``, ``compare_clocks``, ``audit_log``.
* :mod:`~gnssrel.pipeline.accounting`: one ledger of every record read, used or dropped.
* :mod:`~gnssrel.pipeline.analysis`: ``analyse``, the whole chain on files, as the report shows it.
* :mod:`~gnssrel.pipeline.results`, :mod:`~gnssrel.pipeline.verdicts`: what an analysis returns.
"""
