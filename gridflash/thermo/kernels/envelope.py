"""Phase envelopes by Newton continuation, and mixture critical points.

Envelope (Michelsen, Fluid Phase Equilib. 4 (1980) 1, "Calculation of phase envelopes and
critical points for multicomponent mixtures"): at a fixed vapour fraction ``beta`` the
``nc + 2`` unknowns ``X = (ln K_1 .. ln K_nc, ln T, ln P)`` solve (eqs. 9-11 of the paper)::

    F_i      = ln K_i + ln phi_i(y, T, P) - ln phi_i(x, T, P) = 0        i = 1 .. nc
    F_nc+1   = sum_i (y_i - x_i) = 0
    F_nc+2   = X_s - S = 0

with ``x_i = z_i / (1 - beta + beta K_i)`` and ``y_i = K_i x_i``, and one *specified* variable
``X_s``. Each point is solved by Newton's method (analytic composition derivatives, forward
differences in ``ln T`` and ``ln P``); the next point is predicted along the tangent
``dX/dS = J^-1 e_nc+2``, the specified variable being the one of largest sensitivity
``|dX_i/dS|`` (section 3 of the paper), with the step grown after quick convergence and halved
after a failure. Approaching the critical point the largest ``ln K`` is specified and stepped
across zero to the symmetric value, so the curve of ``beta = 1`` continues from the dew branch
through the critical point onto the bubble branch; the critical point is located by cubic
Hermite interpolation of ``ln T`` and ``ln P`` against that ``ln K`` to ``ln K = 0``.

Cricondenbar and cricondentherm: where the oriented tangent's ``ln P`` (``ln T``) component
changes sign between two traced points, ``d ln P / d u`` (``d ln T / d u``) is driven to zero
by the Illinois variant of regula falsi over a specified variable ``u`` that is monotone there.

Critical point (Heidemann & Khalil, AIChE J. 26 (1980) 769; in the form of Michelsen, Fluid
Phase Equilib. 16 (1984) 57): at fixed total volume ``V`` and ``n = z``, the smallest eigenvalue
``lambda`` of ``B_ij = sqrt(z_i z_j) d ln f_i / d n_j`` (constant T, V) is brought to zero by
Newton's method in ``T``; with ``Dn_i = u_i sqrt(z_i)`` from its eigenvector ``u``, the cubic form
``c = sum_ijk d^3 A / dn_i dn_j dn_k Dn_i Dn_j Dn_k / RT`` (with ``sum_i Dn_i b_i > 0``: c is odd in
``Dn``) is evaluated by central differences of
``sum_i Dn_i ln f_i(n + eps Dn)`` (Michelsen 1984, eq. 20), and ``c(V) = 0`` is solved by the
secant method in ``V``. The ``T, V`` derivatives of the generic cubic's residual Helmholtz energy
are those of Michelsen & Mollerup (2007), ch. 3.

``eos`` is ``(ac, m, b, tc, omk, d1, d2)`` as for the saturation kernel.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import R, kernel
from .codes import ROOT_LIQUID, ROOT_MIN_GIBBS, ROOT_VAPOUR
from .eos import DLNPHI_WS, dlnphi_cell, phase_cell, reduced_cell, solve_cell, wilson_ln_k_cell

_NAN = math.nan

# Envelope status codes (public as gridflash.thermo.EnvelopeStatus)
ENV_COMPLETE = 0  # dew branch from the start pressure, critical point, bubble branch back down
ENV_TEMPERATURE_LIMIT = 1  # complete, but the bubble branch stops at the lowest temperature
ENV_NO_START = 2  # no dew point found at the start pressure
ENV_STEP_FAILURE = 3  # Newton failed at the smallest step: partial envelope
ENV_MAX_POINTS = 4  # the point buffer is full: partial envelope
ENV_PRESSURE_LIMIT = 5  # the curve rose above the highest pressure: partial envelope
ENV_METASTABLE = 6  # set by the wrapper: part of the curve is not where a phase first appears
ENV_NO_CRITICAL = 7  # back at low pressure without crossing a critical point

# Branch codes of traced points (aligned with the saturation kinds of the store)
BRANCH_NONE = 0
BRANCH_BUBBLE = 1
BRANCH_DEW = 2
BRANCH_VAPOUR_PRESSURE = 3
BRANCH_CRITICAL = 4

ENV_TOL = 1e-11  # max |F| of a converged envelope point
ENV_MAXITER = 25
ENV_DX = 1e-7  # forward-difference step in ln T and ln P
_H_START = 0.05  # first step in ln P
_H_MAX = 0.5  # largest step in the specified variable
_H_MIN = 1e-7
_MAX_DLNK = 0.15  # largest change of any ln K per step
_MAX_DLNT = 0.02  # largest change of ln T per step (about 6 K at 300 K)
_MAX_DLNP = 0.12  # largest change of ln P per step
_CRIT_APPROACH = 0.12  # |ln K_s| below which the step jumps across the critical point
_EXT_TOL = 1e-10  # |d ln P / d u| (or ln T) at a refined extremum
_EXT_MAXITER = 40
_START_SUBSTITUTIONS = 15

# Rows of the envelope workspace ``ws`` (_WS_ROWS, nc).
_X, _Y, _LNPHI_X, _LNPHI_Y, _PSI_X, _PSI_Y, _SQRT_A, _B_I, _XN, _YN = range(10)
_WS_ROWS = 10


@kernel
def _residual(eos, z, beta, xv, ws, f, roots):
    """Envelope residuals F_1 .. F_nc+1 at ``xv`` into ``f``.

    Returns (Z_x, A_x, B_x, Z_y, A_y, B_y, sum x, sum y) of the two phases at the point.
    """
    ac, m, b, tc, omk, d1, d2 = eos
    nc = z.shape[0]
    t = math.exp(xv[nc])
    p = math.exp(xv[nc + 1])
    reduced_cell(ac, m, b, tc, p, t, ws[_SQRT_A], ws[_B_I])
    sx = 0.0
    sy = 0.0
    for i in range(nc):
        k = math.exp(xv[i])
        ws[_X, i] = z[i] / (1.0 - beta + beta * k)
        ws[_Y, i] = k * ws[_X, i]
        sx += ws[_X, i]
        sy += ws[_Y, i]
    for i in range(nc):
        ws[_XN, i] = ws[_X, i] / sx
        ws[_YN, i] = ws[_Y, i] / sy
    # Lowest-Gibbs roots along the curve; at the start (``roots`` = 1) the feed takes the
    # vapour root and the incipient phase the liquid root, so that Newton iterates on the wrong
    # side of the dew point do not switch the roots.
    root_y = ROOT_VAPOUR if roots == 1 else ROOT_MIN_GIBBS
    root_x = ROOT_LIQUID if roots == 1 else ROOT_MIN_GIBBS
    zx, ax, bx = phase_cell(
        ws[_XN], ws[_SQRT_A], ws[_B_I], omk, d1, d2, root_x, ws[_LNPHI_X], ws[_PSI_X]
    )
    zy, ay, by = phase_cell(
        ws[_YN], ws[_SQRT_A], ws[_B_I], omk, d1, d2, root_y, ws[_LNPHI_Y], ws[_PSI_Y]
    )
    for i in range(nc):
        f[i] = xv[i] + ws[_LNPHI_Y, i] - ws[_LNPHI_X, i]
    f[nc] = sy - sx
    return zx, ax, bx, zy, ay, by, sx, sy


@kernel
def _jacobian(eos, z, beta, xv, ws, f, jac, f2, xt, dphi, dws, roots):
    """Residuals into ``f`` and the Jacobian (rows 0..nc; columns 0..nc+1) into ``jac``.

    Returns the Z of the x phase and of the y phase, or NaN where a root failed.
    """
    omk, d1, d2 = eos[4], eos[5], eos[6]
    nc = z.shape[0]
    zx, ax, bx, zy, ay, by, sx, sy = _residual(eos, z, beta, xv, ws, f, roots)
    if not (math.isfinite(zx) and math.isfinite(zy)):
        return _NAN, _NAN
    # d x_j / d ln K_j and d y_j / d ln K_j (into f2 and xt as scratch).
    for j in range(nc):
        k = math.exp(xv[j])
        den = 1.0 - beta + beta * k
        jac[nc, j] = 0.0
        f2[j] = -beta * k * ws[_X, j] / den  # dx_j
        xt[j] = ws[_Y, j] * (1.0 - beta) / den  # dy_j
    dlnphi_cell(zx, ax, bx, ws[_PSI_X], ws[_SQRT_A], ws[_B_I], omk, d1, d2, dphi, dws)
    for i in range(nc):
        for j in range(nc):
            jac[i, j] = -dphi[i, j] * f2[j] / sx
        jac[i, i] += 1.0
    dlnphi_cell(zy, ay, by, ws[_PSI_Y], ws[_SQRT_A], ws[_B_I], omk, d1, d2, dphi, dws)
    for i in range(nc):
        for j in range(nc):
            jac[i, j] += dphi[i, j] * xt[j] / sy
    for j in range(nc):
        jac[nc, j] = xt[j] - f2[j]
    # ln T and ln P columns by forward differences.
    for col in range(nc, nc + 2):
        for i in range(nc + 2):
            xt[i] = xv[i]
        xt[col] += ENV_DX
        _residual(eos, z, beta, xt, ws, f2, roots)
        for i in range(nc + 1):
            jac[i, col] = (f2[i] - f[i]) / ENV_DX
    # Restore the workspace to the point itself (the caller reads phases from it).
    _residual(eos, z, beta, xv, ws, f2, roots)
    return zx, zy


@kernel
def _newton(eos, z, beta, xv, spec, value, ws, wk, roots=0):
    """Solve the envelope equations with ``X[spec] = value`` from ``xv`` (updated in place).

    ``wk`` is a tuple of work arrays. Returns (converged, iterations).
    """
    f, f2, xt, jac, a, rhs, dx, dphi, dws = wk
    nc = z.shape[0]
    n = nc + 2
    xv[spec] = value
    for it in range(ENV_MAXITER):
        zx, zy = _jacobian(eos, z, beta, xv, ws, f, jac, f2, xt, dphi, dws, roots)
        if not (math.isfinite(zx) and math.isfinite(zy)):
            return False, it
        norm = 0.0
        for i in range(nc + 1):
            norm = max(norm, abs(f[i]))
        if not math.isfinite(norm):
            return False, it
        if norm < ENV_TOL:
            kmax = 0.0
            for i in range(nc):
                kmax = max(kmax, abs(xv[i]))
            return kmax > 1e-6, it
        for i in range(nc + 1):
            for j in range(n):
                a[i, j] = jac[i, j]
            rhs[i] = -f[i]
        for j in range(n):
            a[nc + 1, j] = 0.0
        a[nc + 1, spec] = 1.0
        rhs[nc + 1] = 0.0
        if not solve_cell(a, rhs, dx):
            return False, it
        scale = 1.0
        for i in range(nc):
            scale = max(scale, abs(dx[i]) / 1.0)
        scale = max(scale, abs(dx[nc]) / 0.1, abs(dx[nc + 1]) / 0.5)
        for i in range(n):
            xv[i] += dx[i] / scale
    return False, ENV_MAXITER


@kernel
def _tangent(eos, z, beta, xv, spec, ws, wk, tau):
    """``dX/dS`` at a converged point with specified variable ``spec``, into ``tau``."""
    f, f2, xt, jac, a, rhs, dx, dphi, dws = wk
    nc = z.shape[0]
    n = nc + 2
    _jacobian(eos, z, beta, xv, ws, f, jac, f2, xt, dphi, dws, 0)
    for i in range(nc + 1):
        for j in range(n):
            a[i, j] = jac[i, j]
        rhs[i] = 0.0
    for j in range(n):
        a[nc + 1, j] = 0.0
    a[nc + 1, spec] = 1.0
    rhs[nc + 1] = 1.0
    return solve_cell(a, rhs, tau)


@kernel
def _work(nc):
    n = nc + 2
    return (
        np.empty(n), np.empty(n), np.empty(n), np.empty((n, n)), np.empty((n, n)),
        np.empty(n), np.empty(n), np.empty((nc, nc)), np.empty((DLNPHI_WS, nc)),
    )


@kernel
def _dew_start(eos, pc, omega, z, beta, lnp, xv, ws, wk):
    """First point: the dew point (``beta = 1``) at ``ln P``, from Wilson's K-values at the
    temperature where ``sum z_i / K_i = 1`` (bisection in ln T). Returns converged."""
    tc = eos[3]
    nc = z.shape[0]
    p = math.exp(lnp)
    lo = math.log(20.0)
    hi = math.log(5000.0)
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        t = math.exp(mid)
        s = 0.0
        for i in range(nc):
            s += z[i] * math.exp(-wilson_ln_k_cell(pc[i], tc[i], omega[i], p, t))
        if s > 1.0:
            lo = mid  # too cold: the dew point lies at a higher temperature
        else:
            hi = mid
    t = math.exp(0.5 * (lo + hi))
    for i in range(nc):
        xv[i] = wilson_ln_k_cell(pc[i], tc[i], omega[i], p, t)
    xv[nc] = math.log(t)
    xv[nc + 1] = lnp
    f = wk[0]
    # Successive substitution first: ln K <- ln phi(x) - ln phi(y), and one Newton step in ln T
    # on sum x - 1 = 0 (Wilson's d ln K / d ln T), so that Newton starts close.
    for _ in range(_START_SUBSTITUTIONS):
        zx, _, _, zy, _, _, sx, _ = _residual(eos, z, beta, xv, ws, f, 1)
        if not (math.isfinite(zx) and math.isfinite(zy)):
            break
        slope = 0.0
        for i in range(nc):
            xv[i] -= f[i]
            slope -= ws[_X, i] * 5.373 * (1.0 + omega[i]) * tc[i] / math.exp(xv[nc])
        if slope < 0.0:
            xv[nc] -= max(-0.05, min(0.05, (sx - 1.0) / slope))
    ok, _ = _newton(eos, z, beta, xv, nc + 1, lnp, ws, wk, 1)
    if ok:  # the same point with the lowest-Gibbs roots the continuation uses
        ok, _ = _newton(eos, z, beta, xv, nc + 1, lnp, ws, wk, 0)
    return ok


@kernel
def _orient(tau, prev, n):
    """Scale ``tau`` to unit length, pointing the way ``prev`` points."""
    norm = 0.0
    dot = 0.0
    for i in range(n):
        norm += tau[i] * tau[i]
        dot += tau[i] * prev[i]
    norm = math.sqrt(norm)
    if dot < 0.0:
        norm = -norm
    for i in range(n):
        tau[i] /= norm


@kernel
def _limit_step(tau, xv, spec, h, nc):
    """Largest step (in the specified variable) within the per-variable limits, up to ``h``.

    A ``ln K`` may change by ``_MAX_DLNK`` or a tenth of its value, whichever is larger.
    """
    ts = abs(tau[spec])
    for i in range(nc + 2):
        if i < nc:
            lim = max(_MAX_DLNK, 0.1 * abs(xv[i]))
        else:
            lim = _MAX_DLNT if i == nc else _MAX_DLNP
        if abs(tau[i]) * h > lim * ts:
            h = lim * ts / abs(tau[i])
    return h


@kernel
def _hermite(u0, u1, y0, y1, d0, d1, u):
    """Cubic Hermite interpolation of y(u) through (u0, y0, y0') and (u1, y1, y1')."""
    h = u1 - u0
    s = (u - u0) / h
    h00 = 2 * s**3 - 3 * s**2 + 1
    h10 = s**3 - 2 * s**2 + s
    h01 = -2 * s**3 + 3 * s**2
    h11 = s**3 - s**2
    return h00 * y0 + h10 * h * d0 + h01 * y1 + h11 * h * d1


@kernel
def envelope_trace(eos, pc, omega, z, beta, lnp_start, lnt_min, lnp_max, pts, taus, zinfo):
    """Trace one envelope of feed ``z`` (every ``z_i > 0``) at vapour fraction ``beta``.

    ``pts`` (max_points, nc + 2) receives the points X, ``taus`` the unit tangents oriented
    along the travel, ``zinfo`` (max_points, 2) the Z of the x and y phases.

    Returns (n_points, status, crossing index, critical ln T, critical ln P); the crossing index
    is the first point after the critical point (-1 if none was crossed).
    """
    nc = z.shape[0]
    n = nc + 2
    max_points = pts.shape[0]
    ws = np.empty((_WS_ROWS, nc))
    wk = _work(nc)
    xv = np.empty(n)
    xp = np.empty(n)
    tau = np.empty(n)
    prev_tau = np.zeros(n)
    prev_tau[nc + 1] = 1.0  # start towards higher pressure
    crit_lnt = _NAN
    crit_lnp = _NAN
    crossing = -1
    if not _dew_start(eos, pc, omega, z, beta, lnp_start, xv, ws, wk):
        return 0, ENV_NO_START, crossing, crit_lnt, crit_lnp
    spec = nc + 1
    h = _H_START
    count = 0
    status = ENV_COMPLETE
    while True:
        if not _tangent(eos, z, beta, xv, spec, ws, wk, tau):
            status = ENV_STEP_FAILURE
            break
        _orient(tau, prev_tau, n)
        for i in range(n):
            pts[count, i] = xv[i]
            taus[count, i] = tau[i]
            prev_tau[i] = tau[i]
        f = wk[0]
        zx, _, _, zy, _, _, _, _ = _residual(eos, z, beta, xv, ws, f, 0)
        zinfo[count, 0] = zx
        zinfo[count, 1] = zy
        count += 1
        # Crossed the critical point since the previous point?
        if count >= 2 and crossing < 0:
            big = 0
            for i in range(nc):
                if abs(pts[count - 2, i]) > abs(pts[count - 2, big]):
                    big = i
            u0 = pts[count - 2, big]
            u1 = pts[count - 1, big]
            if u0 * u1 < 0.0:
                crossing = count - 1
                t0 = taus[count - 2]
                t1 = taus[count - 1]
                if t0[big] != 0.0 and t1[big] != 0.0:
                    crit_lnt = _hermite(
                        u0, u1, pts[count - 2, nc], pts[count - 1, nc],
                        t0[nc] / t0[big], t1[nc] / t1[big], 0.0,
                    )
                    crit_lnp = _hermite(
                        u0, u1, pts[count - 2, nc + 1], pts[count - 1, nc + 1],
                        t0[nc + 1] / t0[big], t1[nc + 1] / t1[big], 0.0,
                    )
                else:
                    crit_lnt = 0.5 * (pts[count - 2, nc] + pts[count - 1, nc])
                    crit_lnp = 0.5 * (pts[count - 2, nc + 1] + pts[count - 1, nc + 1])
        # Ends.
        if count > 1 and xv[nc + 1] <= lnp_start + 1e-12 and tau[nc + 1] < 0.0:
            if crossing < 0:
                status = ENV_NO_CRITICAL
            break
        if xv[nc] <= lnt_min + 1e-12 and tau[nc] < 0.0:
            status = ENV_TEMPERATURE_LIMIT if crossing >= 0 else ENV_NO_CRITICAL
            break
        if xv[nc + 1] >= lnp_max:
            status = ENV_PRESSURE_LIMIT
            break
        if count >= max_points:
            status = ENV_MAX_POINTS
            break
        # Next specified variable: the most sensitive one.
        spec = 0
        for i in range(1, n):
            if abs(tau[i]) > abs(tau[spec]):
                spec = i
        sign = 1.0 if tau[spec] > 0.0 else -1.0
        failed = True
        jumped = False
        while h >= _H_MIN:
            step = _limit_step(tau, xv, spec, h, nc)
            final = False
            if spec < nc and abs(xv[spec]) < _CRIT_APPROACH and sign * xv[spec] < 0.0 \
                    and crossing < 0 and not jumped:
                step = 2.0 * abs(xv[spec])  # across the critical point to the mirror value
                jumped = True
            target = xv[spec] + sign * step
            for i in range(n):
                xp[i] = xv[i] + tau[i] / abs(tau[spec]) * step
            use_spec = spec
            if xp[nc + 1] < lnp_start and tau[nc + 1] < 0.0:
                use_spec = nc + 1  # end exactly at the start pressure
                target = lnp_start
                final = True
            elif xp[nc] < lnt_min and tau[nc] < 0.0:
                use_spec = nc
                target = lnt_min
                final = True
            ok, iters = _newton(eos, z, beta, xp, use_spec, target, ws, wk)
            if ok:
                # A converged point must lie ahead along the curve, not back on it.
                ahead = 0.0
                for i in range(n):
                    ahead += (xp[i] - xv[i]) * tau[i]
                ok = ahead > 0.0
            if ok:
                for i in range(n):
                    xv[i] = xp[i]
                spec = use_spec
                if iters <= 3 and not final:
                    h = min(_H_MAX, 1.5 * step)
                elif iters > 6:
                    h = 0.7 * step
                else:
                    h = step
                failed = False
                break
            h = 0.5 * step
        if failed:
            status = ENV_STEP_FAILURE
            break
    return count, status, crossing, crit_lnt, crit_lnp


@kernel
def refine_extremum(eos, z, beta, pts, taus, k, var, out):
    """Refine the maximum of ``X[var]`` between traced points ``k`` and ``k + 1``.

    ``var`` is ``nc`` (ln T: cricondentherm) or ``nc + 1`` (ln P: cricondenbar). The oriented
    tangents' ``var`` components must differ in sign at the two points. ``out`` receives X at
    the extremum. Returns converged.
    """
    nc = z.shape[0]
    n = nc + 2
    ws = np.empty((_WS_ROWS, nc))
    wk = _work(nc)
    tau = np.empty(n)
    xv = np.empty(n)
    # The specified variable: the one that changes most between the two points (var excepted).
    u = 0
    best = -1.0
    for i in range(n):
        if i != var and abs(pts[k + 1, i] - pts[k, i]) > best:
            best = abs(pts[k + 1, i] - pts[k, i])
            u = i
    a = pts[k, u]
    b = pts[k + 1, u]
    if taus[k, u] == 0.0 or taus[k + 1, u] == 0.0:
        return False
    ga = taus[k, var] / taus[k, u]
    gb = taus[k + 1, var] / taus[k + 1, u]
    if ga * gb > 0.0:
        return False
    side = 0
    for _ in range(_EXT_MAXITER):
        c = b - gb * (b - a) / (gb - ga)
        # Start from the nearer end along its tangent.
        j = k if abs(c - pts[k, u]) < abs(c - pts[k + 1, u]) else k + 1
        for i in range(n):
            xv[i] = pts[j, i] + taus[j, i] / taus[j, u] * (c - pts[j, u])
        ok, _ = _newton(eos, z, beta, xv, u, c, ws, wk)
        if not ok or not _tangent(eos, z, beta, xv, u, ws, wk, tau):
            return False
        gc = tau[var] / tau[u]
        for i in range(n):
            out[i] = xv[i]
        if abs(gc) < _EXT_TOL or abs(b - a) < 1e-13:
            return True
        if gc * gb < 0.0:
            a, ga = b, gb
            side = 0
        else:
            if side == 1:
                ga *= 0.5  # Illinois: the retained end has been kept twice
            side = 1
        b, gb = c, gc
    return True


@kernel
def residual_norm(eos, z, beta, xv):
    """max |F_i| (i = 1 .. nc + 1) of the envelope equations at X (for checks)."""
    nc = z.shape[0]
    ws = np.empty((_WS_ROWS, nc))
    f = np.empty(nc + 1)
    _residual(eos, z, beta, xv, ws, f, 0)
    norm = 0.0
    for i in range(nc + 1):
        norm = max(norm, abs(f[i]))
    return norm


# --------------------------------------------------------------------------------------------
# Critical point (Heidemann & Khalil 1980; Michelsen 1984)
# --------------------------------------------------------------------------------------------

_CRIT_TOL_V = 1e-8  # relative change of V at convergence (the noise of the cubic form)
_CRIT_TOL_C = 1e-8  # |cubic form| at convergence (its finite-difference noise: 1e-8-1e-6)
_CRIT_MAXITER = 60
_CRIT_EPS = 1e-4  # step of the central difference of the cubic form
_CRIT_DT = 1e-6  # relative step of d lambda / d T


@kernel
def _sqrt_a(eos, t, out):
    ac, m = eos[0], eos[1]
    tc = eos[3]
    for i in range(tc.shape[0]):
        out[i] = math.sqrt(ac[i]) * abs(1.0 + m[i] * (1.0 - math.sqrt(t / tc[i])))


@kernel
def _mix(eos, n, sa, d_i):
    """D = sum n_i n_j a_ij, B = sum n_i b_i; D_i = dD/dn_i into ``d_i``."""
    b, omk = eos[2], eos[4]
    nc = n.shape[0]
    dd = 0.0
    bb = 0.0
    for i in range(nc):
        s = 0.0
        for j in range(nc):
            s += n[j] * sa[i] * sa[j] * omk[i, j]
        d_i[i] = 2.0 * s
        dd += n[i] * s
        bb += n[i] * b[i]
    return dd, bb


@kernel
def ln_fugacity_tv(eos, n, t, v, sa, d_i, out):
    """``ln f_i`` (f in Pa) at mole numbers ``n``, temperature ``t`` and total volume ``v``.

    ``ln f_i = ln(n_i R T / V) + dF/dn_i`` with the residual Helmholtz energy
    ``F = A^r / RT = -N ln(1 - B/V) - D / (R T B (d1 - d2)) ln((V + d1 B) / (V + d2 B))``
    (Michelsen & Mollerup 2007, ch. 3).
    """
    b, d1, d2 = eos[2], eos[5], eos[6]
    nc = n.shape[0]
    _sqrt_a(eos, t, sa)
    dd, bb = _mix(eos, n, sa, d_i)
    ntot = 0.0
    for i in range(nc):
        ntot += n[i]
    g = math.log(1.0 - bb / v)
    ell = math.log((v + d1 * bb) / (v + d2 * bb))
    f = ell / (R * bb * (d1 - d2))
    f_v = -1.0 / (R * (v + d1 * bb) * (v + d2 * bb))
    f_b = -(f + v * f_v) / bb
    big_f_b = ntot / (v - bb) - dd / t * f_b
    for i in range(nc):
        out[i] = math.log(n[i] * R * t / v) - g + big_f_b * b[i] - f / t * d_i[i]


@kernel
def _hessian_tv(eos, n, t, v, sa, d_i, out):
    """``d ln f_i / d n_j`` at constant T, V into ``out`` (nc, nc)."""
    b, omk, d1, d2 = eos[2], eos[4], eos[5], eos[6]
    nc = n.shape[0]
    _sqrt_a(eos, t, sa)
    dd, bb = _mix(eos, n, sa, d_i)
    ntot = 0.0
    for i in range(nc):
        ntot += n[i]
    ell = math.log((v + d1 * bb) / (v + d2 * bb))
    f = ell / (R * bb * (d1 - d2))
    e1 = v + d1 * bb
    e2 = v + d2 * bb
    f_v = -1.0 / (R * e1 * e2)
    f_b = -(f + v * f_v) / bb
    f_vb = (d1 / e1 + d2 / e2) / (R * e1 * e2)
    f_bb = -(2.0 * f_b + v * f_vb) / bb
    f_nb = 1.0 / (v - bb)
    f_bbt = ntot / (v - bb) ** 2 - dd / t * f_bb
    f_bd = -f_b / t
    f_d = -f / t
    for i in range(nc):
        for j in range(nc):
            out[i, j] = (
                f_nb * (b[i] + b[j])
                + f_bd * (b[i] * d_i[j] + b[j] * d_i[i])
                + f_bbt * b[i] * b[j]
                + f_d * 2.0 * sa[i] * sa[j] * omk[i, j]
            )
        out[i, i] += 1.0 / n[i]


@kernel
def _lambda_min(eos, z, t, v, sa, d_i, hess, bmat, sqz, u):
    """Smallest eigenvalue of B_ij = sqrt(z_i z_j) d ln f_i / d n_j; its eigenvector into u."""
    nc = z.shape[0]
    _hessian_tv(eos, z, t, v, sa, d_i, hess)
    for i in range(nc):
        for j in range(nc):
            bmat[i, j] = sqz[i] * sqz[j] * hess[i, j]
    w, vecs = np.linalg.eigh(bmat)
    # The eigenvector's sign is arbitrary and the cubic form is odd in it: orient the mode so
    # that it increases the co-volume (sum_i Dn_i b_i > 0), continuously in T and V.
    b = eos[2]
    s = 0.0
    for i in range(nc):
        s += vecs[i, 0] * sqz[i] * b[i]
    sign = -1.0 if s < 0.0 else 1.0
    for i in range(nc):
        u[i] = sign * vecs[i, 0]
    return w[0]


@kernel
def _cubic_form(eos, z, t, v, dn, sa, d_i, lf0, lfp, nn):
    """Michelsen's (1984) cubic form by central differences of sum_i Dn_i ln f_i."""
    nc = z.shape[0]
    ln_fugacity_tv(eos, z, t, v, sa, d_i, lf0)
    s = 0.0
    for sgn in (1.0, -1.0):
        for i in range(nc):
            nn[i] = z[i] + sgn * _CRIT_EPS * dn[i]
        ln_fugacity_tv(eos, nn, t, v, sa, d_i, lfp)
        for i in range(nc):
            s += dn[i] * (lfp[i] - lf0[i])
    return s / (_CRIT_EPS * _CRIT_EPS)


