"""Command line: `thermo-budget run|sweep|fit|watch ...` (or `python -m thermo_budget ...`).

Exit 0 on success, 2 on bad input (one line naming the key, the value and what was expected), 1 on
a full disk; a closed pipe (`... | head`) ends it quietly. Every subcommand runs inside one wrapper,
`run_guarded`, that turns these into exit codes; a new subcommand only adds its parser and handler.
The heavy modules are imported inside the handlers, so that `--help` answers at once.
"""
from __future__ import annotations

import argparse
import errno
import os
import sys
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import ScenarioError, shown

if TYPE_CHECKING:
    from .planning.results import Report


def _fmt(value_si, kind, system, digits=1):
    from .units import to_display, unit_label
    if value_si is None:
        return "n/a"
    return f"{to_display(value_si, kind, system):.{digits}f} {unit_label(kind, system)}"


def _temp(celsius, system):
    from .display import format_temperature
    from .units import ZERO_CELSIUS_K
    return "beyond the model's range" if celsius is None else format_temperature(celsius + ZERO_CELSIUS_K, system)


def summary_text(result: Report) -> str:
    """A short readable summary of a report, in the scenario's units."""
    u = result.units
    from .output.verdict_text import summary_lines as verdict_lines
    lines = [f"{result.name or 'scenario'}", *verdict_lines(result),
             f"  fluid limit      {_temp(result.limit_C, u)} (set by {result.limit_reason.replace('_', ' ')})",
             f"  pulls under limit {result.pulls_under_limit} of {result.pulls_planned} planned",
             f"  bulk oil         start {_temp(result.start_C, u)}, peak {_temp(result.peak_C, u)}, "
             f"end {_temp(result.end_C, u)}",
             f"  return line peak {_temp(result.peak_return_C, u)}"
             + (f" (limit {_temp(result.return_line_limit_C, u)})" if result.return_line_limit_C is not None else ""),
             "  time to limit    " + ("not reached" if result.time_to_limit_s is None
                                      else f"{result.time_to_limit_s / 60:.1f} min"),
             f"  pump at peak     {_fmt(result.pump.flow_L_min / 60000, 'flow', u)}, "
             f"{_fmt(result.pump.pressure_bar * 1e5, 'pressure', u, 0)}, "
             f"{_fmt(result.peak_pull_power_W, 'power', u, 2)}",
             f"  passive loss at limit {_fmt(result.passive_rejection_at_limit_W, 'power', u, 3)}"
             + (f" (the floor takes {100 * result.floor_share_of_tank_loss:.0f} % of the tank's)"
                if result.floor_share_of_tank_loss else ""),
             f"  energy balance   {result.energy_balance_rel_error:.1e} of the largest energy term (in, lost or stored)",
             f"  oil ageing       {result.oil_ageing_equivalent_h:.2f} h equivalent at {_temp(60.0, u)} "
             f"(rate doubling per {_fmt(10.0, 'temperature_difference', u, 0)}; common practice, a relative figure)",
             f"  head room at limit {_fmt(result.headroom_at_limit_L / 1000, 'volume', u, 2)} above the oil "
             f"({_fmt(result.headroom_at_limit_m, 'length', u, 3 if u == 'SI' else 2)})"]
    runs = result.runs_before_limit
    lines += ["  pulls before limit, repeating the cycle: " + ("unlimited (sustainable)" if result.sustainable
                                                               else ("more than can be counted" if runs is None else str(runs))),
              "  steady peak      " + (_temp(result.steady_peak_C, u) if result.sustainable else "none (not sustainable)"),
              "  minimum wait     " + ("impossible" if result.min_wait_s is None else f"{result.min_wait_s:.0f} s"),
              "  cooler           " + ("not needed" if not result.cooler_needed else
                                        ("no rating suffices" if result.cooler_required_W_per_K is None else
                                         f"needed: {_fmt(result.cooler_required_W_per_K, 'conductance', u, 1)}")),
              "  cooler for all-day cadence " + ("none suffices" if result.cooler_required_sustained_W_per_K is None
                                                  else _fmt(result.cooler_required_sustained_W_per_K, "conductance", u, 1)),
              "  smallest oil volume " + ("impossible" if result.min_oil_volume_L is None
                                           else _fmt(result.min_oil_volume_L / 1000, "volume", u, 2)
                                           + " of oil, in your tank's shape scaled to hold it ("
                                           + _fmt(result.min_oil_volume_headroom_L / 1000, "volume", u, 2)
                                           + " head room at the limit)")]
    if result.runs_stopped_by == "return_line":
        lines.append("  the count stops at the return-line limit (hoses and seals), before the bulk limit")
    from .planning.band_text import summary_lines
    lines += summary_lines(result)
    lines += [f"  CAUTION: {text}" for text in result.cautions]
    lines += [f"  note: {note}" for note in result.notes]
    return "\n".join(lines)


