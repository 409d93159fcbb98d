"""The model of a logged day: the scenario's network driven by the log's heat input, read at the
log's times.

The heat input is the log's power_W or pull columns where it has them, else the scenario's planned
steps from time 0 (and engine off after their end). The steps are cut at the log's times, so the
model is read at exactly the logged instants; N parameter sets run as one vectorised integration.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..errors import ScenarioError
from ..display import format_temperature
from .measured_log import MeasuredLog
from ..physics.network import N_NODES, OIL
from ..inputs.scenario import Scenario
from ..inputs.rig_build import build_rig
from ..engine.session import Resolution, Step
from ..engine.solver import integrate

# One sub-step per logged interval up to 30 s; the model error this leaves is checked against a
# 2.5 s reference in the tests (well under a thermocouple's noise).
FIT_RESOLUTION = Resolution(pull_substeps=1, curve_substeps=2, max_substep_s=30.0, max_substeps=100_000)
TIME_TOLERANCE_S = 1e-6


@dataclass(frozen=True)
class LogModel:
    """The scenario's network driven by one log's heat input, read at the log's times.

    rig : the network with multipliers 1 (hardware coupling included) and the ambient used for the fit.
    pieces : the steps, cut at every logged time. point_index : (M,) index of each log row in the
    integrated trace (0 = the start state). point_piece : (M,) the piece that ends at each log row
    (-1 for a row at time 0).
    """
    rig: object
    pieces: tuple
    point_index: np.ndarray
    point_piece: np.ndarray
    start_K: float
    sensor: str
    ambient_K: float
    ambient_source: str
    heat_input: str
    notes: tuple

    def temperatures_K(self, convection, capacity, start_offset_K=0.0, hardware_coupling=1.0) -> np.ndarray:
        """Sensor temperature (N, M) K at the log's times for N parameter sets (arrays (N,)), run in
        one vectorised integration."""
        convection = np.atleast_1d(np.asarray(convection, dtype=float))
        capacity = np.atleast_1d(np.asarray(capacity, dtype=float))
        offset = np.broadcast_to(np.asarray(start_offset_K, dtype=float), convection.shape)
        coupling = np.array(np.broadcast_to(np.asarray(hardware_coupling, dtype=float), convection.shape))
        n = convection.size
        rig = self.rig.with_changes(convection_multiplier=convection, capacity_multiplier=capacity,
                                    hardware_coupling_multiplier=coupling)
        T0 = np.repeat((self.start_K + offset)[:, None], N_NODES, axis=1)
        trace = integrate(rig, list(self.pieces), T0, n_designs=n, resolution=FIT_RESOLUTION)
        series = trace.T_K[:, :, OIL] if self.sensor == "bulk" else trace.return_K
        return series[self.point_index].T


def log_model(scenario: Scenario, log: MeasuredLog, sensor: str = "bulk") -> LogModel:
    """Build the model of a logged day: heat input, cut points and ambient."""
    if sensor not in ("bulk", "return"):
        raise ScenarioError("sensor", sensor, 'one of "bulk", "return"')
    notes = []
    rig = build_rig(scenario, convection_multiplier=1.0, capacity_multiplier=1.0).with_changes(
        hardware_coupling_multiplier=1.0)
    ambient = log.mean_ambient_K
    if ambient is None:
        ambient, ambient_source = scenario.ambient_K, "scenario"
    else:
        ambient_source = "log mean"
        rig = rig.with_changes(ambient_K=ambient)
        notes.append(f"ambient: mean of the log's {np.count_nonzero(np.isfinite(log.ambient_K))} readings, "
                     f"{format_temperature(ambient, scenario.units)} "
                     f"(scenario: {format_temperature(scenario.ambient_K, scenario.units)})")
    if log.has_heat_input:
        pieces, cuts, input_notes = _log_pieces(scenario, log)
        columns = " and ".join(c for c, v in (("power_W", log.power_W), ("pull", log.pull)) if v is not None)
        heat_input = f"the log's {columns} column" + ("s" if " and " in columns else "")
    else:
        pieces, cuts, input_notes = _scenario_pieces(list(scenario.steps), log.time_s)
        heat_input = "the scenario's planned steps from time 0"
    notes += input_notes
    trace_index = _piece_end_index(pieces)
    cut_of_time = np.searchsorted(cuts, log.time_s - TIME_TOLERANCE_S)
    point_piece = cut_of_time - 1
    point_index = np.where(point_piece < 0, 0, trace_index[np.maximum(point_piece, 0)])
    return LogModel(rig=rig, pieces=tuple(pieces), point_index=point_index, point_piece=point_piece,
                    start_K=scenario.start_K,
                    sensor=sensor, ambient_K=ambient, ambient_source=ambient_source, heat_input=heat_input,
                    notes=tuple(notes))


def _piece_end_index(pieces) -> np.ndarray:
    """Index in the trace of the last recorded point of each piece (the trace starts with the start state)."""
    counts = [FIT_RESOLUTION.substeps(piece, piece.duration_s) for piece in pieces]
    return np.cumsum(counts)


def _merged_cuts(times) -> np.ndarray:
    cuts = np.unique(np.asarray(times, dtype=float))
    return cuts[np.concatenate([[True], np.diff(cuts) > TIME_TOLERANCE_S])]


def _piece(step: Step, f0: float, f1: float) -> Step:
    """The part of a step between fractions f0 and f1 of it."""
    piece = step.with_duration((f1 - f0) * step.duration_s)
    if step.curve is not None:
        piece = replace(piece, rpm_start=float(step.rpm_at(f0)), rpm_end=float(step.rpm_at(f1)))
    return piece


def _scenario_pieces(steps: list, times_s: np.ndarray):
    """The planned steps cut at the log's times; logged time past their end is engine off."""
    durations = np.array([step.duration_s for step in steps])
    ends = np.cumsum(durations)
    starts = ends - durations
    cuts = _merged_cuts(np.concatenate([[0.0], ends, times_s]))
    cuts = cuts[cuts <= max(times_s.max(), TIME_TOLERANCE_S) + TIME_TOLERANCE_S]
    notes, pieces = [], []
    for a, b in zip(cuts[:-1], cuts[1:]):
        middle = 0.5 * (a + b)
        if middle >= ends[-1]:
            pieces.append(Step(kind="wait", duration_s=b - a, engine="off"))
            continue
        j = int(np.searchsorted(ends, middle))
        pieces.append(_piece(steps[j], (a - starts[j]) / durations[j], (b - starts[j]) / durations[j]))
    if times_s.max() > ends[-1] + TIME_TOLERANCE_S:
        notes.append(f"the log runs {times_s.max() - ends[-1]:.0f} s past the end of the scenario's session "
                     f"({ends[-1]:.0f} s); that time is modelled with the engine off")
    if times_s.max() < ends[-1] - TIME_TOLERANCE_S:
        notes.append(f"the log ends at {times_s.max():.0f} s, before the end of the scenario's session ({ends[-1]:.0f} s)")
    return pieces, cuts, notes


