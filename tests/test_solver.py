"""The integrator: analytic solutions, a tight-tolerance reference, conservation, invariants."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.linalg import expm
from scipy.optimize import brentq

from thermo_budget.physics.network import (HARDWARE, HOSE, LOOP_OIL, N_NODES, OIL, Inputs, heat_capacities_J_K, hose_ring_link_W_K,
                                   node_enthalpy_J, node_equations, oil_to_wall_W_K)
from thermo_budget.physics.still_paths import engine_off_link_W_K, loop_oil_links_W_K
from thermo_budget.engine.outcome import peak_oil_K, pulls_completed_under
from thermo_budget.planning.answers import TRACE_RESOLUTION, session_report
from thermo_budget.inputs.scenario import limit_K, load_scenario
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.engine.session import PLAN_RESOLUTION, Step, pump_flow_m3_s
from thermo_budget.engine.solver import integrate, propagate_linear
from thermo_budget.physics.rig import take_designs

from conftest import (ADIABATIC_PULL, ENGINE_OFF_30S, SCENARIO_DIR, SHIPPED_SCENARIOS, adiabatic_raw, base_raw,
                      set_path, single_temperature_K)
from thermo_budget.units import ZERO_CELSIUS_K


# --- analytic solutions -------------------------------------------------------------------------

def test_one_node_exponential_response():
    # C dT/dt = G (T_amb - T) + P has T(t) = T_inf + (T0 - T_inf) exp(-G t / C), T_inf = T_amb + P/G
    # (the first-order lumped-capacitance solution, Incropera 6th ed. section 5.3). Three uncoupled
    # nodes (diagonal L) are three independent copies with different C, G, P.
    C = np.array([[30000.0, 4000.0, 900.0]])
    G = np.array([[12.0, 3.0, 0.5]])
    P = np.array([[7000.0, 0.0, 40.0]])
    T_amb = 293.15
    T0 = np.array([[300.0, 350.0, 293.15]])
    L = np.zeros((1, 3, 3))
    L[0][np.diag_indices(3)] = G[0]
    b = G * T_amb + P
    T_inf = T_amb + P / G
    tau = C / G
    for t in (1.0, 60.0, 3600.0, 5e4, 1e6):
        T1, T_int = propagate_linear(C, L, b, T0, np.array([t]))
        exact = T_inf + (T0 - T_inf) * np.exp(-t / tau)
        exact_int = T_inf * t + (T0 - T_inf) * tau * -np.expm1(-t / tau)
        np.testing.assert_allclose(T1, exact, rtol=0, atol=1e-4)
        np.testing.assert_allclose(T_int, exact_int, rtol=1e-10, atol=1e-4 * t)


def test_tiny_step_is_exact_too():
    # the phi-functions' series branch (|lambda h| < 1e-4)
    C = np.array([[3e4, 4e3, 9e2]])
    L = np.zeros((1, 3, 3))
    L[0][np.diag_indices(3)] = [12.0, 3.0, 0.5]
    b = np.array([[12.0 * 293.15 + 7000.0, 3.0 * 293.15, 0.5 * 293.15]])
    T0 = np.array([[300.0, 350.0, 293.15]])
    h = 1e-3
    T1, T_int = propagate_linear(C, L, b, T0, np.array([h]))
    slope = (-(L[0] @ T0[0]) + b[0]) / C[0]
    np.testing.assert_allclose(T1[0], T0[0] + slope * h, atol=1e-9)
    np.testing.assert_allclose(T_int[0], T0[0] * h + 0.5 * slope * h * h, atol=1e-12)


def test_coupled_linear_system_against_the_matrix_exponential():
    # Exact solution of the coupled system via scipy.linalg.expm of the augmented matrix.
    C = np.array([3e4, 4e3, 9e2])
    L = np.array([[20.0, -15.0, -5.0], [-15.0, 18.0, 0.0], [-5.0, 0.0, 6.0]])
    b = np.array([7000.0, 3.0 * 293.15, 1.0 * 293.15])
    T0 = np.array([300.0, 310.0, 295.0])
    A = np.zeros((4, 4))
    A[:3, :3] = -L / C[:, None]
    A[:3, 3] = b / C
    for t in (5.0, 300.0, 1e4):
        exact = (expm(A * t) @ np.append(T0, 1.0))[:3]
        T1, _ = propagate_linear(C[None], L[None], b[None], T0[None], np.array([t]))
        np.testing.assert_allclose(T1[0], exact, atol=1e-6)


# --- tight-tolerance reference ------------------------------------------------------------------

class Reference:
    """scipy solve_ivp (Radau, rtol = atol = 1e-8), step by step, the right-hand side being
    thermo_budget.physics.network.node_equations at the current state and the step's instantaneous inputs.
    One more state integrates the heat lost to ambient. (Against rtol = atol = 1e-10 on the US rig,
    measured: 3.3e-6 K at most, the heat lost within 5e-10, at a third of the cost; the requirement
    it checks is 0.05 K.)"""

    def __init__(self, rig, steps, T0_K):
        self.pieces = []
        y = np.append(np.asarray(T0_K, dtype=float), 0.0)
        t0 = 0.0
        for step in steps:
            sol = self._solve_step(rig, step, t0, y)
            self.pieces.append((t0, t0 + step.duration_s, sol))
            y = sol.y[:, -1].copy()
            t0 += step.duration_s
        self.energy_lost_J = y[N_NODES]

    @staticmethod
    def _solve_step(rig, step, t0, y0):
        def inputs_at(t):
            f = min(max((t - t0) / step.duration_s, 0.0), 1.0)
            flow = pump_flow_m3_s(rig.displacement_m3, step.rpm_at(f), rig.volumetric_efficiency)
            return Inputs(power_W=np.array([float(step.power_at(f))]), volume_flow_m3_s=np.array([float(flow)]))

        def rhs(t, y):
            T = y[:N_NODES]
            C, L, b, g_amb, offset = node_equations(rig, T[None, :], inputs_at(t))
            loss = np.sum(g_amb[0] * (T - rig.ambient_K)) + offset[0]
            return np.append((b[0] - L[0] @ T) / C[0], loss)

        def jac(t, y):  # approximate (coefficients frozen); Radau only needs it for Newton
            C, L, _, g_amb, _ = node_equations(rig, y[None, :N_NODES], inputs_at(t))
            J = np.zeros((N_NODES + 1, N_NODES + 1))
            J[:N_NODES, :N_NODES] = -L[0] / C[0][:, None]
            J[N_NODES, :N_NODES] = g_amb[0]
            return J

        sol = solve_ivp(rhs, (t0, t0 + step.duration_s), y0, method="Radau", rtol=1e-8, atol=1e-8,
                        jac=jac, dense_output=True)
        assert sol.success, sol.message
        return sol

    def T_K(self, times_s):
        out = []
        for t in times_s:
            for start, end, sol in self.pieces:
                if t <= end + 1e-6:
                    out.append(sol.sol(min(max(t, start), end))[:N_NODES])
                    break
            else:
                out.append(self.pieces[-1][2].y[:N_NODES, -1])
        return np.array(out)


REFERENCE_SCENARIOS = ["default.toml", "plastic_tank_cylinder.toml", "us_units_fan.toml"]


@pytest.fixture(scope="module", params=REFERENCE_SCENARIOS)
def scenario_and_reference(request):
    scenario = load_scenario(SCENARIO_DIR / request.param)
    rig = build_rig(scenario)
    return request.param, scenario, rig, Reference(rig, scenario.steps, np.full(N_NODES, scenario.start_K))


# Worst differences measured when this test was written (K, bulk oil / hose liner / any other node),
# the hose as two rings, the planning resolution's longest sub-step 120 s:
#   default           trace 8.2e-4 / 8.8e-4 / 1.6e-3   plan 3.1e-3 / 3.4e-3 / 6.3e-3
#   plastic cylinder  trace 6.8e-5 / 1.4e-4 / 2.7e-4   plan 1.4e-3 / 1.4e-3 / 2.9e-3
#                     (plan with six sub-steps per curve pull, was eight: 9.3e-4 / 8.6e-4 / 2.0e-2)
#   us units, fan     trace 2.6e-3 / 1.9e-1 / 1.9e-2   plan 2.4e-2 / 1.5e+0 / 2.3e-1
# (A longest sub-step of 180 s met these too, bulk 1.1e-2 on the default, but on the benchmark's
# 5 L tank it put the peak 0.077 K off solve_ivp, against 0.033 K at 120 s: kept at 120 s.)
@pytest.mark.parametrize("resolution", [TRACE_RESOLUTION, PLAN_RESOLUTION], ids=["trace", "plan"])
def test_bulk_temperature_within_0p05_K_of_the_reference(scenario_and_reference, resolution):
    # Issue requirement: bulk oil within 0.05 K of a tight-tolerance reference solution.
    name, scenario, rig, reference = scenario_and_reference
    trace = integrate(rig, scenario.steps, scenario.start_K, resolution=resolution)
    ref = reference.T_K(trace.time_s[:, 0])
    error = np.max(np.abs(trace.T_K[:, 0, :] - ref), axis=0)
    error_oil, error_liner = error[OIL], error[HOSE]
    error_any = np.max(np.delete(error, HOSE))
    print(f"{name} {resolution}: worst bulk error {error_oil:.2e} K, hose liner {error_liner:.2e} K, "
          f"any other node {error_any:.2e} K")
    assert error_oil < 0.05
    assert error_any < 0.25   # wall, hardware, hose cover: not a requirement, a guard against regressions
    # The hose liner (a fifth of the rubber, behind the bore coefficient and a tenth of the wall)
    # feels the bore coefficient directly. On the US rig the hose's Reynolds number crosses 2300 in
    # the 6th pull, where the tube correlation jumps from Hausen's laminar entry to Gnielinski
    # (26 -> 38 W/K over the pull); the planning resolution holds a pull's coefficients at its
    # mid-point, so that pull's liner ends 1.5 K low (measured; 0.19 K at the trace resolution; the
    # bulk 0.021 K). A guard, not a requirement:
    assert error_liner < 2.0
    # the recorded peak too
    assert abs(float(peak_oil_K(trace)[0]) - ref[:, OIL].max()) < 0.05


def test_a_long_engine_curve_day_at_the_planning_resolution_converges():
    # Numerical convergence (no outside source: the same equations at a fine resolution): the plastic
    # drum's engine-curve cycle 200 times, at the planning resolution against 64 sub-steps per curve
    # pull and 10 s sub-steps. The bulk peak agrees within 0.01 K (measured 0.002 K); the return
    # line's peak, read at each sub-step's end with its mean power's rise, within 0.2 K (measured
    # 0.11 K high here, against a rise over the bulk of 5.8 K; on this drum with 16 times the oil it
    # read 0.031 K low: the sign is the rig's).
    from thermo_budget.engine.session import Resolution
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml").changed(**{"session.repeat": 200})
    rig = build_rig(scenario)
    fine = integrate(rig, scenario.steps, scenario.start_K,
                     resolution=Resolution(pull_substeps=4, curve_substeps=64, max_substep_s=10.0, max_substeps=40))
    plan = integrate(rig, scenario.steps, scenario.start_K, resolution=PLAN_RESOLUTION)
    assert abs(float(peak_oil_K(plan)[0]) - float(peak_oil_K(fine)[0])) < 0.01
    assert abs(float(plan.return_K.max()) - float(fine.return_K.max())) < 0.2


def test_heat_lost_matches_the_reference_integral(scenario_and_reference):
    # The heat lost is integrated independently by the reference (fourth state).
    name, scenario, rig, reference = scenario_and_reference
    trace = integrate(rig, scenario.steps, scenario.start_K, resolution=TRACE_RESOLUTION)
    assert float(trace.energy_lost_J[0]) == pytest.approx(reference.energy_lost_J, rel=2e-3)


# --- conservation -------------------------------------------------------------------------------

@pytest.mark.parametrize("path", SHIPPED_SCENARIOS, ids=[p.name for p in SHIPPED_SCENARIOS])
def test_energy_balance_closes_on_every_shipped_scenario(path):
    # First law: heat in - heat out - heat stored, relative to heat in, below 1e-9 (issue 10).
    result = session_report(load_scenario(path))
    assert abs(result["energy_balance_rel_error"]) < 1e-9
    assert result["energy_in_J"] > 0 and result["energy_lost_J"] >= 0


@pytest.mark.parametrize("path", SHIPPED_SCENARIOS, ids=[p.name for p in SHIPPED_SCENARIOS])
def test_energy_balance_closes_at_planning_resolution(path):
    scenario = load_scenario(path)
    trace = integrate(build_rig(scenario), scenario.steps, scenario.start_K, resolution=PLAN_RESOLUTION)
    residual = trace.energy_in_J - trace.energy_lost_J - trace.energy_stored_J
    assert abs(float(residual[0] / trace.energy_in_J[0])) < 1e-9


def cragoe_enthalpy_J_kg(T_K, s):
    """Integral of Cragoe's c = (0.388 + 0.00045 t)/sqrt(s) Btu/(lb °F) in °F, from 32 °F, in J/kg
    (Cragoe, NBS Misc. Publ. 97; written out here independently of thermo_budget.physics.oil)."""
    t_F = (T_K - ZERO_CELSIUS_K) * 1.8 + 32.0
    btu_per_lb = (0.388 * (t_F - 32.0) + 0.000225 * (t_F**2 - 32.0**2)) / np.sqrt(s)
    return btu_per_lb * 1055.05585262 / 0.45359237


def test_adiabatic_rig_rises_by_energy_over_heat_capacity():
    # Adiabatic rig: no convection, no radiation. After the session and a long idle at zero load
    # the nodes share one temperature T_f with
    #   m_oil [h(T_f) - h(T0)] + (C_wall + C_hardware + C_hose)(T_f - T0) = energy in,
    # h the integral of Cragoe's c_p(T) (computed here from his formula, not from the package).
    scenario = load_scenario(adiabatic_raw())
    rig = build_rig(scenario)
    settle = Step(kind="wait", duration_s=4 * 3600.0, engine="idle", power_W=0.0, rpm=1500.0)
    steps = scenario.steps + [settle]
    trace = integrate(rig, steps, scenario.start_K, resolution=TRACE_RESOLUTION)
    energy_in = 4 * 9000.0 * 12.0
    assert float(trace.energy_in_J[0]) == pytest.approx(energy_in, rel=1e-12)
    assert float(trace.energy_lost_J[0]) == 0.0
    assert float(trace.energy_stored_J[0]) == pytest.approx(energy_in, rel=1e-9)

    m = float(rig.oil_mass_kg[0]) + rig.loop_oil_mass_kg      # the tank's oil and the loop's
    s = rig.oil.specific_gravity_60F
    C_solid = float(np.asarray(rig.wall_capacity_J_K).ravel()[0]) + rig.hardware_capacity_J_K + rig.hose_capacity_J_K
    T0 = scenario.start_K

    def gap(T):
        return m * (cragoe_enthalpy_J_kg(T, s) - cragoe_enthalpy_J_kg(T0, s)) + C_solid * (T - T0) - energy_in

    T_f = brentq(gap, T0, T0 + 200.0, xtol=1e-12)
    final = trace.T_K[-1, 0]
    assert np.ptp(final) < 0.01                      # one temperature after the still wait
    np.testing.assert_allclose(final, T_f, atol=0.01)
    # and the mean heat capacity is the oil's c_p at the mean temperature (c_p is linear in T)
    c_mid = float(rig.oil.specific_heat(0.5 * (T0 + T_f)))
    assert (T_f - T0) == pytest.approx(energy_in / (m * c_mid + C_solid), rel=1e-9)


def test_adiabatic_total_enthalpy_equals_heat_in_at_every_point():
    # Adiabatic rig: the total enthalpy of the nodes equals the heat in at every recorded
    # point (first law), not only at the end.
    scenario = load_scenario(adiabatic_raw())
    rig = build_rig(scenario)
    trace = integrate(rig, scenario.steps, scenario.start_K, resolution=TRACE_RESOLUTION)
    H0 = node_enthalpy_J(rig, trace.T_K[0]).sum()
    heat_in = np.cumsum(trace.power_W[:, 0] * np.diff(trace.time_s[:, 0], prepend=0.0))
    for i in range(trace.T_K.shape[0]):
        assert node_enthalpy_J(rig, trace.T_K[i]).sum() - H0 == pytest.approx(heat_in[i], rel=1e-9, abs=1e-6)


def test_designs_are_independent_in_a_batch(base_scenario):
    rig = build_rig(base_scenario, oil_volume_m3=np.array([0.012, 0.015, 0.020]))
    batch = integrate(rig, base_scenario.steps, base_scenario.start_K, n_designs=3)
    single = integrate(build_rig(base_scenario, oil_volume_m3=np.array([0.015])), base_scenario.steps,
                       base_scenario.start_K)
    np.testing.assert_allclose(batch.T_K[:, 1, :], single.T_K[:, 0, :], rtol=1e-12)


def test_long_engine_off_wait_cools_towards_ambient(base_scenario):
    rig = build_rig(base_scenario)
    T0 = np.array([350.0, 340.0, 330.0, 320.0, 315.0, 345.0])
    cool = Step(kind="wait", duration_s=48 * 3600.0, engine="off")
    trace = integrate(rig, [cool], T0)
    oil = trace.T_K[:, 0, OIL]
    assert np.all(np.diff(oil) <= 1e-12)
    assert oil[-1] - rig.ambient_K < 1.0


# --- invariants over random rigs (hypothesis) ---------------------------------------------------

@st.composite
def random_rigs(draw):
    """Scenario dicts of invented rigs with random geometry, oil, load and cadence."""
    raw = base_raw()
    shape = draw(st.sampled_from(["box", "cylinder"]))
    volume_L = draw(st.floats(5.0, 40.0))
    fill = draw(st.floats(0.4, 0.85))
    height = draw(st.floats(0.2, 0.6))
    footprint = volume_L / 1000.0 / (fill * height)
    reservoir = raw["reservoir"]
    reservoir.update(shape=shape, oil_volume=f"{volume_L} L", height=f"{height} m",
                     wall_material=draw(st.sampled_from(["steel", "aluminium", "polyethylene"])),
                     wall_thickness=f"{draw(st.floats(1.5, 6.0))} mm",
                     emissivity=draw(st.floats(0.0, 0.95)),
                     bottom=draw(st.sampled_from(["open", "floor"])))
    if shape == "box":
        aspect = draw(st.floats(1.0, 2.5))
        width = np.sqrt(footprint / aspect)
        reservoir.update(length=f"{aspect * width} m", width=f"{width} m")
    else:
        for key in ("length", "width"):
            reservoir.pop(key)
        reservoir["diameter"] = f"{np.sqrt(4.0 * footprint / np.pi)} m"
    raw["ambient"] = raw["session"]["start_temperature"] = f"{draw(st.floats(5.0, 35.0))} degC"
    raw["fluid"]["iso_vg"] = draw(st.sampled_from([22, 32, 46, 68]))
    raw["fluid"]["max_temperature"] = "95 degC"
    raw["fluid"]["min_viscosity"] = "6 cSt"
    raw["hardware"]["mass"] = f"{draw(st.floats(2.0, 25.0))} kg"
    raw["hardware"]["emissivity"] = draw(st.floats(0.0, 0.95))
    raw["losses"] = {"convection_multiplier": draw(st.floats(0.0, 2.0)),
                     "air_speed": f"{draw(st.sampled_from([0.0, 0.0, 1.0, 4.0]))} m/s"}
    pull = {"kind": "pull", "duration": f"{draw(st.floats(5.0, 30.0))} s",
            "power": f"{draw(st.floats(1.0, 15.0))} kW", "rpm": draw(st.floats(1500.0, 5000.0))}
    if draw(st.booleans()):
        wait = {"kind": "wait", "duration": f"{draw(st.floats(20.0, 300.0))} s", "engine": "off"}
    else:
        wait = {"kind": "wait", "duration": f"{draw(st.floats(20.0, 300.0))} s", "engine": "idle",
                "power": f"{draw(st.floats(0.0, 400.0))} W", "rpm": draw(st.floats(800.0, 1500.0))}
    raw["session"]["steps"] = [pull, wait]
    raw["session"]["repeat"] = draw(st.integers(1, 6))
    return raw


INVARIANT_SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
TOL_K = 1e-6


def _session(rig, scenario, n=1):
    return integrate(rig, scenario.steps, scenario.start_K, n_designs=n, resolution=PLAN_RESOLUTION)


@INVARIANT_SETTINGS
@given(raw=random_rigs(), factor=st.floats(1.05, 3.0))
def test_more_oil_never_gives_a_hotter_peak(raw, factor):
    # Invariant (issue 2): more oil never means a higher peak or fewer pulls. Checked both for a
    # geometrically scaled tank (build_rig's oil_volume_m3) and for more oil in the same tank.
    scenario = load_scenario(raw)
    V = scenario.reservoir.oil_volume_m3
    trace = _session(build_rig(scenario, oil_volume_m3=np.array([V, V * factor])), scenario, n=2)
    peaks = peak_oil_K(trace)
    assert peaks[1] <= peaks[0] + TOL_K
    limit, _ = limit_K(scenario)
    pulls = pulls_completed_under(trace, limit)
    assert pulls[1] >= pulls[0]

    room = scenario.reservoir.inner_volume_m3 / (1.0 + 7e-4 * (scenario.max_temperature_K - 288.15))
    more = min(V * factor, 0.999 * room)
    if more > V * 1.01:
        fuller = scenario.changed(**{"reservoir.oil_volume": f"{more * 1000.0} L"})
        peak_fuller = peak_oil_K(_session(build_rig(fuller), fuller))[0]
        assert peak_fuller <= peaks[0] + TOL_K


@INVARIANT_SETTINGS
@given(raw=random_rigs(), cooler_W_K=st.floats(1.0, 200.0), fan=st.sampled_from(["with_flow", "always"]))
def test_a_cooler_never_makes_it_hotter(raw, cooler_W_K, fan):
    raw["cooler"] = {"specific_dissipation": f"{cooler_W_K} W/K", "fan": fan}
    scenario = load_scenario(raw)
    trace = _session(build_rig(scenario, cooler_W_K=np.array([0.0, cooler_W_K])), scenario, n=2)
    peaks = peak_oil_K(trace)
    assert peaks[1] <= peaks[0] + TOL_K
    # and the whole bulk-oil trace is never hotter, at every point
    assert np.all(trace.T_K[:, 1, OIL] <= trace.T_K[:, 0, OIL] + TOL_K)


@INVARIANT_SETTINGS
@given(raw=random_rigs(), low=st.floats(0.0, 2.0), extra=st.floats(0.05, 3.0))
def test_higher_convection_multiplier_never_hotter(raw, low, extra):
    scenario = load_scenario(raw)
    cool = _session(build_rig(scenario, convection_multiplier=low + extra), scenario)
    warm = _session(build_rig(scenario, convection_multiplier=low), scenario)
    assert peak_oil_K(cool)[0] <= peak_oil_K(warm)[0] + TOL_K
    assert cool.T_K[-1, 0, OIL] <= warm.T_K[-1, 0, OIL] + TOL_K


@INVARIANT_SETTINGS
@given(raw=random_rigs())
def test_energy_balance_on_random_rigs(raw):
    scenario = load_scenario(raw)
    trace = _session(build_rig(scenario), scenario)
    residual = trace.energy_in_J - trace.energy_lost_J - trace.energy_stored_J
    assert abs(float(residual[0] / trace.energy_in_J[0])) < 1e-9
    # the oil never falls below ambient when it starts at ambient and only gets heat
    assert np.all(trace.T_K[:, 0, :] >= scenario.ambient_K - 1e-6)


def test_stop_above_ends_the_trace_once_every_design_is_over():
    scenario = load_scenario(SHIPPED_SCENARIOS[0].parent / "default.toml")
    steps = list(scenario.cycle) * 60
    rig = build_rig(scenario, oil_volume_m3=np.array([0.008, 0.012]))
    full = integrate(rig, steps, scenario.start_K, n_designs=2, resolution=PLAN_RESOLUTION)
    limit, _ = limit_K(scenario)
    stopped = integrate(rig, steps, scenario.start_K, n_designs=2, resolution=PLAN_RESOLUTION, stop_above_K=limit)
    m = stopped.time_s.shape[0]
    assert m < full.time_s.shape[0]
    # the same points up to the stop, and both designs over the limit by then
    np.testing.assert_array_equal(stopped.T_K, full.T_K[:m])
    assert (stopped.T_K[:, :, OIL].max(axis=0) > limit).all()
    np.testing.assert_array_equal(pulls_completed_under(stopped, limit), pulls_completed_under(full, limit))
    # a temperature never reached changes nothing
    never = integrate(rig, steps[:6], scenario.start_K, n_designs=2, resolution=PLAN_RESOLUTION, stop_above_K=1e4)
    assert never.time_s.shape[0] == integrate(rig, steps[:6], scenario.start_K, n_designs=2,
                                              resolution=PLAN_RESOLUTION).time_s.shape[0]


def test_per_design_ambient_power_and_inside_multipliers_match_separate_runs():
    """A batch whose designs differ in ambient, power, oil-side and hardware-coupling multipliers gives
    each design the trace it gets alone (the batch is only a vector of independent rigs)."""
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    rig = build_rig(scenario)
    ambient = np.array([285.0, 300.0])
    power = np.array([0.9, 1.1])
    oil_side = np.array([0.5, 2.0])
    coupling = np.array([3.0, 0.7])
    batch = integrate(rig.with_changes(ambient_K=ambient, power_multiplier=power, oil_side_multiplier=oil_side,
                                       hardware_coupling_multiplier=coupling),
                      scenario.steps, scenario.start_K, n_designs=2)
    for i in range(2):
        alone = integrate(rig.with_changes(ambient_K=float(ambient[i]), power_multiplier=float(power[i]),
                                           oil_side_multiplier=float(oil_side[i]),
                                           hardware_coupling_multiplier=float(coupling[i])),
                          scenario.steps, scenario.start_K)
        np.testing.assert_allclose(batch.T_K[:, i], alone.T_K[:, 0], rtol=0, atol=1e-9)
        np.testing.assert_allclose(batch.energy_lost_J[i], alone.energy_lost_J[0], rtol=1e-12)
        assert abs(batch.energy_in_J[i] - power[i] * integrate(rig, scenario.steps, scenario.start_K).energy_in_J[0]) \
            < 1e-9 * batch.energy_in_J[i]


# --- the inside of the rig: the loop follows the oil ------------------------------------------

def test_adiabatic_rig_every_node_reaches_the_single_temperature_while_oil_flows():
    # Issue 10: adiabatic rig, 20 pulls of 10 kW x 10 s with 30 s engine-off waits; then the pump
    # turns with no load. The metal bodies follow the oil within 0.5 K after 3 minutes of flow;
    # every node, the hose rubber included (its own diffusion time t^2/alpha is about 3 min), sits
    # within 0.5 K of the single-temperature energy balance after 15 minutes. (This is issue 23's
    # test (b); the loop oil, a node of its own since then, is among every node. Measured with it:
    # after 15 minutes the farthest node is the hose cover, 0.10 K below the balance.)
    scenario = load_scenario(adiabatic_raw())
    rig = build_rig(scenario)
    T_eq = single_temperature_K(rig, scenario.start_K, 20 * 10 * 10000.0)
    for minutes, nodes, tolerance in ((3, [OIL, HARDWARE], None), (15, slice(None), 0.5)):
        flow = Step(kind="wait", duration_s=60.0 * minutes, engine="idle", power_W=0.0, rpm=3600.0)
        final = integrate(rig, [ADIABATIC_PULL, ENGINE_OFF_30S] * 20 + [flow], scenario.start_K,
                          resolution=TRACE_RESOLUTION).final_K[0]
        if tolerance is None:
            assert abs(final[HARDWARE] - final[OIL]) < 0.5
        else:
            np.testing.assert_allclose(final, T_eq, atol=tolerance)


def test_adiabatic_rig_with_engine_off_waits_the_bodies_hold_back_little():
    # Same rig, ending with the last 30 s wait. The model before issue 10 (bodies reached only
    # through the hose rubber) left the bulk 6.6 K above the single-temperature balance with the
    # hardware 52 K behind the oil; now the metal bodies are less than 15 K behind it and the bulk
    # less than 5 K above the balance. Most of what is left is the hose rubber, which 10-s pulls cannot heat through
    # (measured when this test was written: bulk +4.1 K, bodies -6.9 K, hose -31 K from the balance;
    # with the hose as two rings: bulk +3.2 K, bodies -7.6 K, hose liner -16 K, cover -20 K; with the
    # loop oil standing in the bodies and hoses as its own node: bulk +2.7 K, bodies -6.9 K, liner
    # -9.7 K, cover -15.6 K, loop oil +4.2 K).
    scenario = load_scenario(adiabatic_raw())
    rig = build_rig(scenario)
    T_eq = single_temperature_K(rig, scenario.start_K, 20 * 10 * 10000.0)
    final = integrate(rig, [ADIABATIC_PULL, ENGINE_OFF_30S] * 20, scenario.start_K,
                      resolution=TRACE_RESOLUTION).final_K[0]
    assert 0.0 < final[OIL] - T_eq < 5.0
    assert final[OIL] - final[HARDWARE] < 15.0
    # the bodies' share of the bulk's excess: their missing heat over the whole capacity
    C = heat_capacities_J_K(rig, final[None, :])[0]
    assert C[HARDWARE] * (T_eq - final[HARDWARE]) / C.sum() < 1.0
    assert final[HOSE] < final[HARDWARE]


def test_hardware_follows_the_oil_on_a_30_L_steel_box():
    # Issue 10: a 30 L painted steel box, 11 kW pulls of 15 s, 3-minute engine-off waits, 12 kg
    # of steel hardware (invented rig): at the end of the 20th pull the hardware's rise is at least
    # half of the oil's (before issue 10: about a seventh).
    raw = base_raw()
    raw["reservoir"].update(oil_volume="30 L", length="0.40 m", width="0.30 m", height="0.40 m")
    raw["hardware"].update(mass="12 kg", hose_length="3 m", hose_outer_diameter="27 mm")
    raw["session"]["steps"] = [{"kind": "pull", "duration": "15 s", "power": "11 kW", "rpm": 3600},
                               {"kind": "wait", "duration": "3 min", "engine": "off"}]
    raw["session"]["repeat"] = 20
    scenario = load_scenario(raw)
    trace = integrate(build_rig(scenario), scenario.steps, scenario.start_K, resolution=TRACE_RESOLUTION)
    at = int(np.argmin(np.abs(trace.time_s[:, 0] - trace.pull_end_s[19, 0])))
    rise = trace.T_K[at, 0] - scenario.start_K
    assert rise[HARDWARE] >= 0.5 * rise[OIL]


# --- engine off: the loop oil standing in the bodies and hoses ----------------------------------

def _engine_off_reference_K(rig, T0_K, duration_s):
    """Independent reference for an engine-off wait on an adiabatic rig: the node balances written out
    here from the individual couplings (still oil to the tank wall, the standing loop oil to the
    bodies, the hose liner and the tank's oil, the hose rings' link, the bodies' metal link to the
    tank), each re-evaluated at the current state, and the capacities from the rig's masses with the
    oil's c_p(T); integrated by scipy's Radau at rtol = atol = 1e-10. Not node_equations."""
    share = rig.constants["hose_liner_share"]

    def rhs(t, T):
        o, w, h, li, co, lo = T
        G_ow = float(np.atleast_1d(oil_to_wall_W_K(rig, np.array([o]), np.array([w]), 0.0))[0])
        k_loop = float(rig.oil.conductivity(lo))
        G_ol, G_lb, G_lh = (float(np.atleast_1d(g)[0]) for g in loop_oil_links_W_K(rig, False, 0.0, k_loop))
        G_lc = float(hose_ring_link_W_K(rig))
        G_bw = float(engine_off_link_W_K(rig))
        q = np.array([G_ow * (w - o) + G_ol * (lo - o),
                      G_ow * (o - w) + G_bw * (h - w),
                      G_lb * (lo - h) + G_bw * (w - h),
                      G_lh * (lo - li) + G_lc * (co - li),
                      G_lc * (li - co),
                      G_ol * (o - lo) + G_lb * (h - lo) + G_lh * (li - lo)])
        C = np.array([float(rig.oil_mass_kg[0]) * float(rig.oil.specific_heat(o)),
                      float(np.asarray(rig.wall_capacity_J_K).ravel()[0]), rig.hardware_capacity_J_K,
                      share * rig.hose_capacity_J_K, (1 - share) * rig.hose_capacity_J_K,
                      rig.loop_oil_mass_kg * float(rig.oil.specific_heat(lo))])
        return q / C

    sol = solve_ivp(rhs, (0.0, duration_s), np.asarray(T0_K, dtype=float), method="Radau", rtol=1e-10, atol=1e-10)
    assert sol.success, sol.message
    return sol.y[:, -1]


@pytest.mark.parametrize("mounting", ["apart", "on_tank"])
def test_engine_off_end_state_matches_an_independent_reference_and_its_excess_never_grows(mounting):
    # Issue 23, test (c): adiabatic rig, 20 pulls of 10 kW x 10 s with 30 s engine-off waits, then an
    # engine-off wait. The end state agrees with the reference above (same couplings, independent
    # assembly and integrator) within 0.02 K on every node, and the bulk's excess over the
    # single-temperature balance never grows with the wait (it can only relax).
    # Measured when this test was written (K above the balance, bulk / loop oil), apart: 30 s
    # +2.74 / +4.16, 10 min +2.09 / -7.50, 1 h +2.05, 4 h +2.05 (the loop is cut off from the tank but
    # for the standing columns, 3e-5 W/K: the former model's +2.65 K, less the loop oil it held);
    # on_tank (a 10 W/K flange): 1 h +0.59, 4 h +0.03.
    raw = adiabatic_raw()
    set_path(raw, "hardware.mounting", mounting)
    scenario = load_scenario(raw)
    rig = build_rig(scenario)
    T_eq = single_temperature_K(rig, scenario.start_K, 20 * 10 * 10000.0)
    session = [ADIABATIC_PULL, ENGINE_OFF_30S] * 19 + [ADIABATIC_PULL]
    after_pulls = integrate(rig, session, scenario.start_K, resolution=TRACE_RESOLUTION).final_K[0]
    excess = []
    for wait_s in (30.0, 600.0, 3600.0, 4 * 3600.0):
        wait = Step(kind="wait", duration_s=wait_s, engine="off")
        final = integrate(rig, [wait], after_pulls, resolution=TRACE_RESOLUTION).final_K[0]
        if wait_s <= 3600.0:
            np.testing.assert_allclose(final, _engine_off_reference_K(rig, after_pulls, wait_s), atol=0.02)
        excess.append(final[OIL] - T_eq)
    assert all(later <= earlier + 1e-6 for earlier, later in zip(excess, excess[1:])), excess
    assert 0.0 <= excess[-1] < (2.5 if mounting == "apart" else 0.2)


def test_loop_oil_stands_apart_from_the_tank_with_the_engine_off_and_follows_it_with_flow():
    # The loop oil (0.77 L on the base rig) is its own node: with the pump stopped it exchanges with the
    # bodies and the hose liner through still oil (Nu_D = 5.78, a few W/K, time constant minutes)
    # and with the tank's oil only along the standing columns (3e-5 W/K); with the pump running it
    # is tied to the bulk by the stream, m_dot c_p, and sits at the bulk plus half the return-line rise.
    rig = build_rig(load_scenario(adiabatic_raw()))
    T = np.array([[340.0, 330.0, 320.0, 315.0, 310.0, 335.0]])
    still = Inputs(power_W=np.zeros(1), volume_flow_m3_s=np.zeros(1))
    _, L, _, _, _ = node_equations(rig, T, still)
    assert -L[0, OIL, LOOP_OIL] < 1e-4
    assert 0.5 < -L[0, LOOP_OIL, HARDWARE] < 20.0 and 0.5 < -L[0, LOOP_OIL, HOSE] < 20.0
    flow = pump_flow_m3_s(rig.displacement_m3, 3600.0, rig.volumetric_efficiency)
    running = Inputs(power_W=np.array([10000.0]), volume_flow_m3_s=np.array([flow]))
    C, L, b, _, _ = node_equations(rig, T, running)
    mass_flow_cp = float(rig.oil.density_kg_m3(340.0) * flow * rig.oil.specific_heat(340.0))
    assert -L[0, OIL, LOOP_OIL] == pytest.approx(mass_flow_cp, rel=1e-9)
    assert -L[0, LOOP_OIL, HARDWARE] == 0.0
    # the loop oil's own balance at rest only if it sits at the bulk + half the rise
    rise = 10000.0 / mass_flow_cp
    assert b[0, LOOP_OIL] / -L[0, OIL, LOOP_OIL] == pytest.approx(0.5 * rise, rel=1e-9)


def test_a_session_integrated_in_pieces_with_its_systems_is_the_session_integrated_whole(base_scenario):
    # integrate's `systems`: each piece starts from the corrector systems the piece before left, so
    # the pieces are the whole integration (runs_before_limit counts on in pieces); a piece started
    # without them predicts its first sub-step afresh, a few mK away at the seam
    from thermo_budget.engine.solver import take_systems
    rig = build_rig(base_scenario, oil_volume_m3=np.array([0.6, 1.0, 1.7]) * base_scenario.reservoir.oil_volume_m3)
    cycle = list(base_scenario.cycle)
    whole = integrate(rig, cycle * 30, base_scenario.start_K, n_designs=3, resolution=PLAN_RESOLUTION)
    systems: dict = {}
    first = integrate(rig, cycle * 10, base_scenario.start_K, n_designs=3, resolution=PLAN_RESOLUTION, systems=systems)
    kept = np.array([0, 2])            # and with a design dropped between the pieces
    second = integrate(take_designs(rig, kept), cycle * 20, first.final_K[kept], n_designs=2,
                       resolution=PLAN_RESOLUTION, start_time_s=first.time_s[-1, kept],
                       systems=take_systems(systems, kept))
    np.testing.assert_allclose(second.T_K, whole.T_K[first.T_K.shape[0] - 1:, kept], rtol=0, atol=1e-9)
    afresh = integrate(take_designs(rig, kept), cycle * 20, first.final_K[kept], n_designs=2,
                       resolution=PLAN_RESOLUTION, start_time_s=first.time_s[-1, kept])
    assert np.max(np.abs(afresh.T_K - whole.T_K[first.T_K.shape[0] - 1:, kept])) > 1e-6


def test_a_design_held_past_the_give_up_temperature_leaves_the_others_of_its_batch_as_they_are_alone(base_scenario):
    # A design whose oil passes GIVE_UP_ABOVE_K is held; the predictor of every other design still
    # borrows its own last system, so each design's sub-steps are its own whatever the batch holds
    # (a chunk that drops a design gives the same answers as one that keeps it)
    from thermo_budget.engine.solver import GIVE_UP_ABOVE_K
    volumes = np.array([0.05, 1.0, 1.5]) * base_scenario.reservoir.oil_volume_m3
    steps = list(base_scenario.cycle) * 12
    rig = build_rig(base_scenario, oil_volume_m3=volumes)
    rig = rig.with_changes(power_multiplier=np.array([40.0, 1.0, 1.0]))     # the first passes 300 degC
    batch = integrate(rig, steps, base_scenario.start_K, n_designs=3, resolution=PLAN_RESOLUTION)
    assert batch.T_K[:, 0, OIL].max() > GIVE_UP_ABOVE_K
    alone = integrate(take_designs(rig, np.array([1, 2])), steps, base_scenario.start_K, n_designs=2,
                      resolution=PLAN_RESOLUTION)
    np.testing.assert_allclose(batch.T_K[:, 1:], alone.T_K, rtol=0, atol=1e-12)


def test_a_batch_shared_among_threads_gives_the_serial_answers_to_the_bit(monkeypatch):
    # advance_step_parallel shares a batch's designs among threads; each design's sub-steps are its
    # own, so the answers must be those of the serial kernel exactly (engine-curve pulls included:
    # their predictor borrows the last sub-step's system)
    import thermo_budget.engine.solver as solver
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")
    n = 2 * solver.PARALLEL_FROM_DESIGNS
    rig = build_rig(scenario, oil_volume_m3=np.linspace(0.5, 2.0, n) * scenario.reservoir.oil_volume_m3)
    steps = list(scenario.cycle) * 3
    monkeypatch.setattr(solver, "threads_usable", lambda: True)
    shared = integrate(rig, steps, scenario.start_K, n_designs=n, resolution=PLAN_RESOLUTION)
    monkeypatch.setattr(solver, "PARALLEL_FROM_DESIGNS", 10 ** 9)
    serial = integrate(rig, steps, scenario.start_K, n_designs=n, resolution=PLAN_RESOLUTION)
    assert np.array_equal(shared.T_K, serial.T_K) and np.array_equal(shared.return_K, serial.return_K)
    assert np.array_equal(shared.energy_lost_J, serial.energy_lost_J)


def test_energy_balance_closes_over_a_200_pull_engine_curve_day():
    # Each sub-step's rotations start from the eigenvectors the last one left (carried through the
    # whole day); they are kept orthonormal, or the balance would drift with the day's length
    # (3.5e-9 after 200 curve pulls without it). Conservation of energy, no outside source.
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")
    trace = integrate(build_rig(scenario), list(scenario.cycle) * 200, scenario.start_K, resolution=PLAN_RESOLUTION)
    balance = trace.energy_in_J - trace.energy_lost_J - trace.energy_stored_J
    assert abs(balance[0]) < 1e-10 * trace.energy_in_J[0]


def test_steps_given_as_a_generator_are_integrated_as_the_same_steps_in_a_list():
    # The sub-step inputs are kept per step object for the call: steps made on the fly (a generator,
    # whose objects are freed and whose ids are reused) must not borrow another step's inputs
    from thermo_budget.engine.session import Step
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    powers = [9000.0, 3000.0, 12000.0, 1000.0, 6000.0, 9000.0]

    def steps():
        for power in powers:
            yield Step("pull", 20.0, engine="on", power_W=power, rpm=3000.0)
            yield Step("wait", 60.0, engine="off")

    rig = build_rig(scenario)
    listed = integrate(rig, list(steps()), scenario.start_K, resolution=PLAN_RESOLUTION)
    generated = integrate(rig, steps(), scenario.start_K, resolution=PLAN_RESOLUTION)
    assert np.array_equal(generated.T_K, listed.T_K) and np.array_equal(generated.power_W, listed.power_W)


@pytest.mark.parametrize("start", [np.nan, 0.0])
def test_a_warm_start_that_is_no_start_gives_the_fresh_answer(start):
    # The rotations start from the eigenvectors a design's last decomposition left; room that was
    # never filled (NaN, or zeros) is no start at all and must give the answer of a fresh start (I),
    # not a day of wrong systems (it gave a peak 10 K low and lost 70 % of the heat)
    # (an engine curve's kept system is only the next curve's warm start, never its predictor)
    from thermo_budget.engine.solver import CURVE_SYSTEM, _new_system
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")
    rig = build_rig(scenario)
    steps = list(scenario.cycle) * 3
    fresh = integrate(rig, steps, scenario.start_K, resolution=PLAN_RESOLUTION)
    room = _new_system(1, N_NODES)
    room[4][:] = start
    warm = integrate(rig, steps, scenario.start_K, resolution=PLAN_RESOLUTION, systems={CURVE_SYSTEM: room})
    np.testing.assert_allclose(warm.T_K, fresh.T_K, rtol=0, atol=1e-9)
    balance = warm.energy_in_J - warm.energy_lost_J - warm.energy_stored_J
    assert abs(balance[0]) < 1e-10 * warm.energy_in_J[0]
