"""The system model: what gnssrel knows about each GNSS, one table row per system.

Code asks this table instead of testing a system letter: ``system_model("R").orbit_model``
rather than ``if letter == "R"``.  A row says

* ``constants``: mu, omega_e, F = -2 sqrt(mu)/c^2, ellipsoid, J2, name and time scale
  (:mod:`gnssrel.constants`, sources there); ``time_scale`` and its offset to GPST in
  :mod:`gnssrel.timescales` (``SYSTEM_TIME_SCALE``, ``to_gpst``);
* ``orbit_model``: how a broadcast record becomes a state, ``"keplerian"`` (elements,
  IS-GPS-200 Table 20-IV and kin) or ``"state_vector"`` (a position, velocity and
  acceleration at t_b, integrated: GLONASS ICD A.3.1.2); the evaluators are in
  :data:`gnssrel.orbits.models.ORBIT_MODELS`;
* ``reference_column``: the record's reference time (``toe``, or ``toc`` = t_b), from
  which the ephemeris-selection limits count (:data:`gnssrel.orbits.selection.SYSTEM_LIMITS`
  holds those limits per system, with the measurements behind them);
* the broadcast clock: the columns of its polynomial ``a0 + a1 dt + a2 dt^2``
  (``clock_columns``; GLONASS -tau_n + gamma_n dt has no a2), whether dt = t - t_oc is
  folded into +-302 400 s (``clock_week_fold``, IS-GPS-200 20.3.3.3.3.1), whether the user
  adds the periodic relativistic term (``user_applies_periodic``; GLONASS: it is already
  inside tau_n, gamma_n) and which signal the clock refers to for each record type
  (``clock_signal``; its keys are the record types, ``nav_type``, that serve the system);
  how a single-frequency user moves it to another signal: :data:`gnssrel.clocks.broadcast.GROUP_DELAYS`;
* ``carriers``: :data:`gnssrel.signals.CARRIER_HZ` of the system; ``fdma``: a carrier
  per satellite (frequency channel), :data:`gnssrel.signals.FDMA_BANDS_HZ`.

Adding a system (NavIC ``I``, SBAS ``S``) is a row here plus, where its orbit is of a new
kind, an entry in ``gnssrel.orbits.models.ORBIT_MODELS`` (DEVELOPERS.md "How to add a system").
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from gnssrel.constants import (
    ALL_SYSTEM_ORDER,
    GPS_FACTORY_FREQUENCY_OFFSET,
    SYSTEM_ORDER,
    SYSTEMS,
    SystemConstants,
)
from gnssrel.signals import CARRIER_HZ
from gnssrel.timescales import SYSTEM_TIME_SCALE

__all__ = ["ALL_SYSTEM_ORDER", "SYSTEM_MODELS", "SYSTEM_ORDER", "SystemModel", "per_satellite", "system_model"]

ORBIT_KEPLERIAN = "keplerian"
ORBIT_STATE_VECTOR = "state_vector"
ORBIT_SBAS_QUADRATIC = "sbas_quadratic"

POLYNOMIAL = ("clock_bias_s", "clock_drift_s_per_s", "clock_drift_rate_s_per_s2")
"""a_f0, a_f1, a_f2 columns of the Keplerian systems' clock polynomial."""


