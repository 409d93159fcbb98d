"""Heat-transfer correlations, each named after its authors.

Each is written once, for one set of floats, and compiled (compiled.ufunc): the compiled network
(conductances.py) calls it on floats, numpy callers on floats, or on arrays through
compiled.elementwise. So a correlation is plain float arithmetic (`if` in place of np.where).

Nusselt numbers are dimensionless; h = Nu k / L is formed by the caller. Rayleigh numbers use
Ra = g beta dT L^3 / (nu alpha) = Gr Pr.

Each doctest is a published worked example where one was found (Incropera, Fundamentals of Heat and
Mass Transfer, 6th ed.; its inputs and answers are recalled from memory of the book unless a
registry library's own docstring quotes them, as `ht` does for Example 9.2). Where none was found
the docstring says so, and tests/test_correlations.py checks the doctest's value against `ht`.
"""
from __future__ import annotations

import math

import numpy as np

from .compiled import ufunc  # noqa: F401  (the decorator of every correlation)

G_m_s2 = 9.80665
STEFAN_BOLTZMANN_W_m2K4 = 5.670374419e-8
PLATE_TRANSITION_RE = 5e5      # laminar to mixed boundary layer on a flat plate (Incropera sec. 7.2)
JET_DECAY_B = 5.8              # round jet's centreline decay constant (Pope 2000, Table 5.1)


@ufunc
def rayleigh(beta_per_K, delta_T_K, length_m, nu_m2_s, prandtl):
    """Ra = g beta |dT| L^3 Pr / nu^2 (dimensionless).

    Incropera, 6th ed., Example 9.2 (a 0.71 m high glass door at 232 degC in 23 degC air; air at the
    400 K film: nu = 26.41e-6 m^2/s, alpha = 38.3e-6 m^2/s, beta = 1/400 K^-1; the book gives
    Ra_L = 1.813e9; from memory of the book):

    >>> round(float(rayleigh(1 / 400.0, 209.0, 0.71, 26.41e-6, 26.41 / 38.3)) / 1e9, 3)
    1.813
    """
    return G_m_s2 * beta_per_K * np.abs(delta_T_K) * length_m**3 * prandtl / nu_m2_s**2


@ufunc
def Nu_vertical_plate_Churchill_Chu(Ra, Pr):
    """Isothermal vertical plate, natural convection, all Ra (laminar and turbulent).

    Nu_L = {0.825 + 0.387 Ra^(1/6) / [1 + (0.492/Pr)^(9/16)]^(8/27)}^2, L the plate height.
    Valid for 0.1 < Ra < 1e12 and all Pr. Also used for vertical cylinders whose diameter is
    large against the boundary layer (D >= 35 L / Gr^(1/4)).
    Reference: Churchill and Chu (1975), Int. J. Heat Mass Transfer 18, 1323-1329; Incropera,
    Fundamentals of Heat and Mass Transfer, 6th ed., eq. 9.26.

    Incropera, 6th ed., Example 9.2 (Pr = 0.69, Gr = 2.63e9; the book gives Nu_L = 147; the same
    example in ht.Nu_vertical_plate_Churchill's docstring, 147.16):

    >>> round(float(Nu_vertical_plate_Churchill_Chu(0.69 * 2.63e9, 0.69)), 1)
    147.2
    """
    psi = (1.0 + (0.492 / Pr) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.825 + 0.387 * Ra ** (1.0 / 6.0) / psi) ** 2


@ufunc
def Nu_horizontal_cylinder_Churchill_Chu(Ra, Pr):
    """Isothermal long horizontal cylinder (a hose), natural convection, Ra_D < 1e12.

    Nu_D = {0.60 + 0.387 Ra_D^(1/6) / [1 + (0.559/Pr)^(9/16)]^(8/27)}^2, D the outer diameter.
    Reference: Churchill and Chu (1975), Int. J. Heat Mass Transfer 18, 1049-1053; Incropera,
    6th ed., eq. 9.34.

    Incropera, 6th ed., Example 9.3 (a horizontal steam pipe, D = 0.1 m at 165 degC in 23 degC air;
    air at the 367 K film: Pr = 0.697, Ra_D = 5.08e6; the book gives Nu_D = 23.3; from memory of
    the book). Within 1 %:

    >>> round(float(Nu_horizontal_cylinder_Churchill_Chu(5.08e6, 0.697)), 1)
    23.1
    """
    psi = (1.0 + (0.559 / Pr) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.60 + 0.387 * Ra ** (1.0 / 6.0) / psi) ** 2


