"""thermo_budget: how hot the oil of an uncooled hydraulic brake gets over a planned test session."""
from .errors import ScenarioError
from .scenario import DEFAULT_SCENARIO, Scenario, build_rig, limit_K, load_scenario

__all__ = ["ScenarioError", "Scenario", "DEFAULT_SCENARIO", "load_scenario", "build_rig", "limit_K"]
