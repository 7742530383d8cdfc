"""The status codes of a state history: one table for broadcast and precise states.

Every state Dataset (DEVELOPERS.md data model) carries ``status`` (time, sv) int8 and, in
``status.attrs["status_codes"]``, the texts of the codes its builder can give.  The codes
are unique across builders, so that states of both sources can be joined or compared:

== ==================================== ===============================================
 0 ok                                   both
 1 no record within the maximum age     broadcast (:mod:`gnssrel.orbits.selection`)
 2 unhealthy                            broadcast
 3 excluded by rule                     broadcast
 4 ephemeris not yet transmitted        broadcast, ``receiver`` rule only
 5 satellite not in navigation data     broadcast
 6 outside precise data                 precise (:mod:`gnssrel.orbits.precise`): before the
                                        first or after the last sample, or not in the product
 7 gap in precise data                  precise: the interpolation window misses a sample
== ==================================== ===============================================
"""

from __future__ import annotations

__all__ = ["BROADCAST_CODES", "PRECISE_CODES", "STATUS_CODES", "STATUS_EXCLUDED", "STATUS_GAP",
           "STATUS_NOT_TRANSMITTED", "STATUS_NO_EPHEMERIS", "STATUS_NO_SATELLITE", "STATUS_OK",
           "STATUS_OUTSIDE", "STATUS_UNHEALTHY", "codes_of"]

STATUS_OK = 0
STATUS_NO_EPHEMERIS = 1
STATUS_UNHEALTHY = 2
STATUS_EXCLUDED = 3
STATUS_NOT_TRANSMITTED = 4
STATUS_NO_SATELLITE = 5
STATUS_OUTSIDE = 6
STATUS_GAP = 7

STATUS_CODES = {
    STATUS_OK: "ok",
    STATUS_NO_EPHEMERIS: "no record within the maximum age",
    STATUS_UNHEALTHY: "unhealthy",
    STATUS_EXCLUDED: "excluded by rule",
    STATUS_NOT_TRANSMITTED: "ephemeris not yet transmitted",
    STATUS_NO_SATELLITE: "satellite not in navigation data",
    STATUS_OUTSIDE: "outside precise data",
    STATUS_GAP: "gap in precise data",
}
"""Every status code of a state history and its meaning (module text)."""

BROADCAST_CODES = tuple(range(STATUS_OK, STATUS_NO_SATELLITE + 1))
"""The codes broadcast states (:func:`gnssrel.orbits.broadcast.broadcast_states`) give."""
PRECISE_CODES = (STATUS_OK, STATUS_OUTSIDE, STATUS_GAP)
"""The codes precise states (:func:`gnssrel.orbits.precise.precise_states`) give."""


def codes_of(which) -> dict:
    """The texts of the codes ``which`` (an iterable of codes)."""
    return {code: STATUS_CODES[code] for code in which}
