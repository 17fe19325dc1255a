"""Figures for the HTML report, drawn with matplotlib as inline SVG. They read results only.

Black-and-white readable: every vehicle has its own line style and marker as
well as its colour. The palette is our own.
"""

from __future__ import annotations

import io
from collections.abc import Callable
from typing import Any

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt
import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from ..assessment import SiteAssessment, SiteCheck
from ..units import UnitSystem, convert, unit_symbol

PALETTE = ("#1f4e79", "#b5522e", "#4f7942", "#7b4f9d", "#a88b2c", "#3c3c3c")
LINES = ("-", "--", "-.", ":", (0, (5, 1, 1, 1)), (0, (8, 2)))
MARKERS = ("o", "s", "^", "D", "v", "P")
INK = "#222222"
LANDMARK = "#6b6b6b"

plt.rcParams.update(
    {
        "svg.fonttype": "path",  # text as outlines: no fonts needed to view
        "svg.hashsalt": "mergecheck",  # stable element ids
        "font.size": 9,
        "axes.edgecolor": INK,
        "axes.labelcolor": INK,
        "xtick.color": INK,
        "ytick.color": INK,
        "axes.spines.top": False,
        "axes.spines.right": False,
    }
)


def _converter(kind: str, system: UnitSystem) -> Callable[[Any], Any]:
    """SI values (scalars or arrays) to the display unit of a kind."""
    factor = convert(1.0, kind, system)

    def to_display(value: Any) -> Any:
        return np.asarray(value) * factor if isinstance(value, np.ndarray) else float(value) * factor

    return to_display


def _svg(fig: Figure) -> str:
    buffer = io.StringIO()
    fig.savefig(
        buffer,
        format="svg",
        bbox_inches="tight",
        metadata={"Creator": None, "Date": None, "Format": None, "Type": None},
    )
    plt.close(fig)
    text = buffer.getvalue()
    return text[text.index("<svg") :]  # drop the XML prolog and doctype for inline use


def _landmarks(ax: Axes, assessment: SiteAssessment, system: UnitSystem, labels: bool, at_bottom: bool = False) -> None:
    site = assessment.site
    marks = [
        (0.0, "end of curve" if site.controlling_speed is not None else "stop line"),
        (site.convergence, "convergence point"),
        (site.taper_start, "start of taper"),
        (site.taper_end, "end of taper"),
    ]
    for station, label in marks:
        x = convert(station, "length", system)
        ax.axvline(x, color=LANDMARK, linewidth=0.8, linestyle=(0, (2, 2)))
        if labels:
            ax.annotate(
                label,
                (x, 0.02 if at_bottom else 0.98),
                xycoords=("data", "axes fraction"),
                rotation=90,
                va="bottom" if at_bottom else "top",
                ha="left" if station <= 0 else "right",  # the first mark's label inside the axes, off the ticks
                xytext=(2 if station <= 0 else 0, 0),
                textcoords="offset points",
                fontsize=7,
                color=LANDMARK,
            )


def _vehicle_line(index: int) -> dict[str, Any]:
    """Colour, line style and width of the index-th design vehicle's curve."""
    return {"color": PALETTE[index % 6], "linestyle": LINES[index % 6], "linewidth": 1.6}


def _distance_axes(
    ax: Axes, assessment: SiteAssessment, system: UnitSystem, end: float, ylabel: str, labels_at_bottom: bool = False
) -> None:
    """Landmarks, the distance axis from the end of the controlling curve, the y label and the legend."""
    _landmarks(ax, assessment, system, labels=True, at_bottom=labels_at_bottom)
    ax.set_xlim(0, convert(end, "length", system))
    ax.set_xlabel(f"Distance from the end of the controlling curve ({unit_symbol('length', system)})")
    ax.set_ylabel(ylabel)
    ax.legend(loc="lower right", fontsize=7, frameon=False)


def _x_limit(assessment: SiteAssessment) -> float:
    site = assessment.site
    reach = [v.merge_station for v in assessment.vehicles if v.merge_station is not None]
    furthest = max([site.taper_end, *[r for r in reach if r < 3 * site.taper_end]])
    return furthest * 1.08


