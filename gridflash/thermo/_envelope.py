"""Phase envelopes of a feed: bubble and dew branches, critical point, cricondenbar and
cricondentherm, traced by Newton continuation (Michelsen 1980).

The compiled continuation and its equations are described in
:mod:`gridflash.thermo.kernels.envelope`; this module validates the input, removes components
absent from the feed, labels the branches, checks every traced point against the flash and
confirms the critical point with :func:`gridflash.thermo.critical_point`.
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .._errors import InputError
from ._critical import critical_point, eos_tuple
from ._cubic import R
from ._mixture import Mixture
from ._saturation import pure_vapour_pressure
from .kernels import envelope as _ke

__all__ = ["EnvelopeBranch", "EnvelopeStatus", "PhaseEnvelope", "phase_envelope"]

FloatArray = NDArray[np.float64]

_P_START = 1.0e5  # Pa: the dew branch starts, and the bubble branch ends, here
_T_MIN = 100.0  # K: the bubble branch stops at this temperature
_P_MAX = 1.0e9  # Pa: a curve rising above this is stopped
_MAX_POINTS = 400
#: Relative step either side of a traced point at which the flash is asked for its answer.
_PROBE = 1e-6
#: Largest vapour fraction (or 1 - vapour fraction) of the two-phase side of a confirmed point.
_PROBE_BETA = 1e-3
#: Relative agreement asked of the critical-point solver and the interpolated crossing.
_CRIT_RTOL = 0.02


class EnvelopeStatus(enum.IntEnum):
    """Outcome codes of :func:`phase_envelope`.

    ``COMPLETE`` and ``TEMPERATURE_LIMIT`` are whole envelopes; the others are partial (the
    points traced before the failure are kept) or empty (``NO_START``).
    """

    COMPLETE = _ke.ENV_COMPLETE
    TEMPERATURE_LIMIT = _ke.ENV_TEMPERATURE_LIMIT
    NO_START = _ke.ENV_NO_START
    STEP_FAILURE = _ke.ENV_STEP_FAILURE
    MAX_POINTS = _ke.ENV_MAX_POINTS
    PRESSURE_LIMIT = _ke.ENV_PRESSURE_LIMIT
    METASTABLE = _ke.ENV_METASTABLE
    NO_CRITICAL = _ke.ENV_NO_CRITICAL


class EnvelopeBranch(enum.IntEnum):
    """Kind of each envelope point (the same codes as the store's saturation kinds)."""

    NONE = _ke.BRANCH_NONE
    BUBBLE_POINT = _ke.BRANCH_BUBBLE
    DEW_POINT = _ke.BRANCH_DEW
    VAPOUR_PRESSURE = _ke.BRANCH_VAPOUR_PRESSURE
    CRITICAL_POINT = _ke.BRANCH_CRITICAL


@dataclass(frozen=True, eq=False)
class PhaseEnvelope:
    """A traced phase envelope of one feed.

    Attributes
    ----------
    temperature, pressure : ndarray, shape (n_points,)
        K and Pa, in tracing order: dew branch from the start pressure upwards, the critical
        point, the bubble branch downwards.
    branch : ndarray of int8, shape (n_points,)
        :class:`EnvelopeBranch` of each point.
    incipient : ndarray, shape (n_points, nc)
        Composition of the incipient phase (the feed itself at the critical point).
    confirmed : ndarray of bool, shape (n_points,)
        The flash changes its phase count at the point: one phase a relative ``1e-6`` to one
        side in pressure or temperature, two phases with a vapour fraction within ``1e-3`` of
        0 or 1 to the other. False where another phase appears first (the traced curve is
        metastable there) or the flash cannot tell (e.g. at the critical point).
    critical_temperature, critical_pressure : float
        NaN where the trace did not cross a critical point.
    critical_confirmed : bool
        The critical-point solver (:func:`critical_point`) converged within 2% of the crossing
        of the trace; its answer is then the one reported, otherwise the interpolated crossing.
    cricondenbar_temperature, cricondenbar_pressure : float
        The point of largest pressure (NaN where it is not inside the traced part).
    cricondentherm_temperature, cricondentherm_pressure : float
        The point of largest temperature.
    status : EnvelopeStatus
    """

    temperature: FloatArray
    pressure: FloatArray
    branch: NDArray[np.int8]
    incipient: FloatArray
    confirmed: NDArray[np.bool_]
    critical_temperature: float
    critical_pressure: float
    critical_confirmed: bool
    cricondenbar_temperature: float
    cricondenbar_pressure: float
    cricondentherm_temperature: float
    cricondentherm_pressure: float
    status: EnvelopeStatus

    @property
    def complete(self) -> bool:
        """The whole envelope was traced (status ``COMPLETE`` or ``TEMPERATURE_LIMIT``)."""
        return self.status in (EnvelopeStatus.COMPLETE, EnvelopeStatus.TEMPERATURE_LIMIT)

    def __len__(self) -> int:
        return int(self.temperature.shape[0])


def phase_envelope(
    mixture: Mixture,
    z: ArrayLike,
    *,
    start_pressure: float = _P_START,
    min_temperature: float = _T_MIN,
    max_pressure: float = _P_MAX,
    max_points: int = _MAX_POINTS,
    check: bool = True,
) -> PhaseEnvelope:
    """Trace the phase envelope (bubble and dew curves) of a feed.

    Parameters
    ----------
    mixture : Mixture
    z : array_like, shape (nc,)
        Feed mole fractions (summing to 1 within 1e-6); components may be zero.
    start_pressure : float
        Pa. The dew branch starts here and the bubble branch ends here.
    min_temperature : float
        K. The bubble branch stops here if it has not reached ``start_pressure``.
    max_pressure : float
        Pa. A curve still rising above this is stopped (status ``PRESSURE_LIMIT``).
    max_points : int
        Size of the point buffer (status ``MAX_POINTS`` when full).
    check : bool
        Flash either side of every point (:attr:`PhaseEnvelope.confirmed`); an envelope with an
        unconfirmed point away from the critical point gets status ``METASTABLE``.

    Returns
    -------
    PhaseEnvelope

    Raises
    ------
    InputError
        Bad feed (shape, negative or non-finite fractions, sum not 1) or limits.

    Notes
    -----
    The continuation is Michelsen's (Fluid Phase Equilib. 4 (1980) 1): the envelope equations
    at vapour fraction 1 in ``(ln K, ln T, ln P)`` are solved point by point, starting from the
    dew point at ``start_pressure`` (Wilson K-values), with the specified variable chosen by
    sensitivity and the step adapted to the Newton iteration count. The curve is followed
    through the critical point (where every ``ln K`` changes sign; the step is made across it)
    onto the bubble branch; see :mod:`gridflash.thermo.kernels.envelope`. Points before the
    crossing are dew points, after it bubble points. The critical point is then solved from
    the Heidemann-Khalil conditions (:func:`critical_point`) started at the crossing; the
    cricondenbar and cricondentherm are the zeros of ``d ln P`` and ``d ln T`` along the curve,
    refined by regula falsi between the traced points that bracket them.

    A single-component feed has no two-phase area: its envelope is the EOS vapour-pressure
    curve (:func:`pure_vapour_pressure`) from ``start_pressure`` (or ``min_temperature``) up
    to the critical point ``(Tc, Pc)``, which is also its cricondenbar and cricondentherm.

    Every point is solved to ``max |F| < 1e-11``. The envelope equations only know two phases:
    where a third phase (or another liquid) would appear before the traced one, the traced
    curve is metastable; ``check`` finds this with the flash and flags it rather than
    reporting the curve as the phase boundary.

    Examples
    --------
    >>> import gridflash
    >>> mix = gridflash.Mixture(["C1", "nC4"])
    >>> env = gridflash.thermo.phase_envelope(mix, [0.6, 0.4])
    >>> bool(env.complete), round(env.critical_temperature)
    (True, 354)
    """
    zz = _feed(mixture, z)
    for name, value in (("start_pressure", start_pressure), ("min_temperature", min_temperature),
                        ("max_pressure", max_pressure)):
        if not (isinstance(value, int | float) and math.isfinite(value) and value > 0):
            raise InputError(f"{name}={value!r} must be a positive number")
    if max_pressure <= start_pressure:
        raise InputError(f"max_pressure={max_pressure!r} must exceed start_pressure")
    if isinstance(max_points, bool) or not isinstance(max_points, int) or max_points < 8:
        raise InputError(f"max_points={max_points!r} must be an integer of at least 8")
    present = np.flatnonzero(zz > 0.0)
    if present.size == 1:
        return _pure_envelope(mixture, zz, int(present[0]), start_pressure, min_temperature,
                              max_points)
    env = _trace(mixture, zz, present, start_pressure, min_temperature, max_pressure, max_points)
    if check and len(env):
        env = _checked(mixture, zz, env)
    return env


def _feed(mixture: Mixture, z: ArrayLike) -> FloatArray:
    if not isinstance(mixture, Mixture):
        raise InputError(f"mixture must be a gridflash.Mixture, got {type(mixture).__name__}")
    zz = np.asarray(z, dtype=float)
    nc = mixture.n_components
    if zz.shape != (nc,):
        raise InputError(f"z has shape {zz.shape}, expected ({nc},) for {nc} components")
    if not np.all(np.isfinite(zz)) or np.any(zz < 0.0):
        raise InputError(f"z = {zz.tolist()!r} must hold finite, non-negative mole fractions")
    if abs(zz.sum() - 1.0) > 1e-6:
        raise InputError(f"z sums to {zz.sum()!r}; mole fractions must sum to 1 within 1e-6")
    return zz / zz.sum()


def _trace(mixture, zz, present, p_start, t_min, p_max, max_points) -> PhaseEnvelope:
    nc_all = zz.shape[0]
    sub = zz[present]
    eos = eos_tuple(mixture, present)
    nc = sub.size
    model = mixture.model
    pts = np.zeros((max_points, nc + 2))
    taus = np.zeros_like(pts)
    zinfo = np.zeros((max_points, 2))
    count, status, crossing, c_lnt, c_lnp = _ke.envelope_trace(
        eos, np.ascontiguousarray(model.pc[present]), np.ascontiguousarray(model.omega[present]),
        sub, 1.0, math.log(p_start), math.log(t_min), math.log(p_max), pts, taus, zinfo,
    )
    pts, taus = pts[:count], taus[:count]
    t = np.exp(pts[:, nc])
    p = np.exp(pts[:, nc + 1])
    branch = np.full(count, _ke.BRANCH_DEW, dtype=np.int8)
    if crossing >= 0:
        branch[crossing:] = _ke.BRANCH_BUBBLE
    w = sub / np.exp(pts[:, :nc])
    incipient = np.zeros((count, nc_all))
    incipient[:, present] = w / w.sum(axis=1, keepdims=True)

    ct, cp, confirmed_crit = math.nan, math.nan, False
    if crossing >= 0:
        ct, cp = math.exp(c_lnt), math.exp(c_lnp)
        # The feed's volume at the crossing starts the critical-point solver.
        j = crossing
        zfeed = zinfo[j, 1]
        crit = critical_point(mixture, zz, temperature=ct, volume=zfeed * R * ct / cp)
        if crit.converged and abs(crit.temperature / ct - 1) < _CRIT_RTOL \
                and abs(crit.pressure / cp - 1) < _CRIT_RTOL:
            ct, cp, confirmed_crit = crit.temperature, crit.pressure, True
    extremes = []
    for var in (nc + 1, nc):  # cricondenbar (ln P), cricondentherm (ln T)
        extremes.append(_extremum(eos, sub, pts, taus, var, ct, cp))
    if crossing >= 0:
        t = np.insert(t, crossing, ct)
        p = np.insert(p, crossing, cp)
        branch = np.insert(branch, crossing, _ke.BRANCH_CRITICAL)
        incipient = np.insert(incipient, crossing, zz, axis=0)
    return PhaseEnvelope(
        temperature=t, pressure=p, branch=branch, incipient=incipient,
        confirmed=np.ones(t.shape, dtype=bool),
        critical_temperature=ct, critical_pressure=cp, critical_confirmed=confirmed_crit,
        cricondenbar_temperature=extremes[0][0], cricondenbar_pressure=extremes[0][1],
        cricondentherm_temperature=extremes[1][0], cricondentherm_pressure=extremes[1][1],
        status=EnvelopeStatus(status),
    )


def _extremum(eos, sub, pts, taus, var, ct, cp) -> tuple[float, float]:
    """(T, P) of the largest value of X[var] along the trace.

    Every pair of neighbouring points between which the curve turns from rising to falling in
    X[var] brackets a local maximum, refined by :func:`kernels.envelope.refine_extremum`; the
    largest is returned. NaN where the trace has no such pair (e.g. a partial envelope that
    stopped while still rising).
    """
    nc = sub.size
    best = (-math.inf, math.nan, math.nan)
    out = np.empty(nc + 2)
    turns = np.flatnonzero((taus[:-1, var] > 0.0) & (taus[1:, var] <= 0.0))
    for j in turns:
        if _ke.refine_extremum(eos, sub, 1.0, pts, taus, int(j), var, out):
            cand = (out[var], math.exp(out[nc]), math.exp(out[nc + 1]))
        else:  # the better of the two points and the critical point between them
            k = int(j) if pts[j, var] >= pts[j + 1, var] else int(j) + 1
            cand = (pts[k, var], math.exp(pts[k, nc]), math.exp(pts[k, nc + 1]))
            crit = math.log(cp) if var == nc + 1 else math.log(ct)
            if math.isfinite(crit) and crit > cand[0]:
                cand = (crit, ct, cp)
        if cand[0] > best[0]:
            best = cand
    return best[1], best[2]


def _checked(mixture: Mixture, zz: FloatArray, env: PhaseEnvelope) -> PhaseEnvelope:
    """Flash either side of every point in P (then in T where that does not decide it); flag
    points the flash does not confirm."""
    from ._flash import flash  # the flash is the oracle; imported here to avoid a cycle

    d = _PROBE
    confirmed = np.zeros(len(env), dtype=bool)
    todo = np.arange(len(env))
    for dp, dt in ((d, 0.0), (0.0, d)):  # pressure probes, then temperature probes
        if not todo.size:
            break
        p = env.pressure[todo]
        t = env.temperature[todo]
        r = flash(mixture, np.concatenate([p * (1 + dp), p * (1 - dp)]),
                  np.concatenate([t * (1 + dt), t * (1 - dt)]),
                  np.broadcast_to(zz, (2 * todo.size, zz.size)))
        count = r.phase_count.reshape(2, todo.size)
        beta = r.vapour_fraction.reshape(2, todo.size)
        two_ok = (count == 2) & (np.minimum(beta, 1.0 - beta) < _PROBE_BETA)
        two_ok &= r.converged.reshape(2, todo.size)
        one = count == 1
        ok = (one[0] & two_ok[1]) | (one[1] & two_ok[0])
        confirmed[todo[ok]] = True
        # Three phases next to the point: not the boundary of the two-phase region; settled.
        todo = todo[~ok & ~(count == 3).any(axis=0)]
    status = env.status
    away = env.branch != _ke.BRANCH_CRITICAL
    if env.complete and np.any(~confirmed & away & _away_from_critical(env)):
        status = EnvelopeStatus.METASTABLE
    return PhaseEnvelope(**{**env.__dict__, "confirmed": confirmed, "status": status})


def _away_from_critical(env: PhaseEnvelope) -> NDArray[np.bool_]:
    """Points farther than 2% in T and P from the critical point (where the flash's answer
    either side is not decisive)."""
    if not math.isfinite(env.critical_temperature):
        return np.ones(len(env), dtype=bool)
    dt = np.abs(env.temperature / env.critical_temperature - 1)
    dp = np.abs(env.pressure / env.critical_pressure - 1)
    return (dt > 0.02) | (dp > 0.02)


def _pure_envelope(mixture, zz, comp, p_start, t_min, max_points) -> PhaseEnvelope:
    """The vapour-pressure curve of a single-component feed, ending at (Tc, Pc)."""
    tc = float(mixture.tc[comp])
    pc = float(mixture.pc[comp])
    n = min(max_points - 1, 120)
    t_low = max(t_min, 0.3 * tc)
    s = np.linspace(1.0, 0.0, n, endpoint=False)
    t = tc - (tc - t_low) * s**2  # points gathering towards Tc
    p, _, _, ok = pure_vapour_pressure(mixture.model, np.full(n, comp), t)
    keep = ok & (p >= p_start)
    first = np.flatnonzero(keep)
    if first.size and first[0] > 0 and ok[first[0] - 1]:
        keep[first[0] - 1] = True  # one point at or below the start pressure
    t, p = t[keep], p[keep]
    t = np.append(t, tc)
    p = np.append(p, pc)
    branch = np.full(t.shape, _ke.BRANCH_VAPOUR_PRESSURE, dtype=np.int8)
    branch[-1] = _ke.BRANCH_CRITICAL
    incipient = np.broadcast_to(zz, (t.size, zz.size)).copy()
    return PhaseEnvelope(
        temperature=t, pressure=p, branch=branch, incipient=incipient,
        confirmed=np.ones(t.shape, dtype=bool),
        critical_temperature=tc, critical_pressure=pc, critical_confirmed=True,
        cricondenbar_temperature=tc, cricondenbar_pressure=pc,
        cricondentherm_temperature=tc, cricondentherm_pressure=pc,
        status=EnvelopeStatus.COMPLETE,
    )

