"""The maker's stress-strain curves of a two-material conductor (core and aluminium, initial and final).

Each curve is the common 4th-order polynomial in strain in percent::

    sigma(e) = a0 + a1 e + a2 e^2 + a3 e^3 + a4 e^4      [MPa], e = 100 eps [%]

giving the member's tension over the whole conductor's area (the usual way
such curves are published: core and aluminium curves add up to the
conductor's). ``a0`` must be 0 (no stress at zero strain). A member's tension
is ``A sigma(100 eps)`` for strains in ``[0, CURVE_STRAIN_MAX]``, continued
as straight lines with the end slopes outside it (so the law is defined and
rises for every tension the solvers try); the aluminium's compression is
limited as in the linear two-material law. The initial curves hold in the
initial condition; the final curves (after creep), when given, in the final
one, else the initial curves with the aluminium's creep strain.

References
----------
.. [1] CIGRE Technical Brochure 324 (2007), Sag-tension calculation methods
   for overhead lines: experimental-plastic conductor model, polynomial
   stress-strain curves of core and aluminium.
.. [2] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (initial and final curves).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["CURVE_STRAIN_MAX", "StressStrainCurves", "CurveLaw", "curve_problem"]

#: Largest strain the polynomial is used at (1 %, past any conductor's service strain) [-].
CURVE_STRAIN_MAX = 0.01
#: Strains at which a curve is checked to rise [-].
_CHECK_STRAINS = np.linspace(0.0, CURVE_STRAIN_MAX, 201)
#: Halvings of the bracket when inverting the law (from a width of about 1.5 to below 1e-16).
_BISECTIONS = 64


def _stress_pa(coefficients_mpa, strain):
    """Polynomial stress [Pa] at ``strain`` [-] (the polynomial takes strain in percent)."""
    return 1e6 * np.polynomial.polynomial.polyval(100.0 * strain, coefficients_mpa)


def _slope_pa(coefficients_mpa, strain):
    """d sigma / d eps [Pa] at ``strain`` [-]."""
    return 1e8 * np.polynomial.polynomial.polyval(100.0 * strain,
                                                   np.polynomial.polynomial.polyder(coefficients_mpa))


def curve_problem(coefficients_mpa) -> str | None:
    """Why a curve cannot be used (``None`` when it can): five numbers, a0 = 0, stress rising up to 1 % strain."""
    if len(coefficients_mpa) != 5:
        return "must be five coefficients a0..a4 (stress in MPa, strain in percent)"
    if coefficients_mpa[0] != 0:
        return "must have a0 = 0 (no stress at zero strain): refit the curve through the origin"
    if not np.all(_slope_pa(np.asarray(coefficients_mpa, dtype=float), _CHECK_STRAINS) > 0):
        return f"must rise (positive slope) for strains from 0 to {100 * CURVE_STRAIN_MAX:g} %"
    return None


def _member_stress_pa(coefficients_mpa, strain):
    """Stress over the conductor's area [Pa]: the polynomial on [0, max], straight lines with its end slopes outside."""
    strain = np.asarray(strain, dtype=float)
    inside = np.clip(strain, 0.0, CURVE_STRAIN_MAX)
    end = np.where(strain < 0.0, 0.0, CURVE_STRAIN_MAX)
    return _stress_pa(coefficients_mpa, inside) + _slope_pa(coefficients_mpa, end) * (strain - inside)


@dataclass(frozen=True)
class StressStrainCurves:
    """Polynomial curves (five coefficients each, MPa over ``area_m2``, strain in %); finals optional."""

    area_m2: float                            # the whole conductor's area the stresses refer to [m^2]
    aluminium_initial: tuple
    core_initial: tuple
    aluminium_final: tuple | None = None      # default: the initial curve, with the aluminium's creep strain
    core_final: tuple | None = None           # default: the initial curve


