"""The broadcast satellite clock of each system, and which signal it refers to.

Polynomial of every system (the satellite clock offset, seconds, to be *subtracted*
from a satellite's transmit time to get system time):

* GPS, QZSS: a_f0 + a_f1 (t - t_oc) + a_f2 (t - t_oc)^2, with the week
  crossover on t - t_oc (IS-GPS-200 20.3.3.3.3.1; IS-QZSS-PNT 5.x, same algorithm);
* Galileo: the same form (Galileo OS SIS ICD 5.1.4);
* BeiDou: the same form (BDS-SIS-ICD-B1I 3.0, 5.2.4.9);
* GLONASS: -tau_n + gamma_n (t - t_b) (GLONASS ICD 2008 ed. 5.1, 3.3.3; RINEX
  stores -tau_n and +gamma_n, so the file's columns are added as they are).

The periodic relativistic term is *not* in the polynomial of G, E, C, J (the user
adds F e sqrt(A) sin E), but it *is* in the GLONASS terms (NAVI "Relativistic Clock
Correction", published; REFERENCE-CHECKS 3.3): :data:`POLYNOMIAL_HOLDS_PERIODIC`.

:data:`GROUP_DELAYS` says, as data, which signal or combination each broadcast
clock refers to, how a single-frequency user moves it to another signal, and which
combination the precise (IGS-style) products refer to.
"""

from __future__ import annotations

import numpy as np

from gnssrel.orbits.selection import take_rows
from gnssrel.relativity.rules import RULES
from gnssrel.signals import CARRIER_HZ
from gnssrel.timescales import seconds_between, week_crossover

POLYNOMIAL_HOLDS_PERIODIC = {letter: not rule.user_applies_periodic for letter, rule in RULES.items()}
"""Does the broadcast clock polynomial already contain the periodic relativistic term?
Taken from the relativity rules table (``gnssrel.relativity.rules.RULES``): where the
user does not add the term (GLONASS: NAVI "Relativistic Clock Correction", published)
it is inside the broadcast clock terms; G/J: IS-GPS-200 20.3.3.3.3.1, E: Galileo OS SIS
ICD 5.1.4, C: BDS-SIS-ICD 5.2.4.10 (user adds it)."""

# Carriers of the group-delay factors, from gnssrel.signals (sources there).  Kept in MHz
# (Hz / 1e6 is the same float as the MHz literal) so the factors stay what they were.
_F_MHZ = {name: CARRIER_HZ[letter][signal] / 1e6 for name, (letter, signal) in {
    "L1": ("G", "L1"), "L2": ("G", "L2"), "E1": ("E", "E1"), "E5a": ("E", "E5a"),
    "E5b": ("E", "E5b"), "B1I": ("C", "B1I"), "B2I": ("C", "B2I"), "B3I": ("C", "B3I")}.items()}


def _ratio2(a: str, b: str) -> float:
    return (_F_MHZ[a] / _F_MHZ[b]) ** 2


GROUP_DELAYS = {
    # key: (system letter, nav_type).  "single_frequency": signal -> (column, factor): the
    # clock for that signal is clock - factor * column.
    ("G", "LNAV"): {
        "clock_refers_to": "L1 P(Y) / L2 P(Y) ionosphere-free combination",
        "single_frequency": {"L1": ("tgd_s", 1.0), "L2": ("tgd_s", _ratio2("L1", "L2"))},
        "source": "IS-GPS-200 20.3.3.3.3.2 (dual-frequency user needs no T_GD: published; "
                  "L1: clock - T_GD, L2: clock - gamma T_GD, gamma = (77/60)^2)",
    },
    ("J", "LNAV"): {
        "clock_refers_to": "L1 / L2 ionosphere-free combination (GPS convention)",
        "single_frequency": {"L1": ("tgd_s", 1.0), "L2": ("tgd_s", _ratio2("L1", "L2"))},
        "source": "IS-QZSS-PNT (same T_GD use as IS-GPS-200 20.3.3.3.3.2; from memory)",
    },
    ("E", "INAV"): {
        "clock_refers_to": "E1 / E5b ionosphere-free combination",
        "single_frequency": {"E1": ("bgd_e5b_e1_s", 1.0),
                             "E5b": ("bgd_e5b_e1_s", _ratio2("E1", "E5b"))},
        "source": "Galileo OS SIS ICD 5.1.5 (BGD(E1,E5b); clock_E1 = clock - BGD, "
                  "clock_E5b = clock - (f1/f5b)^2 BGD; from memory)",
    },
    ("E", "FNAV"): {
        "clock_refers_to": "E1 / E5a ionosphere-free combination",
        "single_frequency": {"E1": ("bgd_e5a_e1_s", 1.0),
                             "E5a": ("bgd_e5a_e1_s", _ratio2("E1", "E5a"))},
        "source": "Galileo OS SIS ICD 5.1.5 (BGD(E1,E5a); from memory)",
    },
    ("C", "D1"): {
        "clock_refers_to": "B3I single frequency",
        "single_frequency": {"B3I": (None, 0.0), "B1I": ("tgd1_b1_b3_s", 1.0),
                             "B2I": ("tgd2_b2_b3_s", 1.0)},
        "source": "BDS-SIS-ICD-B1I 3.0, 5.2.4.10 (B1I: clock - TGD1, B2I: clock - TGD2; "
                  "from memory)",
    },
    ("C", "D2"): {
        "clock_refers_to": "B3I single frequency",
        "single_frequency": {"B3I": (None, 0.0), "B1I": ("tgd1_b1_b3_s", 1.0),
                             "B2I": ("tgd2_b2_b3_s", 1.0)},
        "source": "BDS-SIS-ICD-B1I 3.0, 5.2.4.10 (as D1; from memory)",
    },
    ("R", "FDMA"): {
        "clock_refers_to": "L1 (tau_n; the L2-L1 difference Delta tau_n is not in RINEX 3 nav)",
        "single_frequency": {"L1": (None, 0.0)},
        "source": "GLONASS ICD 2008 ed. 5.1, 4.4 (tau_n, Delta tau_n; from memory)",
    },
}
"""Which signal each broadcast clock refers to and how to move it to a single signal."""

