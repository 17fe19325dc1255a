"""Command line: parse arguments, load, call the core, render, exit.

Exit codes: 0 done (all checks pass), 1 a check falls short, 2 bad input.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Iterator, Sequence
from typing import Any, NoReturn

from rich.console import Console, RenderableType
from rich.progress import MofNCompleteColumn, Progress
from rich.text import Text

from . import __version__, api
from .batch import assess_all, collection_paused, ranked, read_batch, source_files, summarize
from .command_results import AccelerationRun, GapFigures
from .critical_gap_estimation import ESTIMATORS, read_observations
from .errors import InputError
from .exception_study import DesignException
from .fields import Reads, read_option
from .headways import HEADWAY_MODELS, headway_model, mean_wait
from .inputs import ProfileFile, build_profile, check_grade, control_character, printable, read_yaml, validated
from .landxml import is_landxml, read_profile
from .limits import (
    CRITICAL_GAP,
    DRIVERS,
    ELEVATION,
    FREE_FLOW_SPEED,
    MIN_HEADWAY,
    PROBE_FLOW,
    STATION,
    VEHICLE_SPEED,
    WORKERS,
    check_count,
)
from .merge_area import COVERAGE, LANES_COVERED, OutsideMethod, merge_area, passenger_car_flow
from .merge_operations import TRUCK_EQUIVALENT
from .output_files import Output, check_outputs, write_all
from .profile import VerticalProfile
from .report import csv_report, json_report, markdown, terminal
from .report.document import site_document
from .shockwave import TrafficState, on_one_relation, queue_growth, shock_speed
from .site import SiteInput, load_site
from .sweep import parse_range, sweep
from .trajectory import accelerate
from .units import counts_passenger_cars, parse_quantity, show
from .vehicle_figures import vehicle_figures
from .vehicles import load_bundled, load_vehicle

EXIT_OK, EXIT_SHORT, EXIT_INPUT, EXIT_INTERNAL = 0, 1, 2, 3
"""0 meets, 1 falls short, 2 bad input (nothing written), 3 an internal error (never a verdict)."""
Handler = Callable[[argparse.Namespace, Console, Console], int]
"""A command: parsed arguments, standard output and error consoles -> exit code."""


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> NoReturn:  # argparse's own usage errors: exit 2, no traceback
        self.print_usage(sys.stderr)
        self.exit(EXIT_INPUT, f"mergecheck: error: {message}\n")


_QUANTITY_OPTIONS = frozenset({
    "initial", "target", "grade", "elevation", "flow", "critical_gap", "min_headway", "mainline_flow", "ramp_flow",
    "accel_length", "ffs", "ramp_ffs", "arrive", "arrive_density", "arrive_speed", "discharge", "discharge_density",
    "discharge_speed", "duration", "vary", "start_station",
})  # fmt: skip
"""Options that take a quantity (a number and its unit), which may come as two words, unquoted."""


def _words_allowed(parser: argparse.ArgumentParser) -> None:
    """Let the quantity options take their value as several words ('--from 0 km/h'); file names never."""
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for sub in action.choices.values():
                _words_allowed(sub)
        elif action.dest in _QUANTITY_OPTIONS:
            action.nargs = "+"


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="mergecheck", description="Check an entrance ramp's acceleration lane and merge.")
    parser.add_argument("--version", action="version", version=f"mergecheck {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    listing = commands.add_parser("vehicles", help="list the bundled design vehicles and their key figures")
    listing.set_defaults(run=_vehicles)
    listing.add_argument("--units", choices=["si", "us"], default="si", help="unit system for display")
    listing.add_argument("--json", action="store_true", help="write JSON (SI values) to standard output")

    accel = commands.add_parser("accel", help="speed of one design vehicle along a grade or profile")
    accel.set_defaults(run=_accel)
    accel.add_argument("--vehicle", required=True, help="bundled vehicle id or path of a profile file")
    accel.add_argument("--from", dest="initial", required=True, help="initial speed, e.g. '0 mph' or '50 km/h'")
    accel.add_argument("--to", dest="target", required=True, help="target speed, e.g. '53 mph'")
    where = accel.add_mutually_exclusive_group(required=True)
    where.add_argument("--grade", help="one constant grade, e.g. '4 %%'")
    where.add_argument("--profile", help="YAML file with a list of grades by station (see README), or a LandXML file")
    accel.add_argument("--alignment", help="with a LandXML --profile: the alignment's name")
    accel.add_argument("--profile-name", help="with a LandXML --profile: the profile's name")
    accel.add_argument("--start-station", help="with a LandXML --profile: the station to start from, e.g. '1250 m'")
    accel.add_argument("--elevation", help="elevation above sea level at the start, e.g. '1500 m' (default 0 m)")
    accel.add_argument("--units", choices=["si", "us"], default="si", help="unit system for display")
    accel.add_argument("--json", action="store_true", help="write JSON (SI values) to standard output")

    check = commands.add_parser("check", help="check an entrance ramp's acceleration lane (a site file)")
    check.set_defaults(run=_check)
    check.add_argument("site", help="site file (YAML)")
    check.add_argument("--units", choices=["si", "us"], default="si", help="unit system for display")
    check.add_argument(
        "--json", nargs="?", const="-", metavar="FILE", help="write JSON (SI values) to FILE, or to standard output"
    )
    check.add_argument("--prepared-by", metavar="NAME", help="who prepared the design-exception study, for its record")
    check.add_argument(
        "--details", action="store_true", help="also show every assumption and the cautions in full on the terminal"
    )
    check.add_argument("--markdown", metavar="FILE", help="write the report as Markdown to FILE")
    check.add_argument("--html", metavar="FILE", help="write a self-contained HTML report with figures to FILE")
    check.add_argument(
        "--exception",
        action="store_true",
        help="add the design-exception section even when every vehicle meets the check",
    )
    check.add_argument(
        "--monte-carlo",
        type=int,
        default=0,
        metavar="N",
        help="also simulate N merging drivers per vehicle (seeded) as a check",
    )

    commands.add_parser("schema", help="print the JSON Schema of the site file").set_defaults(run=_schema)

    batch = commands.add_parser(
        "batch", help="assess many sites: a folder of site files, a YAML list, a CSV or a workbook"
    )
    batch.set_defaults(run=_batch)
    batch.add_argument(
        "input", help="folder of site files, YAML file with a list of sites, or CSV or .xlsx workbook (one site a row)"
    )
    batch.add_argument("--units", choices=["si", "us"], default="si", help="unit system for display")
    batch.add_argument("--json", metavar="FILE", help="write every site's full check (SI) to FILE")
    batch.add_argument("--csv", metavar="FILE", help="write one row per site to FILE, after the cautions")
    batch.add_argument("--xlsx", metavar="FILE", help="write one row per site to an .xlsx workbook")
    batch.add_argument("--markdown", metavar="FILE", help="write the corridor report to FILE")
    batch.add_argument("--workers", type=int, help="worker processes (default: all cores)")

    vary = commands.add_parser("sweep", help="rerun one site across a range of one input")
    vary.set_defaults(run=_sweep)
    vary.add_argument("site", help="site file (YAML)")
    vary.add_argument(
        "--vary", required=True, help="FIELD=START:STOP:STEP with units, e.g. 'lane_length=200 m:600 m:50 m'"
    )
    vary.add_argument("--units", choices=["si", "us"], default="si", help="unit system for display")
    vary.add_argument("--json", action="store_true", help="write JSON (SI values) to standard output")

    gaps = commands.add_parser("gaps", help="probability, rate and wait for gaps of a given length in one lane")
    gaps.set_defaults(run=_gaps)
    gaps.add_argument("--flow", required=True, help="flow in the lane, e.g. '1400 veh/h'")
    gaps.add_argument("--critical-gap", required=True, help="critical gap, e.g. '3.5 s'")
    gaps.add_argument("--model", choices=sorted(HEADWAY_MODELS), default="m3", help="headway model (default m3)")
    gaps.add_argument("--min-headway", help="M3 minimum headway (default 1.0 s)")
    gaps.add_argument("--free-fraction", type=float, help="M3 share of free vehicles (default Tanner's 1 - Delta q)")
    gaps.add_argument("--json", action="store_true", help="write JSON to standard output")

    area = commands.add_parser("merge-area", help="capacity-manual merge-area density, LOS and capacity checks")
    area.set_defaults(run=_merge_area)
    area.add_argument("--lanes", type=int, required=True, help="through lanes per direction (2 to 4)")
    area.add_argument(
        "--mainline-flow", required=True, help="approaching mainline demand, e.g. '4000 pc/h' or '3600 veh/h'"
    )
    area.add_argument("--ramp-flow", required=True, help="ramp demand, e.g. '1000 pc/h' or '900 veh/h'")
    area.add_argument(
        "--accel-length", required=True, help="acceleration length as the manual measures it (with the taper)"
    )
    area.add_argument("--ffs", required=True, help="mainline free-flow speed, e.g. '65 mph'")
    area.add_argument("--ramp-ffs", required=True, help="ramp free-flow speed, e.g. '45 mph'")
    area.add_argument(
        "--heavy-vehicles", type=float, default=0.0, help="heavy-vehicle share for veh/h flows (default 0)"
    )
    area.add_argument(
        "--terrain", choices=["level", "rolling"], default="level", help="for the truck equivalent (default level)"
    )
    area.add_argument("--phf", type=float, default=1.0, help="peak-hour factor for veh/h flows (default 1.0)")
    area.add_argument("--lanes-downstream", type=int, help="lanes downstream of the merge if different")
    area.add_argument("--json", action="store_true", help="write JSON to standard output")

    queue = commands.add_parser("queue", help="shock wave and queue between an arriving and a queued state")
    queue.set_defaults(run=_queue)
    queue.add_argument("--arrive", required=True, help="arriving flow, e.g. '4200 veh/h'")
    arrive = queue.add_mutually_exclusive_group(required=True)
    arrive.add_argument("--arrive-density", help="arriving density, e.g. '40 veh/km'")
    arrive.add_argument("--arrive-speed", help="arriving speed, e.g. '100 km/h'")
    queue.add_argument("--discharge", required=True, help="flow discharged from the queue, e.g. '3600 veh/h'")
    discharge = queue.add_mutually_exclusive_group(required=True)
    discharge.add_argument("--discharge-density", help="density in the queue, e.g. '150 veh/km'")
    discharge.add_argument("--discharge-speed", help="speed in the queue, e.g. '25 km/h'")
    queue.add_argument("--duration", default="1 h", help="how long the arriving state lasts (default 1 h)")
    queue.add_argument("--units", choices=["si", "us"], default="si", help="unit system for display")
    queue.add_argument("--json", action="store_true", help="write JSON (SI values) to standard output")

    estimate = commands.add_parser("critical-gap", help="estimate critical gaps from field observations (CSV)")
    estimate.set_defaults(run=_critical_gap)
    estimate.add_argument("observations", help="CSV with accepted_gap_s and largest_rejected_gap_s per driver")
    estimate.add_argument("--method", choices=sorted(ESTIMATORS), default="mle", help="estimator (default mle)")
    estimate.add_argument("--json", action="store_true", help="write JSON to standard output")
    _words_allowed(parser)
    return parser


def _refuse_control_characters(arguments: Sequence[str]) -> None:
    """Raise :class:`InputError` for the first argument holding a control character, naming its option."""
    for number, argument in enumerate(arguments, start=1):
        found = control_character(argument)
        if found is not None:
            before = arguments[number - 2] if number > 1 else ""
            where = before if before.startswith("--") else f"argument {number}"
            raise InputError("command line", where, f"holds the control character {found}")


def _print_input_error(error: InputError, stderr: Console) -> int:
    message = printable(str(error))
    stderr.print(Text.assemble(("mergecheck: error:", "bold red"), " ", message), soft_wrap=True)
    return EXIT_INPUT


def main(argv: Sequence[str] | None = None) -> int:
    arguments = [str(argument) for argument in (sys.argv[1:] if argv is None else argv)]
    # user text (site names, paths, values in messages) is never read as console markup
    # piped or redirected: tables at their natural width, never cut to a terminal's
    stdout = Console(width=None if sys.stdout.isatty() else 10_000, highlight=False, markup=False)
    stderr = Console(stderr=True, highlight=False, markup=False)
    try:  # before argparse, which echoes a value it refuses as it stands
        _refuse_control_characters(arguments)
    except InputError as error:
        return _print_input_error(error, stderr)
    args = build_parser().parse_args(arguments)
    for name in _QUANTITY_OPTIONS & vars(args).keys():  # a quantity given as two words, unquoted: --from 0 km/h
        if isinstance(getattr(args, name), list):
            setattr(args, name, " ".join(getattr(args, name)))
    try:
        handler: Handler = args.run
        return handler(args, stdout, stderr)
    except InputError as error:
        return _print_input_error(error, stderr)
    except KeyboardInterrupt:
        raise
    except Exception as error:  # a defect, never a verdict: its own exit code and a request for a report
        stderr.print(
            Text.assemble(
                ("mergecheck: internal error:", "bold red"),
                f" {type(error).__name__}: {error}. This is a defect in mergecheck, not a finding about the site;"
                " please report it with the input that caused it.",
            ),
            soft_wrap=True,
        )
        return EXIT_INTERNAL


def _vehicles(args: argparse.Namespace, out: Console, err: Console) -> int:
    figures = [vehicle_figures(v) for v in load_bundled()]
    return _show(
        args, out, lambda: json_report.vehicles_json(figures), lambda: terminal.vehicles_view(figures, args.units)
    )


def _accel(args: argparse.Namespace, out: Console, err: Console) -> int:
    vehicle = load_vehicle(args.vehicle, source="command line", field="--vehicle")
    initial = read_option(args.initial, Reads("speed", VEHICLE_SPEED, "50 km/h"), "--from")
    target = read_option(args.target, Reads("speed", VEHICLE_SPEED, "90 km/h"), "--to")
    elevation = 0.0
    if args.elevation is not None:
        elevation = read_option(args.elevation, Reads("length", ELEVATION, "450 m"), "--elevation")
    if args.grade is not None:
        profile = build_profile_from_grade(args.grade)
    else:
        profile, file_elevation = load_profile_file(args.profile, args)
        if args.elevation is None:
            elevation = file_elevation
    if args.elevation is None:
        ELEVATION.check(elevation, args.profile, "elevation")
    trajectory = accelerate(vehicle.model, profile, initial, target, elevation=elevation, slowing=target < initial)
    run = AccelerationRun(vehicle=vehicle, profile=profile, elevation=elevation, trajectory=trajectory)
    return _show(
        args, out, lambda: json_report.acceleration_json(run), lambda: terminal.acceleration_view(run, args.units)
    )


def _check(args: argparse.Namespace, out: Console, err: Console) -> int:
    check_count(args.monte_carlo, DRIVERS, "command line", "--monte-carlo", "drivers")
    asked = [Output(option, path) for option, path in (("--json", args.json), ("--markdown", args.markdown),
                                                        ("--html", args.html)) if path is not None]  # fmt: skip
    check_outputs(asked, [args.site])
    site = api.load_site(args.site)
    if args.monte_carlo and err.is_terminal:  # the drivers simulated, with the time left; quiet when piped
        columns = (*Progress.get_default_columns(), MofNCompleteColumn())
        with Progress(*columns, console=err, transient=True) as progress:
            task = progress.add_task("Simulating drivers", total=args.monte_carlo * len(site.vehicles))
            assessment = api.assess(
                site, monte_carlo=args.monte_carlo, progress=lambda count: progress.advance(task, count)
            )
    else:
        assessment = api.assess(site, monte_carlo=args.monte_carlo)
    study: bool | DesignException = False
    if args.exception or (assessment.verdict == "short" and asked):
        study = api.design_exception(assessment, prepared_by=args.prepared_by)  # once, for every document
    render = {
        "--json": lambda: api.to_json(assessment, exception=study),
        "--markdown": lambda: api.to_markdown(assessment, units=args.units, exception=study),
        "--html": lambda: api.to_html(assessment, units=args.units, exception=study),
    }
    documents = [Output(o.option, o.path, render[o.option]()) for o in asked]
    write_all(documents, [args.site])
    if args.json == "-":
        assert isinstance(documents[0].text, str)
        sys.stdout.write(documents[0].text)
    else:
        shown = study if args.exception and not isinstance(study, bool) else None
        _print(out, terminal.site_view(site_document(assessment, args.units, shown), details=args.details))
    return EXIT_OK if assessment.verdict == "meets" else EXIT_SHORT


def _gaps(args: argparse.Namespace, out: Console, err: Console) -> int:
    flow = read_option(args.flow, Reads("flow", PROBE_FLOW, "1400 veh/h"), "--flow")
    gap = read_option(args.critical_gap, Reads("time", CRITICAL_GAP, "3.5 s"), "--critical-gap")
    if not gap > 0:
        raise InputError("command line", "--critical-gap", "must be positive")
    min_headway = None
    if args.model != "m3":
        for option, given in (("--min-headway", args.min_headway), ("--free-fraction", args.free_fraction)):
            if given is not None:
                raise InputError("command line", option, f"only the m3 model takes it, not {args.model}")
    else:
        text = "1.0 s" if args.min_headway is None else args.min_headway
        min_headway = read_option(text, Reads("time", MIN_HEADWAY, "1.0 s"), "--min-headway")
        if min_headway * flow >= 1:
            raise InputError("command line", "--min-headway", "must be below the mean headway 1/q")
        if args.free_fraction is not None and not 0.01 <= args.free_fraction <= 1:
            raise InputError("command line", "--free-fraction", "must lie between 0.01 and 1")
    model = headway_model(args.model, flow, min_headway=min_headway or 0.0, free_fraction=args.free_fraction)
    p = float(model.survival(gap))
    figures = GapFigures(
        model=args.model,
        flow=flow,
        critical_gap=gap,
        min_headway=min_headway,
        free_fraction=getattr(model, "free_fraction", None),
        p_headway_at_least=p,
        acceptable_gaps_per_h=flow * p * 3600,
        mean_wait=float(mean_wait(model, gap)),
    )
    return _show(args, out, lambda: json_report.gaps_json(figures), lambda: terminal.gaps_view(figures))


def _critical_gap(args: argparse.Namespace, out: Console, err: Console) -> int:
    observations = read_observations(args.observations)
    estimate = ESTIMATORS[args.method](observations)
    return _show(
        args,
        out,
        lambda: json_report.critical_gap_json(estimate, args.observations),
        lambda: terminal.critical_gap_view(estimate, args.observations),
    )


def _flow_pc_h(text: str, field: str, heavy: float, terrain: str, phf: float) -> float:
    """A flow in pc/h: written in pc/h it is taken as is; in veh/h it is converted (HCM f_HV and PHF)."""
    value = parse_quantity(text, "flow", source="command line", field=field) * 3600
    if not 0 <= value <= 20_000:
        raise InputError("command line", field, "must lie between 0 and 20,000 per hour")
    if counts_passenger_cars(text):
        return value
    return passenger_car_flow(value, heavy, TRUCK_EQUIVALENT[terrain], phf)


def _merge_area(args: argparse.Namespace, out: Console, err: Console) -> int:
    if args.lanes not in LANES_COVERED:
        raise InputError("command line", "--lanes", COVERAGE)
    if args.lanes_downstream is not None and not args.lanes <= args.lanes_downstream <= args.lanes + 2:
        raise InputError("command line", "--lanes-downstream", "must be at least --lanes and at most two more")
    if not 0 <= args.heavy_vehicles <= 1:
        raise InputError("command line", "--heavy-vehicles", "must be a share between 0 and 1")
    if not 0.25 < args.phf <= 1:
        raise InputError("command line", "--phf", "must lie between 0.25 and 1")
    mainline = _flow_pc_h(args.mainline_flow, "--mainline-flow", args.heavy_vehicles, args.terrain, args.phf)
    ramp = _flow_pc_h(args.ramp_flow, "--ramp-flow", args.heavy_vehicles, args.terrain, args.phf)
    length = parse_quantity(args.accel_length, "length", source="command line", field="--accel-length")
    if not 0 <= length <= 2000:
        raise InputError("command line", "--accel-length", "must lie between 0 and 2000 m")
    speeds = {name: read_option(text, Reads("speed", FREE_FLOW_SPEED, "65 mph"), name)
              for name, text in (("--ffs", args.ffs), ("--ramp-ffs", args.ramp_ffs))}  # fmt: skip
    try:
        result = merge_area(
            lanes=args.lanes,
            mainline_pc_h=mainline,
            ramp_pc_h=ramp,
            acceleration_length_ft=length / 0.3048,
            free_flow_speed_mph=speeds["--ffs"] / 0.44704,
            ramp_free_flow_speed_mph=speeds["--ramp-ffs"] / 0.44704,
            lanes_downstream=args.lanes_downstream,
        )
    except OutsideMethod as outside:
        raise InputError("command line", "--ramp-flow, --accel-length, --ramp-ffs", str(outside)) from None
    return _show(args, out, lambda: json_report.merge_area_command_json(result), lambda: terminal.area_view(result))


def _state(flow_text: str, density_text: str | None, speed_text: str | None, prefix: str) -> TrafficState:
    flow = parse_quantity(flow_text, "flow", source="command line", field=f"--{prefix}")
    if flow == 0 and prefix == "discharge" and density_text is not None:
        pass  # a full closure: nothing discharges from a queue at its jam density
    elif not 0 < flow <= 20_000 / 3600:
        rule = "must be positive" if prefix == "arrive" else "must be positive (or 0 with a density, a full closure)"
        raise InputError("command line", f"--{prefix}", f"{rule} and at most 20,000 veh/h")
    if density_text is not None:
        density = parse_quantity(density_text, "density", source="command line", field=f"--{prefix}-density")
        if not 0 < density <= 1.0:
            raise InputError("command line", f"--{prefix}-density", "must be positive and at most 1000 veh/km")
        return TrafficState(flow, density)
    assert speed_text is not None
    speed = parse_quantity(speed_text, "speed", source="command line", field=f"--{prefix}-speed")
    if not 0 < speed <= 200 / 3.6:
        raise InputError("command line", f"--{prefix}-speed", "must be positive and at most 200 km/h")
    return TrafficState(flow, flow / speed)


def _queue(args: argparse.Namespace, out: Console, err: Console) -> int:
    arriving = _state(args.arrive, args.arrive_density, args.arrive_speed, "arrive")
    queued = _state(args.discharge, args.discharge_density, args.discharge_speed, "discharge")
    duration = parse_quantity(args.duration, "time", source="command line", field="--duration")
    if not 0 < duration <= 24 * 3600:
        raise InputError("command line", "--duration", "must be positive and at most 24 h")
    if arriving.density == queued.density:
        raise InputError("command line", "--discharge-density", "the two states must differ in density")
    if not on_one_relation(arriving, queued):
        w = shock_speed(arriving, queued)
        raise InputError(
            "command line",
            "--discharge-density" if args.discharge_density is not None else "--discharge-speed",
            f"the two states cannot lie on one flow-density relation: the shock between them would run at"
            f" {show(w, 'speed', args.units)}, faster than the traffic itself (check the densities or speeds)",
        )
    result = queue_growth(arriving, queued, duration)
    return _show(args, out, lambda: json_report.queue_json(result), lambda: terminal.queue_view(result, args.units))


def _batch(args: argparse.Namespace, out: Console, err: Console) -> int:
    if args.workers is not None:
        check_count(args.workers, WORKERS, "command line", "--workers", "processes")
    asked = [Output(option, path) for option, path in (("--json", args.json), ("--csv", args.csv),
                                                        ("--xlsx", args.xlsx), ("--markdown", args.markdown)) if path]  # fmt: skip
    sources = source_files(args.input)
    check_outputs(asked, sources)
    with collection_paused():  # the results live to the end and hold no cycles: no collection need walk them
        batch = read_batch(args.input)
        if err.is_terminal:  # a progress bar on a terminal only; nothing extra when piped
            with Progress(
                *Progress.get_default_columns(), MofNCompleteColumn(), console=err, transient=True
            ) as progress:
                task = progress.add_task("Assessing sites", total=len(batch.entries))
                results = assess_all(
                    batch.entries, workers=args.workers, tick=lambda count: progress.advance(task, count)
                )
        else:
            results = assess_all(batch.entries, workers=args.workers)
        results = ranked(results)
        summary = summarize(results, batch.skipped)
        render: dict[str, Callable[[], str | bytes | Iterator[str]]] = {
            "--json": lambda: json_report.batch_json(results, summary),
            "--csv": lambda: csv_report.batch_csv(results, args.units),
            "--xlsx": lambda: csv_report.batch_xlsx(results, args.units),
            "--markdown": lambda: markdown.batch_markdown(results, summary, args.units),
        }
        write_all([Output(o.option, o.path, render[o.option]()) for o in asked], sources)
        _print(out, terminal.batch_view(results, summary, args.units))
    if summary.unreadable:
        return EXIT_INPUT
    return EXIT_SHORT if summary.short else EXIT_OK


def _sweep(args: argparse.Namespace, out: Console, err: Console) -> int:
    field, _, values = parse_range(args.vary)
    result = sweep(load_site(args.site), field, values)
    return _show(args, out, lambda: json_report.sweep_json(result), lambda: terminal.sweep_view(result, args.units))


def _show(
    args: argparse.Namespace, out: Console, document: Callable[[], Any], view: Callable[[], RenderableType]
) -> int:
    """JSON on standard output when asked for, the terminal view otherwise; the command is done."""
    if args.json:
        sys.stdout.write(json_report.dumps(document()))
    else:
        _print(out, view())
    return EXIT_OK


def _print(out: Console, view: RenderableType) -> None:
    """A view on the terminal as rich lays it out; piped or redirected, the same text without the spaces that pad
    its lines to the widest."""
    if out.is_terminal:
        out.print(view)
        return
    with out.capture() as captured:
        out.print(view)
    sys.stdout.write("".join(line.rstrip() + "\n" for line in captured.get().splitlines()))


def _schema(args: argparse.Namespace, out: Console, err: Console) -> int:
    sys.stdout.write(json_report.dumps(site_schema()))
    return EXIT_OK


def site_schema() -> dict[str, object]:
    """JSON Schema of the site file (field names as written in YAML)."""
    schema = SiteInput.model_json_schema(by_alias=True)
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "mergecheck site file"
    return schema


def build_profile_from_grade(text: str) -> VerticalProfile:
    grade = parse_quantity(text, "grade", source="command line", field="--grade")
    check_grade(grade, text, "command line", "--grade")
    return VerticalProfile.constant(grade)


def load_profile_file(path: str, args: argparse.Namespace) -> tuple[VerticalProfile, float]:
    """A profile file: YAML grades by station, or a LandXML profile (--alignment, --profile-name, --start-station)."""
    landxml = (args.alignment, args.profile_name, args.start_station)
    if is_landxml(path):
        for option, given in zip(("--alignment", "--profile-name", "--start-station"), landxml, strict=True):
            if given is None:
                raise InputError(
                    "command line", option, "a LandXML --profile needs --alignment, --profile-name and --start-station"
                )
        start = read_option(args.start_station, Reads("length", STATION, "1250 m"), "--start-station")
        read = read_profile(path, args.alignment, args.profile_name, start)
        return read.profile, read.elevation
    if any(given is not None for given in landxml):
        raise InputError(
            "command line", "--alignment", "--alignment, --profile-name and --start-station go with a LandXML --profile"
        )
    data = validated(read_yaml(path), ProfileFile, path, "a profile file (with a 'profile' list)")
    elevation = 0.0
    if data.elevation is not None:
        elevation = parse_quantity(data.elevation, "length", source=path, field="elevation")
    return build_profile(data.profile, path, "profile"), elevation