def check_outputs(args, inputs: tuple, outputs: tuple) -> None:
    """Before any work: every output path (the options named in `outputs`) must be in an existing
    folder, not a folder itself, not one of the input files (`inputs`, option names; compared by
    device and inode, so a hard link counts) and not another output. Raises ScenarioError naming
    the option."""
    from .output_files import check_output_paths
    check_output_paths({name: getattr(args, name) for name in inputs},
                       {"--" + option.replace("_", "-"): getattr(args, option, None) for option in outputs},
                       figures=("--plot",))


def _load(path):
    from .output_files import print_warnings
    from .inputs.scenario import load_scenario
    scenario = load_scenario(path)
    print_warnings(scenario.warnings)
    return scenario


def _run(args) -> int:
    from .output_files import json_text, save_figure, write_atomically
    from .planning.answers import report, simulate, trace_csv
    check_outputs(args, ("scenario",), ("csv", "plot"))
    scenario = _load(args.scenario)
    trace = simulate(scenario)
    result = report(scenario, trace)
    if args.csv:
        write_atomically(args.csv, trace_csv(trace))
    if args.plot:
        from .output.plots import plot_trace
        save_figure(plot_trace(scenario, trace), args.plot, dpi=120, bbox_inches="tight")
    hot = None
    if args.ambients is not None:
        from .planning.hot_day import hot_day
        hot = hot_day(scenario, None if args.ambients == "default" else _ambients(args.ambients, scenario.units))
    if args.json:
        from .planning.answers import check_finite
        keys = result.to_json()
        if hot is not None:
            keys["hot_day"] = hot.to_json()
        check_finite(keys)
        print(json_text(keys, indent=2))
    else:
        print(summary_text(result))
        if hot is not None:
            print("  hot day (start temperature moved with the air):\n" + hot.summary_text(scenario.units))
    return 0


def _ambients(text: str, system: str):
    """--ambients START:STOP:N in the scenario's temperature unit (degC or degF, negative allowed),
    as air temperatures in K."""
    import numpy as np

    from .units import from_display, to_display
    low, high = (to_display(T, "temperature", system) for T in (213.15, 423.15))   # -60 and 150 degC
    unit = "degF" if system == "US" else "degC"
    parts = text.split(":")
    try:
        start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
        if len(parts) != 3 or not 1 <= count <= 200 or not low - 1e-9 <= start <= stop <= high + 1e-9:
            raise ValueError
    except (ValueError, IndexError):
        raise ScenarioError("--ambients", text, f"START:STOP:N in {unit}, {low:g} <= START <= STOP <= {high:g}, "
                                                "1 <= N <= 200") from None
    return from_display(np.linspace(start, stop, count), "temperature", system)