PRECISE_CLOCK_REFERENCE = {
    "G": "L1 P(Y) / L2 P(Y) ionosphere-free (C1W/C2W), as the broadcast clock",
    "J": "L1 C/A / L2C ionosphere-free (C1C/C2L)",
    "E": "E1 / E5a ionosphere-free (C1C/C5Q)",
    "C": "B1I / B3I ionosphere-free (C2I/C6I)",
    "R": "L1 P / L2 P ionosphere-free (C1P/C2P)",
}
"""The combination IGS-style precise satellite clocks refer to.  Status: common practice
of the IGS and its multi-GNSS analysis centres (from memory; a product's header may say
otherwise, e.g. 'SYS / DCBS APPLIED').  A difference with the broadcast reference is a
constant per satellite (a few to tens of ns), which the comparison removes with the
per-satellite mean."""


def clock_reference(system: str) -> str:
    """The signal or combination a system's broadcast clock refers to, per message type."""
    parts = [f"{nav}: {entry['clock_refers_to']}" for (s, nav), entry in GROUP_DELAYS.items() if s == system]
    return "; ".join(parts) if parts else "unknown"


def broadcast_clock_s(table, rows, t_gpst, system: str) -> np.ndarray:
    """Broadcast clock polynomial (s) from ephemeris rows at GPST times.

    ``table``: the system's ephemeris DataFrame (DEVELOPERS.md contract);
    ``rows``: int array of row indices (-1: no ephemeris -> NaN); ``t_gpst``:
    datetime64 array broadcastable with ``rows``.  Output has their broadcast shape.
    GLONASS: ``clock_bias_s`` (-tau_n) + ``relative_frequency_bias`` (gamma_n) (t - t_b).
    """
    rows, t = np.broadcast_arrays(np.asarray(rows, dtype=np.int64),
                                  np.asarray(t_gpst).astype("datetime64[ns]"))
    toc = take_rows(table, "toc", rows)
    dt_s = seconds_between(t, toc)  # NaT -> huge negative int; masked below
    dt_s = np.where(rows >= 0, dt_s, np.nan)
    a0 = take_rows(table, "clock_bias_s", rows)
    if system == "R":
        # GLONASS ICD 2008 3.3.3: t_GLO = t_sv + tau_n - gamma_n (t_sv - t_b); t_b is a
        # full datetime here, so no day crossover is needed.
        return a0 + take_rows(table, "relative_frequency_bias", rows) * dt_s
    # IS-GPS-200 20.3.3.3.3.1 (and GAL-ICD 5.1.4, BDS-ICD 5.2.4.9): fold t - t_oc into +-302 400 s.
    # With toc a full GPST datetime the fold changes nothing unless toc was built wrongly.
    dt_s = week_crossover(dt_s)
    a1 = take_rows(table, "clock_drift_s_per_s", rows)
    a2 = take_rows(table, "clock_drift_rate_s_per_s2", rows)
    return a0 + a1 * dt_s + a2 * dt_s * dt_s


def single_frequency_clock_s(clock_s, table, rows, system: str, nav_type: str, signal: str) -> np.ndarray:
    """Move a broadcast clock to one signal with the group delay of :data:`GROUP_DELAYS`."""
    try:
        column, factor = GROUP_DELAYS[(system, nav_type)]["single_frequency"][signal]
    except KeyError:
        known = sorted(k for k in GROUP_DELAYS.get((system, nav_type), {}).get("single_frequency", {}))
        raise KeyError(f"no group delay for {system} {nav_type} signal {signal!r}; known: {known}") from None
    clock_s = np.asarray(clock_s, dtype=np.float64)
    if column is None:
        return clock_s.copy()
    return clock_s - factor * take_rows(table, column, np.asarray(rows, dtype=np.int64))
