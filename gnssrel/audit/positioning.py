"""Single-point positioning from code pseudoranges, every epoch at once.

Per epoch, weighted least squares (Gauss-Newton) for the receiver position, the
receiver clock and one inter-system clock offset per extra system.  The normal
equations of all epochs are built with ``np.bincount`` and solved as one stack
of small systems (``np.linalg.solve`` on ``(n_epoch, m, m)``), so there is no
Python loop over epochs.

* Weights (``weighting``): "elevation", sigma^2(el) = sigma0^2 (1 + 1 / sin^2 el), sigma0 = 1 m
  (common practice); "equal"; "cn0", from the logged carrier-to-noise density of each code
  (RINEX S observables, dB-Hz), sigma^2 = a + b 10^(-C/N0 / 10) with a = (0.3 m)^2 and
  b = 1.6e4 m^2 Hz (:mod:`gnssrel.audit.weights`); observations without a C/N0 (none logged, or a
  value outside 10-70 dB-Hz) take the elevation model; "auto" (the default), the C/N0 model for
  single codes with a C/N0 (low-cost receivers, phones) and the elevation model for the rest
  (ionosphere-free combinations of geodetic receivers, whose fixes the C/N0 model makes worse:
  NYA1 2024-05-03 2.60 m against 2.35 m).  Single-frequency codes add the variance of
  the broadcast ionosphere model (:func:`gnssrel.audit.ionosphere.model_variance_m2`).
* Per-system variance factors (``system_variances``, on by default): with several systems, each
  system's weights are scaled by the robust variance of its normalized residuals in this log,
  relative to the first system's, iterated until they settle (variance component estimation,
  common practice): a phone's GPS C/A code is often noisier than its Galileo E1 pilot at the
  same C/N0 (GEOP 2024-04-01: factor 0.23-0.29 for Galileo against GPS).
* Elevation mask ``elevation_mask_deg`` (default 10 deg), applied once the
  position has converged to within a kilometre (the first steps start from the
  Earth's centre, where elevations mean nothing); troposphere, ionosphere and
  Shapiro delay are modelled from then on too.
* Outlier rejection: after convergence, per epoch, the largest residual is
  dropped when it exceeds max(``reject_m``, 5 a-priori sigma of its weight) and
  the epoch solved again (up to four rounds); an epoch needs one more
  observation than unknowns for any check, otherwise it is solved as it is.
* Then fault detection and exclusion by the residual (chi-square) test, the minimum-satellite
  gate and the DOP gate: :mod:`gnssrel.audit.integrity` (false-alarm probability 1e-3, PDOP <= 10,
  4 satellites by default).
* The receiver clock: the transmit time of each observation comes from its own pseudorange
  (:mod:`gnssrel.audit.satellites`: t_tx = t_rx - P/c - dt_sv), and P/c already holds the
  receiver clock offset dt_r, so the satellite position is taken at the true transmit time
  t_rx - dt_r - rho/c and the Earth's rotation over the true flight time whatever dt_r is
  (milliseconds for low-cost receivers: 4 ms would be 15 m of satellite motion otherwise).
  The receiver's time tag itself is used only where a millisecond does not matter (ephemeris
  choice, troposphere day of year, local time of the ionosphere model).
* ``terms`` switches the relativistic pieces (see :mod:`gnssrel.audit.corrections`).

Returns a pandas DataFrame, one row per epoch: ``time``, ``x_m``, ``y_m``, ``z_m``,
``clock_m`` (receiver clock of the first system, metres), ``n_used``, ``n_excluded`` (by the
outlier step and the residual test), ``rms_m``, ``gdop``, ``pdop``, ``hdop``, ``vdop``,
``test_statistic`` (T) and ``test_threshold`` (its limit), ``no_fix_reason`` ("" where the
epoch has a position); positions NaN where an epoch has too few observations or fails a gate.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.audit import integrity, ionosphere
from gnssrel.audit.corrections import atmosphere_m, line_of_sight, modelled_pseudorange_m, resolve_terms
from gnssrel.audit.weights import cn0_variance_m2, observation_cn0_variance_m2
from gnssrel.constants import SYSTEM_ORDER

SIGMA0_M = 1.0
WEIGHTINGS = ("auto", "elevation", "equal", "cn0")
MAX_REJECTION_ROUNDS = 4
VARIANCE_ROUNDS = 4
"""Rounds of the per-system variance factors at most (they settle within 10 % in two or three)."""
MIN_REDUNDANCY = 0.2
"""Observations with a smaller redundancy number (1 - leverage) say too little about their noise."""
MIN_CHECKED = 30
"""Observations of a system needed for its variance factor."""
FACTOR_RANGE = (0.01, 100.0)
"""Limits of a per-system variance factor (relative to the first system)."""
__all__ = ["WEIGHTINGS", "cn0_variance_m2", "observation_cn0_variance_m2", "position_errors_3d_m",
           "single_point_positions"]


def _normal_equations(design, resid, weight, epoch, n_epoch):
    m = design.shape[1]
    n_mat = np.empty((n_epoch, m, m))
    rhs = np.empty((n_epoch, m))
    for i in range(m):
        wi = weight * design[:, i]
        rhs[:, i] = np.bincount(epoch, weights=wi * resid, minlength=n_epoch)
        for j in range(i, m):
            n_mat[:, i, j] = n_mat[:, j, i] = np.bincount(epoch, weights=wi * design[:, j], minlength=n_epoch)
    return n_mat, rhs


class _Problem:
    """The fixed parts of one positioning run (observations, design layout, options)."""

    def __init__(self, obs, n_epoch, terms, elevation_mask_deg, ionosphere_header, weighting="elevation"):
        if weighting not in WEIGHTINGS:
            raise ValueError(f"weighting must be one of {', '.join(WEIGHTINGS)}, not {weighting!r}")
        self.weighting = weighting
        self.obs, self.n_epoch, self.terms = obs, n_epoch, terms
        self.mask_rad = np.radians(elevation_mask_deg)
        self.iono_header = ionosphere_header
        self.epoch = obs["epoch"]
        self.cn0_var = None
        if weighting in ("cn0", "auto"):
            self.cn0_var = observation_cn0_variance_m2(obs)
            if weighting == "auto":          # C/N0 for single codes only; combinations by elevation
                self.cn0_var = np.where(np.isfinite(obs["frequency_hz"]), self.cn0_var, np.nan)
        usable = np.isfinite(obs["pseudorange_m"]) & np.all(np.isfinite(obs["satellite_ecef_m"]), axis=1)
        # The receiver clock refers to the first usable system in G E C J R order; each other
        # system gets an offset. A system with no usable observation (e.g. no navigation
        # records) gets no unknown at all, so it cannot make the fixes singular.
        present = set(np.unique(obs["system"][usable]).tolist())
        systems = [s for s in SYSTEM_ORDER if s in present]
        self.n_unknown = 3 + max(len(systems), 1)    # x, y, z, clock, one offset per extra system
        lookup = {s: k for k, s in enumerate(systems)}
        self.sys_index = np.array([lookup.get(s, -1) for s in obs["system"]], dtype=np.int64)
        self.base = np.zeros((self.epoch.size, self.n_unknown))
        self.base[self.sys_index >= 0, 3] = 1.0
        extra = self.sys_index > 0
        self.base[np.flatnonzero(extra), 3 + self.sys_index[extra]] = 1.0
        self.n_estimated = np.full(n_epoch, self.n_unknown)
        self.variance_scale = np.ones(self.epoch.size)     # per-system factors, once estimated

    def residuals(self, state, near):
        """Pre-fit residuals, design rows and weights at the current state."""
        obs, ep = self.obs, self.epoch
        rx = state[ep, :3]
        near_obs = near[ep]
        with np.errstate(divide="ignore", invalid="ignore"):   # Shapiro at the Earth's centre
            los = line_of_sight(obs, rx, sagnac=self.terms["sagnac"])
        los["shapiro_m"] = np.where(near_obs, los["shapiro_m"], 0.0)   # as the atmosphere: once near
        tropo, iono = atmosphere_m(obs, rx, los["elevation_rad"], los["azimuth_rad"], self.iono_header)
        tropo = np.where(near_obs, tropo, 0.0)
        iono = np.where(near_obs & np.isfinite(iono), iono, 0.0)
        clock = np.einsum("ij,ij->i", self.base[:, 3:], state[ep, 3:])
        resid = obs["pseudorange_m"] - modelled_pseudorange_m(obs, los, tropo, iono, clock, self.terms)
        design = self.base.copy()
        design[:, :3] = -los["unit_los"]
        el = los["elevation_rad"]
        sin_el = np.where(near_obs, np.maximum(np.sin(el), 0.05), 1.0)
        if self.weighting == "equal":
            weight = np.full(el.shape, 1.0 / SIGMA0_M**2)
        else:                               # sigma^2 = sigma0^2 (1 + 1/sin^2 el), common practice
            weight = 1.0 / (SIGMA0_M**2 * (1.0 + 1.0 / sin_el**2))
            if self.cn0_var is not None:    # C/N0 where logged (module text)
                weight = np.where(np.isfinite(self.cn0_var), 1.0 / self.cn0_var, weight)
        # single-frequency codes: the broadcast ionosphere model's error adds its variance (issue 13, helper F)
        weight = weight / (1.0 + weight * ionosphere.model_variance_m2(iono))
        weight = np.where(near_obs & (el < self.mask_rad), 0.0, weight / self.variance_scale)
        return resid, design, weight

    def normal_matrix(self, design, resid, weight):
        """Normal equations per epoch, with unit diagonal for a system clock no row estimates;
        also sets ``n_estimated`` (the unknowns really estimated per epoch)."""
        n_mat, rhs = _normal_equations(design, resid, weight, self.epoch, self.n_epoch)
        # A system with no usable observation at an epoch (e.g. observed but without
        # navigation records) leaves its clock column empty: hold that unknown where it is
        # (unit diagonal, zero right-hand side) and count only the unknowns really estimated.
        k = np.arange(self.n_unknown)
        empty = n_mat[:, k, k] == 0.0
        empty[:, :4] = False
        epochs_empty, columns_empty = np.nonzero(empty)
        n_mat[epochs_empty, columns_empty, columns_empty] = 1.0
        self.n_estimated = self.n_unknown - empty.sum(axis=1)
        return n_mat, rhs

    def masked(self, state, near, active):
        """Residuals, design and weights with the rows not in use zeroed; and the rows in use."""
        return _masked(*self.residuals(state, near), active)

    def gauss_newton(self, state, near, active, max_iterations):
        for _ in range(max_iterations):
            resid, design, weight, used = self.masked(state, near, active)
            n_used = np.bincount(self.epoch, weights=used.astype(float), minlength=self.n_epoch)
            n_mat, rhs = self.normal_matrix(design, resid, weight)
            solvable = n_used >= self.n_estimated
            solvable[solvable] &= np.linalg.cond(n_mat[solvable]) < 1e12
            step = np.zeros_like(state)
            if solvable.any():
                step[solvable] = np.linalg.solve(n_mat[solvable], rhs[solvable][..., None])[..., 0]
            state = state + step
            size = np.linalg.norm(step[:, :3], axis=1)
            was_near = near
            near = near | (solvable & (size < 1000.0) & (np.linalg.norm(state[:, :3], axis=1) > 6.0e6))
            done = ~solvable | ((size < 1e-3) & was_near)
            if done.all():
                break
        return state, near, solvable, n_used


def _masked(resid, design, weight, active):
    weight = np.where(active & np.isfinite(resid), weight, 0.0)
    used = weight > 0
    return np.where(used, resid, 0.0), np.where(used[:, None], design, 0.0), weight, used


def single_point_positions(obs: dict, n_epoch: int, times, terms=None, elevation_mask_deg: float = 10.0,
                           initial_ecef_m=None, ionosphere_header=None, reject_m: float = 30.0,
                           max_iterations: int = 15, weighting: str = "auto",
                           diagnostics: dict | None = None, *,
                           false_alarm: float | None = integrity.DEFAULT_FALSE_ALARM,
                           variance_factor: float | None = None,
                           max_pdop: float | None = integrity.DEFAULT_MAX_PDOP,
                           min_satellites: int = integrity.DEFAULT_MIN_SATELLITES,
                           max_exclusions: int = integrity.DEFAULT_MAX_EXCLUSIONS,
                           system_variances: bool = True, screening: dict | None = None) -> pd.DataFrame:
    """Positions of every epoch from the prepared observations (:func:`prepare_observations`).

    ``n_epoch`` and ``times`` describe the epoch grid that ``obs["epoch"]`` indexes.
    ``weighting``: "auto" (C/N0 for single codes where logged, else elevation), "elevation"
    (variance 1 + 1/sin^2 el), "equal" or "cn0" (module text).  The choice matters for what a misapplied term does to a fix (NYA1 2024-05-03, GPS, periodic
    term omitted: median 3D error 8.85 m elevation-weighted, 7.50 m with equal weights;
    2.36 / 2.39 m with it applied).
    ``false_alarm``: the residual test's false-alarm probability per epoch (None: no test);
    ``variance_factor``: s0^2 of the test (None: estimated from the log);
    ``max_pdop``: the DOP gate (None: none); ``min_satellites``: the satellite gate;
    ``max_exclusions``: exclusion rounds per epoch at most (:mod:`gnssrel.audit.integrity`).
    ``system_variances``: estimate a variance factor per system from the log (module text).
    ``screening``: the ``diagnostics`` of an earlier run on the same observations (the reference
    hypothesis): its observations, variance factors and s0^2 are taken as they are, with no
    rejection or exclusion of this run's own, so that fixes under several hypotheses differ by
    the hypothesis alone (the residual test is still computed and reported).
    ``diagnostics``: a dict that receives ``reasons``, per observation "" where it was used
    in its epoch's fix, else why not (no satellite clock, below the elevation mask, outlier,
    excluded by the residual test, epoch without a position); ``excluded_by_satellite``
    ({sv: count}); ``variance_factor`` (s0^2 of the test); ``system_variance_factors``;
    ``active`` and ``gross`` (bool per observation: used; rejected as a gross outlier); the
    counts of the accounting come from them.
    """
    problem = _Problem(obs, n_epoch, resolve_terms(terms), elevation_mask_deg, ionosphere_header, weighting)
    epoch = problem.epoch
    has_state = np.isfinite(obs["pseudorange_m"]) & np.all(np.isfinite(obs["satellite_ecef_m"]), axis=1)
    active = has_state & np.isfinite(obs["satellite_clock_s"])
    candidates = active.copy()
    state = np.zeros((n_epoch, problem.n_unknown))
    near = np.zeros(n_epoch, bool)
    if initial_ecef_m is not None:
        state[:, :3] = np.asarray(initial_ecef_m, dtype=float)
    if screening is not None:
        return _screened(problem, obs, times, state, screening, candidates, has_state, diagnostics,
                         max_iterations, max_pdop, min_satellites, variance_factor, false_alarm)
    state, near, solvable, n_used = problem.gauss_newton(state, near, active, max_iterations)
    for _ in range(MAX_REJECTION_ROUNDS):                 # gross outliers: the worst one per epoch
        resid, _, weight = problem.residuals(state, near)
        post = np.where(active & (weight > 0), np.abs(resid), np.nan)
        worst = integrity.worst_of_epoch(post, epoch)
        limit = np.maximum(reject_m, 5.0 / np.sqrt(np.where(weight > 0, weight, np.inf)))  # 5 a-priori sigma
        ep_w = epoch[worst]
        bad = worst[(post[worst] > limit[worst]) & (n_used[ep_w] > problem.n_estimated[ep_w])]
        if bad.size == 0:
            break
        active[bad] = False
        state, near, solvable, n_used = problem.gauss_newton(state, near, active, max_iterations)
    gross = candidates & ~active
    factors: dict[str, float] = {}
    if system_variances and len(set(obs["system"][active].tolist())) > 1:
        for _ in range(VARIANCE_ROUNDS):     # each system's residuals soak up less of the others' noise
            update = _system_variance_factors(problem, state, near, active)
            if not update:
                break
            factors = {s: factors.get(s, 1.0) * f for s, f in update.items()}
            problem.variance_scale = np.array([factors.get(s, 1.0) for s in obs["system"]])
            state, near, solvable, n_used = problem.gauss_newton(state, near, active, max_iterations)
            if max(abs(np.log(f)) for f in update.values()) < np.log(1.1):   # settled within 10 %
                break
    test = _residual_test(problem, state, near, active, n_used, solvable, false_alarm, variance_factor,
                          min_satellites, max_exclusions, max_iterations)
    return _finish(problem, obs, times, test, active, candidates, gross, has_state, factors, diagnostics,
                   max_pdop, min_satellites)


def _screened(problem, obs, times, state, screening, candidates, has_state, diagnostics, max_iterations,
              max_pdop, min_satellites, variance_factor, false_alarm):
    """A run on the observations, factors and s0^2 of an earlier run (``screening``)."""
    active = candidates & screening["active"]
    gross = candidates & screening["gross"]
    factors = dict(screening.get("system_variance_factors") or {})
    if factors:
        problem.variance_scale = np.array([factors.get(s, 1.0) for s in obs["system"]])
    near = np.zeros(problem.n_epoch, bool)
    state, near, solvable, n_used = problem.gauss_newton(state, near, active, max_iterations)
    s0 = screening.get("variance_factor") if variance_factor is None else variance_factor
    test = _residual_test(problem, state, near, active, n_used, solvable, false_alarm, s0,
                          min_satellites, 0, max_iterations)
    return _finish(problem, obs, times, test, active, candidates, gross, has_state, factors, diagnostics,
                   max_pdop, min_satellites)


def _finish(problem, obs, times, test, active, candidates, gross, has_state, factors, diagnostics,
            max_pdop, min_satellites) -> pd.DataFrame:
    """Gates, DOP, per-observation reasons and the per-epoch table of a run."""
    epoch, n_epoch = problem.epoch, problem.n_epoch
    state, near, solvable, n_used, statistic, threshold, s0_squared = test
    raw_resid, raw_design, raw_weight = problem.residuals(state, near)
    resid, design, _, used = _masked(raw_resid, raw_design, raw_weight, active)
    rms = np.sqrt(np.bincount(epoch, weights=resid**2, minlength=n_epoch) / np.maximum(n_used, 1))
    dop = integrity.dilution_of_precision(design, used, epoch, n_epoch, state[:, :3])
    epoch_reason = np.full(n_epoch, "", dtype=object)
    epoch_reason[~(solvable & near) | (n_used < min_satellites)] = NO_FIX
    if max_pdop is not None:
        epoch_reason[(epoch_reason == "") & ~(dop["pdop"] <= max_pdop)] = DOP_GATE
    ok = epoch_reason == ""
    n_excluded = np.bincount(epoch, weights=(candidates & ~active).astype(float), minlength=n_epoch)
    if diagnostics is not None:
        diagnostics["reasons"] = _observation_reasons(has_state, candidates, gross, active, raw_weight, raw_resid,
                                                      epoch_reason[epoch])
        faulty = candidates & ~active & ~gross
        names, counts = np.unique(obs["sv"][faulty], return_counts=True)
        diagnostics["excluded_by_satellite"] = {str(k): int(v) for k, v in zip(names, counts)}
        diagnostics["variance_factor"] = s0_squared
        diagnostics["system_variance_factors"] = factors
        diagnostics["active"], diagnostics["gross"] = active.copy(), gross.copy()
    out = np.where(ok[:, None], state, np.nan)
    return pd.DataFrame({"time": np.asarray(times), "x_m": out[:, 0], "y_m": out[:, 1], "z_m": out[:, 2],
                         "clock_m": out[:, 3], "n_used": n_used.astype(int), "n_excluded": n_excluded.astype(int),
                         "rms_m": np.where(ok, rms, np.nan),
                         **{name: dop[name] for name in ("gdop", "pdop", "hdop", "vdop")},
                         "test_statistic": statistic, "test_threshold": threshold,
                         "no_fix_reason": epoch_reason.astype(str)})


def _system_variance_factors(problem, state, near, active) -> dict[str, float]:
    """Per system, the robust variance of the normalized post-fit residuals r sqrt(w / (1 - h))
    ((1.4826 MAD)^2), relative to the first system's: how much noisier than the weight model
    says each system's codes are in this log (variance component estimation, common practice;
    a phone's GPS C/A code is often noisier than its Galileo E1 pilot at the same C/N0)."""
    resid, design, weight, used = problem.masked(state, near, active)
    n_mat, _ = problem.normal_matrix(design, resid, weight)
    n_inverse = np.zeros_like(n_mat)
    ok = np.linalg.cond(n_mat) < 1e12
    n_inverse[ok] = np.linalg.inv(n_mat[ok])
    used = used & ok[problem.epoch]
    redundancy = 1.0 - integrity.leverage(design, weight, used, problem.epoch, n_inverse)
    # only observations that other observations check (a system's lone satellite of an epoch
    # has its residual taken up whole by that system's clock: redundancy 0)
    checked = used & (redundancy > MIN_REDUNDANCY)
    z = np.where(checked, resid * np.sqrt(weight / np.where(checked, redundancy, 1.0)), np.nan)
    systems = problem.obs["system"]
    factors = {}
    for s in [s for s in SYSTEM_ORDER if s in set(systems.tolist())]:
        zs = z[(systems == s) & np.isfinite(z)]
        if zs.size >= MIN_CHECKED:
            factors[s] = float((1.4826 * np.median(np.abs(zs - np.median(zs)))) ** 2)
    factors = {s: f for s, f in factors.items() if f > 0}
    if len(factors) < 2:
        return {}
    first = next(iter(factors.values()))
    return {s: float(np.clip(f / first, *FACTOR_RANGE)) for s, f in factors.items()}


