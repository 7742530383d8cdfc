"""Per-system relativity conventions, as data.

One row per system letter: does the user add the periodic term to the
broadcast clock, which mu (and so which F = -2 sqrt(mu)/c^2) the
specification form uses, and which published factory frequency offset (if any)
the satellite's mean rate is compared with.  Code looks rules up here; there
is no per-system ``if`` elsewhere in the relativity stage.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from gnssrel.constants import GPS_FACTORY_FREQUENCY_OFFSET, SYSTEMS


@dataclass(frozen=True)
class RelativityRule:
    letter: str
    user_applies_periodic: bool
    """True: the user adds F e sqrt(A) sin E (or -2 r.v/c^2) to the broadcast clock."""
    periodic_note: str
    """Where the rule comes from, with its status."""
    nominal_rate: float | None
    """Published mean rate of proper time vs TT the clock is offset for before launch
    (positive = clock fast); None where no published value is at hand."""

    @property
    def gm_m3_s2(self) -> float:
        return SYSTEMS[self.letter].gm_m3_s2

    @property
    def f_s_sqrt_m(self) -> float:
        return SYSTEMS[self.letter].f_s_sqrt_m


RULES: dict[str, RelativityRule] = {r.letter: r for r in (
    RelativityRule("G", True, "IS-GPS-200 20.3.3.3.3.1 (published)", -GPS_FACTORY_FREQUENCY_OFFSET),
    RelativityRule("E", True, "Galileo OS SIS ICD 5.1.4, same form with Galileo mu "
                              "(section number from memory)", None),
    RelativityRule("C", True, "BDS-SIS-ICD 5.2.4.10, same form with CGCS2000 mu "
                              "(section number from memory)", None),
    RelativityRule("J", True, "IS-QZSS-PNT, the GPS user algorithm (from memory)", None),
    RelativityRule("R", False, "GLONASS: the periodic term is already inside the broadcast "
                               "clock terms tau_n, gamma_n (ESA Navipedia, published); "
                               "reported, not applied", None),
)}


def rule_for(sv: str) -> RelativityRule:
    """The rule of the system a satellite name (``G05``) belongs to."""
    try:
        return RULES[sv[0]]
    except (KeyError, IndexError):
        raise KeyError(f"no relativity rule for satellite {sv!r}") from None


def per_satellite(svs, field: str) -> np.ndarray:
    """One rule field (``user_applies_periodic``, ``gm_m3_s2``, ``f_s_sqrt_m``,
    ``nominal_rate``) for each satellite name; None becomes NaN for numbers."""
    values = [getattr(rule_for(str(s)), field) for s in svs]
    if field == "user_applies_periodic":
        return np.array(values, dtype=bool)
    return np.array([np.nan if v is None else v for v in values], dtype=float)
