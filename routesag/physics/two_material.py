"""Stretch laws of a conductor: linear-elastic composite, and two materials (aluminium on a core) with a knee point.

A change of state keeps the wire's unstressed length ``L0``; a stretch law
says how long the wire is under a mean tension ``T`` at a temperature ``t``,
as the ratio ``x = L / L0``. The solvers in :mod:`.state_change` and
:mod:`.section_solver` take one law per state, so the same solvers serve
both models.

Linear composite (one member, modulus ``E``, area ``A``, expansion ``alpha``)::

    x = (1 + T / EA) (1 + alpha (t - t_ref))

Two materials (the simplified model CIGRE TB 324 describes): the aluminium
layers (``A_a, E_a, alpha_a``) and the core (``A_s, E_s, alpha_s``) are parallel
members sharing the conductor's length. Each member's unstressed length at
``t`` is ``L0 g_k(t)``, with ``g_s = 1 + alpha_s (t - t_ref)`` for the core and
``g_a = (1 + alpha_a (t - t_ref)) (1 + eps_creep)`` for the aluminium, whose
creep and permanent elongation (the final condition) lengthen it by
``eps_creep``; each member's strain is ``x / g_k - 1``, so::

    T = E_s A_s (x / g_s - 1) + max(E_a A_a (x / g_a - 1), -sigma_c A_a)

with ``sigma_c`` the largest compressive stress the aluminium takes
(default 0: the strands bird-cage rather than push). Above the knee-point
temperature (or below the knee tension) the aluminium term is at its limit
and the core carries the rest alone. ``T(x)`` rises strictly with ``x``, so
its inverse ``x(T, t)`` is one piecewise-linear formula.

References
----------
.. [1] CIGRE Technical Brochure 324 (2007), Sag-tension calculation methods
   for overhead lines: linear-elastic, simplified-plastic and
   experimental-plastic conductor models; the simplified two-material
   model with the knee point.
.. [2] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (knee point of ACSR; aluminium
   creep as the final condition).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from routesag.errors import SolveError

from .roots import remembered
from .stress_strain import CurveLaw, StressStrainCurves

__all__ = ["LinearLaw", "TwoMaterialConductor", "TwoMaterialLaw", "knee_point_temperature_c",
           "creep_strain_for_final_tension"]

#: Conductor temperatures searched for the knee point [degC].
KNEE_SEARCH_C = (-60.0, 300.0)
#: Largest aluminium creep strain searched for (1 %, far past any conductor's) [-].
MAX_CREEP_STRAIN = 0.01


@dataclass(frozen=True)
class LinearLaw:
    """Linear-elastic composite: ``x = (1 + T/EA)(1 + alpha (t - t_ref))``."""

    axial_stiffness_n: float         # EA [N]
    expansion_per_c: float           # [1/C]
    reference_temperature_c: float   # [C]

    @property
    def least_stiffness_n(self) -> float:
        """Smallest EA the law ever works with [N]: bounds the physical tensions (state_change)."""
        return self.axial_stiffness_n

    def stretch_ratio(self, tension_n, temperature_c):
        """Stretched over unstressed length at the reference temperature [-]."""
        growth = 1.0 + self.expansion_per_c * (np.asarray(temperature_c, dtype=float) - self.reference_temperature_c)
        return (1.0 + np.asarray(tension_n, dtype=float) / self.axial_stiffness_n) * growth


@dataclass(frozen=True)
class TwoMaterialConductor:
    """Aluminium layers and core of a composite conductor, each with its area [m^2], modulus [Pa], expansion [1/C].

    ``aluminium_compression_pa`` is the largest compressive stress the aluminium takes [Pa] (default 0).
    """

    aluminium_area_m2: float
    aluminium_modulus_pa: float
    aluminium_expansion_per_c: float
    core_area_m2: float
    core_modulus_pa: float
    core_expansion_per_c: float
    aluminium_compression_pa: float = 0.0
    curves: StressStrainCurves | None = None   # the maker's curves; when given they replace the moduli

    @property
    def aluminium_stiffness_n(self) -> float:
        return self.aluminium_modulus_pa * self.aluminium_area_m2

    @property
    def core_stiffness_n(self) -> float:
        return self.core_modulus_pa * self.core_area_m2

    @property
    def axial_stiffness_n(self) -> float:
        """EA of both members together [N]."""
        return self.aluminium_stiffness_n + self.core_stiffness_n

    @property
    def composite_expansion_per_c(self) -> float:
        """Stiffness-weighted expansion of both members working together [1/C]."""
        return ((self.aluminium_stiffness_n * self.aluminium_expansion_per_c
                 + self.core_stiffness_n * self.core_expansion_per_c) / self.axial_stiffness_n)

    def creep_strain_from_allowance(self, allowance_c: float) -> float:
        """Aluminium creep strain equivalent to a creep allowance (equivalent temperature increase) [-].

        Below the knee, a creep strain ``eps`` of the aluminium lengthens the
        conductor at a given tension by ``eps E_a A_a / EA``; the allowance
        lengthens it by ``alpha dt``. Equal elongation below the knee:
        ``eps = alpha_composite dt EA / (E_a A_a)``.
        """
        return self.composite_expansion_per_c * allowance_c * self.axial_stiffness_n / self.aluminium_stiffness_n

    def law(self, creep_strain: float = 0.0, reference_temperature_c: float = 20.0, final: bool = False):
        """The stretch law of this conductor in one condition (``creep_strain`` 0: initial).

        With :attr:`curves` a :class:`~.stress_strain.CurveLaw` (``final``: the final curves), else the
        linear members (:class:`TwoMaterialLaw`, where ``final`` changes nothing).
        """
        if self.curves is not None:
            return CurveLaw(self, self.curves, bool(final), float(creep_strain), float(reference_temperature_c))
        return TwoMaterialLaw(self, float(creep_strain), float(reference_temperature_c))


@dataclass(frozen=True)
class TwoMaterialLaw:
    """Stretch law of a :class:`TwoMaterialConductor` with its aluminium grown by ``creep_strain``."""

    conductor: TwoMaterialConductor
    creep_strain: float
    reference_temperature_c: float

    @property
    def axial_stiffness_n(self) -> float:
        return self.conductor.axial_stiffness_n

    @property
    def expansion_per_c(self) -> float:
        return self.conductor.composite_expansion_per_c

    @property
    def least_stiffness_n(self) -> float:
        """The core's EA [N]: above the knee it works alone, so a strain of 100 % comes at this tension."""
        return self.conductor.core_stiffness_n

    def _growth(self, temperature_c):
        """Unstressed length of core and aluminium at ``t`` over ``L0`` [-]."""
        c, dt = self.conductor, np.asarray(temperature_c, dtype=float) - self.reference_temperature_c
        return 1.0 + c.core_expansion_per_c * dt, (1.0 + c.aluminium_expansion_per_c * dt) * (1.0 + self.creep_strain)

    def knee_tension_n(self, temperature_c):
        """Tension at ``t`` below which the aluminium is at its compression limit (the core alone works) [N]."""
        return self._knee_tension_at(*self._growth(temperature_c))

    def _knee_tension_at(self, core_g, alu_g):
        c = self.conductor
        knee_x = alu_g * (1.0 - c.aluminium_compression_pa / c.aluminium_modulus_pa)
        return c.core_stiffness_n * (knee_x / core_g - 1.0) - c.aluminium_compression_pa * c.aluminium_area_m2

    def knee_temperature_c(self, tension_n):
        """Temperature at which the knee tension is ``tension_n`` [degC]: the inverse of :meth:`knee_tension_n`.

        ``q = (T + sigma_c A_a) / E_s A_s + 1 = k (1 + eps) g_a' / g_s`` with ``k = 1 - sigma_c / E_a`` is linear
        in ``dt`` after multiplying out, so ``dt = (K - q) / (q alpha_s - K alpha_a)`` with ``K = k (1 + eps)``.
        """
        c = self.conductor
        q = (np.asarray(tension_n, dtype=float) + c.aluminium_compression_pa * c.aluminium_area_m2) / \
            c.core_stiffness_n + 1.0
        k = (1.0 - c.aluminium_compression_pa / c.aluminium_modulus_pa) * (1.0 + self.creep_strain)
        with np.errstate(divide="ignore"):
            return self.reference_temperature_c + (k - q) / (q * c.core_expansion_per_c
                                                             - k * c.aluminium_expansion_per_c)

    def stretch_ratio(self, tension_n, temperature_c):
        """Stretched over unstressed (core, reference temperature) length ``x(T, t)`` [-]."""
        c = self.conductor
        tension = np.asarray(tension_n, dtype=float)
        core_g, alu_g = self._growth(temperature_c)
        both = (tension + c.core_stiffness_n + c.aluminium_stiffness_n) / (
            c.core_stiffness_n / core_g + c.aluminium_stiffness_n / alu_g)
        core_only = core_g * (tension + c.aluminium_compression_pa * c.aluminium_area_m2
                              + c.core_stiffness_n) / c.core_stiffness_n
        return np.where(tension >= self._knee_tension_at(core_g, alu_g), both, core_only)

    def aluminium_stress_pa(self, tension_n, temperature_c):
        """Stress in the aluminium layers [Pa] (negative: compression, at least ``-aluminium_compression_pa``)."""
        c = self.conductor
        _, alu_g = self._growth(temperature_c)
        stress = c.aluminium_modulus_pa * (self.stretch_ratio(tension_n, temperature_c) / alu_g - 1.0)
        return np.maximum(stress, -c.aluminium_compression_pa)


