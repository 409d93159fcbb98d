"""Watching a log live: the file follower, the log reader, the state estimate and the forecast wired
together. `LiveWatch.update()` takes in what the logger has added and returns one forecast record.

The heat input of each logged interval comes from the log's power_W or pull columns, read as the log
fit reads them (`calibrate._log_pieces`). A log with neither has its pulls detected from the oil's
rate of rise: an interval is (partly) a pull when the reading lies more than three standard
deviations above what a wait would give.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field, replace

import numpy as np

from . import state_estimate as se
from .log_model import _log_pieces, _reference_steps
from .errors import ScenarioError
from .live_forecast import Forecast, forecast
from .log_follower import LogFollower
from .measured_log import read_log
from .network import NODE_NAMES, OIL
from .scenario import Scenario, limit_K
from .rig_build import build_rig
from .units import ZERO_CELSIUS_K, to_display, unit_label

MAX_DROPPED_LINES = 1000
SILENT_SENSOR_S = 60.0          # no oil reading for this long (and five intervals): an alarm
MISFIT_ALARM = 9.0              # innovations' mean square this many times the expected: the model misses the rig
NEAR_LIMIT_K = 2.0

JSON_KEYS = ("time_s", "oil_C", "estimate_C", "next_pull_ready_s", "wait_s", "pulls_left", "in_pull",
             "pull_ends_over_limit", "seconds_to_limit", "alarm")


@dataclass
class Record:
    """One update: the latest reading, the estimate and the forecast. to_dict() has the JSON keys."""
    time_s: float
    oil_K: float | None
    estimate_K: np.ndarray
    estimate_sd_K: np.ndarray
    in_pull: bool
    forecast: Forecast
    alarm: str | None
    measured_time_s: np.ndarray = field(repr=False, default=None)
    measured_oil_K: np.ndarray = field(repr=False, default=None)

    def to_dict(self) -> dict:
        f = self.forecast
        return {"time_s": round(self.time_s, 3),
                "oil_C": None if self.oil_K is None else round(self.oil_K - ZERO_CELSIUS_K, 3),
                "estimate_C": {name: round(float(T) - ZERO_CELSIUS_K, 3) for name, T in zip(NODE_NAMES, self.estimate_K)},
                "next_pull_ready_s": f.next_pull_ready_s, "wait_s": f.wait_s, "pulls_left": f.pulls_left,
                "in_pull": self.in_pull,
                "pull_ends_over_limit": f.pull_ends_over_limit if self.in_pull else False,
                "seconds_to_limit": f.seconds_to_limit if self.in_pull else None,
                "alarm": self.alarm}


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
        self.follower = LogFollower(path)
        self.messages: list[str] = []
        self._said: set = set()
        self._reset()

    def _reset(self):
        self.lines: list[str] = []
        self.estimate: se.Estimate | None = None
        self.rows_done = self.raw_rows_done = 0
        self.last_time_s = None
        self.pulls_started = 0
        self.in_pull = False
        self.pull_start_s = 0.0
        self.pull_end_s = 0.0
        self.last_reading_s = None
        self.last_oil_K = None
        self.rig = self.base_rig
        self.history_t: list[float] = []
        self.history_T: list[float] = []

    def _say(self, message: str, once: bool = True):
        if once and message in self._said:
            return
        self._said.add(message)
        self.messages.append(message)

    def take_messages(self) -> list[str]:
        out, self.messages = self.messages, []
        return out

    # ------------------------------------------------------------------ reading

    def update(self) -> Record | None:
        """Read what the logger added; return a record if there are new readings, else None."""
        poll = self.follower.poll()
        if poll.missing:
            self._say(f"waiting for {self.path} to appear")
            return None
        if poll.restart:
            self._say(f"{poll.restart}: the estimate starts again", once=False)
            self._reset()
        if not poll.lines:
            return None
        self.lines += poll.lines
        log = self._parse()
        if log is None:
            return None
        if self.rows_done and not self._continues(log):
            self._say("the log's time went backwards: a new session; the estimate starts again", once=False)
            header, last = self._header_line(), self.last_time_s
            self._reset()
            self.lines = [header] + _from_step_back(header, poll.lines, last, self.sensor)
            log = self._parse()
            if log is None:
                return None
        if log.time_s.size <= self.rows_done:
            return None
        for note in log.notes:
            if not note.startswith(("gap of", "rows were not")):
                self._say(note)
        self._take_rows(log)
        if self.estimate is None:
            return None
        return self._record(log)

    def _header_line(self) -> str:
        return next((line for line in self.lines if line.strip() and not line.lstrip().startswith("#")), "")

    def _parse(self):
        """The session's lines read by the log reader; a line it refuses is dropped with a message."""
        for _ in range(MAX_DROPPED_LINES):
            try:
                return read_log("\n".join(self.lines), self.sensor, str(self.path), require_heating=False)
            except ScenarioError as error:
                if "no data rows" in str(error):
                    return None
                line = re.search(r"line (\d+)", str(error.key))
                if not line or int(line.group(1)) < 2:
                    raise
                number = int(line.group(1))
                self._say(f"line {number} dropped: {error}", once=False)
                del self.lines[number - 1]
        raise ScenarioError(str(self.path), "too many unreadable lines", "a log the reader can read")

    def _continues(self, log) -> bool:
        """The rows already taken are still the first rows, at the same times, and the new rows come
        after them (one new row at an old time is let pass as a duplicate; more mean a step back)."""
        t = log.time_s
        later = np.count_nonzero(t > self.last_time_s + 1e-6)
        return (t.size >= self.rows_done and abs(t[self.rows_done - 1] - self.last_time_s) < 1e-6
                and np.count_nonzero(t <= self.last_time_s + 1e-6) == self.rows_done
                and log.n_rows - self.raw_rows_done - later <= 1)

    # ------------------------------------------------------------------ estimating

    def _ambient(self, log):
        ambient = log.mean_ambient_K
        if ambient is not None and abs(ambient - float(np.mean(self.rig.ambient_K))) > 0.05:
            self.rig = self.base_rig.with_changes(ambient_K=ambient)

    def _interval_steps(self, log, row: int):
        """The steps of the interval that ends at `row`, and the fraction of it spent pulling."""
        if log.has_heat_input:
            part = replace(log, time_s=log.time_s[row - 1:row + 1],
                           power_W=None if log.power_W is None else log.power_W[row - 1:row + 1],
                           pull=None if log.pull is None else log.pull[row - 1:row + 1],
                           oil_K=log.oil_K[row - 1:row + 1])
            pieces, _, notes = _log_pieces(self.scenario, part)
            for note in notes:
                self._say(re.sub(r"^\d+ ", "", note))
            step = pieces[-1]
            return [step], float(step.is_pull)
        pull, rpm, power, wait, _ = _reference_steps(self.scenario)
        pull = replace(pull, duration_s=1.0, curve=None, rpm=rpm, power_W=power)
        self._say("the log has no pull or power column: pulls are detected from the oil's rate of rise, "
                  f"taken as the scenario's pull ({power:.0f} W)")
        dt = float(log.time_s[row] - log.time_s[row - 1])
        f = se.detected_pull_fraction(self.rig, self.estimate, float(log.oil_K[row]), pull.with_duration(dt),
                                      wait.with_duration(dt), self.sensor, self.in_pull)
        if f <= 0.0:
            return [wait.with_duration(dt)], 0.0
        if f >= 1.0 or (self.in_pull and f >= 0.5):       # a running pull ends only on a clear drop in the rise
            return [pull.with_duration(dt)], 1.0
        parts = [pull.with_duration(f * dt), wait.with_duration((1 - f) * dt)]
        return (parts if self.in_pull else parts[::-1]), f

    def _take_rows(self, log):
        self._ambient(log)
        for row in range(self.rows_done, log.time_s.size):
            t, reading = float(log.time_s[row]), float(log.oil_K[row])
            if self.estimate is None:
                if np.isfinite(reading):
                    self.estimate = se.initial_estimate(t, reading)
                    self._mark_reading(t, reading)
                continue
            steps, fraction = self._interval_steps(log, row)
            self._track_pulls(float(log.time_s[row - 1]), t, steps, fraction)
            self.estimate = se.predict(self.rig, self.estimate, steps)
            offset = se.sensor_offset_K(self.rig, self.estimate, steps[-1], self.sensor)
            self.estimate, accepted = se.update(self.estimate, reading, offset)
            if np.isfinite(reading):
                self._mark_reading(t, reading)
                if not accepted:
                    self._say(f"reading {reading - ZERO_CELSIUS_K:.2f} degC at t = {t:.0f} s rejected as a spike", once=False)
        self.rows_done, self.raw_rows_done = log.time_s.size, log.n_rows
        self.last_time_s = float(log.time_s[-1])

    def _mark_reading(self, t, reading):
        self.last_reading_s, self.last_oil_K = t, reading
        self.history_t.append(t)
        self.history_T.append(reading)

    def _track_pulls(self, t0, t1, steps, fraction):
        pulling = fraction > 0
        if pulling and not self.in_pull:
            self.pulls_started += 1
            self.pull_start_s = t1 - fraction * (t1 - t0)
        if self.in_pull and not pulling:
            self.pull_end_s = t0
        if self.in_pull and pulling and fraction < 1.0:      # a pull ending inside the interval
            self.pull_end_s, pulling = t0 + fraction * (t1 - t0), False
        self.in_pull = pulling

    # ------------------------------------------------------------------ forecasting

    def _record(self, log) -> Record:
        now = self.last_time_s
        X = self.estimate.mean_K
        result = forecast(self.scenario, self.rig, self.limit_K, X, now, self.pulls_started, self.in_pull,
                          pull_elapsed_s=now - self.pull_start_s,
                          since_pull_end_s=now - (self.pull_end_s if self.pulls_started else float(log.time_s[0])),
                          disturbance_W=self.estimate.established_disturbance_W, confidence=self.confidence)
        latest = float(log.oil_K[-1])
        return Record(time_s=now, oil_K=latest if np.isfinite(latest) else None, estimate_K=X.copy(),
                      estimate_sd_K=self.estimate.sd_K, in_pull=self.in_pull, forecast=result,
                      alarm=self._alarm(result, now, log), measured_time_s=np.array(self.history_t),
                      measured_oil_K=np.array(self.history_T))

    def _alarm(self, result: Forecast, now: float, log) -> str | None:
        u = self.scenario.units
        limit = _temperature(self.limit_K, u)
        oil = self.estimate.mean_K[OIL]
        if oil > self.limit_K:
            return f"The oil is at {_temperature(oil, u)}, above its {limit} limit: stop pulling and let it cool."
        if self.in_pull and result.pull_ends_over_limit:
            return (f"This pull reaches the {limit} limit in {result.seconds_to_limit:.0f} s, before its planned end: "
                    f"lift off now.")
        silent = now - (self.last_reading_s if self.last_reading_s is not None else now)
        spacing = float(np.median(np.diff(log.time_s))) if log.time_s.size > 1 else 0.0
        if silent > max(SILENT_SENSOR_S, 5 * spacing):
            return f"No oil reading for {silent:.0f} s: check the sensor; the forecast runs on the model alone."
        if result.next_pull_ready_s is None:
            return f"No wait is long enough for the next planned pull to end under the {limit} limit."
        if self.estimate.misfit_scale > MISFIT_ALARM:
            rms = np.sqrt(self.estimate.misfit_scale) * se.MEASUREMENT_SD_K
            return (f"The model misses this rig (readings about {rms:.1f} K from its predictions): keep a wider "
                    f"margin and calibrate it with fit.")
        if oil > self.limit_K - NEAR_LIMIT_K:
            return f"The oil is within {NEAR_LIMIT_K:.0f} K of its {limit} limit."
        return None


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


