"""Mineral hydraulic oil: viscosity, specific heat, conductivity, density.

Temperatures are in K, kinematic viscosities in cSt (mm^2/s) unless a name says otherwise. The
property functions the network evaluates are compiled functions of floats (the compiled network
calls them; `Oil`'s methods run them over arrays in compiled loops), and `oil_transport` is the one
place that puts them together; `Oil` hands them its coefficients (`Oil.params`, OIL_PARAMS).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .compiled import kernel
from ..errors import ScenarioError
from ..units import ZERO_CELSIUS_K

T40_K = 313.15
T100_K = 373.15
T15_K = 288.15
T60F_K = 288.7056  # 60 degF, the reference of Cragoe's specific gravity
WATER_DENSITY_60F_kg_m3 = 999.01  # water at 60 degF (recalled from memory of steam tables)

# ISO 3448 viscosity grades: the number is the mid-point kinematic viscosity at 40 degC in cSt.
ISO_VG_GRADES = (2, 3, 5, 7, 10, 15, 22, 32, 46, 68, 100, 150, 220, 320, 460, 680, 1000, 1500, 2200, 3200)

# Oil volume grows about 0.065-0.07 % per K (common practice, no source).
DEFAULT_EXPANSION_PER_K = 7.0e-4

BTU_IN_PER_HR_FT2_F_IN_W_MK = 0.1442279  # 1 Btu·in/(h·ft²·°F) in W/(m·K)
BTU_PER_LB_F_IN_J_KGK = 4186.8


def iso_vg_nu40_cSt(grade: float) -> float:
    """ISO 3448: kinematic viscosity at 40 degC (cSt) of an ISO VG grade, the grade's mid-point."""
    if grade not in ISO_VG_GRADES:
        raise ScenarioError("fluid.iso_vg", grade, f"one of the ISO 3448 grades {list(ISO_VG_GRADES)}")
    return float(grade)


def walther_coefficients(T1_K: float, nu1_cSt: float, T2_K: float, nu2_cSt: float) -> tuple[float, float]:
    """ASTM D341 (Walther): A and B of log10 log10(nu + 0.7) = A - B log10(T), through two points.

    Valid for nu >= 2 cSt, where the standard's simple form Z = nu + 0.7 holds.
    """
    z1 = np.log10(np.log10(nu1_cSt + 0.7))
    z2 = np.log10(np.log10(nu2_cSt + 0.7))
    B = (z1 - z2) / (np.log10(T2_K) - np.log10(T1_K))
    A = z1 + B * np.log10(T1_K)
    return float(A), float(B)


@kernel
def walther_viscosity_cSt(T_K, A, B):
    """ASTM D341: kinematic viscosity (cSt) at temperature T_K (K)."""
    return 10.0 ** (10.0 ** (A - B * np.log10(T_K))) - 0.7


def walther_temperature_K(nu_cSt: float, A: float, B: float) -> float:
    """ASTM D341 inverted: the temperature (K) at which the viscosity is nu_cSt."""
    return float(10.0 ** ((A - np.log10(np.log10(nu_cSt + 0.7))) / B))


def d2270_L_H(nu100_cSt: float) -> tuple[float, float]:
    """ASTM D2270: L and H (cSt at 40 degC of the VI 0 and VI 100 reference oils) for a nu100.

    Below 70 cSt, linear interpolation in the standard's Table 1 (the tabulation shipped with the
    ``chemicals`` package); above, the standard's equations L = 0.8353 Y^2 + 14.67 Y - 216 and
    H = 0.1684 Y^2 + 11.85 Y - 97.
    """
    if nu100_cSt < 2.0:
        raise ScenarioError("fluid.viscosity_100C", nu100_cSt, "at least 2 cSt (ASTM D2270 range)")
    if nu100_cSt <= 70.0:
        from chemicals.viscosity import VI_Hs, VI_Ls, VI_nus   # imported here: only a fluid given by VI needs it
        return float(np.interp(nu100_cSt, VI_nus, VI_Ls)), float(np.interp(nu100_cSt, VI_nus, VI_Hs))
    Y = nu100_cSt
    return 0.8353 * Y**2 + 14.67 * Y - 216.0, 0.1684 * Y**2 + 11.85 * Y - 97.0


def viscosity_index_d2270(nu40_cSt: float, nu100_cSt: float) -> float:
    """ASTM D2270 viscosity index (unrounded) from nu40 and nu100 in cSt."""
    L, H = d2270_L_H(nu100_cSt)
    if nu40_cSt >= H:  # VI up to 100
        return (L - nu40_cSt) / (L - H) * 100.0
    N = (np.log10(H) - np.log10(nu40_cSt)) / np.log10(nu100_cSt)
    return (10.0**N - 1.0) / 0.00715 + 100.0