def _residual_test(problem, state, near, active, n_used, solvable, false_alarm, variance_factor,
                   min_satellites, max_exclusions, max_iterations):
    """The residual test with exclusion of the worst (:mod:`gnssrel.audit.integrity`); ``active``
    is updated in place.  Returns the new (state, near, solvable, n_used), the statistic and
    threshold per epoch, and s0^2."""
    epoch, n_epoch = problem.epoch, problem.n_epoch
    s0_squared = np.nan
    for round_ in range(max_exclusions + 1):
        resid, design, weight, used = problem.masked(state, near, active)
        statistic = integrity.per_epoch_sum(weight * resid**2, epoch, n_epoch)
        dof = n_used - problem.n_estimated
        testable = solvable & near & (dof >= 1)
        statistic = np.where(testable, statistic, np.nan)
        if round_ == 0:
            s0_squared = float(variance_factor) if variance_factor is not None else \
                integrity.variance_of_unit_weight(statistic, np.where(testable, dof, 0))
        if false_alarm is None:
            threshold = np.full(n_epoch, np.nan)
            break
        threshold = s0_squared * integrity.chi2_threshold(np.where(testable, dof, 0), false_alarm)
        failing = testable & (statistic > threshold)
        room = failing & (dof >= 2) & (n_used - 1 >= min_satellites)
        if round_ == max_exclusions or not room.any():
            break
        n_mat, _ = problem.normal_matrix(design, resid, weight)
        n_inverse = np.zeros_like(n_mat)
        n_inverse[room] = np.linalg.inv(n_mat[room])
        norm = integrity.normalized_residuals(resid, design, weight, used & room[epoch], epoch, n_inverse)
        worst = integrity.worst_of_epoch(norm, epoch)
        active[worst] = False
        state, near, solvable, n_used = problem.gauss_newton(state, near, active, max_iterations)
    return state, near, solvable, n_used, statistic, threshold, s0_squared


