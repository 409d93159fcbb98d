"""The page's three charts as Vega-Lite specifications, drawn by the browser: pure functions of
results that return a dict (JSON-ready, every number a plain float), in the units of `system`
("SI" or "US"). They show what plots.py draws as pictures (the pictures stay for the downloads and
the command line): the same colours, the same bands around the planned pulls, the same labels.

Nothing here depends on Streamlit; the page hands each spec to `st.vega_lite_chart`.
"""
from __future__ import annotations

import math
import textwrap

import numpy as np
from matplotlib.colors import to_hex, to_rgb

from ..physics.network import OIL, WALL
from ..display import to_shown, unit_symbol
from ..inputs.scenario import limit_K
from ..units import ZERO_CELSIUS_K
from .plots import (LIMIT_COLOUR, OIL_COLOUR, PULL_SHADE, RETURN_COLOUR, TITLE_CHARS, WALL_COLOUR, band_colours,
                    is_light, run_levels, temperatures_shown)

ENVELOPE_COLOUR = OIL_COLOUR
ENVELOPE_LABEL = "bulk oil, likely range (P10-P90)"
# The smallest text on a chart, px: 12 px reads on a 400 px phone (the browser draws at the
# screen's own size, so there is no scaling down as a picture has).
FONT_PX = 12
HEIGHT_PX = {"trace": 340, "design": 360, "hot": 280}
# Hot-day bars: pulls counted, the most the run counts (">cap"), and all day.
HOT_BAR_COLOURS = {"pulls": "#e39b2d", "more than counted": "#9ecae1", "all day": "#1f6f8b"}
# A star, as an SVG path in a unit box (Vega-Lite's custom point shape).
STAR_PATH = ("M0,-1L0.235,-0.324L0.951,-0.309L0.38,0.124L0.588,0.809L0,0.4L-0.588,0.809L-0.38,0.124"
             "L-0.951,-0.309L-0.235,-0.324Z")
PLAN_LINE_PX = (4.5, 2.4)      # the plan's line: black under white
ONE_ROW = {"values": [{}]}     # the data of a layer that draws one mark from constants (a limit's line)


def _config() -> dict:
    """Fonts and layout shared by the three charts."""
    return {"axis": {"labelFontSize": FONT_PX, "titleFontSize": FONT_PX, "grid": True, "gridOpacity": 0.4},
            "legend": {"labelFontSize": FONT_PX, "titleFontSize": FONT_PX, "orient": "bottom",
                       "direction": "horizontal", "columns": 2, "labelLimit": 320, "symbolType": "square"},
            "title": {"fontSize": FONT_PX + 1, "anchor": "start", "fontWeight": "normal"},
            "view": {"stroke": None}}


def _spec(kind: str, title, layers: list, **extra) -> dict:
    return {"$schema": "https://vega.github.io/schema/vega-lite/v6.json", "title": title,
            "height": HEIGHT_PX[kind],
            "autosize": {"type": "fit-x", "contains": "padding"}, "config": _config(), "layer": layers, **extra}


def _floats(values) -> list:
    """Plain floats for JSON (None where a value is not finite), rounded to 4 significant decimals
    past the point the charts can show."""
    return [round(float(v), 4) if math.isfinite(v) else None for v in np.asarray(values, dtype=float)]


# ------------------------------------------------------------------ the temperature chart