def layout_figure(assessment: SiteAssessment, system: UnitSystem) -> str:
    """To-scale strip of the layout along the path, with the elevation profile beneath."""
    site = assessment.site
    end = _x_limit(assessment)
    fig, (strip, profile) = plt.subplots(2, 1, figsize=(7.5, 3.6), sharex=True, gridspec_kw={"height_ratios": [1, 2]})
    c = _converter("length", system)
    strip.fill_between([0, c(end)], 1.0, 2.0, color="#d9d9d9", linewidth=0)  # through lane
    strip.fill_between([0, c(site.convergence)], -0.2, 0.4, color="#9fb7cc", hatch="//", edgecolor=INK, linewidth=0.5)
    strip.fill_between(
        [c(site.convergence), c(site.taper_start)], 0.0, 1.0, color="#9fb7cc", edgecolor=INK, linewidth=0.5
    )
    strip.fill_between(
        [c(site.taper_start), c(site.taper_end)], [0.0, 1.0], [1.0, 1.0], color="#c9d7e3", edgecolor=INK, linewidth=0.5
    )
    strip.text(c(end) * 0.99, 1.5, "adjacent through lane", ha="right", va="center", fontsize=7)
    strip.text(c(site.convergence) / 2, 0.1, "ramp", ha="center", va="center", fontsize=7)
    strip.text(
        (c(site.convergence) + c(site.taper_start)) / 2, 0.5, "acceleration lane", ha="center", va="center", fontsize=7
    )
    strip.set_ylim(-0.4, 2.1)
    strip.set_yticks([])
    strip.spines["left"].set_visible(False)
    _landmarks(strip, assessment, system, labels=False)
    x = np.linspace(0.0, end, 400)
    profile.plot(c(x), c(site.elevation + site.profile.elevation(x)), color=INK, linewidth=1.4)
    profile.set_ylabel(f"Elevation ({unit_symbol('length', system)})")
    profile.set_xlabel(f"Distance from the end of the controlling curve ({unit_symbol('length', system)})")
    for xi in np.linspace(0.05, 0.95, 4) * end:
        profile.annotate(f"{100 * float(site.profile.grade(xi)):+.1f} %", (c(xi), c(site.elevation + float(site.profile.elevation(xi)))),
                         textcoords="offset points", xytext=(0, 6), fontsize=7, ha="center")  # fmt: skip
    _landmarks(profile, assessment, system, labels=True)
    profile.set_xlim(0, c(end))
    profile.text(0.99, 0.02, f"vertical exaggeration {_exaggeration(fig, profile):.0f} to 1", transform=profile.transAxes,
                 ha="right", va="bottom", fontsize=7, color=LANDMARK)  # fmt: skip
    return _svg(fig)


def _exaggeration(fig: Figure, ax: Axes) -> float:
    """How much more a length on the elevation axis is stretched than one along the path (both in the same
    unit): (x range / axes width) / (y range / axes height)."""
    box = ax.get_position()
    width, height = box.width * fig.get_figwidth(), box.height * fig.get_figheight()
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    return float(((x1 - x0) / width) / ((y1 - y0) / height))


def speed_figure(assessment: SiteCheck, system: UnitSystem) -> str:
    """Speed against distance for every design vehicle, with merge and operating speeds and landmarks."""
    site = assessment.site
    end = _x_limit(assessment)
    fig, ax = plt.subplots(figsize=(7.5, 3.8))
    c = _converter("length", system)
    s = _converter("speed", system)
    for i, (v, lines) in enumerate(zip(assessment.vehicles, assessment.curves, strict=True)):
        station, speed, _ = lines.trajectory.samples()
        keep = station <= end
        ax.plot(c(station[keep]), s(speed[keep]), label=v.vehicle.id, **_vehicle_line(i))
        if v.merge_station is not None and v.merge_station <= end:
            ax.plot(c(v.merge_station), s(v.merge_speed), marker=MARKERS[i % 6], color=PALETTE[i % 6], markersize=6)
        elif v.crawl_speed is not None:
            ax.annotate(f"crawl {s(v.crawl_speed):.0f} {unit_symbol('speed', system)}", (c(end), s(v.crawl_speed)),
                        textcoords="offset points", xytext=(-4, 4), ha="right", fontsize=7, color=PALETTE[i % 6])  # fmt: skip
    for merge in sorted({v.merge_speed for v in assessment.vehicles}):
        ax.axhline(s(merge), color=INK, linewidth=0.8, linestyle=(0, (6, 3)))
        ax.annotate(
            f"merge speed {s(merge):.0f}",
            (c(end) * 0.5, s(merge)),
            textcoords="offset points",
            xytext=(2, -9),
            fontsize=7,
        )
    ax.axhline(s(site.operating_speed), color=INK, linewidth=1.0, linestyle=(0, (1, 2)))
    ax.annotate(f"mainline operating speed {s(site.operating_speed):.0f}", (c(end) * 0.5, s(site.operating_speed)),
                textcoords="offset points", xytext=(2, 2), fontsize=7)  # fmt: skip
    ax.set_ylim(0, s(site.operating_speed) * 1.1)
    _distance_axes(ax, assessment, system, end, f"Speed ({unit_symbol('speed', system)})", labels_at_bottom=True)
    return _svg(fig)


