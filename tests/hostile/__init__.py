"""Hostile-input campaign of gnssrel (README: "Nothing lost, nothing silently wrong").

Damaged copies of small valid inputs (cut from the invented demo data in
``sample_logs/``, plus RINEX 2.11 texts derived from them) go through
``gnssrel orbits``, ``relativity``, ``clocks`` and ``audit``; each run is
classified as ok, refused, crash, hang or partial output (see ``runner``).

Full campaign, from the repository root::

    python -m tests.hostile --cases 2000 --seed 1 --report campaign.json

One case again, with the command line that reproduces it::

    python -m tests.hostile --replay 1:123

Modules: ``seeds`` (the valid inputs); ``mutations`` (the catalogue of damage,
made in ``field_damage`` and ``file_damage`` with the helpers of ``damage``);
``runner`` (one forked child per case, the classification); ``campaign``
(cases from (seed, index), the baselines, the run, the replay); ``report``
(tables, failure groups, Markdown, comparison with an earlier run).
"""
