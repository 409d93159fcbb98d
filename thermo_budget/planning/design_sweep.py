"""Design sweep: pulls before the limit and peak temperature over a grid of oil volumes and coolers,
computed as one vectorised integration over all designs at once."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import ScenarioError
from ..engine.outcome import peak_oil_K
from ..physics.network import passive_rejection_W
from .planning import MAX_PULLS, minimum_oil_volume_L, required_cooler_W_K, runs_before_limit
from .session_runs import periodic_state, session_outcome, session_trace
from ..inputs.scenario import KEYS, Scenario, limit_K
from .results import Report
from ..inputs.rig_build import build_rig
from ..engine.session import PLAN_RESOLUTION
from ..units import ZERO_CELSIUS_K, convert, to_display, unit_label

# Peak memory of a sweep per design: a fixed part, a part per recorded point of the planned session
# and a part per sub-step of one cycle (the sustainability search runs the cycle for 6 copies of each
# design, and the count runs it on). Measured as the peak resident size over the resident size
# before the sweep, in a fresh process, six nodes, 10,000 and 20,000 designs: the default scenario
# (31 session points, 3 per cycle) 21.8 kB a design, the plastic tank (61, 10) 27.9-28.9 kB; the
# per-point part kept from the five-node fit.
SWEEP_BYTES_PER_DESIGN = 17_500
SWEEP_BYTES_PER_POINT = 80
SWEEP_BYTES_PER_CYCLE_POINT = 600
MAX_SWEEP_BYTES = 256 * 2**20


@dataclass(frozen=True)
class SweepResult:
    """Grid results, arrays of shape (V, K): V oil volumes (L at 15 degC) by K coolers (W/K of ETD).

    runs_before_limit : pulls completed under the limit repeating the cycle from the start; NaN
        where the cadence is sustainable (unlimited) or no crossing came within max_pulls.
    sustainable : the periodic steady state peaks below the limit.
    peak_C : highest bulk oil temperature over the planned session.
    pulls_under_limit : pulls of the planned session completed under the limit.
    """
    oil_volumes_L: np.ndarray
    coolers_W_per_K: np.ndarray
    runs_before_limit: np.ndarray
    sustainable: np.ndarray
    peak_C: np.ndarray
    pulls_under_limit: np.ndarray
    pulls_planned: int
    limit_C: float
    max_pulls: int

    def to_json(self) -> dict:
        runs = [[None if np.isnan(v) else int(v) for v in row] for row in self.runs_before_limit]
        return {"oil_volumes_L": self.oil_volumes_L.round(6).tolist(),
                "coolers_W_per_K": self.coolers_W_per_K.round(6).tolist(),
                "runs_before_limit": runs, "sustainable": self.sustainable.tolist(),
                "peak_C": self.peak_C.round(3).tolist(), "pulls_under_limit": self.pulls_under_limit.tolist(),
                "pulls_planned": self.pulls_planned, "limit_C": round(self.limit_C, 3), "max_pulls": self.max_pulls,
                "notes": ["runs_before_limit is null where the cadence is sustainable (it can go on all day)"]}

    def summary_text(self, system: str = "SI") -> str:
        """The grid's answers in the units of `system`. The smallest oil volume that finishes is
        given for a cooler only where it is a real minimum inside the grid (a smaller volume of
        the grid fails); coolers for which every or no volume finishes are grouped on one line."""
        def volume(L):
            return f"{to_display(L / 1000.0, 'volume', system):.1f} {unit_label('volume', system)}"

        def cooler(W_K):
            return f"{to_display(W_K, 'conductance', system):.1f} {unit_label('conductance', system)}"

        limit = f"{to_display(self.limit_C + ZERO_CELSIUS_K, 'temperature', system):.1f} {unit_label('temperature', system)}"
        enough = self.pulls_under_limit >= self.pulls_planned
        lines = [f"{self.oil_volumes_L.size} oil volumes x {self.coolers_W_per_K.size} coolers; "
                 f"limit {limit}; planned session {self.pulls_planned} pulls",
                 f"designs that finish the planned session: {int(enough.sum())} of {enough.size}",
                 f"designs that can go on all day: {int(self.sustainable.sum())}",
                 "smallest oil volume that finishes the planned session:"]
        groups = []   # (first cooler, last cooler, text)
        for j, W_K in enumerate(self.coolers_W_per_K):
            ok = np.flatnonzero(enough[:, j])
            if not ok.size:
                text = f"none of the grid's volumes (up to {volume(self.oil_volumes_L[-1])}) finishes"
            elif ok[0] == 0:
                text = (f"every volume of the grid finishes; its smallest, {volume(self.oil_volumes_L[0])}, "
                        "is the grid's edge, not a minimum")
            else:
                text = f"{volume(self.oil_volumes_L[ok[0]])} (a smaller volume of the grid does not finish)"
            if groups and groups[-1][2] == text and (not ok.size or ok[0] == 0):
                groups[-1] = (groups[-1][0], W_K, text)
            else:
                groups.append((W_K, W_K, text))
        for first, last, text in groups:
            which = f"cooler {cooler(first)}" if first == last else f"coolers {cooler(first)} to {cooler(last)}"
            lines.append(f"  {which}: {text}")
        return "\n".join(lines)


def estimated_sweep_bytes(scenario: Scenario, n_designs: int) -> int:
    """Memory a sweep of n designs needs at its peak, bytes, from the measured costs per design, per
    recorded point of the session and per sub-step of the cycle."""
    points = sum(PLAN_RESOLUTION.substeps(step, step.duration_s) for step in scenario.steps) + 1
    cycle_points = sum(PLAN_RESOLUTION.substeps(step, step.duration_s) for step in scenario.cycle)
    return int(n_designs * (SWEEP_BYTES_PER_DESIGN + SWEEP_BYTES_PER_POINT * points
                            + SWEEP_BYTES_PER_CYCLE_POINT * cycle_points))


def check_grid(oil_volumes_L, coolers_W_per_K, volume_source=("oil_volumes_L", None),
               cooler_source=("coolers_W_per_K", None)) -> None:
    """Refuse grid values outside the plausible ranges of reservoir.oil_volume and
    cooler.specific_dissipation (KEYS); sources are (name, value as given) for the message."""
    for values, (name, given), key, unit in ((oil_volumes_L, volume_source, "reservoir.oil_volume", "L"),
                                            (coolers_W_per_K, cooler_source, "cooler.specific_dissipation", "W/K")):
        spec = KEYS[key]
        low, high = (convert(v, spec.si_unit, unit) for v in (spec.low, spec.high))
        values = np.asarray(values, dtype=float)
        if values.size == 0 or not np.all(np.isfinite(values)) or values.min() < low or values.max() > high:
            shown = given if given is not None else values.tolist()
            raise ScenarioError(name, shown, f"values from {low:g} to {high:g} {unit}" + (" (above 0)" if low > 0 else ""))


def check_grid_size(scenario: Scenario, n_volumes: int, n_coolers: int) -> None:
    """Refuse a grid whose estimated memory passes MAX_SWEEP_BYTES, from the counts alone, before
    any array of the grid is built."""
    n_designs = int(n_volumes) * int(n_coolers)
    need = estimated_sweep_bytes(scenario, n_designs)
    if need > MAX_SWEEP_BYTES:
        per_design = need / max(n_designs, 1)
        raise ScenarioError("sweep", f"{n_volumes} x {n_coolers} = {n_designs} designs",
                            f"a grid of at most {int(MAX_SWEEP_BYTES // per_design)} designs for this session "
                            f"(estimated {per_design / 1024:.1f} kB each; this grid needs about {need / 2**20:.0f} MB, "
                            f"the limit is {MAX_SWEEP_BYTES / 2**20:.0f} MB)")


def sweep(scenario: Scenario, oil_volumes_L, coolers_W_per_K, max_pulls: int = MAX_PULLS) -> SweepResult:
    """Evaluate every (oil volume, cooler) pair of the grid in one batch (tank scaled geometrically).
    A grid whose estimated memory passes MAX_SWEEP_BYTES is refused with the estimate quoted."""
    volumes = np.asarray(oil_volumes_L, dtype=float)
    coolers = np.asarray(coolers_W_per_K, dtype=float)
    check_grid(volumes, coolers)
    check_grid_size(scenario, volumes.size, coolers.size)
    V, K = np.meshgrid(volumes, coolers, indexing="ij")
    rig = build_rig(scenario, oil_volume_m3=V.ravel() / 1000.0, cooler_W_K=K.ravel())
    n = V.size
    limit, _ = limit_K(scenario)
    session = session_trace(scenario, rig, n)
    peak, under = session_outcome(scenario, rig, n, trace=session)
    _, periodic_peak, converged = periodic_state(scenario, rig, n)
    sustainable = converged & (periodic_peak <= limit) & (peak <= limit)
    runs = runs_before_limit(scenario, rig, n, sustainable, max_pulls, session=session)
    shape = V.shape
    return SweepResult(oil_volumes_L=volumes, coolers_W_per_K=coolers, runs_before_limit=runs.reshape(shape),
                       sustainable=sustainable.reshape(shape), peak_C=(peak_oil_K(session) - ZERO_CELSIUS_K).reshape(shape),
                       pulls_under_limit=under.reshape(shape), pulls_planned=len([s for s in scenario.steps if s.is_pull]),
                       limit_C=limit - ZERO_CELSIUS_K, max_pulls=max_pulls)


# The design chart's grid (planning policy: where on the two axes the answers show). The grid is
# a view, not an answer: each factor is chosen so that the chart holds the rig as it is and the
# sizing answers with room on both sides of each (a choice of ours, no source).
DESIGN_VOLUMES, DESIGN_COOLERS = 10, 10   # the page's grid: 100 rigs, about 1 s on one core
SMALLEST_VOLUME_SHARE = 0.25   # the grid starts at a quarter of the rig's oil: far enough down to show
                               # the pull count falling away
LARGEST_VOLUME_MULTIPLE = 3.0  # and reaches three times it: a reservoir three times larger is the
                               # largest change a stand usually makes before it buys a cooler
BELOW_MIN_VOLUME = 0.8         # the smallest oil that finishes the session sits inside the grid, with
PAST_MIN_VOLUME = 1.3          # 20 % below and 30 % above it, so that the edge where the session stops
                               # fitting is seen from both sides
PAST_OWN_COOLER = 1.5          # the rig's own cooler sits at two thirds of the cooler axis or below
PAST_SUSTAINED_COOLER = 2.5    # the all-day cooler at 40 % of it: the margin above it is visible
PASSIVE_LOSS_MULTIPLE = 3.0    # where no cooler sustains the cadence, the axis runs to a cooler of three
                               # times the rig's own passive loss at the limit (W/K), where the pull
                               # count has visibly grown, so the chart shows what a cooler buys


def design_grid(scenario: Scenario, min_oil_volume_L: float | None, cooler_sustained_W_K: float | None,
                n_volumes: int = DESIGN_VOLUMES, n_coolers: int = DESIGN_COOLERS):
    """Oil volumes (L) and cooler sizes (W/K) for the design chart (see the factors above).

    Volumes run from SMALLEST_VOLUME_SHARE to LARGEST_VOLUME_MULTIPLE times the current oil, and
    further where needed to hold the smallest reservoir that finishes the session between
    BELOW_MIN_VOLUME and PAST_MIN_VOLUME times it. Coolers run from none to PAST_SUSTAINED_COOLER times
    the all-day cooler (which is at least the session's cooler) and past PAST_OWN_COOLER times the
    rig's own cooler; where no cooler can sustain the cadence, to PASSIVE_LOSS_MULTIPLE times the rig's
    own passive loss at the limit per kelvin above the air.
    """
    volume_L = scenario.oil_volume_L
    top_L = max(LARGEST_VOLUME_MULTIPLE * volume_L, PAST_MIN_VOLUME * (min_oil_volume_L or 0.0))
    bottom_L = min(SMALLEST_VOLUME_SHARE * volume_L, BELOW_MIN_VOLUME * (min_oil_volume_L or volume_L))
    volumes = np.linspace(bottom_L, top_L, n_volumes)
    sizes = [PAST_OWN_COOLER * scenario.cooler_W_K]
    if cooler_sustained_W_K:
        sizes.append(PAST_SUSTAINED_COOLER * cooler_sustained_W_K)
    else:
        limit, _ = limit_K(scenario)
        passive_W = float(passive_rejection_W(build_rig(scenario, cooler_W_K=0.0), limit)[0])
        sizes.append(PASSIVE_LOSS_MULTIPLE * passive_W / max(limit - scenario.ambient_K, 1e-9))
    coolers = np.linspace(0.0, max(max(sizes), 1.0), n_coolers)
    return volumes, coolers


def design_axes(scenario: Scenario, answers: Report | None = None, n_volumes: int = DESIGN_VOLUMES,
                n_coolers: int = DESIGN_COOLERS):
    """design_grid with the two sizing answers it needs: taken from `answers` (the scenario's
    report) where given, else worked out here by the report's own searches."""
    if answers is None:
        notes: list[str] = []
        return design_grid(scenario, minimum_oil_volume_L(scenario, notes),
                           required_cooler_W_K(scenario, notes, sustained=True), n_volumes, n_coolers)
    return design_grid(scenario, answers.min_oil_volume_L, answers.cooler_required_sustained_W_per_K,
                       n_volumes, n_coolers)