def trace_spec(scenario, trace, system: str, envelope: dict | None = None) -> dict:
    """Bulk oil, return-line and tank wall temperature against time (min) for design 0, each pull
    shaded, the fluid limit (and the return line's, where given) as dotted lines with their labels,
    and, where `envelope` (the band's P10-P90 of the bulk oil: time_s, p10_C, p90_C) is given, the
    likely range behind the oil's line."""
    symbol = unit_symbol("temperature", system)
    t_min = _floats(trace.time_s[:, 0] / 60.0)
    series = (("bulk oil (tank)", OIL_COLOUR, trace.T_K[:, 0, OIL], 2.2, []),
              ("return line", RETURN_COLOUR, trace.return_K[:, 0], 1.2, []),
              ("tank wall", WALL_COLOUR, trace.T_K[:, 0, WALL], 1.2, [5, 3]))
    names = [name for name, *_ in series] + ["pulls"] + ([ENVELOPE_LABEL] if envelope else [])
    colours = [colour for _, colour, *_ in series] + [PULL_SHADE] + ([ENVELOPE_COLOUR] if envelope else [])
    colour_scale = {"scale": {"domain": names, "range": colours}, "title": None,
                    "legend": {"symbolType": "stroke", "symbolStrokeWidth": 4}}
    limit, reason = limit_K(scenario)
    limits = [limit] + ([scenario.return_line_max_temperature_K]
                        if scenario.return_line_max_temperature_K is not None else [])
    shown = [temperatures_shown(values, system) for _, _, values, _, _ in series]
    low = min(float(np.min(v)) for v in shown)
    high = max([float(np.max(v)) for v in shown] + [float(temperatures_shown(t, system)) for t in limits])
    # head room above the highest line for the limits' labels, as the picture has
    y_scale = {"domain": [round(low - 0.02 * (high - low), 4), round(high + 0.1 * (high - low), 4)], "nice": False}
    x = {"field": "t", "type": "quantitative", "title": "time since the first pull (min)",
         "scale": {"domain": [0.0, t_min[-1]], "nice": False}}
    y_title = f"temperature ({symbol})"
    pulls = [{"t": s / 60.0, "t2": e / 60.0} for s, e in zip(trace.pull_start_s[:, 0], trace.pull_end_s[:, 0])]
    layers = [{"data": {"values": pulls}, "mark": {"type": "rect", "opacity": 1.0},
               "encoding": {"x": x, "x2": {"field": "t2"}, "color": {"datum": "pulls", "type": "nominal"}}}]
    if envelope:
        minutes = np.asarray(envelope["time_s"], dtype=float) / 60.0
        p10 = temperatures_shown(np.asarray(envelope["p10_C"]) + ZERO_CELSIUS_K, system)
        p90 = temperatures_shown(np.asarray(envelope["p90_C"]) + ZERO_CELSIUS_K, system)
        band = [{"t": t, "lo": a, "hi": b} for t, a, b in zip(_floats(minutes), _floats(p10), _floats(p90))]
        layers.append({"data": {"values": band}, "mark": {"type": "area", "opacity": 0.18},
                       "encoding": {"x": x, "y": {"field": "lo", "type": "quantitative", "title": y_title,
                                                  "scale": y_scale},
                                    "y2": {"field": "hi"}, "color": {"datum": ENVELOPE_LABEL, "type": "nominal"}}})
    for k, ((name, _, _, width, dash), values) in enumerate(zip(series, shown)):
        points = [{"t": t, "T": T, "series": name} for t, T in zip(t_min, _floats(values))]
        layers.append({"data": {"values": points},
                       "mark": {"type": "line", "strokeWidth": width, "strokeDash": dash},
                       "encoding": {
                           "x": x, "y": {"field": "T", "type": "quantitative", "title": y_title, "scale": y_scale},
                           "color": ({"field": "series", "type": "nominal", **colour_scale} if k == 0 else
                                     {"field": "series", "type": "nominal"}),
                           "tooltip": [{"field": "series", "title": "what"},
                                       {"field": "t", "title": "min", "format": ".1f"},
                                       {"field": "T", "title": symbol, "format": ".1f"}]}})
    limit_shown = round(float(temperatures_shown(limit, system)), 4)
    why = "hottest allowed" if reason == "max_temperature" else "pump's thinnest oil"
    layers += _limit_line(limit_shown, LIMIT_COLOUR, f"limit {limit_shown:.0f} {symbol} ({why})", "left", 0.0)
    if scenario.return_line_max_temperature_K is not None:
        line_limit = round(float(temperatures_shown(scenario.return_line_max_temperature_K, system)), 4)
        layers += _limit_line(line_limit, RETURN_COLOUR, f"return-line limit {line_limit:.0f} {symbol}", "right",
                              t_min[-1], text_colour="#a0600a")
    title = textwrap.wrap(scenario.name or "planned session", TITLE_CHARS)[:2] or [""]
    return _spec("trace", title, layers, width="container")