def nu100_from_viscosity_index_cSt(nu40_cSt: float, viscosity_index: float) -> float:
    """ASTM D2270 inverted: the nu100 (cSt) that gives this VI for this nu40 (root of the VI equation)."""
    def gap(nu100):
        return viscosity_index_d2270(nu40_cSt, nu100) - viscosity_index
    low, high = 2.0, min(nu40_cSt, 500.0)
    if gap(low) * gap(high) > 0:
        raise ScenarioError("fluid.viscosity_index", viscosity_index,
                            f"a viscosity index reachable with nu40 = {nu40_cSt:g} cSt and nu100 >= 2 cSt")
    return _bisect(gap, low, high, xtol=1e-10)


def _bisect(f, low: float, high: float, xtol: float) -> float:
    """A root of f in [low, high], where f changes sign, by bisection to xtol (f is cheap here and
    bisection cannot fail; scipy's brentq would cost its import at every start)."""
    f_low = f(low)
    while high - low > xtol:
        middle = 0.5 * (low + high)
        f_middle = f(middle)
        if f_middle == 0.0:
            return middle
        if (f_middle > 0) == (f_low > 0):
            low, f_low = middle, f_middle
        else:
            high = middle
    return 0.5 * (low + high)


def cragoe_specific_heat_J_kgK(T_K, specific_gravity_60F: float):
    """Cragoe (NBS Misc. Publ. 97, 1929): c = (0.388 + 0.00045 t) / sqrt(s) Btu/(lb·°F), t in °F.

    Valid for petroleum oils, 0-400 °F, s = 0.75-0.96. Returns J/(kg K).
    """
    t_F = (T_K - ZERO_CELSIUS_K) * 1.8 + 32.0
    return (0.388 + 0.00045 * t_F) / np.sqrt(specific_gravity_60F) * BTU_PER_LB_F_IN_J_KGK


@kernel
def cragoe_conductivity_W_mK(T_K, specific_gravity_60F):
    """Cragoe (NBS Misc. Publ. 97, 1929): k = (0.813 / s)(1 - 0.0003 (t - 32)) Btu·in/(h·ft²·°F).

    t in °F, s the specific gravity at 60 °F. Valid for petroleum oils, 32-400 °F. Returns W/(m K).
    """
    t_F = (T_K - ZERO_CELSIUS_K) * 1.8 + 32.0
    return 0.813 / specific_gravity_60F * (1.0 - 0.0003 * (t_F - 32.0)) * BTU_IN_PER_HR_FT2_F_IN_W_MK


@kernel
def linear_specific_heat_J_kgK(T_K, a, b):
    """c_p = a + b (T - 273.15 K), J/(kg K) (Cragoe's c_p is linear in t)."""
    return a + b * (T_K - ZERO_CELSIUS_K)


@kernel
def linear_enthalpy_J_kg(T_K, a, b):
    """Sensible enthalpy relative to 0 degC of c_p = a + b t: a t + b t^2 / 2, J/kg."""
    t = T_K - ZERO_CELSIUS_K
    return a * t + 0.5 * b * t * t


@kernel
def linear_temperature_from_enthalpy_K(h_J_kg, a, b):
    """Inverse of linear_enthalpy_J_kg, K."""
    if b == 0.0:
        return h_J_kg / a + ZERO_CELSIUS_K
    return (-a + math.sqrt(a * a + 2.0 * b * h_J_kg)) / b + ZERO_CELSIUS_K


@kernel
def expanded_density_kg_m3(T_K, density_15C_kg_m3, expansion_per_K):
    """Density at T_K from the density at 15 degC and the volumetric expansion coefficient, kg/m^3."""
    return density_15C_kg_m3 / (1.0 + expansion_per_K * (T_K - T15_K))


# Oil.params: the coefficients the compiled network needs, in this order (conductivity NaN: Cragoe's).
OIL_PARAMS = ("walther_A", "walther_B", "conductivity_W_mK", "specific_gravity_60F", "cp_a", "cp_b",
              "density_15C_kg_m3", "expansion_per_K")
OIL_A, OIL_B, OIL_K, OIL_SG, OIL_CP_A, OIL_CP_B, OIL_RHO15, OIL_BETA = range(len(OIL_PARAMS))


@kernel
def oil_transport(q, T_K):
    """(nu m^2/s, k W/(m K), c_p J/(kg K), rho kg/m^3, Pr) at T_K of the oil whose coefficients
    (OIL_PARAMS) start at q[0]."""
    nu = walther_viscosity_cSt(T_K, q[OIL_A], q[OIL_B]) * 1e-6
    k = cragoe_conductivity_W_mK(T_K, q[OIL_SG]) if math.isnan(q[OIL_K]) else q[OIL_K]
    cp = linear_specific_heat_J_kgK(T_K, q[OIL_CP_A], q[OIL_CP_B])
    rho = expanded_density_kg_m3(T_K, q[OIL_RHO15], q[OIL_BETA])
    return nu, k, cp, rho, nu * rho * cp / k


