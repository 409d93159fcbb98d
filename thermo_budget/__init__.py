"""thermo_budget: how hot the oil of an uncooled hydraulic brake gets over a planned test session,
and what that means for the number of pulls, the waits, a cooler and the reservoir size.

The names below are imported on first use, so that `python -m thermo_budget --help` starts at once
(numpy and the model load only when a command needs them).
"""
import sys
import types
from importlib import import_module

_WHERE = {"SweepResult": "design_sweep", "sweep": "design_sweep", "ScenarioError": "errors",
          "report": "report", "simulate": "report", "DEFAULT_SCENARIO": "scenario", "Scenario": "scenario",
          "build_rig": "scenario", "limit_K": "scenario", "load_scenario": "scenario"}

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


class _Package(types.ModuleType):
    """`report` is both a submodule and the function it exports; importing the submodule must not
    put the module where `thermo_budget.report` (the function) is."""

    def __setattr__(self, name, value):
        if name in _WHERE and _WHERE[name] == name and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
