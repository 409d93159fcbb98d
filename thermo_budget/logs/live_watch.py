"""Watching a log live: the file follower, the log reader, the state estimate and the forecast wired
together. `LiveWatch.update()` reads what the logger has added and returns one `LiveState`.

Only the new lines are read at each poll (with the header), and each row is taken into the filter
once, so a poll costs what the logger added, not what the day holds. A row is taken for good once
the row after it is in (the pull flag's edges look one row ahead); the latest row is worked out on
a copy for each answer. Rows are therefore taken the same way whether the day is followed as it is
written or read at once from its file: a watch restarted mid-day gives the same estimate.

The heat input of each logged interval comes from the log's power_W or pull columns, read as the log
fit reads them (`log_model.logged_inputs`). A log with neither has its pulls detected from the oil's
rate of rise (`state_estimate.LiveFilter.advance_detecting`).
"""
from __future__ import annotations

import re

import numpy as np

from ..errors import ScenarioError
from .live_forecast import forecast
from .live_progress import Progress, ReadingHistory
from ..display import format_temperature
from .live_state import LiveState, state_text
from .log_follower import LogFollower
from .log_model import _reference_steps, logged_inputs
from .measured_log import read_log
from ..physics.network import OIL
from ..inputs.rig_build import build_rig
from ..inputs.scenario import Scenario, limit_K
from ..engine.session import pump_flow_m3_s
from .state_estimate import MEASUREMENT_SD_K, LiveFilter
from ..units import ZERO_CELSIUS_K

MAX_DROPPED_LINES = 1000
SILENT_SENSOR_S = 60.0          # no oil reading for this long (and five intervals): an alarm
MISFIT_ALARM = 9.0              # innovations' mean square this many times the expected: the model misses the rig
NEAR_LIMIT_K = 2.0
AMBIENT_TIME_CONSTANT_S = 600.0  # the logged ambient is followed as a running mean over about this long
AMBIENT_STEP_K = 0.1            # ... and the rig's ambient changed when it has moved this far
PARSE_LINES = 4096              # a long catch-up is read this many lines at a time (bounded memory)
MIN_INTERVAL_S, MAX_INTERVAL_S = 0.05, 3600.0    # watch --interval: a loggers' poll, not a busy loop or a day