def _limit_line(value: float, colour: str, label: str, align: str, at_min: float,
                text_colour: str | None = None) -> list:
    """A dotted horizontal line at `value` (shown units) and its label above it, at `at_min`."""
    y = {"datum": value, "type": "quantitative"}
    return [{"data": ONE_ROW, "mark": {"type": "rule", "color": colour, "strokeWidth": 1.5, "strokeDash": [2, 2]},
             "encoding": {"y": y}},
            {"data": ONE_ROW, "mark": {"type": "text", "align": align, "baseline": "bottom", "dx": 3 if align == "left" else -3,
                      "dy": -3, "fontSize": FONT_PX, "color": text_colour or colour},
             "encoding": {"x": {"datum": at_min, "type": "quantitative"}, "y": y, "text": {"value": label}}}]


# ------------------------------------------------------------------ the design chart

def _edges(centres) -> list:
    """Cell edges around grid centres: midway between neighbours, half a step past each end."""
    c = np.asarray(centres, dtype=float)
    if c.size == 1:
        return [c[0] - 0.5, c[0] + 0.5]
    mid = 0.5 * (c[1:] + c[:-1])
    return [c[0] - (mid[0] - c[0])] + list(mid) + [c[-1] + (c[-1] - mid[-1])]


def band_names(levels: list) -> list[str]:
    """The colour bands' names: a range of pulls for each, the top one "cap or more, or all day"."""
    names = []
    for low, high in zip(levels[:-2], levels[1:-1]):
        names.append(f"{low}" if high - 1 <= low else f"{low}-{high - 1}")
    return names + [f"{levels[-2]} or more, or all day"]


def _band_of(runs: float, levels: list) -> int:
    """Index of the band that holds `runs` pulls (NaN: more than counted or all day: the top band)."""
    if not math.isfinite(runs) or runs >= levels[-2]:
        return len(levels) - 2
    return max(i for i, low in enumerate(levels[:-2]) if low <= runs)


def plan_boundary(fits, x_edges, y_edges) -> list[dict]:
    """The line between designs that fit the planned pulls (`fits`, volume x cooler booleans) and
    those that do not, along the cells' edges: one segment per pair of neighbours that differ."""
    fits = np.asarray(fits, dtype=bool)
    segments = []
    for i in range(fits.shape[0]):
        for j in range(fits.shape[1]):
            if i + 1 < fits.shape[0] and fits[i, j] != fits[i + 1, j]:
                segments.append({"x": x_edges[i + 1], "x2": x_edges[i + 1], "y": y_edges[j], "y2": y_edges[j + 1]})
            if j + 1 < fits.shape[1] and fits[i, j] != fits[i, j + 1]:
                segments.append({"x": x_edges[i], "x2": x_edges[i + 1], "y": y_edges[j + 1], "y2": y_edges[j + 1]})
    return segments


