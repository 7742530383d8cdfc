"""The mutations of the hostile-input campaign: one valid seed in, one damaged file out.

Each mutation is a function ``(rng, data, kind, ctx) -> Mutated`` that returns the
damaged bytes, a one-line description (what was changed, where) and whether a
strict reader must refuse the changed value (``refusable``: an underscore inside a
number, NaN/INF/huge, an impossible date, a field in the wrong columns ...), which
the campaign uses to flag "silently wrong" candidates.  ``ctx`` holds every seed
(``ctx.seeds[kind]``) and the Hatanaka-compressed observation seeds
(``ctx.hatanaka[kind]``).  Every choice is drawn from ``rng`` (a seeded
``random.Random``), so a case is reproduced by its (seed, index) alone.

The damage itself is in ``field_damage`` (values in fields) and ``file_damage``
(whole files and lines); this module is the catalogue.
"""

from __future__ import annotations

from .damage import Mutated
from .field_damage import (
    COUNT_FIELDS,
    bad_number,
    column_shift,
    count_too_large,
    csv_field,
    digit_sub,
    impossible_date,
    short_record,
    sv_garble,
    underscore,
)
from .file_damage import (
    appended,
    binary,
    byte_flip,
    damaged_archive,
    empty,
    hatanaka,
    header_line_missing,
    leading_blank,
    line_edit,
    line_endings,
    long_line,
    non_utf8,
    tabs,
    truncate,
    wrong_kind,
    wrong_version,
)

# name -> (function, the kinds it applies to)
ALL = ("nav3", "nav2", "obs3", "obs2", "sp3", "clk", "csv", "nmea")
TEXT_TABLES = ("nav3", "nav2", "obs3", "obs2", "sp3", "clk")
MUTATIONS = {
    "truncate": (truncate, ALL),
    "byte_flip": (byte_flip, ALL),
    "digit_sub": (digit_sub, ALL),
    "underscore": (underscore, ALL),
    "bad_number": (bad_number, ALL),
    "column_shift": (column_shift, TEXT_TABLES),
    "impossible_date": (impossible_date, ALL),
    "count_too_large": (count_too_large, tuple(COUNT_FIELDS)),
    "short_record": (short_record, ("nav3", "nav2")),
    "line_edit": (line_edit, ALL),
    "header_line_missing": (header_line_missing, ALL),
    "wrong_version": (wrong_version, ALL),
    "sv_garble": (sv_garble, ("nav3", "nav2", "obs3", "obs2", "sp3", "clk", "csv")),
    "csv_field": (csv_field, ("csv", "nmea")),
    "long_line": (long_line, ALL),
    "empty": (empty, ALL),
    "binary": (binary, ALL),
    "damaged_archive": (damaged_archive, ALL),
    "line_endings": (line_endings, ALL),
    "tabs": (tabs, ALL),
    "non_utf8": (non_utf8, ALL),
    "wrong_kind": (wrong_kind, ALL),
    "appended": (appended, ALL),
    "leading_blank": (leading_blank, ALL),
    "hatanaka": (hatanaka, ("obs3", "obs2")),
}


def applicable(kind: str) -> list[str]:
    return [name for name, (_, kinds) in MUTATIONS.items() if kind in kinds]


def mutate(rng, name, data, kind, ctx) -> Mutated | None:
    """Apply mutation ``name``; None when it finds nothing to change in this seed."""
    return MUTATIONS[name][0](rng, data, kind, ctx)