NO_CLOCK = "no satellite clock"
BELOW_MASK = "below the elevation mask"
OUTLIER = "outlier"
EXCLUDED = integrity.EXCLUDED
NO_FIX = "epoch without a position (too few satellites)"
DOP_GATE = "epoch without a position (PDOP above the gate)"
NO_MODEL = "no modelled value"


def _observation_reasons(has_state, candidates, gross, active, weight, resid, epoch_reason) -> np.ndarray:
    """Per observation: "" where it was used in its epoch's fix, else the first reason that applies
    (an observation without a state gets "": the caller knows why it has none)."""
    reasons = np.full(has_state.size, "", dtype=object)
    conditions = [(has_state & ~candidates, NO_CLOCK), (gross, OUTLIER), (candidates & ~active, EXCLUDED),
                  (active & ~(weight > 0), BELOW_MASK), (active & (weight > 0) & ~np.isfinite(resid), NO_MODEL),
                  (active & (epoch_reason != ""), epoch_reason)]
    for mask, reason in reversed(conditions):   # the first listed wins
        if isinstance(reason, np.ndarray):
            reasons[mask] = reason[mask]
        else:
            reasons[mask] = reason
    return reasons


def position_errors_3d_m(positions: pd.DataFrame, reference_ecef_m) -> np.ndarray:
    """3-D distance of each epoch's position from a reference ECEF point."""
    xyz = positions[["x_m", "y_m", "z_m"]].to_numpy()
    return np.linalg.norm(xyz - np.asarray(reference_ecef_m, float), axis=1)