@ufunc
def Nu_horizontal_plate_hot_up_McAdams(Ra):
    """Upper face of a hot plate (or lower face of a cold one), natural convection.

    Nu_L = 0.54 Ra^(1/4) for 1e4 < Ra <= 1e7, 0.15 Ra^(1/3) for 1e7 < Ra < 1e11, with L = A/P.
    Below 1e4 the first form is extrapolated. Reference: McAdams (1954); Lloyd and Moran (1974);
    Incropera, 6th ed., eqs. 9.30-9.31.

    Incropera, 6th ed., Example 9.4 (a duct 0.75 m wide at 45 degC in 15 degC air; its top face,
    L = A/P = 0.375 m, Ra_L = 1.38e8, k = 0.0265 W/(m K); the book gives h = 5.47 W/(m^2 K); from
    memory of the book), h = Nu k / L:

    >>> round(float(Nu_horizontal_plate_hot_up_McAdams(1.38e8)) * 0.0265 / 0.375, 1)
    5.5
    """
    if Ra <= 1e7:
        return 0.54 * Ra**0.25
    return 0.15 * Ra ** (1.0 / 3.0)


@ufunc
def Nu_horizontal_plate_hot_down_McAdams(Ra):
    """Lower face of a hot plate (or upper face of a cold one), natural convection.

    Nu_L = 0.27 Ra^(1/4), 1e5 < Ra < 1e10, L = A/P; extrapolated outside.
    Reference: McAdams (1954); Incropera, 6th ed., eq. 9.32.

    Incropera, 6th ed., Example 9.4 (the same duct's bottom face, Ra_L = 1.38e8; the book gives
    h = 2.07 W/(m^2 K); from memory of the book), h = Nu k / L:

    >>> round(float(Nu_horizontal_plate_hot_down_McAdams(1.38e8)) * 0.0265 / 0.375, 2)
    2.07
    """
    return 0.27 * Ra**0.25


@ufunc
def Nu_flat_plate_forced_Incropera(Re, Pr):
    """Forced flow along a flat plate, average Nusselt number over length L.

    Laminar (Re <= PLATE_TRANSITION_RE = 5e5): Nu = 0.664 Re^(1/2) Pr^(1/3); mixed boundary layer above it:
    Nu = (0.037 Re^(4/5) - 871) Pr^(1/3). Valid for 0.6 < Pr < 60.
    Reference: Incropera, 6th ed., eqs. 7.30 and 7.38.

    Incropera, 6th ed., ch. 7 worked example (air at 6 kPa and 300 degC, 10 m/s along a plate
    0.5 m long held at 27 degC; air at the 437 K film: Re_L = 9597, Pr = 0.687, k = 0.0364 W/(m K);
    the book gives h = 4.18 W/(m^2 K) and 1140 W per metre of width, both faces; from memory of
    the book):

    >>> round(float(Nu_flat_plate_forced_Incropera(9597.0, 0.687)) * 0.0364 / 0.5, 2)
    4.18
    """
    if Re <= PLATE_TRANSITION_RE:
        return 0.664 * math.sqrt(Re) * Pr ** (1.0 / 3.0)
    return (0.037 * Re**0.8 - 871.0) * Pr ** (1.0 / 3.0)


@ufunc
def Nu_combined_Churchill(Nu_forced, Nu_natural):
    """Mixed convection, assisting or transverse flow: Nu^n = Nu_F^n + Nu_N^n, n = 3 for plates.

    Reference: Churchill (1977), AIChE J. 23, 10-16; Incropera, 6th ed., eq. 9.62.

    No published worked example found, and `ht` has no such blend: the doctest is the formula's
    arithmetic, (27 + 64)^(1/3); tests/test_correlations.py holds it to the bounds max <= Nu <= sum.

    >>> round(float(Nu_combined_Churchill(3.0, 4.0)), 4)
    4.4979
    """
    return (Nu_forced**3.0 + Nu_natural**3.0) ** (1.0 / 3.0)