def _temperature(T_K: float, system: str) -> str:
    return f"{to_display(T_K, 'temperature', system):.1f} {unit_label('temperature', system)}"


def _duration(seconds: float) -> str:
    """'2 min 10 s', '45 s', '1 h 5 min'."""
    s = int(round(seconds))
    if s >= 3600:
        return f"{s // 3600} h {s % 3600 // 60} min"
    return f"{s // 60} min {s % 60} s" if s >= 60 else f"{s} s"


def ready_text(record: Record) -> str:
    """'ready now', 'ready in 2 min 10 s' or 'no wait is long enough'."""
    f = record.forecast
    if f.wait_s is None:
        return "no wait is long enough"
    return "ready now" if f.wait_s <= 0 else f"ready in {_duration(f.wait_s)}"


def record_text(record: Record, system: str) -> str:
    """One line for the terminal, in the scenario's units."""
    f = record.forecast
    oil = "no reading" if record.oil_K is None else _temperature(record.oil_K, system)
    hidden = ", ".join(f"{name} {_temperature(T, system)}" for name, T in zip(NODE_NAMES, record.estimate_K)
                       if name != NODE_NAMES[OIL])
    left = "all day" if f.pulls_left is None else str(f.pulls_left)
    state = "pulling" if record.in_pull else "waiting"
    line = (f"t={record.time_s:8.0f} s  oil {oil} ({hidden})  {state}  next pull {ready_text(record)}  "
            f"pulls left {left}")
    if record.in_pull and f.seconds_to_limit is not None:
        line += f"  limit in {f.seconds_to_limit:.0f} s"
    return line + (f"\n  ALARM: {record.alarm}" if record.alarm else "")


