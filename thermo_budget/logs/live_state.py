"""What `watch` says at one moment: the frozen `LiveState` (the latest reading, the estimate and the
forecast), its JSON keys, and its words for the terminal and the page."""
from __future__ import annotations

import json
from dataclasses import dataclass, field

import numpy as np

from .live_forecast import Forecast
from ..physics.network import NODE_NAMES, OIL
from ..display import format_temperature, shown_duration
from ..units import ZERO_CELSIUS_K

JSON_KEYS = ("time_s", "oil_C", "estimate_C", "next_pull_ready_s", "wait_s", "pulls_left", "in_pull",
             "pull_ends_over_limit", "seconds_to_limit", "alarm", "over_limit", "advice")


@dataclass(frozen=True)
class LiveState:
    """One update of the watch. Times are log times (s), temperatures K.

    oil_K : the latest row's reading as measured (None if blank). estimate_K, estimate_sd_K (n,) :
    every node's estimate and its standard deviation. over_limit : the estimated oil is above the
    limit. measured_time_s, measured_oil_K : the readings so far for a chart (thinned: every one of
    the last minutes, one in every few seconds before).
    """
    time_s: float
    oil_K: float | None
    estimate_K: np.ndarray
    estimate_sd_K: np.ndarray
    in_pull: bool
    over_limit: bool
    forecast: Forecast
    alarm: str | None
    measured_time_s: np.ndarray = field(repr=False, default=None)
    measured_oil_K: np.ndarray = field(repr=False, default=None)

    @property
    def advice(self) -> str:
        return ready_text(self)

    def to_dict(self) -> dict:
        f = self.forecast
        return {"time_s": round(self.time_s, 3),
                "oil_C": None if self.oil_K is None else round(self.oil_K - ZERO_CELSIUS_K, 3),
                "estimate_C": {name: round(float(T) - ZERO_CELSIUS_K, 3) for name, T in zip(NODE_NAMES, self.estimate_K)},
                "next_pull_ready_s": f.next_pull_ready_s, "wait_s": f.wait_s, "pulls_left": f.pulls_left,
                "in_pull": self.in_pull,
                "pull_ends_over_limit": f.pull_ends_over_limit if self.in_pull else False,
                "seconds_to_limit": f.seconds_to_limit if self.in_pull else None,
                "alarm": self.alarm, "over_limit": self.over_limit, "advice": self.advice}

    def to_json(self) -> str:
        """One JSON object with the keys JSON_KEYS, in that order."""
        return json.dumps(self.to_dict(), allow_nan=False)


def _more_pulls(count: int | None) -> str:
    if count is None:
        return "then pulls at the planned cadence all day"
    if count == 0:
        return "then not one more planned pull ends under the limit"
    return f"then {count} more pull" + ("s" if count != 1 else "")


def ready_text(state: LiveState) -> str:
    """'ready now', 'ready in 2 min 10 s', 'over the limit: cool for 9 min 40 s, then 1 more pull',
    or 'no wait is long enough'."""
    f = state.forecast
    if f.wait_s is None:
        return "no wait is long enough"
    if state.over_limit:
        return f"over the limit: cool for {shown_duration(f.wait_s, round_up=True)}, {_more_pulls(f.pulls_left)}"
    return "ready now" if f.wait_s <= 0 else f"ready in {shown_duration(f.wait_s, round_up=True)}"


def state_text(state: LiveState, system: str) -> str:
    """One line for the terminal, in the scenario's units."""
    f = state.forecast
    oil = "no reading" if state.oil_K is None else format_temperature(state.oil_K, system)
    hidden = ", ".join(f"{name} {format_temperature(T, system)}" for name, T in zip(NODE_NAMES, state.estimate_K)
                       if name != NODE_NAMES[OIL])
    left = "all day" if f.pulls_left is None else str(f.pulls_left)
    doing = "pulling" if state.in_pull else "waiting"
    words = ready_text(state)
    line = (f"t={state.time_s:8.0f} s  oil {oil} ({hidden})  {doing}  "
            f"{words if state.over_limit else 'next pull ' + words}  pulls left {left}")
    if state.in_pull and f.seconds_to_limit is not None:
        line += f"  limit in {f.seconds_to_limit:.0f} s"
    return line + (f"\n  ALARM: {state.alarm}" if state.alarm else "")
