"""Peneloux volume-shift parameters for the cubic EOS in use."""

from __future__ import annotations

import numpy as np

from .._errors import InputError
from ._component_data import LIQUID_DENSITY
from ._components import builtin_component
from ._cubic import R
from ._saturation import pure_vapour_pressure

__all__ = ["peneloux_shift"]

_TR_MATCH = 0.7


def peneloux_shift(mixture) -> np.ndarray:
    """Volume-shift parameters ``c_i`` (m3/mol) of a mixture's components.

    A component's own dimensionless ``volume_shift`` ``s_i = c_i / b_i`` is used where given.
    Otherwise ``c_i`` is chosen, as Peneloux, Rauzy & Freze (Fluid Phase Equilib. 8 (1982) 7)
    did, so that the shifted EOS reproduces a saturated-liquid volume:
    ``c_i = v_EOS^L(Tr Tc) - v_ref(Tr Tc)``. For a built-in component (unchanged constants)
    ``v_ref`` is the published density of ``LIQUID_DENSITY`` in ``_component_data.py`` (Perry's
    Handbook DIPPR-105 correlations at Tr = 0.75; IAPWS at Tr = 0.7 for water). For any other
    component it is, at Tr = 0.7, the Rackett volume
    ``v = (R Tc / Pc) Z_RA^(1 + (1 - Tr)^(2/7))`` (Rackett 1970; Spencer &
    Danner 1972) with the component's Rackett Z; for SRK this is what Peneloux's linear formula
    ``c = 0.40768 (R Tc / Pc)(0.29441 - Z_RA)`` approximates.
    """
    model = mixture.model
    nc = mixture.n_components
    given = np.array(
        [np.nan if c.volume_shift is None else c.volume_shift for c in mixture.components]
    )
    out = given * model.b
    todo = np.flatnonzero(np.isnan(given))
    if todo.size:
        tr, v_ref = np.array([_reference_volume(mixture.components[i]) for i in todo]).T
        t = tr * model.tc[todo]
        p, zl, _, ok = pure_vapour_pressure(model, todo, t)
        out[todo] = np.where(ok, zl * R * t / p - v_ref, 0.0)
    assert out.shape == (nc,)
    return out


def _reference_volume(component) -> tuple[float, float]:
    """Reduced temperature and saturated-liquid molar volume (m3/mol) the shift matches."""
    if component.name in LIQUID_DENSITY and _is_builtin(component):
        tr, density = LIQUID_DENSITY[component.name]
        return tr, 1.0 / density
    zra = component.rackett_z
    volume = R * component.tc / component.pc * zra ** (1.0 + (1.0 - _TR_MATCH) ** (2.0 / 7.0))
    return _TR_MATCH, volume


def _is_builtin(component) -> bool:
    try:
        return builtin_component(component.name) == component
    except InputError:
        return False