@kernel
def _critical_t(eos, z, v, t0, sa, d_i, hess, bmat, sqz, u):
    """Temperature where lambda_min = 0 at volume v, by Newton's method in T from t0."""
    t = t0
    for _ in range(_CRIT_MAXITER):
        lam = _lambda_min(eos, z, t, v, sa, d_i, hess, bmat, sqz, u)
        dt = _CRIT_DT * t
        lam2 = _lambda_min(eos, z, t + dt, v, sa, d_i, hess, bmat, sqz, u)
        slope = (lam2 - lam) / dt
        if not (math.isfinite(lam) and math.isfinite(slope)) or slope == 0.0:
            return _NAN
        step = -lam / slope
        step = max(-0.2 * t, min(0.2 * t, step))
        t += step
        if abs(step) < 1e-12 * t:
            _lambda_min(eos, z, t, v, sa, d_i, hess, bmat, sqz, u)
            return t
    return _NAN


@kernel
def _cubic_at(eos, z, v, t_start, sa, d_i, hess, bmat, sqz, u, dn, lf0, lfp, nn):
    """(T, cubic form) on the limit of stability at volume ``v``; Dn written into ``dn``."""
    t = _critical_t(eos, z, v, t_start, sa, d_i, hess, bmat, sqz, u)
    if not math.isfinite(t):
        return t, _NAN
    for i in range(z.shape[0]):
        dn[i] = u[i] * sqz[i]
    return t, _cubic_form(eos, z, t, v, dn, sa, d_i, lf0, lfp, nn)


