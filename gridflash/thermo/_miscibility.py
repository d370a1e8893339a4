"""Minimum miscibility pressure (MMP) of an injection gas with an oil: first contact (the
cricondenbar of the P-x diagram) and multiple contact (mixing cells, Ahmadi & Johns 2011).
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .._errors import InputError
from ._flash import flash
from ._mixture import Mixture
from ._saturation import saturation_pressure

__all__ = [
    "MiscibilityResult",
    "MiscibilityStatus",
    "first_contact_mmp",
    "multi_contact_mmp",
    "upper_saturation_pressure",
]

#: Pressure ladder (Pa) that brackets an upper saturation pressure.
_LADDER = np.geomspace(1.0e5, 2.0e8, 72)
_RTOL = 1e-10
_FC_POINTS = 21  # gas fractions of the first-contact scan
_FC_TOL = 1e-4  # golden-section tolerance in gas fraction
_INV_PHI = (math.sqrt(5.0) - 1.0) / 2.0
_CONTACTS = 40  # mixing-cell contacts per pressure
_ALPHA = 0.5  # moles of upstream vapour per mole of cell contents at each contact
_TL_FLOOR = 1e-3  # tie lines shorter than this count as critical
_P_STEP = 1.08  # pressure ratio of the scan towards the MMP
_REFINE = 14  # bisections of the bracket where the shortest tie line vanishes


def upper_saturation_pressure(
    mixture: Mixture, temperature: NDArray[np.float64], z: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.int8], NDArray[np.bool_]]:
    """Upper boundary of the multiphase region of each feed at its temperature.

    The flash (:func:`gridflash.flash`) on a geometric ladder of 72 pressures from 1 bar to
    2000 bar brackets the highest pressure with more than one phase, and
    :func:`saturation_pressure` solves the boundary to a relative 1e-10.

    Returns
    -------
    pressure : ndarray, shape (n,)
        Pa; NaN where no ladder pressure has more than one phase, or its top still has.
    kind : ndarray of int8, shape (n,)
        1 bubble point, 2 dew point, 3 vapour pressure, 0 not found.
    three_phase : ndarray of bool, shape (n,)
        Three phases somewhere on the ladder (the boundary may then be a second liquid's).
    """
    t = np.asarray(temperature, dtype=float)
    zz = np.asarray(z, dtype=float)
    n, m = t.size, _LADDER.size
    r = flash(mixture, np.tile(_LADDER, n), np.repeat(t, m), np.repeat(zz, m, axis=0))
    count = r.phase_count.reshape(n, m)
    multi = count >= 2
    three = (count == 3).any(axis=1)
    has = multi.any(axis=1) & ~multi[:, -1]
    top = m - 1 - np.argmax(multi[:, ::-1], axis=1)
    p = np.full(n, np.nan)
    kind = np.zeros(n, dtype=np.int8)
    idx = np.flatnonzero(has)
    if idx.size:
        p_sat, k, _ = saturation_pressure(mixture, t[idx], zz[idx], _LADDER[top[idx]],
                                          _LADDER[top[idx] + 1], rtol=_RTOL)
        p[idx], kind[idx] = p_sat, k
    return p, kind, three


class MiscibilityStatus(enum.IntEnum):
    """Outcome codes of :func:`multi_contact_mmp`."""

    CONVERGED = 0
    NOT_BRACKETED = 1  # tie lines still long at the highest pressure tried
    THREE_PHASE = 2  # a third phase appears in the cells near the MMP: not estimated
    MISCIBLE_AT_START = 3  # no two-phase cell at the lowest pressure tried


@dataclass(frozen=True)
class MiscibilityResult:
    """Multi-contact MMP at one temperature.

    Attributes
    ----------
    pressure : float
        Pa (NaN unless ``status`` is CONVERGED).
    status : MiscibilityStatus
    three_phase : bool
        A third phase appeared in some cell at some pressure of the scan.
    pressures, tie_line_lengths : ndarray
        The scan: pressures tried and the shortest tie-line length of the cells at each
        (NaN where no cell had two phases).
    contacts : int
    """

    pressure: float
    status: MiscibilityStatus
    three_phase: bool
    pressures: NDArray[np.float64]
    tie_line_lengths: NDArray[np.float64]
    contacts: int


def _streams(mixture: Mixture, oil: ArrayLike, gas: ArrayLike):
    if not isinstance(mixture, Mixture):
        raise InputError(f"mixture must be a gridflash.Mixture, got {type(mixture).__name__}")
    out = []
    for name, s in (("oil", oil), ("gas", gas)):
        a = np.asarray(s, dtype=float)
        if a.shape != (mixture.n_components,) or not np.all(np.isfinite(a)) or np.any(a < 0) \
                or abs(a.sum() - 1) > 1e-6:
            raise InputError(f"{name} = {a.tolist()!r} must be {mixture.n_components} "
                             "non-negative mole fractions summing to 1")
        out.append(a / a.sum())
    return out


def first_contact_mmp(
    mixture: Mixture, oil: ArrayLike, gas: ArrayLike, temperature: float
) -> tuple[float, float, bool]:
    """First-contact MMP: the largest saturation pressure along the oil-gas mixing line.

    Above it every mixture of the oil and the gas is one phase at ``temperature`` (the
    cricondenbar of the P-x diagram). The saturation pressures of 21 gas fractions are
    computed (:func:`upper_saturation_pressure`), and the maximum is refined by golden-section
    search in the gas fraction (Kiefer 1953) to 1e-4.

    Returns
    -------
    pressure : float
        Pa (NaN where some mixture stays multiphase up to 2000 bar).
    gas_fraction : float
        Where the maximum lies.
    three_phase : bool
        Three phases appear below the saturation pressure of some mixture of the scan.
    """
    oil, gas = _streams(mixture, oil, gas)
    t = float(temperature)

    def sat(x):
        x = np.atleast_1d(np.asarray(x, dtype=float))
        z = (1 - x)[:, None] * oil + x[:, None] * gas
        p, kind, three = upper_saturation_pressure(mixture, np.full(x.size, t), z)
        return p, three

    xs = np.linspace(0.0, 1.0, _FC_POINTS)
    p, three = sat(xs)
    r = flash(mixture, np.full(xs.size, _LADDER[-1]), np.full(xs.size, t),
              (1 - xs)[:, None] * oil + xs[:, None] * gas)
    if np.any(r.phase_count > 1):
        return math.nan, math.nan, bool(three.any())
    if not np.isfinite(p).any():
        return math.nan, math.nan, bool(three.any())
    j = int(np.nanargmax(p))
    a, b = xs[max(j - 1, 0)], xs[min(j + 1, xs.size - 1)]
    best_p, best_x = float(p[j]), float(xs[j])
    c, d = b - _INV_PHI * (b - a), a + _INV_PHI * (b - a)
    fc, fd = sat(c)[0][0], sat(d)[0][0]
    while b - a > _FC_TOL:
        if not (fc < fd):  # NaN-safe: keep the left part unless d is better
            b, d, fd = d, c, fc
            c = b - _INV_PHI * (b - a)
            fc = sat(c)[0][0]
        else:
            a, c, fc = c, d, fd
            d = a + _INV_PHI * (b - a)
            fd = sat(d)[0][0]
        for xv, pv in ((c, fc), (d, fd)):
            if np.isfinite(pv) and pv > best_p:
                best_p, best_x = float(pv), float(xv)
    return best_p, best_x, bool(three.any())


def _shortest_tie_line(mixture, oil, gas, t, p, contacts):
    """Shortest tie line over the cells after ``contacts`` contacts, and whether any cell had
    three phases (Ahmadi & Johns 2011)."""
    nc = oil.size
    liquid = oil[None, :].copy()  # what stays in each cell
    vapour = np.empty((0, nc))  # what left each cell at the previous contact
    three = False
    shortest = math.nan
    for _ in range(contacts):
        # Cell k receives the vapour of cell k-1 (cell 0 fresh gas); a new front cell holds
        # fresh oil and receives the vapour of the last cell.
        upstream = np.vstack([gas[None, :], vapour])
        stay = np.vstack([liquid, oil[None, :]]) if vapour.shape[0] == liquid.shape[0] \
            else liquid
        upstream = upstream[: stay.shape[0]]
        z = (1 - _ALPHA) * stay + _ALPHA * upstream
        r = flash(mixture, np.full(z.shape[0], p), np.full(z.shape[0], t), z)
        two = r.phase_count == 2
        three = three or bool((r.phase_count == 3).any())
        x = np.where(two[:, None], r.x, z)
        y = np.where(two[:, None], r.y, z)
        liquid, vapour = x, y
        tl = np.sqrt(np.sum((r.x - r.y) ** 2, axis=1))
        shortest = float(np.min(tl[two])) if two.any() else math.nan
    return shortest, three


def multi_contact_mmp(
    mixture: Mixture,
    oil: ArrayLike,
    gas: ArrayLike,
    temperature: float,
    *,
    contacts: int = _CONTACTS,
    start_pressure: float | None = None,
    max_pressure: float = 1.0e8,
) -> MiscibilityResult:
    """Multi-contact MMP of a gas displacing an oil by the mixing-cell method.

    Parameters
    ----------
    mixture : Mixture
    oil, gas : array_like, shape (nc,)
    temperature : float
        K.
    contacts : int
        Contacts (each adds a cell) per pressure.
    start_pressure : float, optional
        Pa; default 0.7 times the oil's saturation pressure (or 50 bar).
    max_pressure : float
        Pa; the scan gives up above it (status NOT_BRACKETED).

    Returns
    -------
    MiscibilityResult

    Notes
    -----
    Mixing cells after Ahmadi & Johns (SPE J. 16 (2011) 733, "Multiple-mixing-cell method
    for MMP calculations"): a row of cells initially holding oil; at every contact each cell
    mixes what stayed in it (its equilibrium liquid) with the equilibrium vapour of the cell
    behind it (the first cell with fresh injection gas, equal moles), a new cell of fresh oil
    is added at the front, and every cell is flashed (:func:`gridflash.flash`). A single-phase
    cell both keeps and passes on its fluid. The cells develop the key tie lines of the
    displacement; the MMP is the pressure at which the shortest tie-line length
    ``sqrt(sum (x_i - y_i)^2)`` over the cells goes to zero.

    The pressure is raised by 8 % steps while the shortest tie line over the cells shortens;
    it ends either by vanishing (no two-phase cell, or none longer than 1e-3) or by growing
    again (past the MMP the shortest tie line of the cells' mixing zone lengthens). That
    bracket is bisected 14 times on "still shorter", and the shortening branch (its last three
    or four points, each at least 20 % longer than the next) is extrapolated to zero length by
    ``TL^(1/n)`` linear in ``P`` with ``n = 1/2`` (a binary's tie line near its critical point
    in a classical EOS) or ``n = 1`` (the cells' crossover tie line), whichever fits better:
    the MMP is where it reaches zero.

    Assumptions: no dispersion (the cells are a numerical device, not a model of mixing in
    the reservoir; more contacts converge the key tie lines, fewer leave them too long and
    the MMP too high); the displacement develops miscibility through a tie line of zero
    length. Where the shortest tie line does not go to zero up to ``max_pressure`` (e.g. a
    heavy oil and a lean gas) the status is NOT_BRACKETED and no MMP is reported. A third
    phase appearing in the cells near the MMP (CO2 at low temperature) makes the two-phase
    tie-line picture inapplicable: status THREE_PHASE, no MMP.
    """
    oil, gas = _streams(mixture, oil, gas)
    t = float(temperature)
    if isinstance(contacts, bool) or not isinstance(contacts, int) or contacts < 2:
        raise InputError(f"contacts={contacts!r} must be an integer of at least 2")
    if start_pressure is None:
        p_oil, _, _ = upper_saturation_pressure(mixture, np.array([t]), oil[None, :])
        start_pressure = 0.7 * float(p_oil[0]) if np.isfinite(p_oil[0]) else 5.0e6
    pressures, lengths, threes = [], [], []

    def probe(p):
        tl, three = _shortest_tie_line(mixture, oil, gas, t, p, contacts)
        pressures.append(p)
        lengths.append(tl)
        threes.append(three)
        return tl

    def done(status, value=math.nan):
        order = np.argsort(pressures)
        return MiscibilityResult(value, status, bool(any(threes)),
                                 np.array(pressures)[order], np.array(lengths)[order], contacts)

    def open_(tl):
        return bool(np.isfinite(tl) and tl > _TL_FLOOR)

    # 1. Scan upwards while the shortest tie line shortens.
    p_lo = float(start_pressure)
    tl_lo = probe(p_lo)
    if not open_(tl_lo):
        return done(MiscibilityStatus.MISCIBLE_AT_START)
    p_hi = p_lo
    while True:
        p_hi *= _P_STEP
        if p_hi > max_pressure:
            return done(MiscibilityStatus.NOT_BRACKETED)
        tl_hi = probe(p_hi)
        if not open_(tl_hi) or tl_hi >= tl_lo:
            break
        p_lo, tl_lo = p_hi, tl_hi
    # 2. Close in on the end of the shortening branch: bisection on "still open and shorter
    # than at the lower end" (past the vanishing point the cells' shortest tie line is either
    # gone or grows again).
    for _ in range(_REFINE):
        mid = 0.5 * (p_lo + p_hi)
        tl = probe(mid)
        if open_(tl) and tl < tl_lo:
            p_lo, tl_lo = mid, tl
        else:
            p_hi = mid
    near = [i for i, p in enumerate(pressures) if p >= p_lo / _P_STEP**2]
    if any(threes[i] for i in near):
        return done(MiscibilityStatus.THREE_PHASE)
    # 3. Extrapolate the shortening branch to a zero length (Ahmadi & Johns extrapolate the
    # tie-line length to zero in the same way).
    branch = sorted((pressures[i], lengths[i]) for i in near
                    if open_(lengths[i]) and pressures[i] <= p_lo)
    pts = _monotone_tail(branch)
    if pts.shape[0] < 3:
        return done(MiscibilityStatus.CONVERGED, p_hi)
    return done(MiscibilityStatus.CONVERGED, _power_law_zero(pts, p_lo, p_hi))


def _monotone_tail(branch):
    """Up to four points (P ascending) of the last falling run of tie-line lengths, thinned so
    that each is at least 20 % longer than the next (bisection crowds points near the end of
    the branch, which would otherwise decide the fit alone)."""
    pts = [branch[-1]]
    for p, tl in reversed(branch[:-1]):
        if tl <= pts[-1][1]:
            break
        if tl >= 1.2 * pts[-1][1]:
            pts.append((p, tl))
        if len(pts) == 4:
            break
    return np.array(pts[::-1])


def _power_law_zero(pts, p_lo, p_hi):
    """P0 of the better of two fits ``TL^(1/n) = a (P0 - P)``, n = 1/2 (a binary's tie line
    near its critical point, classical EOS) and n = 1 (the cells' crossover tie line), by
    linear least squares on the points; kept within ``[p_lo, max(p_hi, 1.08 p_lo)]``."""
    p, tl = pts[:, 0], pts[:, 1]
    best = (math.inf, p_hi)
    for n in (0.5, 1.0):
        y = tl ** (1.0 / n)
        slope, icept = np.polyfit(p, y, 1)
        if slope >= 0.0:
            continue
        resid = float(np.sum((slope * p + icept - y) ** 2) / np.sum(y**2))
        if resid < best[0]:
            best = (resid, -icept / slope)
    return float(min(max(best[1], p_lo), max(p_hi, p_lo * _P_STEP)))
