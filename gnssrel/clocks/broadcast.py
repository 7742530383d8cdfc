"""The broadcast satellite clock of each system, and which signal it refers to.

The polynomial of every system (the satellite clock offset, seconds, to be *subtracted*
from a satellite's transmit time to get system time) is written once, in
:func:`gnssrel.orbits.models.broadcast_clock_s` (re-exported here): a_f0 + a_f1 dt +
a_f2 dt^2 with the week crossover on dt = t - t_oc for G, E, C, J; -tau_n + gamma_n
(t - t_b) for GLONASS; the columns and the fold are in :data:`gnssrel.systems.SYSTEM_MODELS`.

The periodic relativistic term is *not* in the polynomial of G, E, C, J (the user
adds F e sqrt(A) sin E), but it *is* in the GLONASS terms (NAVI "Relativistic Clock
Correction", published; REFERENCE-CHECKS 3.3): :data:`POLYNOMIAL_HOLDS_PERIODIC`.

:data:`GROUP_DELAYS` says, as data, which signal or combination each broadcast
clock refers to, how a single-frequency user moves it to another signal, and which
combination the precise (IGS-style) products refer to.
"""

from __future__ import annotations

import numpy as np

from gnssrel.orbits.models import broadcast_clock_s
from gnssrel.orbits.selection import take_rows
from gnssrel.signals import CARRIER_HZ
from gnssrel.systems import SYSTEM_MODELS

__all__ = ["GROUP_DELAYS", "POLYNOMIAL_HOLDS_PERIODIC", "PRECISE_CLOCK_REFERENCE", "broadcast_clock_s",
           "clock_reference", "single_frequency_clock_s"]

POLYNOMIAL_HOLDS_PERIODIC = {letter: m.polynomial_holds_periodic for letter, m in SYSTEM_MODELS.items()}
"""Does the broadcast clock polynomial already contain the periodic relativistic term?
From the system model (``user_applies_periodic``): where the user does not add the term
(GLONASS: NAVI "Relativistic Clock Correction", published) it is inside the broadcast
clock terms; G/J: IS-GPS-200 20.3.3.3.3.1, E: Galileo OS SIS ICD 5.1.4, C: BDS-SIS-ICD
5.2.4.10 (user adds it)."""

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
        "clock_refers_to": SYSTEM_MODELS["G"].clock_signal["LNAV"],
        "single_frequency": {"L1": ("tgd_s", 1.0), "L2": ("tgd_s", _ratio2("L1", "L2"))},
        "source": "IS-GPS-200 20.3.3.3.3.2 (dual-frequency user needs no T_GD: published; "
                  "L1: clock - T_GD, L2: clock - gamma T_GD, gamma = (77/60)^2)",
    },
    ("J", "LNAV"): {
        "clock_refers_to": SYSTEM_MODELS["J"].clock_signal["LNAV"],
        "single_frequency": {"L1": ("tgd_s", 1.0), "L2": ("tgd_s", _ratio2("L1", "L2"))},
        "source": "IS-QZSS-PNT (same T_GD use as IS-GPS-200 20.3.3.3.3.2; from memory)",
    },
    ("E", "INAV"): {
        "clock_refers_to": SYSTEM_MODELS["E"].clock_signal["INAV"],
        "single_frequency": {"E1": ("bgd_e5b_e1_s", 1.0),
                             "E5b": ("bgd_e5b_e1_s", _ratio2("E1", "E5b"))},
        "source": "Galileo OS SIS ICD 5.1.5 (BGD(E1,E5b); clock_E1 = clock - BGD, "
                  "clock_E5b = clock - (f1/f5b)^2 BGD; from memory)",
    },
    ("E", "FNAV"): {
        "clock_refers_to": SYSTEM_MODELS["E"].clock_signal["FNAV"],
        "single_frequency": {"E1": ("bgd_e5a_e1_s", 1.0),
                             "E5a": ("bgd_e5a_e1_s", _ratio2("E1", "E5a"))},
        "source": "Galileo OS SIS ICD 5.1.5 (BGD(E1,E5a); from memory)",
    },
    ("C", "D1"): {
        "clock_refers_to": SYSTEM_MODELS["C"].clock_signal["D1"],
        "single_frequency": {"B3I": (None, 0.0), "B1I": ("tgd1_b1_b3_s", 1.0),
                             "B2I": ("tgd2_b2_b3_s", 1.0)},
        "source": "BDS-SIS-ICD-B1I 3.0, 5.2.4.10 (B1I: clock - TGD1, B2I: clock - TGD2; "
                  "from memory)",
    },
    ("C", "D2"): {
        "clock_refers_to": SYSTEM_MODELS["C"].clock_signal["D2"],
        "single_frequency": {"B3I": (None, 0.0), "B1I": ("tgd1_b1_b3_s", 1.0),
                             "B2I": ("tgd2_b2_b3_s", 1.0)},
        "source": "BDS-SIS-ICD-B1I 3.0, 5.2.4.10 (as D1; from memory)",
    },
    ("R", "FDMA"): {
        "clock_refers_to": SYSTEM_MODELS["R"].clock_signal["FDMA"],
        "single_frequency": {"L1": (None, 0.0)},
        "source": "GLONASS ICD 2008 ed. 5.1, 4.4 (tau_n, Delta tau_n; from memory)",
    },
}
"""Which signal each broadcast clock refers to and how to move it to a single signal."""

PRECISE_CLOCK_REFERENCE = {letter: m.precise_clock_signal for letter, m in SYSTEM_MODELS.items()}
"""The combination IGS-style precise satellite clocks refer to.  Status: common practice
of the IGS and its multi-GNSS analysis centres (from memory; a product's header may say
otherwise, e.g. 'SYS / DCBS APPLIED').  A difference with the broadcast reference is a
constant per satellite (a few to tens of ns), which the comparison removes with the
per-satellite mean."""


def clock_reference(system: str) -> str:
    """The signal or combination a system's broadcast clock refers to, per message type."""
    parts = [f"{nav}: {entry['clock_refers_to']}" for (s, nav), entry in GROUP_DELAYS.items() if s == system]
    return "; ".join(parts) if parts else "unknown"


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
