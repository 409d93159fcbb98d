"""Heat-transfer correlations against Incropera's worked examples and the `ht` package."""
import doctest

import ht
import numpy as np
import pytest
from scipy.constants import Stefan_Boltzmann

import thermo_budget.physics.correlations as corr
from thermo_budget.physics.compiled import elementwise

PRANDTL = [0.01, 0.1, 0.7, 5.0, 50.0, 500.0]
RAYLEIGH = [1e-1, 1e2, 1e4, 1e6, 1e8, 1e9, 1e10, 1e12]


def test_doctests_of_the_correlations_module():
    # Each docstring carries a published worked example (Incropera Examples 1.1, 1.2, 9.2, 9.3, 9.4
    # and a ch. 7 example) or, where none was found, a value checked against ht just below.
    result = doctest.testmod(corr, verbose=False)
    assert result.attempted >= 14
    assert result.failed == 0


def test_doctest_values_without_a_published_example_match_ht():
    # The docstrings of cylinder_wall_conductance_W_K, Nu_tube_laminar_Hausen and
    # Nu_tube_turbulent_Gnielinski print these values; here they are held to `ht`'s functions.
    assert 10.127 == pytest.approx(1.0 / ht.R_cylinder(Di=0.019, Do=0.028, k=0.25, L=2.5), abs=5e-4)
    assert 25.16 == pytest.approx(ht.laminar_entry_thermal_Hausen(Re=1000.0, Pr=300.0, L=2.0, Di=0.02), abs=5e-3)
    fd = (0.790 * np.log(1e4) - 1.64) ** -2
    assert 79.5 == pytest.approx(ht.turbulent_Gnielinski(Re=1e4, Pr=7.0, fd=fd), abs=0.05)


def test_churchill_chu_vertical_plate_incropera_example_9_2():
    # Incropera, Fundamentals of Heat and Mass Transfer, 6th ed., Example 9.2: Pr = 0.69,
    # Gr = 2.63e9, turbulent vertical plate; the book gives Nu_L = 147.
    Pr, Gr = 0.69, 2.63e9
    assert float(corr.Nu_vertical_plate_Churchill_Chu(Pr * Gr, Pr)) == pytest.approx(147.0, rel=0.005)


@pytest.mark.parametrize("Pr", PRANDTL)
@pytest.mark.parametrize("Ra", RAYLEIGH)
def test_churchill_chu_vertical_plate_against_ht(Ra, Pr):
    # ht.Nu_vertical_plate_Churchill (Caleb Bell's ht package): Churchill and Chu (1975), full range.
    assert float(corr.Nu_vertical_plate_Churchill_Chu(Ra, Pr)) == pytest.approx(
        ht.Nu_vertical_plate_Churchill(Pr, Ra / Pr), rel=1e-10)


@pytest.mark.parametrize("Pr", PRANDTL)
@pytest.mark.parametrize("Ra", RAYLEIGH)
def test_churchill_chu_horizontal_cylinder_against_ht(Ra, Pr):
    # ht.Nu_horizontal_cylinder_Churchill_Chu: Churchill and Chu (1975), long horizontal cylinder.
    assert float(corr.Nu_horizontal_cylinder_Churchill_Chu(Ra, Pr)) == pytest.approx(
        ht.Nu_horizontal_cylinder_Churchill_Chu(Pr, Ra / Pr), rel=1e-10)


@pytest.mark.parametrize("Pr", [0.7, 5.0, 100.0])
@pytest.mark.parametrize("Ra", [1e4, 1e5, 1e6, 1e7, 2e7, 1e9, 1e10])
def test_horizontal_plate_hot_face_up_against_ht(Ra, Pr):
    # ht.Nu_horizontal_plate_McAdams, buoyancy assisted (hot face up): 0.54 Ra^1/4 to 1e7,
    # 0.15 Ra^1/3 above; Incropera 6th ed. eqs. 9.30-9.31.
    assert float(corr.Nu_horizontal_plate_hot_up_McAdams(Ra)) == pytest.approx(
        ht.Nu_horizontal_plate_McAdams(Pr, Ra / Pr, buoyancy=True), rel=1e-10)