@dataclass(frozen=True)
class SystemModel:
    """One GNSS as gnssrel handles it (module text)."""

    letter: str
    constants: SystemConstants
    orbit_model: str                      # "keplerian" | "state_vector"
    reference_column: str                 # "toe" | "toc": reference time of a record
    clock_columns: tuple                  # (a0, a1, a2 or None) columns of the clock polynomial
    clock_week_fold: bool                 # fold t - t_oc into +-302 400 s
    user_applies_periodic: bool           # the user adds F e sqrt(A) sin E (or -2 r.v/c^2)
    periodic_note: str                    # where that rule comes from, with its status
    clock_signal: Mapping = field(default_factory=dict)   # nav_type -> signal the clock refers to
    precise_clock_signal: str = "unknown"  # what IGS-style precise clocks refer to
    nominal_rate: float | None = None     # published mean proper-time rate vs TT (clock set low by it)
    fdma: bool = False                    # a carrier per satellite (frequency channel)
    nominal_rate_note: str = ""           # why nominal_rate is None, where it is

    @property
    def name(self) -> str:
        return self.constants.name

    @property
    def time_scale(self) -> str:
        return SYSTEM_TIME_SCALE[self.letter]

    @property
    def gm_m3_s2(self) -> float:
        return self.constants.gm_m3_s2

    @property
    def omega_earth_rad_s(self) -> float:
        return self.constants.omega_earth_rad_s

    @property
    def f_s_sqrt_m(self) -> float:
        return self.constants.f_s_sqrt_m

    @property
    def carriers(self) -> dict:
        """Signal name -> carrier frequency in Hz (:mod:`gnssrel.signals`)."""
        return dict(CARRIER_HZ.get(self.letter, {}))

    @property
    def record_types(self) -> tuple:
        """The navigation record types (``nav_type``) that serve this system."""
        return tuple(self.clock_signal)

    @property
    def has_elements(self) -> bool:
        """Do its broadcast records carry Keplerian elements (e, sqrt(A), E)?"""
        return self.orbit_model == ORBIT_KEPLERIAN

    @property
    def polynomial_holds_periodic(self) -> bool:
        """Is the periodic relativistic term already inside the broadcast clock?"""
        return not self.user_applies_periodic


_GPS_RULE = "IS-GPS-200 20.3.3.3.3.1 (published)"
_KEPLER = {"orbit_model": ORBIT_KEPLERIAN, "reference_column": "toe", "clock_columns": POLYNOMIAL,
           "clock_week_fold": True, "user_applies_periodic": True}