@ufunc
def h_radiation_grey(emissivity, T_surface_K, T_surroundings_K):
    """Linearised grey-body radiation to large surroundings, W/(m^2 K).

    q'' = eps sigma (Ts^4 - Tsur^4) = h_r (Ts - Tsur), h_r = eps sigma (Ts + Tsur)(Ts^2 + Tsur^2).
    Exact, not an approximation, when used with the same two temperatures.
    Reference: Incropera, 6th ed., eqs. 1.7-1.9.

    Incropera, 6th ed., Example 1.2 (a pipe of 70 mm outside diameter at 200 degC, emissivity 0.8,
    in a room at 25 degC; the book gives 421 W per metre by radiation; from memory of the book),
    q' = h_r (Ts - Tsur) pi D:

    >>> round(float(h_radiation_grey(0.8, 473.15, 298.15)) * 175.0 * 3.14159265 * 0.07)
    421
    """
    return emissivity * STEFAN_BOLTZMANN_W_m2K4 * (T_surface_K + T_surroundings_K) * (
        T_surface_K**2 + T_surroundings_K**2)


def wall_conduction_resistance_m2K_W(thickness_m, conductivity_W_mK):
    """Plane-wall conduction resistance per unit area, R'' = t / k, m^2 K/W (Fourier's law).

    Incropera, 6th ed., Example 1.1 (a furnace wall of 0.15 m fireclay brick, k = 1.7 W/(m K),
    faces at 1400 K and 1150 K, 0.5 m x 1.2 m; the book gives 1700 W; from memory of the book),
    q = A dT / R'':

    >>> round(0.5 * 1.2 * 250.0 / wall_conduction_resistance_m2K_W(0.15, 1.7))
    1700
    """
    return thickness_m / conductivity_W_mK


def cylinder_wall_conductance_W_K(inner_diameter_m, outer_diameter_m, length_m, conductivity_W_mK):
    """Radial conduction through a tube wall: G = 2 pi k L / ln(Do/Di), W/K (Incropera eq. 3.27).

    No published worked example found: the doctest (2.5 m of hose wall, 19 mm bore, 28 mm outside,
    k = 0.25 W/(m K)) is checked against 1 / ht.R_cylinder in tests/test_correlations.py, not
    against a book.

    >>> round(float(cylinder_wall_conductance_W_K(0.019, 0.028, 2.5, 0.25)), 3)
    10.127
    """
    return 2.0 * np.pi * conductivity_W_mK * length_m / np.log(outer_diameter_m / inner_diameter_m)


@ufunc
def Nu_tube_laminar_Hausen(Re, Pr, diameter_m, length_m):
    """Laminar tube flow, thermal entry length, constant wall temperature, average Nusselt number.

    Nu = 3.66 + 0.0668 Gz / (1 + 0.04 Gz^(2/3)), Gz = (D/L) Re Pr. Re < 2300.
    Reference: Hausen (1943); Incropera, 6th ed., eq. 8.57.

    No published worked example found: the doctest is checked against
    ht.laminar_entry_thermal_Hausen in tests/test_correlations.py, not against a book.

    >>> round(float(Nu_tube_laminar_Hausen(1000.0, 300.0, 0.02, 2.0)), 2)
    25.16
    """
    Gz = diameter_m / length_m * Re * Pr
    return 3.66 + 0.0668 * Gz / (1.0 + 0.04 * Gz ** (2.0 / 3.0))


@ufunc
def Nu_tube_turbulent_Gnielinski(Re, Pr):
    """Turbulent tube flow, smooth wall: Nu = (f/8)(Re - 1000) Pr / (1 + 12.7 (f/8)^(1/2) (Pr^(2/3) - 1)),
    with f = (0.790 ln Re - 1.64)^-2 (Petukhov). 3000 < Re < 5e6, 0.5 < Pr < 2000.
    Reference: Gnielinski (1976); Incropera, 6th ed., eqs. 8.21 and 8.62.

    No published worked example found: the doctest is checked against ht.turbulent_Gnielinski (with
    the same friction factor) in tests/test_correlations.py, not against a book.

    >>> round(float(Nu_tube_turbulent_Gnielinski(1e4, 7.0)), 1)
    79.5
    """
    Re = max(Re, 3000.0)
    f = (0.790 * math.log(Re) - 1.64) ** -2
    return (f / 8.0) * (Re - 1000.0) * Pr / (1.0 + 12.7 * math.sqrt(f / 8.0) * (Pr ** (2.0 / 3.0) - 1.0))