@pytest.mark.parametrize("Pr", [0.7, 5.0, 100.0])
@pytest.mark.parametrize("Ra", [1e5, 1e6, 1e8, 1e10])
def test_horizontal_plate_hot_face_down_against_ht(Ra, Pr):
    # ht.Nu_horizontal_plate_McAdams, buoyancy opposed (hot face down): 0.27 Ra^1/4 in its stated
    # range 1e5 < Ra <= 1e10 (ht switches form above 1e10; ours extrapolates, see its docstring).
    assert float(corr.Nu_horizontal_plate_hot_down_McAdams(Ra)) == pytest.approx(
        ht.Nu_horizontal_plate_McAdams(Pr, Ra / Pr, buoyancy=False), rel=1e-10)


@pytest.mark.parametrize("Pr", [0.7, 1.0, 5.0, 9.0])
@pytest.mark.parametrize("Re", [1e2, 1e3, 1e4, 1e5, 5e5])
def test_forced_flat_plate_laminar_against_ht(Re, Pr):
    # ht.Nu_horizontal_plate_laminar_Baehr: 0.664 Re^1/2 Pr^1/3 for 0.05 < Pr < 10 (Incropera eq. 7.30).
    assert float(corr.Nu_flat_plate_forced_Incropera(Re, Pr)) == pytest.approx(
        ht.Nu_horizontal_plate_laminar_Baehr(Re, Pr), rel=1e-10)


@pytest.mark.parametrize("Re", [1e6, 3e6, 1e7])
def test_forced_flat_plate_mixed_boundary_layer(Re):
    # Incropera 6th ed., eq. 7.38 (mixed boundary layer, Re_x,c = 5e5), written out here:
    Pr = 0.7
    assert float(corr.Nu_flat_plate_forced_Incropera(Re, Pr)) == pytest.approx(
        (0.037 * Re**0.8 - 871.0) * Pr ** (1 / 3), rel=1e-12)
    # and it approaches the fully turbulent plate of ht.Nu_horizontal_plate_turbulent_Kreith
    # (0.036 Re^0.8 Pr^1/3) from below as Re grows (the laminar leading part weighs less):
    # ratio 0.64 at Re = 1e6, 0.97 at 1e7.
    turbulent = ht.Nu_horizontal_plate_turbulent_Kreith(Re, Pr)
    ratio = float(corr.Nu_flat_plate_forced_Incropera(Re, Pr)) / turbulent
    assert 0.6 < ratio < 1.0
    if Re >= 1e7:
        assert ratio > 0.95


def test_forced_flat_plate_continuous_enough_at_transition():
    # The laminar and mixed forms meet near Re = 5e5 (Incropera's choice of 871 makes them agree).
    below = float(corr.Nu_flat_plate_forced_Incropera(5e5, 0.7))
    above = float(corr.Nu_flat_plate_forced_Incropera(5e5 * 1.0001, 0.7))
    assert above == pytest.approx(below, rel=0.01)


def test_combined_convection_is_between_the_larger_and_the_sum():
    # Churchill (1977): Nu^3 = Nu_F^3 + Nu_N^3; Incropera eq. 9.62.
    for nf, nn in [(1.0, 10.0), (10.0, 10.0), (50.0, 3.0)]:
        nu = float(corr.Nu_combined_Churchill(nf, nn))
        assert nu == pytest.approx((nf**3 + nn**3) ** (1 / 3))
        assert max(nf, nn) <= nu <= nf + nn


@pytest.mark.parametrize("eps, Ts, Tsur", [(0.9, 350.0, 300.0), (0.5, 500.0, 290.0), (1.0, 295.0, 300.0)])
def test_grey_body_radiation_is_exact(eps, Ts, Tsur):
    # Incropera eq. 1.7: q'' = eps sigma (Ts^4 - Tsur^4); sigma from scipy.constants (CODATA).
    h = corr.h_radiation_grey(eps, Ts, Tsur)
    assert h * (Ts - Tsur) == pytest.approx(eps * Stefan_Boltzmann * (Ts**4 - Tsur**4), rel=1e-9)