def watch_command(args) -> int:
    """`python -m thermo_budget watch SCENARIO LOG.csv [--sensor] [--once] [--json] [--interval]`."""
    from .scenario import load_scenario
    if not args.interval > 0:
        raise ScenarioError("--interval", args.interval, "a poll interval above 0 s")
    scenario = load_scenario(args.scenario)
    watch = LiveWatch(scenario, args.log, sensor=args.sensor)
    try:
        return _follow(watch, scenario, args)
    except KeyboardInterrupt:       # Ctrl-C ends a watch; it is not an error
        return 0


def _follow(watch: LiveWatch, scenario, args) -> int:
    import json
    import sys
    import time

    def say(messages):
        for message in messages:
            print(f"note: {message}", file=sys.stderr if args.json else sys.stdout, flush=True)

    while True:
        record = watch.update()
        say(watch.take_messages())
        if record is not None:
            print(json.dumps(record.to_dict()) if args.json else record_text(record, scenario.units), flush=True)
        if args.once:
            if record is None:
                from pathlib import Path
                expected = "a log with at least one oil reading" if Path(args.log).exists() else "an existing CSV file"
                raise ScenarioError("log", str(args.log), expected)
            if watch.follower.poll().pending_bytes:
                say(["the last line has no line end yet; it was left out"])
            return 0
        time.sleep(args.interval)