def _reference_steps(scenario: Scenario):
    """The pull and the wait that stand for the log's pulls and waits, with notes where the
    scenario's steps differ among themselves."""
    notes = []
    pulls = [step for step in scenario.cycle if step.is_pull]
    waits = [step for step in scenario.cycle if not step.is_pull]
    pull = pulls[0]

    def rpm(step):
        return 0.5 * (step.rpm_start + step.rpm_end) if step.curve is not None else step.rpm
    if pull.curve is not None:
        notes.append("a logged pull runs at the mean speed of the scenario's engine-curve sweep; without power_W "
                     "it absorbs the sweep's mean power, evenly over the pull")
    if len({(rpm(p), round(p.mean_power_W(0.0, 1.0), 6)) for p in pulls}) > 1:
        notes.append("the scenario's pulls differ; the log's pulls take the speed (and, without power_W, "
                     "the power) of its first pull")
    wait = waits[0] if waits else Step(kind="wait", duration_s=1.0, engine="off")
    if not waits:
        notes.append("the scenario has no wait step; the log's waits are taken as engine off")
    elif len({(w.engine, w.power_W, w.rpm) for w in waits}) > 1:
        notes.append("the scenario's waits differ; the log's waits take the engine state of its first wait")
    return pull, rpm(pull), pull.mean_power_W(0.0, 1.0), wait, notes