def test_radiation_of_a_painted_surface_near_room_temperature():
    # Linearised black-body coefficient 4 sigma T^3 ~ 6 W/(m^2 K) at 300 K (Incropera eq. 1.9).
    assert float(corr.h_radiation_grey(1.0, 300.0 + 1e-6, 300.0)) == pytest.approx(
        4 * Stefan_Boltzmann * 300.0**3, rel=1e-6)


def test_wall_conduction_incropera_example_1_1_and_ht():
    # Incropera, 6th ed., Example 1.1: 0.15 m of fireclay brick, k = 1.7 W/(m K), faces at 1400 K
    # and 1150 K, 0.5 m x 1.2 m; the book gives 1700 W (from memory of the book).
    assert 0.6 * 250.0 / corr.wall_conduction_resistance_m2K_W(0.15, 1.7) == pytest.approx(1700.0, rel=1e-3)
    # and ht.k_to_R (R = t / (k A), per m^2), over a range of walls
    for t, k in [(0.002, 50.0), (0.006, 0.4), (0.15, 1.7)]:
        assert corr.wall_conduction_resistance_m2K_W(t, k) == pytest.approx(ht.k_to_R(k=k, t=t), rel=1e-12)


@pytest.mark.parametrize("Di, Do, L, k", [(0.019, 0.028, 2.5, 0.25), (0.01, 0.5, 1.0, 50.0), (0.1, 0.1001, 3.0, 0.04)])
def test_cylinder_wall_conductance_against_ht(Di, Do, L, k):
    # ht.R_cylinder: the resistance of a cylindrical shell, ln(Do/Di) / (2 pi k L), Incropera eq. 3.28
    # (thin to thick walls: 0.1 % to a 50:1 ratio).
    assert float(corr.cylinder_wall_conductance_W_K(Di, Do, L, k)) == pytest.approx(
        1.0 / ht.R_cylinder(Di=Di, Do=Do, k=k, L=L), rel=1e-12)


@pytest.mark.parametrize("Re, Pr, D, L", [(100.0, 300.0, 0.019, 2.5), (1500.0, 200.0, 0.02, 3.0),
                                          (10.0, 1000.0, 0.012, 1.0)])
def test_hausen_laminar_entry_against_ht(Re, Pr, D, L):
    # ht.laminar_entry_thermal_Hausen: Hausen (1943), Incropera eq. 8.57.
    assert float(corr.Nu_tube_laminar_Hausen(Re, Pr, D, L)) == pytest.approx(
        ht.laminar_entry_thermal_Hausen(Re, Pr, L, D), rel=1e-10)


@pytest.mark.parametrize("Re, Pr", [(4e3, 5.0), (1e4, 7.0), (1e5, 50.0), (1e6, 0.7)])
def test_gnielinski_against_ht(Re, Pr):
    # ht.turbulent_Gnielinski with the Petukhov smooth-tube friction factor f = (0.790 ln Re - 1.64)^-2.
    fd = (0.790 * np.log(Re) - 1.64) ** -2
    assert float(corr.Nu_tube_turbulent_Gnielinski(Re, Pr)) == pytest.approx(
        ht.turbulent_Gnielinski(Re, Pr, fd), rel=1e-10)


def test_tube_blend_is_continuous_and_never_below_laminar():
    Re = np.linspace(100.0, 6000.0, 400)
    Nu = elementwise(corr.Nu_tube_Hausen_Gnielinski)(Re, 100.0, 0.019, 2.5)
    assert np.all(Nu >= corr.Nu_tube_laminar_Hausen(np.minimum(Re, 2300.0), 100.0, 0.019, 2.5) - 1e-12)
    assert np.max(np.abs(np.diff(Nu))) < 0.05 * np.max(Nu)