class LiveWatch:
    """Follows one log file for one scenario and sensor ("bulk" or "return")."""

    def __init__(self, scenario: Scenario, path, sensor: str = "bulk"):
        if sensor not in ("bulk", "return"):
            raise ScenarioError("sensor", sensor, 'one of "bulk", "return"')
        self.scenario, self.sensor, self.path = scenario, sensor, path
        self.base_rig = build_rig(scenario)
        self.limit_K, _ = limit_K(scenario)
        # The ready time and the pulls left at the scenario's confidence, where its band is on.
        self.confidence = scenario.uncertainty.confidence if scenario.uncertainty.spreads else None
        pull, pull_rpm, pull_power, wait, _ = _reference_steps(scenario)
        flow = self._flow
        self.pull_input = (flow(pull_rpm), pull_power)
        self.wait_input = (flow(wait.rpm) if wait.flowing else 0.0, wait.power_W if wait.flowing else 0.0)
        self.follower = LogFollower(path)
        self.messages: list[str] = []
        self._said: set = set()
        self._reset()

    def _flow(self, rpm) -> float:
        return float(pump_flow_m3_s(self.base_rig.displacement_m3, float(rpm), self.base_rig.volumetric_efficiency))

    def _reset(self):
        self.header, self.lines_read = None, 0
        self.progress: Progress | None = None
        self.latest: Progress | None = None
        self.pending = None
        self.last_time_s = None
        self.history = ReadingHistory()

    # the latest answer's view of the pulls and the estimate
    @property
    def pulls_started(self) -> int:
        return (self.latest or self.progress).pulls_started if (self.latest or self.progress) else 0

    @property
    def estimate(self):
        state = self.latest or self.progress
        return None if state is None else state.filter.estimate

    def _say(self, message: str, once: bool = True):
        if once and message in self._said:
            return
        self._said.add(message)
        self.messages.append(message)

    def take_messages(self) -> list[str]:
        out, self.messages = self.messages, []
        return out

    # ------------------------------------------------------------------ reading

    def update(self) -> LiveState | None:
        """Read what the logger added; return a state if there are new readings, else None."""
        return self.state() if self.read() else None

    def read(self) -> bool:
        """Take in what the logger added; True when there are new readings to answer for."""
        poll = self.follower.poll()
        if poll.missing:
            self._say(f"waiting for {self.path} to appear")
            return False
        if poll.restart:
            self._say(f"{poll.restart}: the estimate starts again", once=False)
            self._reset()
        taken = False
        for start in range(0, len(poll.lines), PARSE_LINES):
            taken |= self._take_lines(poll.lines[start:start + PARSE_LINES])
        return taken and self.progress is not None

    def _take_lines(self, lines: list[str]) -> bool:
        log = self._parse_new(lines)
        if log is None:
            return False
        if self.last_time_s is not None and log.time_s[0] <= self.last_time_s + 1e-6:
            log = self._after_step_back(log, lines)
            if log is None:
                return False
        for note in log.notes:
            if not note.startswith(("gap of", "rows were not")):
                self._say(note)
        self._take_rows(log)
        return True

    def _parse_new(self, lines: list[str]):
        """The new lines read by the log reader with the file's header; a line it refuses is dropped
        with a message naming its line in the file."""
        first = self.lines_read + 1                # the file's line number of lines[0]
        self.lines_read += len(lines)
        if self.header is None:
            j = next((j for j, line in enumerate(lines) if line.strip() and not line.lstrip().startswith("#")), None)
            if j is None:
                return None
            self.header, lines, first = lines[j], lines[j + 1:], first + j + 1
        lines, numbers = list(lines), list(range(first, first + len(lines)))
        for _ in range(MAX_DROPPED_LINES):
            try:
                return read_log("\n".join([self.header] + lines), self.sensor, str(self.path), require_heating=False)
            except ScenarioError as error:
                if "no data rows" in str(error):
                    return None
                line = re.search(r"line (\d+)", str(error.key))
                if not line or int(line.group(1)) < 2:
                    raise
                number = int(line.group(1))
                in_file = numbers[number - 2]
                self._say(f"line {in_file} dropped: " + str(error).replace(f"line {number}", f"line {in_file}"), once=False)
                del lines[number - 2], numbers[number - 2]
        raise ScenarioError(str(self.path), "too many unreadable lines", "a log the reader can read")

    def _after_step_back(self, log, lines):
        """New rows at or before the last one taken: a single repeat of the last row is dropped;
        otherwise the logger has started a new session, and the estimate starts again from its
        first row."""
        old = np.count_nonzero(log.time_s <= self.last_time_s + 1e-6)
        if old == 1 and abs(log.time_s[0] - self.last_time_s) < 1e-6:
            return _rows(log, slice(1, None)) if log.time_s.size > 1 else None
        self._say("the log's time went backwards: a new session; the estimate starts again", once=False)
        header, last, read = self.header, self.last_time_s, self.lines_read
        self._reset()
        self.header, self.lines_read = header, read - len(lines)
        return self._parse_new(_from_step_back(header, lines, last, self.sensor))

    # ------------------------------------------------------------------ estimating

    def _take_rows(self, log):
        """Each row of the new part of the log: the one before it is taken for good, it waits."""
        flagged = log.has_heat_input
        inputs = logged_inputs(self.scenario, log) if flagged else None
        if inputs is not None:
            for note in inputs.notes:
                self._say(re.sub(r"^\d+ ", "", note))
        else:
            self._say("the log has no pull or power column: pulls are detected from the oil's rate of rise, "
                      f"taken as the scenario's pull ({self.pull_input[1]:.0f} W)")
        m = log.time_s.size
        ambient = np.full(m, np.nan) if log.ambient_K is None else log.ambient_K
        if flagged:
            flows = np.where(inputs.engine != "off", pump_flow_m3_s(self.base_rig.displacement_m3, inputs.rpm,
                                                                    self.base_rig.volumetric_efficiency), 0.0)
            columns = zip(log.time_s.tolist(), log.oil_K.tolist(), inputs.is_pull.tolist(), inputs.power_W.tolist(),
                          flows.tolist(), ambient.tolist())
        else:
            columns = zip(log.time_s.tolist(), log.oil_K.tolist(), [None] * m, [None] * m, [None] * m, ambient.tolist())
        for row in columns:
            t, reading = row[0], row[1]
            self.last_time_s = t
            if self.progress is None:
                if np.isfinite(reading):
                    self._start(row)
                continue
            if self.pending is not None:
                self._advance(self.progress, self.pending, row, final=True)
            self.pending = row

    def _start(self, row):
        t, reading, is_pull, *_ = row
        rig = self.base_rig
        self.progress = Progress(LiveFilter(rig, t, reading, self.sensor), rig, bool(is_pull), t, reading,
                                  self.pull_input[1])
        self._ambient(self.progress, row[5], 0.0)
        self.history.add(t, reading)
        self.pending = None

    def _ambient(self, p: Progress, ambient_K: float, dt: float):
        if not np.isfinite(ambient_K):
            return
        p.ambient_K = ambient_K if p.ambient_K is None else (
            p.ambient_K + (1.0 - np.exp(-dt / AMBIENT_TIME_CONSTANT_S)) * (ambient_K - p.ambient_K))
        if abs(p.ambient_K - float(np.mean(p.rig.ambient_K))) > AMBIENT_STEP_K:
            p.rig = self.base_rig.with_changes(ambient_K=p.ambient_K)
            p.filter.set_rig(p.rig)

    def _advance(self, p: Progress, row, after, final: bool):
        """Take one row into p. after : the next row (None for the latest one); final: for good."""
        t, reading, is_pull, power, flow, ambient = row
        t0 = p.filter.time_s
        dt = t - t0
        p.spacing.append(dt)
        self._ambient(p, ambient, dt)
        if is_pull is None:
            fraction, taken = p.filter.advance_detecting(t, self.wait_input, self.pull_input, reading, p.in_pull)
        else:
            next_pull = None if after is None else after[2]
            at_edge = is_pull != p.last_is_pull or (next_pull is not None and next_pull != is_pull)
            edge, pull_power = 0, 0.0
            if at_edge:
                pull_power = power if is_pull else (after[3] if next_pull else p.last_pull_power_W)
                edge = -1 if is_pull else 1
            taken = p.filter.advance(t, flow, power, reading, edge, pull_power, self.pull_input[0])
            fraction = float(is_pull)
            p.last_is_pull = is_pull
            if is_pull:
                p.last_pull_power_W = power
        p.track_pulls(t0, t, fraction)
        if np.isfinite(reading):
            p.last_reading_s, p.last_oil_K = t, reading
            if final:
                self.history.add(t, reading)
                if taken is False:
                    self._say(f"reading {reading - ZERO_CELSIUS_K:.2f} degC at t = {t:.0f} s rejected as a spike", once=False)

    # ------------------------------------------------------------------ forecasting

    def state(self) -> LiveState:
        """The answer for the latest row: it is taken on a copy of the estimate, then the forecast."""
        latest = self.progress.copy()
        if self.pending is not None:
            self._advance(latest, self.pending, None, final=False)
        self.latest = latest
        now, reading = (self.pending[0], self.pending[1]) if self.pending is not None else (
            latest.filter.time_s, latest.last_oil_K)
        estimate = latest.filter.estimate
        X = estimate.mean_K
        result = forecast(self.scenario, latest.rig, self.limit_K, X, now, latest.pulls_started, latest.in_pull,
                          pull_elapsed_s=now - latest.pull_start_s,
                          since_pull_end_s=now - (latest.pull_end_s if latest.pulls_started else latest.first_time_s),
                          disturbance_W=estimate.established_disturbance_W, confidence=self.confidence)
        t, T = self.history.arrays([(now, reading)] if self.pending is not None and np.isfinite(reading) else [])
        spacing = float(np.median(latest.spacing)) if latest.spacing else 0.0
        return LiveState(time_s=now, oil_K=reading if np.isfinite(reading) else None, estimate_K=X.copy(),
                         estimate_sd_K=estimate.sd_K, in_pull=latest.in_pull, over_limit=bool(X[OIL] > self.limit_K),
                         forecast=result, alarm=self._alarm(result, now, latest, estimate, spacing),
                         measured_time_s=t, measured_oil_K=T)

    def _alarm(self, result, now: float, latest: Progress, estimate, spacing: float) -> str | None:
        u = self.scenario.units
        limit = format_temperature(self.limit_K, u)
        oil = estimate.mean_K[OIL]
        if oil > self.limit_K:
            wait = (f"cool for {_words(result.wait_s)} before the next pull" if result.wait_s is not None
                    else "no wait is long enough for the next planned pull")
            return f"The oil is at {format_temperature(oil, u)}, over its {limit} limit: stop pulling; {wait}."
        if latest.in_pull and result.pull_ends_over_limit:
            return (f"This pull reaches the {limit} limit in {result.seconds_to_limit:.0f} s, before its planned end: "
                    f"lift off now.")
        silent = now - latest.last_reading_s
        if silent > max(SILENT_SENSOR_S, 5 * spacing):
            return f"No oil reading for {silent:.0f} s: check the sensor; the forecast runs on the model alone."
        if result.next_pull_ready_s is None:
            return f"No wait is long enough for the next planned pull to end under the {limit} limit."
        if estimate.misfit_scale > MISFIT_ALARM:
            rms = np.sqrt(estimate.misfit_scale) * MEASUREMENT_SD_K
            return (f"The model misses this rig (readings about {rms:.1f} K from its predictions): keep a wider "
                    f"margin and calibrate it with fit.")
        if oil > self.limit_K - NEAR_LIMIT_K:
            return f"The oil is within {NEAR_LIMIT_K:.0f} K of its {limit} limit."
        return None