@kernel
def _transport_many(q, T_K):
    out = np.empty((5, T_K.size))
    for i in range(T_K.size):
        out[0, i], out[1, i], out[2, i], out[3, i], out[4, i] = oil_transport(q, T_K[i])
    return out


@kernel
def _property_many(which, a, b, x):
    """For numpy callers: 0 c_p, 1 enthalpy, 2 temperature from enthalpy, 3 density, of each x, with
    the property's two coefficients a, b."""
    out = np.empty(x.size)
    for i in range(x.size):
        if which == 0:
            out[i] = linear_specific_heat_J_kgK(x[i], a, b)
        elif which == 1:
            out[i] = linear_enthalpy_J_kg(x[i], a, b)
        elif which == 2:
            out[i] = linear_temperature_from_enthalpy_K(x[i], a, b)
        else:
            out[i] = expanded_density_kg_m3(x[i], a, b)
    return out


def _property(which, a, b, x):
    """_property_many on a float or an array (of any shape)."""
    X = np.asarray(x, dtype=float)
    out = _property_many(which, float(a), float(b), np.ascontiguousarray(X.ravel())).reshape(X.shape)
    return out if X.ndim else float(out)


@dataclass(frozen=True)
class Oil:
    """A mineral oil. Viscosity by Walther through (40 degC, nu40) and (100 degC, nu100).

    density_15C_kg_m3 : density at 15 degC; expansion_per_K : volumetric expansion coefficient.
    specific_heat_J_kgK / conductivity_W_mK : None for Cragoe, or a constant that overrides it.
    """
    nu40_cSt: float
    nu100_cSt: float
    density_15C_kg_m3: float
    expansion_per_K: float = DEFAULT_EXPANSION_PER_K
    specific_heat_J_kgK: float | None = None
    conductivity_W_mK: float | None = None

    @cached_property
    def walther_AB(self) -> tuple[float, float]:
        return walther_coefficients(T40_K, self.nu40_cSt, T100_K, self.nu100_cSt)

    @property
    def viscosity_index(self) -> float:
        return viscosity_index_d2270(self.nu40_cSt, self.nu100_cSt)

    @cached_property
    def specific_gravity_60F(self) -> float:
        return float(self.density_kg_m3(T60F_K)) / WATER_DENSITY_60F_kg_m3

    def kinematic_viscosity_cSt(self, T_K):
        A, B = self.walther_AB
        return walther_viscosity_cSt(T_K, A, B)

    def kinematic_viscosity_m2_s(self, T_K):
        return self.kinematic_viscosity_cSt(T_K) * 1e-6

    def temperature_at_viscosity_K(self, nu_cSt: float) -> float:
        A, B = self.walther_AB
        return walther_temperature_K(nu_cSt, A, B)

    def density_kg_m3(self, T_K):
        return _property(3, self.density_15C_kg_m3, self.expansion_per_K, T_K)

    @cached_property
    def cp_coefficients(self) -> tuple[float, float]:
        """(a, b) of c_p = a + b (T - 273.15 K), J/(kg K) and J/(kg K^2); Cragoe is linear in t."""
        if self.specific_heat_J_kgK is not None:
            return float(self.specific_heat_J_kgK), 0.0
        c0 = float(cragoe_specific_heat_J_kgK(ZERO_CELSIUS_K, self.specific_gravity_60F))
        c1 = float(cragoe_specific_heat_J_kgK(274.15, self.specific_gravity_60F)) - c0
        return c0, c1

    def specific_heat(self, T_K):
        return _property(0, *self.cp_coefficients, T_K)

    def specific_enthalpy_J_kg(self, T_K):
        """Sensible enthalpy (J/kg) relative to 0 degC: the integral of c_p."""
        return _property(1, *self.cp_coefficients, T_K)

    def temperature_from_enthalpy_K(self, h_J_kg):
        """Inverse of specific_enthalpy_J_kg."""
        return _property(2, *self.cp_coefficients, h_J_kg)

    def conductivity(self, T_K):
        if self.conductivity_W_mK is not None:
            return np.full_like(np.asarray(T_K, dtype=float), self.conductivity_W_mK)
        return cragoe_conductivity_W_mK(T_K, self.specific_gravity_60F)

    @cached_property
    def params(self) -> np.ndarray:
        """The coefficients of OIL_PARAMS, for the compiled network (oil_transport)."""
        A, B = self.walther_AB
        k = np.nan if self.conductivity_W_mK is None else float(self.conductivity_W_mK)
        return np.array([A, B, k, self.specific_gravity_60F, *self.cp_coefficients, self.density_15C_kg_m3,
                         self.expansion_per_K], dtype=float)

    def transport(self, T_K):
        """(nu m^2/s, k W/(m K), c_p J/(kg K), rho kg/m^3, Pr) at T_K, in one evaluation (oil_transport)."""
        T = np.asarray(T_K, dtype=float)
        out = _transport_many(self.params, np.ascontiguousarray(T.ravel()))
        return tuple(row.reshape(T.shape) for row in out)