def test_correlations_are_vectorised():
    # One call over an array (numpy's arithmetic, or compiled.elementwise where the correlation
    # branches) gives, element by element, ht's scalar answers: a wrong broadcast would mix designs.
    Ra = np.array([1e4, 1e6, 1e8, 1e10])
    Pr = np.array([0.7, 5.0, 0.7, 50.0])
    np.testing.assert_allclose(corr.Nu_vertical_plate_Churchill_Chu(Ra, Pr),
                               [ht.Nu_vertical_plate_Churchill(p, r / p) for r, p in zip(Ra, Pr)], rtol=1e-10)
    np.testing.assert_allclose(corr.Nu_horizontal_cylinder_Churchill_Chu(Ra, Pr),
                               [ht.Nu_horizontal_cylinder_Churchill_Chu(p, r / p) for r, p in zip(Ra, Pr)], rtol=1e-10)
    # hot face up switches form at Ra = 1e7 per element, not once for the array
    np.testing.assert_allclose(elementwise(corr.Nu_horizontal_plate_hot_up_McAdams)(Ra),
                               [ht.Nu_horizontal_plate_McAdams(0.7, r / 0.7, buoyancy=True) for r in Ra], rtol=1e-10)
    Re = np.array([100.0, 1500.0, 2900.0, 2e4])
    blend = elementwise(corr.Nu_tube_Hausen_Gnielinski)(Re, 100.0, 0.019, 2.5)
    np.testing.assert_array_equal(blend, [float(corr.Nu_tube_Hausen_Gnielinski(r, 100.0, 0.019, 2.5))
                                          for r in Re])
    # Rayleigh takes |dT|: a plate 209 K colder than the air drives the same flow as one 209 K
    # hotter; Incropera, 6th ed., Example 9.2 gives Ra_L = 1.813e9 (from memory of the book)
    ra = corr.rayleigh(1 / 400.0, np.array([209.0, -209.0]), 0.71, 26.41e-6, 26.41 / 38.3)
    assert ra[0] == ra[1] == pytest.approx(1.813e9, rel=1e-3)


@pytest.mark.parametrize("k, t, h, L", [(50.0, 0.002, 10.0, 0.2), (0.4, 0.006, 10.0, 0.3), (200.0, 0.001, 30.0, 0.05)])
def test_fin_efficiency_against_ht_annular_fin_of_huge_radius(k, t, h, L):
    # ht.fin_efficiency_Kern_Kraus: an annular fin of constant thickness, cooled on both faces,
    # m = sqrt(2h / (k t)). On a tube of many metres it is a straight fin; our tank wall is cooled on
    # one face, m = sqrt(h / (k t)), so the same m is ht's fin of twice the thickness.
    # (The tube is kept below m r ~ 650, where ht's Bessel functions overflow; the curvature then
    # leaves a difference of about L / D.)
    m = np.sqrt(h / (k * t))
    Do = min(100.0, 1300.0 / m)
    assert float(corr.fin_efficiency_straight(m, L)) == pytest.approx(
        ht.fin_efficiency_Kern_Kraus(Do, Do + 2 * L, 2 * t, k, h), rel=max(2e-3, L / Do))


def test_fin_efficiency_limits():
    assert float(corr.fin_efficiency_straight(0.0, 0.3)) == 1.0      # no loss: the fin is isothermal
    assert float(corr.fin_efficiency_straight(100.0, 1.0)) == pytest.approx(0.01, rel=1e-6)   # 1/(mL)


def test_round_jet_centreline_decay_constant():
    # Round turbulent jet, u_c / u_0 = B d / x with B = 5.8 (Hussein, Capp and George 1994, in
    # Pope, Turbulent Flows, 2000, Table 5.1); the potential core caps it at u_0.
    assert float(corr.jet_centreline_velocity_Pope(2.0, 0.01, 0.58)) == pytest.approx(0.2)
    assert float(corr.jet_centreline_velocity_Pope(2.0, 0.01, 0.01)) == pytest.approx(2.0)
    # the momentum flux through the jet's cross-section is conserved: u_c x = const
    x = np.array([0.3, 0.6, 1.2])
    assert np.ptp(elementwise(corr.jet_centreline_velocity_Pope)(2.0, 0.01, x) * x) < 1e-12


def test_horizontal_cylinder_incropera_steam_pipe_example():
    # Incropera, 6th ed., Example 9.3, a horizontal steam pipe (D = 0.1 m at 165 degC in
    # 23 degC air; film 367 K: Pr = 0.697, Ra_D = 5.08e6), the book gives Nu_D = 23.3 (values recalled
    # from memory of the book; check against it).
    assert float(corr.Nu_horizontal_cylinder_Churchill_Chu(5.08e6, 0.697)) == pytest.approx(23.3, rel=0.01)