def _words(seconds: float) -> str:
    from ..display import shown_duration
    return shown_duration(seconds, round_up=True)


def _rows(log, index):
    """The rows `index` of a MeasuredLog."""
    from dataclasses import replace
    cut = {key: None if getattr(log, key) is None else getattr(log, key)[index]
           for key in ("time_s", "oil_K", "ambient_K", "power_W", "pull")}
    return replace(log, **cut)


def _from_step_back(header: str, lines: list[str], last_time_s: float, sensor: str) -> list[str]:
    """The new lines from the first one whose time is not after last_time_s (seconds logs; a log
    of clock times keeps them all)."""
    for j, line in enumerate(lines):
        try:
            row = read_log(header + "\n" + line, sensor, require_heating=False)
        except ScenarioError:
            continue
        if "time_s" in header.lower() and row.time_s.size and row.time_s[0] <= last_time_s + 1e-6:
            return lines[j:]
    return lines


def watch_command(args) -> int:
    """`python -m thermo_budget watch SCENARIO LOG.csv [--sensor] [--once] [--json] [--interval]`."""
    from ..inputs.scenario import load_scenario
    if not MIN_INTERVAL_S <= args.interval <= MAX_INTERVAL_S:     # also refuses nan and inf
        raise ScenarioError("--interval", args.interval,
                            f"a poll interval from {MIN_INTERVAL_S:g} s to {MAX_INTERVAL_S:g} s")
    scenario = load_scenario(args.scenario)
    watch = LiveWatch(scenario, args.log, sensor=args.sensor)
    try:
        return _follow(watch, scenario, args)
    except KeyboardInterrupt:       # Ctrl-C ends a watch; it is not an error
        return 0


def _follow(watch: LiveWatch, scenario, args) -> int:
    import sys
    import time

    from ..output_files import json_text

    def say(messages):
        for message in messages:
            print(f"note: {message}", file=sys.stderr if args.json else sys.stdout, flush=True)

    while True:
        state = watch.update()
        say(watch.take_messages())
        if state is not None:
            print(json_text(state.to_dict(), non_finite="null") if args.json else state_text(state, scenario.units), flush=True)
        if args.once:
            if state is None:
                from pathlib import Path
                expected = "a log with at least one oil reading" if Path(args.log).exists() else "an existing CSV file"
                raise ScenarioError("log", str(args.log), expected)
            if watch.follower.poll().pending_bytes:
                say(["the last line has no line end yet; it was left out"])
            return 0
        time.sleep(args.interval)