def design_spec(scenario, sweep_result, system: str) -> dict:
    """Pulls before the limit over oil volume (x) and cooler size (y), one cell per design of the
    sweep, coloured by the bands plots.run_levels builds around the planned pulls; "∞" on the designs
    that go on all day; the line that parts the designs that fit the plan from those that do not;
    a star at the rig as it is."""
    r = sweep_result
    volumes = to_shown(np.asarray(r.oil_volumes_L, dtype=float) / 1000.0, "oil_volume", system)
    coolers = to_shown(np.asarray(r.coolers_W_per_K, dtype=float), "conductance", system)
    runs = np.asarray(r.runs_before_limit, dtype=float)
    all_day = np.asarray(r.sustainable, dtype=bool)
    planned = int(r.pulls_planned)
    cap = int(r.max_pulls)
    levels = run_levels(planned, cap)
    names = band_names(levels)
    colours = [to_hex(c) for c in band_colours(levels, planned)]
    x_edges, y_edges = _floats(_edges(volumes)), _floats(_edges(coolers))
    v_unit, k_unit = unit_symbol("oil_volume", system), unit_symbol("conductance", system)
    cells = []
    for i, volume in enumerate(_floats(volumes)):
        for j, cooler in enumerate(_floats(coolers)):
            n = runs[i, j]
            said = "all day" if all_day[i, j] else (f"more than {cap}" if not math.isfinite(n) else f"{int(n)}")
            band = _band_of(n, levels)
            cells.append({"x": x_edges[i], "x2": x_edges[i + 1], "y": y_edges[j], "y2": y_edges[j + 1],
                          "xc": volume, "yc": cooler, "band": names[band], "pulls": said,
                          "ink": "black" if is_light(to_rgb(colours[band])) else "white",
                          "mark": "∞" if all_day[i, j] else ""})
    x = {"field": "x", "type": "quantitative", "title": f"oil in the tank ({v_unit}), tank scaled to fit",
         "scale": {"domain": [x_edges[0], x_edges[-1]], "nice": False, "zero": False}}
    y = {"field": "y", "type": "quantitative", "title": f"cooler size ({k_unit} of ETD)",
         "scale": {"domain": [y_edges[0], y_edges[-1]], "nice": False, "zero": False}}
    layers = [
        {"data": {"values": cells}, "mark": {"type": "rect", "stroke": "white", "strokeWidth": 0.3},
         "encoding": {"x": x, "x2": {"field": "x2"}, "y": y, "y2": {"field": "y2"},
                      "color": {"field": "band", "type": "nominal", "title": "pulls before the limit",
                                "scale": {"domain": names, "range": colours}, "sort": names,
                                "legend": {"columns": 3}},
                      "tooltip": [{"field": "xc", "title": f"oil ({v_unit})", "format": ".2f"},
                                  {"field": "yc", "title": f"cooler ({k_unit})", "format": ".2f"},
                                  {"field": "pulls", "title": "pulls before the limit"}]}},
        {"data": {"values": [c for c in cells if c["mark"]]},
         "mark": {"type": "text", "fontSize": FONT_PX + 2},
         "encoding": {"x": {"field": "xc", "type": "quantitative"}, "y": {"field": "yc", "type": "quantitative"},
                      "text": {"field": "mark"}, "color": {"field": "ink", "type": "nominal", "scale": None}}}]
    segments = plan_boundary(np.isnan(runs) | (runs >= planned), x_edges, y_edges)
    if segments:
        for width, colour in zip(PLAN_LINE_PX, ("black", "white")):
            layers.append({"data": {"values": segments},
                           "mark": {"type": "rule", "strokeWidth": width, "color": colour, "strokeCap": "square"},
                           "encoding": {"x": {"field": "x", "type": "quantitative"}, "x2": {"field": "x2"},
                                        "y": {"field": "y", "type": "quantitative"}, "y2": {"field": "y2"}}})
    rig = {"xc": round(float(to_shown(scenario.reservoir.oil_volume_m3, "oil_volume", system)), 4),
           "yc": round(float(to_shown(scenario.cooler_W_K, "conductance", system)), 4), "what": "your rig now"}
    layers.append({"data": {"values": [rig]},
                   "mark": {"type": "point", "shape": STAR_PATH, "size": 320, "filled": True, "fill": "#d62728",
                            "stroke": "white", "strokeWidth": 1.2, "opacity": 1, "clip": False},
                   "encoding": {"x": {"field": "xc", "type": "quantitative"},
                                "y": {"field": "yc", "type": "quantitative"},
                                "tooltip": [{"field": "what", "title": " "}]}})
    limit_shown = float(temperatures_shown(r.limit_C + ZERO_CELSIUS_K, system))
    title = f"Pulls before {limit_shown:.0f} {unit_symbol('temperature', system)}, repeating your cycle"
    return _spec("design", title, layers, width="container")


# ------------------------------------------------------------------ the hot day

