"""HTML renderer: one self-contained page (inline styles, inline SVG figures, no scripts or fonts).

Built from a Jinja2 template with automatic escaping, so every string that
comes from a user's file is escaped; only the SVG figures drawn here are
marked safe. Reads results only.
"""

from __future__ import annotations

import jinja2

from .. import __version__
from ..assessment import SiteAssessment
from ..cautions import CAUTIONS
from ..exception import DesignException
from ..narrative import assumptions, summary_sentence
from ..units import UnitSystem, show
from . import plots
from .wording import clearing, merge_behaviour, mitigation_change, slowing_notes, verdict_bases

_ENVIRONMENT = jinja2.Environment(
    loader=jinja2.PackageLoader("mergecheck.report", "templates"),
    autoescape=True,
    undefined=jinja2.StrictUndefined,
    trim_blocks=True,
    lstrip_blocks=True,
)


def site_html(assessment: SiteAssessment, system: UnitSystem, exception: DesignException | None) -> str:
    """The report page."""

    def fmt(value: float | None, kind: str) -> str:
        return show(value, kind, system)

    figures = {
        "layout": plots.layout_figure(assessment, system),
        "speed": plots.speed_figure(assessment, system),
        "merge": plots.merge_figure(assessment, system),
        "length": plots.length_figure(assessment, system),
    }
    template = _ENVIRONMENT.get_template("report.html.j2")
    return template.render(
        a=assessment,
        site=assessment.site,
        summary=summary_sentence(assessment, system),
        assumptions=assumptions(assessment),
        cautions=CAUTIONS,
        figures=figures,
        exception=exception,
        fmt=fmt,
        change_text=lambda m: mitigation_change(m, system),
        behaviour=merge_behaviour(assessment.site),
        bases=[*verdict_bases(assessment, system), *slowing_notes(assessment, system)],
        clears=clearing,
        system=system,
        version=__version__,
    )
