"""The cycle jump (engine/cycle_jump.py): a long day's last cycles had from the one-cycle map
linearised about its periodic state, held against the whole day integrated cycle by cycle."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.engine import cycle_jump
from thermo_budget.engine.long_session import session_limiting_peak_K
from thermo_budget.engine.outcome import limiting_peak_K
from thermo_budget.engine.session import PLAN_RESOLUTION
from thermo_budget.engine.solver import integrate
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.inputs.uncertainty import factor_values, sample_rig, standard_normals
from thermo_budget.physics.network import N_NODES
from thermo_budget.planning.session_runs import SEARCH_MARGIN_K, _proven_under, limits_K

from conftest import SCENARIO_DIR

# The jump's error against following every cycle (session_peak_K without the jump), measured when it
# was written: 0.95 mK at most, 0.48 mK at most on the low (unsafe) side, over the four shipped rigs'
# 200-pull days, each as planned and with six changes, on the band's 128 samples. The planning
# resolution's own error on the drum's 200-pull day, against a fine one, is 2 mK.
JUMP_AGREEMENT_K = 2e-3
JUMP_LOW_K = 1e-3


def _jumps_counted(monkeypatch) -> list:
    """Patch cycle_jump.last_cycles_peak_K to count the designs that jump; returns the count list."""
    jumped = []
    original = cycle_jump.last_cycles_peak_K

    def counting(run, designs, *args):
        jumped.append(designs.size)
        return original(run, designs, *args)

    monkeypatch.setattr(cycle_jump, "last_cycles_peak_K", counting)
    return jumped


def _followed_and_whole(scenario, rig, n):
    """(session_limiting_peak_K with the jump, the whole day integrated in one call) K (N,)."""
    periodic = _proven_under(scenario, rig, n, SEARCH_MARGIN_K, None)[3]
    followed = session_limiting_peak_K(rig, scenario, scenario.start_K, n, limits_K(scenario),
                                       resolution=PLAN_RESOLUTION, periodic=periodic)
    whole = limiting_peak_K(integrate(rig, scenario.steps, scenario.start_K, n_designs=n, resolution=PLAN_RESOLUTION),
                            *limits_K(scenario))
    return followed, whole


@pytest.mark.parametrize("name", ["plastic_tank_cylinder.toml", "us_20hp_small_tank.toml"])
def test_a_jumped_day_has_the_peaks_of_the_day_integrated_cycle_by_cycle(name, monkeypatch):
    # The drum's engine-curve pulls (a slow tank on the floor, unsettled after 200 pulls) and the
    # small US tank (a return-line limit), on the band's first 32 samples
    scenario = load_scenario(SCENARIO_DIR / name).changed(**{"session.repeat": 200})
    model = scenario.uncertainty
    n = 32
    rig = sample_rig(build_rig(scenario), factor_values(model, standard_normals(model, n)))
    jumped = _jumps_counted(monkeypatch)
    followed, whole = _followed_and_whole(scenario, rig, n)
    assert sum(jumped) >= n // 4                       # the jump did the work for many of them
    np.testing.assert_allclose(followed, whole, rtol=0, atol=JUMP_AGREEMENT_K)
    assert np.all(followed >= whole - JUMP_LOW_K)


def test_a_day_that_cools_towards_its_periodic_state_is_not_jumped(monkeypatch):
    # Started hotter than its periodic state, the day's peak is early: the jump needs cycle starts
    # that rise, so every design is followed to its end or until it settles, and the peaks are the
    # whole day's
    scenario = load_scenario(SCENARIO_DIR / "default.toml").changed(
        **{"session.repeat": 120, "session.start_temperature": "75 degC"})
    volumes = np.array([3.0, 4.0, 6.0]) * scenario.reservoir.oil_volume_m3
    rig = build_rig(scenario, oil_volume_m3=volumes)
    jumped = _jumps_counted(monkeypatch)
    followed, whole = _followed_and_whole(scenario, rig, volumes.size)
    assert sum(jumped) == 0
    np.testing.assert_allclose(followed, whole, rtol=0, atol=1e-3)


def test_the_jump_s_error_estimate_is_nil_for_an_affine_map_and_refuses_one_that_does_not_contract():
    # Cycle starts made by an exactly affine map X_{k+1} = X* + J (X_k - X*): its linearisation has
    # no error to carry. A map with a spectral radius of 1 or more has no fixed point to jump to.
    rng = np.random.default_rng(7)
    centre = 330.0 + rng.random((2, N_NODES))
    Q = np.linalg.qr(rng.standard_normal((N_NODES, N_NODES)))[0]
    contracting = Q @ np.diag(np.linspace(0.2, 0.97, N_NODES)) @ Q.T
    growing = Q @ np.diag(np.linspace(0.2, 1.01, N_NODES)) @ Q.T
    jacobian = np.stack([contracting, growing])
    X_before = centre - 20.0
    starts = [X_before]
    for _ in range(20):
        starts.append(centre + (jacobian @ (starts[-1] - centre)[..., None])[..., 0])
    error = cycle_jump.jump_error_K(np.array(starts), X_before, centre, jacobian, 20, 150)
    assert error[0] < 1e-9 and np.isinf(error[1])
