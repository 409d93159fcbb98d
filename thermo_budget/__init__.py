"""thermo_budget: how hot the oil of an uncooled hydraulic brake gets over a planned test session,
and what that means for the number of pulls, the waits, a cooler and the reservoir size.

The names below are imported on first use, so that `python -m thermo_budget --help` starts at once
(numpy and the model load only when a command needs them).
"""
from importlib import import_module

_WHERE = {"SweepResult": "planning.design_sweep", "sweep": "planning.design_sweep", "ScenarioError": "errors",
          "report": "planning.answers", "simulate": "planning.answers", "DEFAULT_SCENARIO": "inputs.scenario", "Scenario": "inputs.scenario",
          "build_rig": "inputs.rig_build", "limit_K": "inputs.scenario", "load_scenario": "inputs.scenario"}

__all__ = ["ScenarioError", "Scenario", "DEFAULT_SCENARIO", "load_scenario", "build_rig", "limit_K",
           "report", "simulate", "sweep", "SweepResult"]


def __getattr__(name):
    if name in _WHERE:
        value = getattr(import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + __all__)

