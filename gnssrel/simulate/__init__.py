"""simulate stage: the invented demo scenario and every file it writes.

The simulated truth is computed by separate code from the stages it is used to
check: the simulator has its own Kepler propagation (``kepler``), light time with
Earth rotation, Shapiro delay, troposphere and Klobuchar ionosphere
(``propagation``), and does not call ``gnssrel.orbits``, ``gnssrel.relativity``,
``gnssrel.clocks`` or ``gnssrel.audit``.  So when the audit agrees with the
scenario's truth, that agreement is a real check, not the same code meeting itself.

The survey scenario (``survey``, ``write_survey``: one static station with carrier phase) adds its
own wind-up and Sun (``windup``), solid-Earth tide and Moon (``tides``) and Niell mapping (``niell``),
written apart from the estimator's for the same reason.

What is shared is what is not being checked: WGS-84 geodetic conversions and local
azimuth/elevation (``gnssrel.geodesy``), the carrier frequencies (``gnssrel.signals``),
the constants (``gnssrel.constants``), time scales (``gnssrel.timescales``), the error
classes (``gnssrel.errors``) and the output writers (``gnssrel.io.writers``).
"""