@ufunc
def Nu_tube_Hausen_Gnielinski(Re, Pr, diameter_m, length_m):
    """Tube flow over all Re: Hausen below 2300, Gnielinski above 3000, linear blend between."""
    laminar = Nu_tube_laminar_Hausen(min(Re, 2300.0), Pr, diameter_m, length_m)
    if Re <= 2300.0:
        return laminar
    turbulent = Nu_tube_turbulent_Gnielinski(Re, Pr)
    weight = min((Re - 2300.0) / 700.0, 1.0)
    return max((1.0 - weight) * laminar + weight * turbulent, laminar)


@ufunc
def fin_efficiency_straight(m_per_m, length_m):
    """Efficiency of a straight fin of uniform section with an adiabatic tip: eta = tanh(mL) / (mL),
    m = sqrt(h P / (k A_c)); for a plate wall fed along one edge, per unit width, m = sqrt(h / (k t)).
    eta -> 1 as mL -> 0. The fin sheds eta h A (T_base - T_ambient).
    Reference: Incropera, 6th ed., eqs. 3.81 and 3.89 (Table 3.4, case B).

    Incropera's remark (sec. 3.6.4; from memory of the book): at mL = 2.65 the fin sheds 99 % of an
    infinitely long one's heat, so eta = 0.99 / 2.65 = 0.374 there:

    >>> round(float(fin_efficiency_straight(26.5, 0.1)), 3)
    0.374
    """
    mL = m_per_m * length_m
    if mL < 1e-6:
        return 1.0
    return math.tanh(mL) / mL


@ufunc
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



# The slowest mode of a still cylinder of fluid cooled at its wall (constant wall temperature):
# T ~ J0(lambda_1 r / R) exp(-alpha lambda_1^2 t / R^2), lambda_1 = 2.4048 (first zero of J0). Its
# mean temperature then decays as a lumped body with h = lambda_1^2 k / D over the wall, Nu_D = 5.783
# (Carslaw and Jaeger, Conduction of Heat in Solids, 2nd ed., sec. 7.4; Incropera, 6th ed., sec. 5.6
# and Table 5.1, the infinite cylinder's first eigenvalue, zeta_1 -> 2.4048 as Bi -> inf).
NU_STILL_CYLINDER = 2.404825557695773 ** 2


@ufunc
def Nu_horizontal_enclosure_Hollands(Ra, Pr):
    """Horizontal fluid layer heated from below (cavity between two wide horizontal plates, the
    lower one hotter), average Nusselt number on the gap; Ra on the gap and the plates' difference.

    Hollands' multi-Prandtl form (Hollands 1984, Int. J. Heat Mass Transfer 27, 466-468, as the
    VDI Heat Atlas, 2nd ed., 2010, recommends it), which reduces for air to Hollands, Raithby and
    Konicek (1975, Int. J. Heat Mass Transfer 18, 879-884; Incropera, 6th ed., sec. 9.8):

        Nu = 1 + [1 - 1708/Ra]^+ [k1 + 2 (Ra^(1/3)/k2)^(1 - ln(Ra^(1/3)/k2))]^+ + [(Ra/5803)^(1/3) - 1]^+
        k1 = 1.44 / (1 + 0.018/Pr + 0.00136/Pr^2),  k2 = 75 exp(1.5 Pr^(-1/2)),  [x]^+ = max(x, 0).

    Below Ra = 1708 the layer is still: Nu = 1, pure conduction k/gap. Valid to Ra ~ 1e8 and beyond
    (the 1/3 law). The ht package's Nu_Nusselt_Rayleigh_Hollands is the same equation (test_correlations
    checks against it); its published example, water Pr = 5.54, Gr = 3.21e8:

    >>> round(float(Nu_horizontal_enclosure_Hollands(5.54 * 3.21e8, 5.54)), 4)
    69.0267
    >>> float(Nu_horizontal_enclosure_Hollands(1000.0, 0.71))
    1.0
    """
    Ra = max(Ra, 1e-30)
    k1 = 1.44 / (1.0 + 0.018 / Pr + 0.00136 / (Pr * Pr))
    k2 = 75.0 * math.exp(1.5 / math.sqrt(Pr))
    x = np.cbrt(Ra) / k2
    middle = max(k1 + 2.0 * x ** (1.0 - math.log(x)), 0.0)
    return 1.0 + max(1.0 - 1708.0 / Ra, 0.0) * middle + max(np.cbrt(Ra / 5803.0) - 1.0, 0.0)