def merge_figure(assessment: SiteCheck, system: UnitSystem) -> str:
    """Probability of having merged by each station, per design vehicle."""
    end = _x_limit(assessment)
    fig, ax = plt.subplots(figsize=(7.5, 3.0))
    c = _converter("length", system)
    for i, v in enumerate(assessment.vehicles):
        m = assessment.curves[i].merge.site
        keep = m.station <= end
        ax.plot(c(m.station[keep]), m.probability[keep], label=v.vehicle.id, **_vehicle_line(i))
    target = assessment.site.gaps.reliability
    ax.axhline(target, color=INK, linewidth=0.8, linestyle=(0, (6, 3)))
    ax.annotate(f"target {target:.0%}", (c(end) * 0.5, target), textcoords="offset points", xytext=(2, 2), fontsize=7)
    ax.set_ylim(0, 1.02)
    _distance_axes(ax, assessment, system, end, "Probability of having merged")
    return _svg(fig)


def length_figure(assessment: SiteAssessment, system: UnitSystem) -> str:
    """Length needed against length available per vehicle, with the policy minimum."""
    site = assessment.site
    fig, ax = plt.subplots(figsize=(7.5, 0.6 + 0.5 * len(assessment.vehicles)))
    c = _converter("length", system)
    names = [v.vehicle.id for v in assessment.vehicles]
    finite = [v.length_needed for v in assessment.vehicles if v.length_needed is not None]
    cap = max([site.available_length * 2.5, *finite]) if finite else site.available_length * 2.5
    cap = min(cap, site.available_length * 6)
    for i, v in enumerate(assessment.vehicles):
        need = v.length_needed
        bar = cap if need is None else min(need, cap)
        cut = need is None or need > cap
        ax.barh(
            i,
            c(bar),
            color=PALETTE[i % 6],
            hatch=["", "//", "\\\\", "xx", "..", "--"][i % 6],
            edgecolor=INK,
            linewidth=0.5,
        )
        if need is not None:
            label = f"{c(need):.0f} {unit_symbol('length', system)}" + (" (bar cut)" if cut else "")
        elif v.required_length is None:
            label = "no length suffices: never reaches merge speed"
        else:
            label = f"no length suffices: under {v.merge.reliability:.0%} find a gap on any length searched"
        if cut:  # a break mark where the bar is cut: a white gap between two slanted strokes
            gap = c(cap) * 0.02
            ax.barh(i, gap, left=c(bar) - 3 * gap, color="white", edgecolor="none", height=0.9, zorder=3)
            for edge in (c(bar) - 3 * gap, c(bar) - 2 * gap):
                ax.plot([edge - gap / 2, edge + gap / 2], [i + 0.45, i - 0.45], color=INK, linewidth=0.8, zorder=4)
        ax.annotate(label, (c(bar), i), textcoords="offset points", xytext=(3, 0), va="center", fontsize=7)
    ax.axvline(c(site.available_length), color=INK, linewidth=1.4, label="length available")
    if assessment.policy is not None and assessment.policy.minimum_length is not None:
        ax.axvline(c(assessment.policy.minimum_length), color=INK, linewidth=1.0, linestyle=(0, (4, 2)),
                   label="policy minimum (as the table measures it)")  # fmt: skip
    ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.0), ncol=2, frameon=False, fontsize=7)  # above the bars
    ax.set_yticks(range(len(names)), names)
    ax.invert_yaxis()
    ax.set_xlabel(f"Length from the convergence point ({unit_symbol('length', system)})")
    ax.set_xlim(0, c(cap) * 1.35)
    return _svg(fig)