@dataclass(frozen=True)
class CurveLaw:
    """Stretch law of a two-material conductor from its curves in one condition (see :mod:`.two_material`).

    ``conductor`` gives the expansions, the aluminium's area and its compression limit
    (a :class:`~routesag.physics.two_material.TwoMaterialConductor`).
    """

    conductor: object
    curves: StressStrainCurves
    final: bool
    creep_strain: float
    reference_temperature_c: float

    @property
    def _aluminium(self):
        return (self.curves.aluminium_final if self.final and self.curves.aluminium_final is not None
                else self.curves.aluminium_initial)

    @property
    def _core(self):
        return self.curves.core_final if self.final and self.curves.core_final is not None else self.curves.core_initial

    @property
    def axial_stiffness_n(self) -> float:
        """Tangent EA of both members at zero strain [N] (for first guesses and the physical range)."""
        return float(self.curves.area_m2 * (_slope_pa(self._aluminium, 0.0) + _slope_pa(self._core, 0.0)))

    @property
    def least_stiffness_n(self) -> float:
        """The core's smallest tangent EA (at zero strain or past the curve) [N]: the core works alone above the knee."""
        slopes = _slope_pa(self._core, np.array([0.0, CURVE_STRAIN_MAX]))
        return float(self.curves.area_m2 * np.min(slopes))

    @property
    def expansion_per_c(self) -> float:
        """Expansion of both members together, weighted by their tangent stiffness at zero strain [1/C]."""
        c, alu, core = self.conductor, _slope_pa(self._aluminium, 0.0), _slope_pa(self._core, 0.0)
        return float((alu * c.aluminium_expansion_per_c + core * c.core_expansion_per_c) / (alu + core))

    def _growth(self, temperature_c):
        c, dt = self.conductor, np.asarray(temperature_c, dtype=float) - self.reference_temperature_c
        return 1.0 + c.core_expansion_per_c * dt, (1.0 + c.aluminium_expansion_per_c * dt) * (1.0 + self.creep_strain)

    def _aluminium_limit_n(self):
        return -self.conductor.aluminium_compression_pa * self.conductor.aluminium_area_m2

    def tension_n(self, stretch_ratio, temperature_c):
        """Tension [N] of the conductor stretched to ``x = L / L0`` at ``temperature_c``."""
        core_g, alu_g = self._growth(temperature_c)
        area = self.curves.area_m2
        core = area * _member_stress_pa(self._core, stretch_ratio / core_g - 1.0)
        alu = area * _member_stress_pa(self._aluminium, stretch_ratio / alu_g - 1.0)
        return core + np.maximum(alu, self._aluminium_limit_n())

    def knee_tension_n(self, temperature_c):
        """Tension at ``t`` below which the aluminium is at its compression limit [N]."""
        core_g, alu_g = self._growth(temperature_c)
        limit_strain = self._aluminium_limit_n() / (self.curves.area_m2 * _slope_pa(self._aluminium, 0.0))
        return self.tension_n(alu_g * (1.0 + limit_strain), temperature_c)

    def stretch_ratio(self, tension_n, temperature_c):
        """``x(T, t)``, the inverse of :meth:`tension_n` (which rises strictly with ``x``), by bisection [-]."""
        tension = np.asarray(tension_n, dtype=float)
        core_g, alu_g = (np.broadcast_to(g, np.broadcast(tension, g).shape) for g in self._growth(temperature_c))
        low, high = np.minimum(core_g, alu_g) * 0.5, np.maximum(core_g, alu_g) * 2.0  # strains -50 % .. +100 %
        for _ in range(_BISECTIONS):
            middle = 0.5 * (low + high)
            above = self.tension_n(middle, temperature_c) > tension
            high, low = np.where(above, middle, high), np.where(above, low, middle)
        return 0.5 * (low + high)

    def aluminium_stress_pa(self, tension_n, temperature_c):
        """Stress in the aluminium layers over their own area [Pa] (negative: compression, limited)."""
        _, alu_g = self._growth(temperature_c)
        strain = self.stretch_ratio(tension_n, temperature_c) / alu_g - 1.0
        stress = _member_stress_pa(self._aluminium, strain) * self.curves.area_m2 / self.conductor.aluminium_area_m2
        return np.maximum(stress, -self.conductor.aluminium_compression_pa)