SYSTEM_MODELS: dict[str, SystemModel] = {m.letter: m for m in (
    SystemModel("G", SYSTEMS["G"], periodic_note=_GPS_RULE, nominal_rate=-GPS_FACTORY_FREQUENCY_OFFSET,
                clock_signal={"LNAV": "L1 P(Y) / L2 P(Y) ionosphere-free combination",
                              # IS-GPS-200 30.3.3.3.1.1 (CNAV) and IS-GPS-800 3.5.3 (CNV2): the same
                              # reference; the ISCs move it to L1 C/A, L2C, L5, L1C (from memory)
                              "CNAV": "L1 P(Y) / L2 P(Y) ionosphere-free combination",
                              "CNV2": "L1 P(Y) / L2 P(Y) ionosphere-free combination"},
                precise_clock_signal="L1 P(Y) / L2 P(Y) ionosphere-free (C1W/C2W), as the broadcast clock",
                **_KEPLER),
    SystemModel("E", SYSTEMS["E"], periodic_note="Galileo OS SIS ICD 5.1.4, same form with Galileo mu "
                                                 "(section number from memory)",
                clock_signal={"INAV": "E1 / E5b ionosphere-free combination",
                              "FNAV": "E1 / E5a ionosphere-free combination"},
                precise_clock_signal="E1 / E5a ionosphere-free (C1C/C5Q)", **_KEPLER),
    SystemModel("C", SYSTEMS["C"], periodic_note="BDS-SIS-ICD 5.2.4.10, same form with CGCS2000 mu "
                                                 "(section number from memory)",
                clock_signal={"D1": "B3I single frequency", "D2": "B3I single frequency",
                              # BDS-SIS-ICD-B1C 1.0 / B2a 1.0: clock parameters refer to B3I, TGD_B1Cp,
                              # TGD_B2ap and the ISCs move them (from memory)
                              "CNV1": "B3I single frequency", "CNV2": "B3I single frequency"},
                precise_clock_signal="B1I / B3I ionosphere-free (C2I/C6I)", **_KEPLER),
    SystemModel("J", SYSTEMS["J"], periodic_note="IS-QZSS-PNT, the GPS user algorithm (from memory)",
                clock_signal={"LNAV": "L1 / L2 ionosphere-free combination (GPS convention)",
                              "CNAV": "L1 / L2 ionosphere-free combination (GPS convention)",
                              "CNV2": "L1 / L2 ionosphere-free combination (GPS convention)"},
                precise_clock_signal="L1 C/A / L2C ionosphere-free (C1C/C2L)", **_KEPLER),
    SystemModel("R", SYSTEMS["R"], orbit_model=ORBIT_STATE_VECTOR, reference_column="toc",
                # GLONASS ICD 2008 3.3.3: -tau_n + gamma_n (t - t_b); RINEX stores -tau_n and +gamma_n.
                clock_columns=("clock_bias_s", "relative_frequency_bias", None), clock_week_fold=False,
                user_applies_periodic=False,
                periodic_note="GLONASS: the periodic term is already inside the broadcast clock terms "
                              "tau_n, gamma_n (ESA Navipedia, published); reported, not applied",
                clock_signal={"FDMA": "L1 (tau_n; the L2-L1 difference Delta tau_n is not in RINEX 3 nav)"},
                precise_clock_signal="L1 P / L2 P ionosphere-free (C1P/C2P)", fdma=True),
    SystemModel("I", SYSTEMS["I"], periodic_note="IRNSS SPS ICD 1.1, the GPS form F e sqrt(A) sin E "
                                                 "added by the user (from memory)",
                clock_signal={"LNAV": "L5 / S ionosphere-free combination (TGD for L5 single-frequency "
                                      "users; IRNSS SPS ICD 1.1, from memory)"},
                nominal_rate_note="none published in the IRNSS SPS ICD 1.1 as far as we know (from memory)",
                **_KEPLER),
    SystemModel("S", SYSTEMS["S"], orbit_model=ORBIT_SBAS_QUADRATIC, reference_column="toc",
                clock_columns=("clock_bias_s", "clock_drift_s_per_s", None), clock_week_fold=False,
                user_applies_periodic=False,
                periodic_note="undetermined: whether the SBAS GEO clock a_Gf0, a_Gf1 holds the periodic "
                              "term is not stated in any text we could check (RTCA DO-229 A.4.4.11 "
                              "gives the clock as a_Gf0 + a_Gf1 dt, from memory); below 1 ns for a "
                              "GEO; reported, not applied",
                clock_signal={"SBAS": "L1 C/A (SBAS GEO clock a_Gf0, a_Gf1; from memory)"},
                nominal_rate_note="SBAS GEO clocks are steered to GPST by the ground; no rate offset "
                                  "is published"),
)}
"""The systems gnssrel handles, by RINEX letter (module text).  Precise-clock signals: common
practice of the IGS and its multi-GNSS analysis centres (from memory; a product's header may
say otherwise, e.g. 'SYS / DCBS APPLIED')."""


def system_model(system: str) -> SystemModel:
    """The model of a system letter, or of the system of a satellite name (``G05``)."""
    try:
        return SYSTEM_MODELS[str(system)[0]]
    except (KeyError, IndexError):
        raise KeyError(f"unknown GNSS system {system!r}; gnssrel handles {ALL_SYSTEM_ORDER}") from None


def per_satellite(svs, attribute: str) -> np.ndarray:
    """One model attribute (``user_applies_periodic``, ``gm_m3_s2``, ``f_s_sqrt_m``,
    ``nominal_rate``, ...) for each satellite name; None becomes NaN for numbers."""
    values = [getattr(system_model(str(s)), attribute) for s in svs]
    if isinstance(getattr(SYSTEM_MODELS["G"], attribute), bool):
        return np.array(values, dtype=bool)
    return np.array([np.nan if v is None else v for v in values], dtype=float)
