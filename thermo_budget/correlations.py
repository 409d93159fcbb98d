"""Heat-transfer correlations, each named after its authors.

Each is written once, for one set of floats, and compiled (compiled.ufunc): the compiled network
(conductances.py) calls it on floats, numpy callers on floats, or on arrays through
compiled.elementwise. So a correlation is plain float arithmetic (`if` in place of np.where).

Nusselt numbers are dimensionless; h = Nu k / L is formed by the caller. Rayleigh numbers use
Ra = g beta dT L^3 / (nu alpha) = Gr Pr.
"""
from __future__ import annotations

import math

import numpy as np

from .compiled import ufunc  # noqa: F401  (the decorator of every correlation)

G_m_s2 = 9.80665
STEFAN_BOLTZMANN_W_m2K4 = 5.670374419e-8
PLATE_TRANSITION_RE = 5e5      # laminar to mixed boundary layer on a flat plate (Incropera sec. 7.2)
JET_DECAY_B = 5.8              # round jet's centreline decay constant (Pope 2000, Table 5.1)


@ufunc(5)
def rayleigh(beta_per_K, delta_T_K, length_m, nu_m2_s, prandtl):
    """Ra = g beta |dT| L^3 Pr / nu^2 (dimensionless)."""
    return G_m_s2 * beta_per_K * np.abs(delta_T_K) * length_m**3 * prandtl / nu_m2_s**2


@ufunc(2)
def Nu_vertical_plate_Churchill_Chu(Ra, Pr):
    """Isothermal vertical plate, natural convection, all Ra (laminar and turbulent).

    Nu_L = {0.825 + 0.387 Ra^(1/6) / [1 + (0.492/Pr)^(9/16)]^(8/27)}^2, L the plate height.
    Valid for 0.1 < Ra < 1e12 and all Pr. Also used for vertical cylinders whose diameter is
    large against the boundary layer (D >= 35 L / Gr^(1/4)).
    Reference: Churchill and Chu (1975), Int. J. Heat Mass Transfer 18, 1323-1329; Incropera,
    Fundamentals of Heat and Mass Transfer, 6th ed., eq. 9.26.

    Incropera, 6th ed., Example 9.2 (Pr = 0.69, Gr = 2.63e9; the book gives Nu = 147):

    >>> round(float(Nu_vertical_plate_Churchill_Chu(0.69 * 2.63e9, 0.69)), 1)
    147.2
    """
    psi = (1.0 + (0.492 / Pr) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.825 + 0.387 * Ra ** (1.0 / 6.0) / psi) ** 2


@ufunc(2)
def Nu_horizontal_cylinder_Churchill_Chu(Ra, Pr):
    """Isothermal long horizontal cylinder (a hose), natural convection, Ra_D < 1e12.

    Nu_D = {0.60 + 0.387 Ra_D^(1/6) / [1 + (0.559/Pr)^(9/16)]^(8/27)}^2, D the outer diameter.
    Reference: Churchill and Chu (1975), Int. J. Heat Mass Transfer 18, 1049-1053; Incropera,
    6th ed., eq. 9.34.

    >>> round(float(Nu_horizontal_cylinder_Churchill_Chu(1e6, 0.7)), 2)
    14.51
    """
    psi = (1.0 + (0.559 / Pr) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.60 + 0.387 * Ra ** (1.0 / 6.0) / psi) ** 2


@ufunc(1)
def Nu_horizontal_plate_hot_up_McAdams(Ra):
    """Upper face of a hot plate (or lower face of a cold one), natural convection.

    Nu_L = 0.54 Ra^(1/4) for 1e4 < Ra <= 1e7, 0.15 Ra^(1/3) for 1e7 < Ra < 1e11, with L = A/P.
    Below 1e4 the first form is extrapolated. Reference: McAdams (1954); Lloyd and Moran (1974);
    Incropera, 6th ed., eqs. 9.30-9.31.

    >>> round(float(Nu_horizontal_plate_hot_up_McAdams(1e6)), 2)
    17.08
    """
    if Ra <= 1e7:
        return 0.54 * Ra**0.25
    return 0.15 * Ra ** (1.0 / 3.0)