def hot_day_spec(scenario, hot, system: str) -> dict:
    """Pulls before the limit (bars) across the air temperatures of hot_day.hot_day()'s result,
    with today's air as a dotted line, and the cooler the planned session needs (a line on its own
    right-hand axis) where any air temperature needs one."""
    ambient = temperatures_shown(hot.ambients_K, system)
    half = 0.35 * (float(np.min(np.diff(ambient))) if ambient.size > 1 else 5.0)
    symbol = unit_symbol("temperature", system)
    bars = []
    for a, pulls, every in zip(_floats(ambient), np.asarray(hot.pulls, dtype=float), hot.all_day):
        kind = "all day" if every else ("more than counted" if not math.isfinite(pulls) else "pulls")
        height = float(hot.max_pulls) if kind != "pulls" else float(pulls)
        bars.append({"air": a, "x": a - half, "x2": a + half, "pulls": height, "kind": kind,
                     "label": "" if every else (f">{hot.max_pulls}" if kind != "pulls" else f"{int(pulls)}"),
                     "inside": "all day" if every else ""})
    x = {"field": "x", "type": "quantitative", "title": f"air temperature ({symbol})",
         "scale": {"zero": False, "nice": False, "domain": [bars[0]["x"] - half, bars[-1]["x2"] + half]}}
    top = max([b["pulls"] for b in bars] + [0.0]) * 1.3 + 1.0
    y = {"field": "pulls", "type": "quantitative", "title": "pulls before the limit", "scale": {"domain": [0, top]}}
    kinds = [k for k in HOT_BAR_COLOURS if any(b["kind"] == k for b in bars)]
    bar_layers = [
        {"data": {"values": bars}, "mark": {"type": "rect"},
         "encoding": {"x": x, "x2": {"field": "x2"}, "y": y, "y2": {"datum": 0},
                      "color": {"field": "kind", "type": "nominal", "title": None,
                                "scale": {"domain": kinds, "range": [HOT_BAR_COLOURS[k] for k in kinds]}},
                      "tooltip": [{"field": "air", "title": f"air ({symbol})", "format": ".0f"},
                                  {"field": "kind", "title": " "}, {"field": "label", "title": "pulls"}]}},
        {"data": {"values": bars}, "mark": {"type": "text", "baseline": "bottom", "dy": -2, "fontSize": FONT_PX},
         "encoding": {"x": {"field": "air", "type": "quantitative"}, "y": {"field": "pulls", "type": "quantitative"},
                      "text": {"field": "label"}}},
        {"data": {"values": bars}, "mark": {"type": "text", "angle": 270, "align": "right", "baseline": "middle",
                                            "dx": -4, "fontSize": FONT_PX, "color": "white"},
         "encoding": {"x": {"field": "air", "type": "quantitative"}, "y": {"field": "pulls", "type": "quantitative"},
                      "text": {"field": "inside"}}},
        {"data": ONE_ROW, "mark": {"type": "rule", "color": "#555555", "strokeDash": [2, 2]},
         "encoding": {"x": {"datum": round(float(temperatures_shown(scenario.ambient_K, system)), 4),
                            "type": "quantitative"}}}]
    cooler = to_shown(np.asarray(hot.cooler_W_per_K, dtype=float), "conductance", system)
    if not (np.nanmax(np.append(cooler, 0.0)) > 0 or np.isnan(cooler).any()):
        return _spec("hot", "Pulls before the limit (no cooler needed)", bar_layers, width="container")
    k_unit = unit_symbol("conductance", system)
    finite = cooler[np.isfinite(cooler)]
    points = [{"air": a, "cooler": c} for a, c in zip(_floats(ambient), _floats(cooler))]
    line = {"data": {"values": points}, "mark": {"type": "line", "point": True, "color": LIMIT_COLOUR},
            "encoding": {"x": {"field": "air", "type": "quantitative"},
                         "y": {"field": "cooler", "type": "quantitative",
                               "title": f"cooler needed ({k_unit})",
                               "axis": {"orient": "right", "titleColor": LIMIT_COLOUR, "grid": False},
                               "scale": {"domain": [0, max(float(finite.max()) if finite.size else 0.0, 1.0) * 1.15]}},
                         "tooltip": [{"field": "air", "title": f"air ({symbol})", "format": ".0f"},
                                     {"field": "cooler", "title": f"cooler ({k_unit})", "format": ".1f"}]}}
    return _spec("hot", "Pulls (bars) and the cooler the plan needs (line)",
                 [{"layer": bar_layers}, line], width="container", resolve={"scale": {"y": "independent"}})