@dataclass(frozen=True)
class LoggedInputs:
    """The heat input of each logged interval (the one that ends at each row), from the log's
    power_W and pull columns: arrays (M,) of whether it was a pull, the absorbed power (W), the
    engine state ("on" for a pull, "off" or "idle") and its speed (rev/min)."""
    is_pull: np.ndarray
    power_W: np.ndarray
    engine: np.ndarray
    rpm: np.ndarray
    notes: tuple

    def step(self, row: int, duration_s: float) -> Step:
        """The interval that ends at `row` as a step of duration_s."""
        return Step(kind="pull" if self.is_pull[row] else "wait", duration_s=duration_s, engine=str(self.engine[row]),
                    power_W=float(self.power_W[row]), rpm=float(self.rpm[row]))


def logged_inputs(scenario: Scenario, log: MeasuredLog) -> LoggedInputs:
    """The heat input of every interval of a log with a power_W or pull column.

    The values on a row hold over the interval that ends at it (the convention of `run --csv`).
    Without a pull column an interval is a pull when its power lies above half-way between the
    scenario's largest wait load and its pull's mean power. A wait with zero logged power is engine
    off; with power, the scenario's wait state (turning at the pull speed if the scenario's waits are
    engine off); without a power column, the scenario's wait as planned.
    """
    pull, pull_rpm, pull_power, wait, notes = _reference_steps(scenario)
    wait_power = wait.power_W if wait.engine == "idle" else 0.0
    threshold = 0.5 * (wait_power + pull_power)
    if log.pull is None:
        notes.append(f"intervals with more than {threshold:.0f} W logged are pulls (half-way between the "
                     f"scenario's wait load and its pull power)")
    m = log.time_s.size
    power = None if log.power_W is None else np.asarray(log.power_W, dtype=float)
    is_pull = np.asarray(log.pull, dtype=bool) if log.pull is not None else power > threshold
    if power is None:
        engine = np.where(is_pull, "on", wait.engine)
        rpm = np.where(is_pull, pull_rpm, wait.rpm if wait.engine == "idle" else 0.0)
        watts = np.where(is_pull, pull_power, wait_power)
    else:
        off = ~is_pull & (power == 0.0) & (not (wait.engine == "idle" and wait.power_W == 0.0))
        idle = ~is_pull & ~off
        engine = np.where(is_pull, "on", np.where(off, "off", "idle"))
        rpm = np.where(is_pull, pull_rpm, np.where(off, 0.0, wait.rpm if wait.engine == "idle" else pull_rpm))
        watts = np.where(off, 0.0, power)
        timed = log.time_s > TIME_TOLERANCE_S          # a row at the session start closes no interval
        off_in_idle = int(np.count_nonzero(off & timed)) if wait.engine == "idle" else 0
        powered_off = int(np.count_nonzero(idle & timed)) if wait.engine == "off" else 0
        if off_in_idle:
            notes.append(f"{off_in_idle} wait intervals with 0 W logged are taken as engine off (the scenario's waits idle)")
        if powered_off:
            notes.append(f"{powered_off} wait intervals have power logged although the scenario's waits are engine off; "
                         f"they are taken as turning at the pull speed, {pull_rpm:.0f} rpm")
    return LoggedInputs(is_pull=is_pull, power_W=np.asarray(watts, dtype=float), engine=np.asarray(engine),
                        rpm=np.asarray(rpm, dtype=float) * np.ones(m), notes=tuple(notes))


def _log_pieces(scenario: Scenario, log: MeasuredLog):
    """Piecewise-constant steps between the log's rows, from its power_W and pull columns
    (`logged_inputs`); the first interval starts at the session start, t = 0."""
    inputs = logged_inputs(scenario, log)
    cuts = _merged_cuts(np.concatenate([[0.0], log.time_s]))
    row_of_cut = np.searchsorted(log.time_s, cuts[1:] - TIME_TOLERANCE_S)
    pieces = [inputs.step(row, b - a) for a, b, row in zip(cuts[:-1], cuts[1:], row_of_cut)]
    return pieces, cuts, list(inputs.notes)


def predict_log_K(scenario: Scenario, log: MeasuredLog, sensor: str = "bulk", start_offset_K: float = 0.0) -> np.ndarray:
    """The scenario's model (with its own multipliers) at the log's times, (M,) K."""
    model = log_model(scenario, log, sensor)
    return model.temperatures_K(scenario.convection_multiplier, scenario.capacity_multiplier, start_offset_K,
                                scenario.hardware_coupling_multiplier)[0]

