"""thermo_budget: how hot the oil of an uncooled hydraulic brake gets over a planned test session,
and what that means for the number of pulls, the waits, a cooler and the reservoir size."""
from .design_sweep import SweepResult, sweep
from .errors import ScenarioError
from .report import report, simulate
from .scenario import DEFAULT_SCENARIO, Scenario, build_rig, limit_K, load_scenario

__all__ = ["ScenarioError", "Scenario", "DEFAULT_SCENARIO", "load_scenario", "build_rig", "limit_K",
           "report", "simulate", "sweep", "SweepResult"]