@ufunc(1)
def Nu_horizontal_plate_hot_down_McAdams(Ra):
    """Lower face of a hot plate (or upper face of a cold one), natural convection.

    Nu_L = 0.27 Ra^(1/4), 1e5 < Ra < 1e10, L = A/P; extrapolated outside.
    Reference: McAdams (1954); Incropera, 6th ed., eq. 9.32.

    >>> round(float(Nu_horizontal_plate_hot_down_McAdams(1e6)), 2)
    8.54
    """
    return 0.27 * Ra**0.25


@ufunc(2)
def Nu_flat_plate_forced_Incropera(Re, Pr):
    """Forced flow along a flat plate, average Nusselt number over length L.

    Laminar (Re <= PLATE_TRANSITION_RE = 5e5): Nu = 0.664 Re^(1/2) Pr^(1/3); mixed boundary layer above it:
    Nu = (0.037 Re^(4/5) - 871) Pr^(1/3). Valid for 0.6 < Pr < 60.
    Reference: Incropera, 6th ed., eqs. 7.30 and 7.38.

    >>> round(float(Nu_flat_plate_forced_Incropera(1e5, 0.7)), 1)
    186.4
    """
    if Re <= PLATE_TRANSITION_RE:
        return 0.664 * math.sqrt(Re) * Pr ** (1.0 / 3.0)
    return (0.037 * Re**0.8 - 871.0) * Pr ** (1.0 / 3.0)


@ufunc(2)
def Nu_combined_Churchill(Nu_forced, Nu_natural):
    """Mixed convection, assisting or transverse flow: Nu^n = Nu_F^n + Nu_N^n, n = 3 for plates.

    Reference: Churchill (1977), AIChE J. 23, 10-16; Incropera, 6th ed., eq. 9.62.

    >>> float(Nu_combined_Churchill(3.0, 4.0))
    4.497941445275415
    """
    return (Nu_forced**3.0 + Nu_natural**3.0) ** (1.0 / 3.0)


@ufunc(3)
def h_radiation_grey(emissivity, T_surface_K, T_surroundings_K):
    """Linearised grey-body radiation to large surroundings, W/(m^2 K).

    q'' = eps sigma (Ts^4 - Tsur^4) = h_r (Ts - Tsur), h_r = eps sigma (Ts + Tsur)(Ts^2 + Tsur^2).
    Exact, not an approximation, when used with the same two temperatures.
    Reference: Incropera, 6th ed., eqs. 1.7-1.9.

    >>> round(float(h_radiation_grey(0.9, 350.0, 300.0)), 2)
    7.05
    """
    return emissivity * STEFAN_BOLTZMANN_W_m2K4 * (T_surface_K + T_surroundings_K) * (
        T_surface_K**2 + T_surroundings_K**2)


def wall_conduction_resistance_m2K_W(thickness_m, conductivity_W_mK):
    """Plane-wall conduction resistance per unit area, R'' = t / k, m^2 K/W (Fourier's law).

    >>> round(wall_conduction_resistance_m2K_W(0.005, 0.4), 6)
    0.0125
    """
    return thickness_m / conductivity_W_mK


def cylinder_wall_conductance_W_K(inner_diameter_m, outer_diameter_m, length_m, conductivity_W_mK):
    """Radial conduction through a tube wall: G = 2 pi k L / ln(Do/Di), W/K (Incropera eq. 3.27)."""
    return 2.0 * np.pi * conductivity_W_mK * length_m / np.log(outer_diameter_m / inner_diameter_m)


