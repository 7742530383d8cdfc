"""Linear interpolation of sampled satellite clocks: :mod:`gnssrel.orbits.interpolation`.

The precise state builder (:mod:`gnssrel.orbits.precise`) interpolates the product's clocks
too, so the code lives in the orbits layer; its names are kept here for the clocks stage.
"""

from gnssrel.orbits.interpolation import GAP_FACTOR, interpolate_clock, nominal_interval_s

__all__ = ["GAP_FACTOR", "interpolate_clock", "nominal_interval_s"]
