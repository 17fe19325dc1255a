"""HTML renderer: one self-contained page (inline styles, inline SVG figures, no scripts or fonts).

Built from a Jinja2 template with automatic escaping over the site report's document
(:mod:`mergecheck.report.document`), so every string that comes from a user's file is escaped; only the SVG
figures drawn here are marked safe.
"""

from __future__ import annotations

import jinja2

from .. import __version__
from ..assessment import SiteCheck
from . import plots
from .document import SiteDocument, unit_of

_ENVIRONMENT = jinja2.Environment(
    loader=jinja2.PackageLoader("mergecheck.report", "templates"),
    autoescape=True,
    undefined=jinja2.StrictUndefined,
    trim_blocks=True,
    lstrip_blocks=True,
)


def css_string(text: str) -> str:
    """Text for a CSS string (the print header): every character other than a letter, digit or space as a CSS
    escape, so that no quote, backslash or '</style>' in a site name can leave the string."""
    return "".join(c if c.isalnum() or c == " " else f"\\{ord(c):x} " for c in text)


_ENVIRONMENT.filters["css_string"] = css_string


def site_html(document: SiteDocument, assessment: SiteCheck) -> str:
    """The report page: the document laid out, with the figures drawn from the assessment it was built from."""
    system = document.system
    figures = {
        "layout": plots.layout_figure(assessment, system),
        "speed": plots.speed_figure(assessment, system),
        "merge": plots.merge_figure(assessment, system),
        "length": plots.length_figure(assessment, system),
    }
    return _ENVIRONMENT.get_template("report.html.j2").render(
        d=document, figures=figures, unit_of=unit_of, version=__version__
    )