@ufunc(4)
def Nu_tube_laminar_Hausen(Re, Pr, diameter_m, length_m):
    """Laminar tube flow, thermal entry length, constant wall temperature, average Nusselt number.

    Nu = 3.66 + 0.0668 Gz / (1 + 0.04 Gz^(2/3)), Gz = (D/L) Re Pr. Re < 2300.
    Reference: Hausen (1943); Incropera, 6th ed., eq. 8.57.

    >>> round(float(Nu_tube_laminar_Hausen(1000.0, 300.0, 0.02, 2.0)), 2)
    25.16
    """
    Gz = diameter_m / length_m * Re * Pr
    return 3.66 + 0.0668 * Gz / (1.0 + 0.04 * Gz ** (2.0 / 3.0))


@ufunc(2)
def Nu_tube_turbulent_Gnielinski(Re, Pr):
    """Turbulent tube flow, smooth wall: Nu = (f/8)(Re - 1000) Pr / (1 + 12.7 (f/8)^(1/2) (Pr^(2/3) - 1)),
    with f = (0.790 ln Re - 1.64)^-2 (Petukhov). 3000 < Re < 5e6, 0.5 < Pr < 2000.
    Reference: Gnielinski (1976); Incropera, 6th ed., eqs. 8.21 and 8.62.

    >>> round(float(Nu_tube_turbulent_Gnielinski(1e4, 7.0)), 1)
    79.5
    """
    Re = max(Re, 3000.0)
    f = (0.790 * math.log(Re) - 1.64) ** -2
    return (f / 8.0) * (Re - 1000.0) * Pr / (1.0 + 12.7 * math.sqrt(f / 8.0) * (Pr ** (2.0 / 3.0) - 1.0))


@ufunc(4)
def Nu_tube_Hausen_Gnielinski(Re, Pr, diameter_m, length_m):
    """Tube flow over all Re: Hausen below 2300, Gnielinski above 3000, linear blend between."""
    laminar = Nu_tube_laminar_Hausen(min(Re, 2300.0), Pr, diameter_m, length_m)
    if Re <= 2300.0:
        return laminar
    turbulent = Nu_tube_turbulent_Gnielinski(Re, Pr)
    weight = min((Re - 2300.0) / 700.0, 1.0)
    return max((1.0 - weight) * laminar + weight * turbulent, laminar)


@ufunc(2)
def fin_efficiency_straight(m_per_m, length_m):
    """Efficiency of a straight fin of uniform section with an adiabatic tip: eta = tanh(mL) / (mL),
    m = sqrt(h P / (k A_c)); for a plate wall fed along one edge, per unit width, m = sqrt(h / (k t)).
    eta -> 1 as mL -> 0. The fin sheds eta h A (T_base - T_ambient).
    Reference: Incropera, 6th ed., eqs. 3.81 and 3.89 (Table 3.4, case B).

    Incropera's remark (sec. 3.6.4): at mL = 2.65 the fin sheds 99 % of an infinitely long one's
    heat, so eta = 0.99 / 2.65 = 0.374 there:

    >>> round(float(fin_efficiency_straight(26.5, 0.1)), 3)
    0.374
    """
    mL = m_per_m * length_m
    if mL < 1e-6:
        return 1.0
    return math.tanh(mL) / mL


@ufunc(3)
def jet_centreline_velocity_Pope(u0_m_s, diameter_m, distance_m):
    """Mean centreline velocity of a free round turbulent jet: u_c / u_0 = B d / x, capped at u_0
    (the potential core, x < B d); B = JET_DECAY_B.

    The self-similar far field of a round jet from a nozzle of diameter d at velocity u_0; B = 5.8
    (Hussein, Capp and George 1994, quoted in Pope, Turbulent Flows, 2000, Table 5.1; other
    experiments give 5.4-6.1). Valid for a turbulent jet (Re_d above a few thousand) at x/d above
    about 10-30; the virtual origin is neglected. For a laminar or transitional jet it is an
    order-of-magnitude estimate.

    >>> round(float(jet_centreline_velocity_Pope(3.0, 0.02, 0.5)), 3)
    0.696
    """
    return u0_m_s * min(1.0, JET_DECAY_B * diameter_m / max(distance_m, 1e-12))