def _grid_spec(text: str, option: str) -> tuple[float, float, int]:
    """START:STOP:N read and checked, without building the grid (N may be any size here)."""
    import math
    parts = text.split(":")
    try:
        if len(text) > 60 or len(parts) != 3:
            raise ValueError
        start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
        if not (math.isfinite(start) and math.isfinite(stop)) or count < 1 or start < 0 or stop < start:
            raise ValueError
    except (ValueError, IndexError):
        raise ScenarioError(option, text, "START:STOP:N with 0 <= START <= STOP and N >= 1") from None
    return start, stop, count


def _sweep(args) -> int:
    import numpy as np

    from .planning.design_sweep import check_grid, check_grid_size, sweep
    from .output_files import json_text, save_figure
    check_outputs(args, ("scenario",), ("plot",))
    volume_spec = _grid_spec(args.oil_volumes, "--oil-volumes")
    cooler_spec = _grid_spec(args.coolers, "--coolers")
    scenario = _load(args.scenario)
    check_grid_size(scenario, volume_spec[2], cooler_spec[2])     # from the counts, before any array
    from .units import from_display
    # the grid in the scenario's units (L and W/K, or gal and BTU/hr/degF), in SI for the sweep
    volumes = 1000.0 * from_display(np.linspace(*volume_spec), "volume", scenario.units)
    coolers = from_display(np.linspace(*cooler_spec), "conductance", scenario.units)
    check_grid(volumes, coolers, ("--oil-volumes", args.oil_volumes), ("--coolers", args.coolers))
    result = sweep(scenario, volumes, coolers)
    if args.plot:
        from .output.plots import plot_design_chart
        save_figure(plot_design_chart(scenario, result), args.plot, dpi=120, bbox_inches="tight")
    if args.json:
        print(json_text(result.to_json(), indent=2))
    else:
        print(result.summary_text(scenario.units))
    return 0


def _fit(args) -> int:
    """`python -m thermo_budget fit SCENARIO LOG.csv [--sensor] [--json] [--write] [--plot]`."""
    from .logs.calibrate import fit_log
    from .output.fit_text import calibrated_toml, summary_text
    from .logs.measured_log import log_file_text
    from .output_files import json_text, print_warnings, save_figure, write_atomically
    from .inputs.scenario import load_scenario
    check_outputs(args, ("scenario", "log"), ("write", "plot"))
    scenario = load_scenario(args.scenario)
    print_warnings(scenario.warnings)
    text = log_file_text(args.log)
    result = fit_log(scenario, text, sensor=args.sensor, fit_start_offset=bool(getattr(args, "fit_start_offset", False)),
                     source=str(args.log), strict=bool(getattr(args, "strict", False)),
                     fit_hardware_coupling=bool(getattr(args, "fit_hardware_coupling", False)))
    if args.write:
        write_atomically(args.write, calibrated_toml(result, args.log))
    if args.plot:
        from .output.fit_plot import plot_fit
        figure = plot_fit(result)
        save_figure(figure, args.plot, dpi=120, bbox_inches="tight")
    answers = result.to_dict(include_series=False)
    print(json_text(answers, indent=2) if args.json else summary_text(result))
    return 0


def _watch(args) -> int:
    from .logs.live_watch import watch_command
    return watch_command(args)