@kernel
def critical_cell(eos, z, t0, v0, out_dn):
    """Critical point of feed ``z`` (all ``z_i > 0``) from (t0, v0), per mole of feed.

    Returns (T, V, P, lambda_min, cubic form, converged); the critical-mode vector ``Dn`` is
    written into ``out_dn``.
    """
    b, d1, d2 = eos[2], eos[5], eos[6]
    nc = z.shape[0]
    sa = np.empty(nc)
    d_i = np.empty(nc)
    hess = np.empty((nc, nc))
    bmat = np.empty((nc, nc))
    sqz = np.empty(nc)
    u = np.empty(nc)
    lf0 = np.empty(nc)
    lfp = np.empty(nc)
    nn = np.empty(nc)
    bmix = 0.0
    for i in range(nc):
        sqz[i] = math.sqrt(z[i])
        bmix += z[i] * b[i]

    v_a = v0
    t_a, c_a = _cubic_at(eos, z, v_a, t0, sa, d_i, hess, bmat, sqz, u, out_dn, lf0, lfp, nn)
    v_b = v0 * 1.02
    t_b, c_b = _cubic_at(
        eos, z, v_b, t_a if math.isfinite(t_a) else t0, sa, d_i, hess, bmat, sqz, u, out_dn,
        lf0, lfp, nn,
    )
    converged = False
    for _ in range(_CRIT_MAXITER):
        if math.isfinite(c_b) and abs(c_b) < _CRIT_TOL_C:
            converged = math.isfinite(t_b)  # at the noise level of the cubic form
            break
        if not (math.isfinite(c_a) and math.isfinite(c_b)) or c_b == c_a:
            break
        # Secant step in V, kept above the co-volume and within a factor 1.5.
        v_new = v_b - c_b * (v_b - v_a) / (c_b - c_a)
        if v_new <= bmix:
            v_new = 0.5 * (v_b + bmix)
        v_new = min(max(v_new, v_b / 1.5), v_b * 1.5)
        t_new, c_new = _cubic_at(
            eos, z, v_new, t_b, sa, d_i, hess, bmat, sqz, u, out_dn, lf0, lfp, nn
        )
        v_a, t_a, c_a = v_b, t_b, c_b
        v_b, t_b, c_b = v_new, t_new, c_new
        if abs(v_b - v_a) < _CRIT_TOL_V * v_b:
            converged = math.isfinite(t_b)
            break
    if not converged:
        return _NAN, _NAN, _NAN, _NAN, _NAN, False
    t = t_b
    v = v_b
    lam = _lambda_min(eos, z, t, v, sa, d_i, hess, bmat, sqz, u)
    for i in range(nc):
        out_dn[i] = u[i] * sqz[i]
    c = _cubic_form(eos, z, t, v, out_dn, sa, d_i, lf0, lfp, nn)
    _sqrt_a(eos, t, sa)
    dd, bb = _mix(eos, z, sa, d_i)
    p = R * t / (v - bb) - dd / ((v + d1 * bb) * (v + d2 * bb))
    return t, v, p, lam, c, True