def test_heated_box_incropera_duct_example():
    # Incropera, 6th ed., Example 9.4, a long horizontal rectangular duct 0.75 m wide and
    # 0.3 m high at 45 degC in 15 degC air (the book's answer: 246 W per metre; properties at 303 K:
    # nu = 16.2e-6 m^2/s, alpha = 22.9e-6 m^2/s, k = 0.0265 W/(m K), Pr = 0.707; recalled from
    # memory of the book). Sides are vertical plates of L = 0.3 m, top and bottom horizontal plates
    # of L = A/P = w/2. The book uses the laminar form of Churchill-Chu (its eq. 9.27) on the sides;
    # we use the all-Ra form (eq. 9.26), which gives about 4 % more in total.
    nu, alpha, k, Pr, dT = 16.2e-6, 22.9e-6, 0.0265, 0.707, 30.0

    def Ra(L):
        return 9.8 * (1 / 303.0) * dT * L**3 / (nu * alpha)
    h_side = float(corr.Nu_vertical_plate_Churchill_Chu(Ra(0.3), Pr)) * k / 0.3
    h_top = float(corr.Nu_horizontal_plate_hot_up_McAdams(Ra(0.375))) * k / 0.375
    h_bottom = float(corr.Nu_horizontal_plate_hot_down_McAdams(Ra(0.375))) * k / 0.375
    q_per_m = (2 * 0.3 * h_side + 0.75 * (h_top + h_bottom)) * dT
    assert q_per_m == pytest.approx(246.0, rel=0.06)


def test_horizontal_enclosure_heated_from_below_against_ht():
    # Hollands (1984) multi-Prandtl form, as the ht package writes it (Nu_Nusselt_Rayleigh_Hollands,
    # the VDI Heat Atlas' recommendation), over still, laminar-cell and turbulent layers of air and oil.
    ht = pytest.importorskip("ht")
    for pr in (0.71, 5.54, 300.0):
        for Ra in (500.0, 1708.0, 3e3, 1e4, 1e5, 1e6, 1e7, 1e8):
            expected = ht.Nu_Nusselt_Rayleigh_Hollands(pr, Ra / pr)
            assert float(corr.Nu_horizontal_enclosure_Hollands(Ra, pr)) == pytest.approx(expected, rel=1e-10)
    # ht's published example (water, Pr 5.54, Gr 3.21e8): 69.0267
    assert float(corr.Nu_horizontal_enclosure_Hollands(5.54 * 3.21e8, 5.54)) == pytest.approx(69.02668649510, rel=1e-10)
    # Hollands, Raithby and Konicek (1975) for air, Nu = 1 + 1.44 [1 - 1708/Ra]+ + [(Ra/5830)^(1/3) - 1]+,
    # agrees within 8 % (the 1984 form adds a Prandtl correction and a transition term)
    for Ra in (1e4, 1e5, 1e6):
        old = 1 + 1.44 * (1 - 1708 / Ra) + max((Ra / 5830) ** (1 / 3) - 1, 0)
        assert float(corr.Nu_horizontal_enclosure_Hollands(Ra, 0.71)) == pytest.approx(old, rel=0.08)


def test_parallel_plates_radiation_limits():
    # Incropera eq. 13.24: two black plates exchange as black bodies (eq. 1.7 with eps = 1); a black
    # partner leaves the grey plate's own emissivity; a mirror (eps = 0) stops the exchange.
    for T1, T2 in ((330.0, 310.0), (360.0, 295.0)):
        black = float(corr.h_radiation_grey(1.0, T1, T2))
        assert float(corr.h_radiation_parallel_plates(1.0, 1.0, T1, T2)) == pytest.approx(black, rel=1e-12)
        assert float(corr.h_radiation_parallel_plates(0.6, 1.0, T1, T2)) == pytest.approx(0.6 * black, rel=1e-12)
        assert float(corr.h_radiation_parallel_plates(0.9, 0.9, T1, T2)) == pytest.approx(black / (2 / 0.9 - 1), rel=1e-12)
        assert float(corr.h_radiation_parallel_plates(0.0, 0.9, T1, T2)) == 0.0
