"""Per-system relativity conventions, as data: the rows of :data:`gnssrel.systems.SYSTEM_MODELS`.

Per system letter the model says whether the user adds the periodic term to the broadcast
clock (``user_applies_periodic``, with its source in ``periodic_note``), which mu (and so
which F = -2 sqrt(mu)/c^2) the specification form uses (``gm_m3_s2``, ``f_s_sqrt_m``), and
which published factory frequency offset (if any) the satellite's mean rate is compared
with (``nominal_rate``).  The relativity stage looks them up here under the names it has
always used; there is no per-system ``if`` in the stage.
"""

from __future__ import annotations

from gnssrel.systems import SYSTEM_MODELS, SystemModel, per_satellite, system_model

__all__ = ["RULES", "RelativityRule", "per_satellite", "rule_for"]

RelativityRule = SystemModel
"""A rule is a system model row (fields above)."""

RULES: dict[str, SystemModel] = SYSTEM_MODELS
"""The rules by system letter."""


def rule_for(sv: str) -> SystemModel:
    """The rule of the system a satellite name (``G05``) belongs to (KeyError for an unknown system)."""
    return system_model(sv)