def knee_point_temperature_c(mean_tension_at, law: TwoMaterialLaw, search_c=KNEE_SEARCH_C) -> float:
    """Temperature above which the aluminium is at its compression limit and the core carries all [degC].

    ``mean_tension_at(t)`` is the wire's mean tension at conductor temperature
    ``t`` (a change of state in the law's condition). It falls as ``t`` rises
    while the knee tension rises (the aluminium expands faster than the core),
    so the knee is the one root of their difference, found by ``brentq``.
    NaN when it lies outside ``search_c``.
    """
    @remembered
    def excess(t_c):
        return float(mean_tension_at(t_c)) - float(law.knee_tension_n(t_c))

    low, high = search_c
    if not excess(low) > 0 > excess(high):
        return float("nan")
    return float(brentq(excess, low, high, xtol=1e-6))


def creep_strain_for_final_tension(tension_with_creep, final_tension_n, initial_tension_n) -> float:
    """Aluminium creep strain for which the final state has ``final_tension_n`` [-].

    ``tension_with_creep(eps)`` is the horizontal tension [N] of the final
    state at the known temperature when the aluminium has crept by ``eps``;
    more creep, less tension, so ``brentq`` on ``[0, 1 %]``.

    Raises
    ------
    routesag.errors.SolveError
        If the final tension is not below the initial one, or needs more than 1 % creep.
    """
    if not final_tension_n < initial_tension_n:
        raise SolveError(f"final horizontal tension {final_tension_n:.6g} N is not below the initial "
                         f"{initial_tension_n:.6g} N at the same temperature: creep only slackens a wire")

    def excess(eps):
        return tension_with_creep(eps) - final_tension_n

    if excess(MAX_CREEP_STRAIN) > 0:
        raise SolveError(f"final horizontal tension {final_tension_n:.6g} N needs an aluminium creep strain "
                         f"above {MAX_CREEP_STRAIN:g}")
    return float(brentq(excess, 0.0, MAX_CREEP_STRAIN, xtol=1e-12))