def build_parser() -> argparse.ArgumentParser:
    command = Path(sys.argv[0]).name
    parser = argparse.ArgumentParser(prog=command if command == "thermo-budget" else "python -m thermo_budget",
                                     description="Oil temperature budget of an uncooled hydraulic engine brake.")
    sub = parser.add_subparsers(dest="command", required=True)
    run = sub.add_parser("run", help="simulate a scenario's planned session and answer the planning questions")
    run.add_argument("scenario")
    run.add_argument("--json", action="store_true", help="print the full result as JSON (SI, degC)")
    run.add_argument("--csv", metavar="TRACE.csv", help="write the temperature trace")
    run.add_argument("--plot", metavar="TRACE.png", help="plot the temperatures against time")
    run.add_argument("--ambients", nargs="?", const="default", metavar="START:STOP:N",
                     help="also the pull count and cooler needed across ambient temperatures, in the "
                          "scenario's units (degC, or degF in a US file); without a value 0:45 degC in steps "
                          "of 5 K, or the scenario's ambient +/- 15 K")
    run.set_defaults(handler=_run)
    sw = sub.add_parser("sweep", help="pulls before the limit over a grid of oil volumes and cooler sizes")
    sw.add_argument("scenario")
    sw.add_argument("--oil-volumes", required=True, metavar="START:STOP:N", help="oil volumes at 15 degC in the scenario's units: litres, or US gallons in a US file")
    sw.add_argument("--coolers", required=True, metavar="START:STOP:N", help="cooler specific dissipation in the scenario's units: W/K, or BTU/hr/degF in a US file")
    sw.add_argument("--json", action="store_true")
    sw.add_argument("--plot", metavar="FILE.png")
    sw.set_defaults(handler=_sweep)
    fit = sub.add_parser("fit", help="calibrate the model from a measured temperature log")
    fit.add_argument("scenario")
    fit.add_argument("log", metavar="LOG.csv")
    fit.add_argument("--sensor", choices=("bulk", "return"), default="bulk", help="where the log's thermocouple sits")
    fit.add_argument("--json", action="store_true")
    fit.add_argument("--write", metavar="CALIBRATED.toml")
    fit.add_argument("--plot", metavar="FIT.png")
    fit.add_argument("--fit-start-offset", action="store_true", help="also fit an offset of the start temperature")
    fit.add_argument("--strict", action="store_true",
                     help="refuse a log that looks implausible (another unit, or far from the start temperature)")
    fit.add_argument("--fit-hardware-coupling", action="store_true",
                     help="also fit the oil-to-pump/valve-body coupling (warns where the log cannot tell it)")
    fit.set_defaults(handler=_fit)
    watch = sub.add_parser("watch", help="follow a logger's file live: the state of every node and when the next pull may start")
    watch.add_argument("scenario")
    watch.add_argument("log", metavar="LOG.csv")
    watch.add_argument("--sensor", choices=("bulk", "return"), default="bulk", help="where the log's thermocouple sits")
    watch.add_argument("--once", action="store_true", help="read the file as it stands, print one forecast, exit")
    watch.add_argument("--json", action="store_true", help="one JSON object per line, one per update")
    watch.add_argument("--interval", type=float, default=2.0, metavar="SECONDS", help="how often to poll the file")
    watch.set_defaults(handler=_watch)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exit_:
        return int(exit_.code or 0)
    return run_guarded(args.handler, args)


def run_guarded(handler, args) -> int:
    """Run one subcommand and turn its end into an exit code: 2 with one line for bad input, 1 with
    one line for a full disk, 1 and nothing more when the reader of stdout has gone away."""
    try:
        code = handler(args)
        sys.stdout.flush()
        return code
    except ScenarioError as error:
        print(f"error: {error}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        _stdout_to_devnull()
        return 1
    except OSError as error:
        where = f" {shown(error.filename)}" if error.filename else ""
        if error.errno in (errno.ENOSPC, errno.EDQUOT):
            _stdout_to_devnull()
            print(f"error: no space left on the device to write{where or ' the output'}", file=sys.stderr)
            return 1
        print(f"error:{where} {error.strerror or error}", file=sys.stderr)
        return 2


def _stdout_to_devnull():
    """Point stdout at /dev/null, so that Python's own flush at exit does not fail a second time."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


def console_main() -> None:
    """The `thermo-budget` command that `pip install .` puts on the path (and `python -m
    thermo_budget`). Once the command has written and flushed everything, the process ends without
    the interpreter's teardown: unloading the compiled engine took about 0.2 s of a 1 s `run`
    (measured, docs/performance.md), and every output file is already closed and in place."""
    code = main()
    if sys.gettrace() is not None or sys.getprofile() is not None:
        sys.exit(code)                  # under a profiler or coverage: let them write their files
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (OSError, ValueError):       # the reader went away after the last write
        code = code or 1
    os._exit(code)
