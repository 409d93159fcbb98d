"""What one logged row changes while a log is watched (`Progress`: the filter, the pulls seen, the
ambient, the last reading), and the readings kept for the chart (`ReadingHistory`, thinned so that
a day's log keeps a bounded number of them)."""
from __future__ import annotations

from collections import deque

import numpy as np

from .state_estimate import LiveFilter

HISTORY_RECENT_S = 900.0        # the chart keeps every reading of this last stretch ...
HISTORY_STEP_S = 10.0           # ... and one in every this many seconds before it
SPACING_ROWS = 50               # the log's spacing is the median of this many last intervals


class Progress:
    """Everything a row changes: the filter, the pulls seen, the ambient, the last reading."""

    def __init__(self, filter_: LiveFilter, rig, is_pull: bool, time_s: float, reading_K: float, pull_power_W: float):
        self.filter, self.rig = filter_, rig
        self.pulls_started, self.in_pull, self.last_is_pull = 0, False, is_pull
        self.pull_start_s = self.pull_end_s = self.first_time_s = time_s
        self.last_reading_s, self.last_oil_K = time_s, reading_K
        self.ambient_K = None
        self.last_pull_power_W = pull_power_W
        self.spacing = deque(maxlen=SPACING_ROWS)

    def copy(self) -> "Progress":
        other = Progress.__new__(Progress)
        other.__dict__.update(self.__dict__)
        other.filter, other.spacing = self.filter.copy(), deque(self.spacing, SPACING_ROWS)
        return other

    def track_pulls(self, t0: float, t1: float, fraction: float):
        pulling = fraction > 0
        if pulling and not self.in_pull:
            self.pulls_started += 1
            self.pull_start_s = t1 - fraction * (t1 - t0)
        if self.in_pull and not pulling:
            self.pull_end_s = t0
        if self.in_pull and pulling and fraction < 1.0:      # a pull ending inside the interval
            self.pull_end_s, pulling = t0 + fraction * (t1 - t0), False
        self.in_pull = pulling


class ReadingHistory:
    """The readings for the chart: all of the last HISTORY_RECENT_S, one per HISTORY_STEP_S before."""

    def __init__(self):
        self.recent, self.older_t, self.older_T = deque(), [], []

    def add(self, t: float, T: float):
        self.recent.append((t, T))
        while self.recent and self.recent[0][0] < t - HISTORY_RECENT_S:
            t0, T0 = self.recent.popleft()
            if not self.older_t or t0 >= self.older_t[-1] + HISTORY_STEP_S:
                self.older_t.append(t0)
                self.older_T.append(T0)

    def arrays(self, extra=()):
        points = list(self.recent) + list(extra)
        return (np.array(self.older_t + [p[0] for p in points]), np.array(self.older_T + [p[1] for p in points]))