@ufunc
def h_radiation_parallel_plates(emissivity_1, emissivity_2, T1_K, T2_K):
    """Linearised radiation between two large parallel grey plates, W/(m^2 K) of T1 - T2:
    q'' = sigma (T1^4 - T2^4) / (1/eps_1 + 1/eps_2 - 1) (Incropera, 6th ed., eq. 13.24).

    >>> round(float(h_radiation_parallel_plates(0.9, 0.9, 330.0, 310.0)), 3)
    6.087
    """
    # 1 / (1/e1 + 1/e2 - 1) written as e1 e2 / (e1 + e2 - e1 e2), so that a black-out (e = 0) gives 0
    exchange = emissivity_1 * emissivity_2 / max(emissivity_1 + emissivity_2 - emissivity_1 * emissivity_2, 1e-300)
    return exchange * STEFAN_BOLTZMANN_W_m2K4 * (T1_K + T2_K) * (T1_K**2 + T2_K**2)


@ufunc
def h_semi_infinite_solid(conductivity_W_mK, diffusivity_m2_s, time_s):
    """Surface coefficient of a semi-infinite solid after a step change of its surface temperature,
    W/(m^2 K): q''(t) = k (T_s - T_i) / sqrt(pi alpha t) (Carslaw and Jaeger, sec. 2.4; Incropera,
    6th ed., eq. 5.58, case 1).

    Concrete (Incropera Table A.3, stone mix: k = 1.4 W/(m K), rho = 2300 kg/m^3, c = 880 J/(kg K);
    alpha = 6.92e-7 m^2/s) after one hour:

    >>> round(float(h_semi_infinite_solid(1.4, 1.4 / (2300 * 880), 3600.0)), 1)
    15.8
    """
    return conductivity_W_mK / math.sqrt(math.pi * diffusivity_m2_s * max(time_s, 1e-9))


@ufunc
def confined_jet_circulation_velocity(u0_m_s, nozzle_area_m2, section_area_m2):
    """Velocity scale of the circulation a round jet drives in a closed vessel, m/s:
    U = sqrt(M / (rho A)) = u0 sqrt(A_0 / A), M = rho u0^2 A_0 the jet's momentum flux (conserved
    along a free jet, Pope, Turbulent Flows, 2000, sec. 5.1) and A the vessel's section across the jet.

    In a confined space the jet entrains more than the surroundings can supply and drives a
    recirculation whose velocity scale is set by the jet's momentum over the section: the
    Craya-Curtet parameter (Craya and Curtet 1955; Becker, Hottel and Williams 1963, "Mixing and flow
    in ducted turbulent jets", 9th Symp. on Combustion) is the ratio of the mean velocity to exactly
    this scale, and jet-mixing times in tanks scale as its inverse, t ~ T^2 / (u0 d) (Fossett and
    Prosser 1949; Grenville and Tilton 1996, Trans IChemE 74A). The constant of order one is taken
    as 1 (from memory of those papers: they give mixing times, not wall velocities, so the
    oil-side factor of the band carries the rest).

    A 19 mm jet at 3 m/s in a 0.3 m x 0.3 m section:

    >>> round(float(confined_jet_circulation_velocity(3.0, 0.25 * np.pi * 0.019**2, 0.09)), 3)
    0.168
    """
    return u0_m_s * math.sqrt(nozzle_area_m2 / max(section_area_m2, 1e-30))
