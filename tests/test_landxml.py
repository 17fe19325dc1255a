"""Vertical profiles read from LandXML: grades and curve elevations checked by hand against the equal-tangent
parabola, the same site from LandXML and from its grades by hand, and hostile or mistaken files refused."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import yaml

from mergecheck.assessment import assess
from mergecheck.errors import InputError
from mergecheck.landxml import read_profile
from mergecheck.site import load_site

DATA = Path(__file__).parent / "data" / "landxml"


def test_grades_and_the_parabolic_curve_by_hand() -> None:
    """tests/data/landxml/ramp-b.xml from station 1000: 3 % in, 1 % out, a 100 m curve at the PVI at 1100.
    By hand with z(x) = z_PVC + g1 x + (g2 - g1) x^2 / (2 L) (AASHTO Green Book 7th ed. 2018, 3.4.6): the start
    at 103.000 m; BVC (1050) 104.500; PVI (1100) 105.750 (the offset A L / 800 = 0.25 m below the tangents'
    106.000); EVC (1150) 106.500; 1300 on the out tangent 108.000."""
    read = read_profile(str(DATA / "ramp-b.xml"), "Ramp B", "Design", 1000.0)
    assert read.elevation == pytest.approx(103.0, abs=1e-9) and read.end == pytest.approx(500.0)
    stations = np.array([0.0, 50.0, 100.0, 150.0, 300.0])
    heights = read.elevation + read.profile.elevation(stations)
    assert heights == pytest.approx([103.0, 104.5, 105.75, 106.5, 108.0], abs=1e-9)
    assert read.profile.grade(np.array([0.0, 100.0, 200.0])) == pytest.approx([0.03, 0.02, 0.01], abs=1e-12)
    by_profile_name = read_profile(str(DATA / "ramp-b.xml"), "Ramp B", "Ramp B FG", 1000.0)
    assert by_profile_name.profile == read.profile


def test_feet_are_read_as_feet() -> None:
    """Imperial linear unit 'foot' (0.3048 m exactly): a 3 % grade over 1000 ft, 304.8 m; a zero-length
    circular curve is an abrupt grade change (here none)."""
    read = read_profile(str(DATA / "feet.xml"), "Ramp C", "FG", 0.0)
    assert read.end == pytest.approx(304.8) and read.elevation == pytest.approx(500 * 0.3048)
    assert read.profile.grade(np.array([10.0, 250.0])) == pytest.approx([0.03, 0.03])


def test_a_site_from_landxml_equals_the_same_grades_by_hand(repo: Path, tmp_path: Path) -> None:
    site = yaml.safe_load((repo / "examples" / "larkspur-road.yaml").read_text())
    site["geometry"].update({"curve_end_to_convergence": "100 m", "lane_length": "250 m", "taper_length": "90 m"})
    by_hand = dict(site, geometry=dict(site["geometry"], elevation="103 m", profile=[
        {"from": "0 m", "grade": "3 %"}, {"from": "100 m", "grade": "1 %", "vertical_curve": "100 m"}]))  # fmt: skip
    (tmp_path / "ramp-b.xml").write_text((DATA / "ramp-b.xml").read_text())
    from_model = dict(site, geometry=dict(site["geometry"], profile={
        "landxml": "ramp-b.xml", "alignment": "Ramp B", "profile": "Design", "start_station": "1000 m"}))  # fmt: skip
    for name, data in (("hand.yaml", by_hand), ("model.yaml", from_model)):
        (tmp_path / name).write_text(yaml.safe_dump(data))
    hand, model = (assess(load_site(str(tmp_path / n))) for n in ("hand.yaml", "model.yaml"))
    assert model.site.elevation == pytest.approx(103.0)
    for a, b in zip(hand.vehicles, model.vehicles, strict=True):
        assert a.required_length == pytest.approx(b.required_length, rel=1e-9)
        assert a.speed_at_taper_start == pytest.approx(b.speed_at_taper_start, rel=1e-9)


def test_accel_reads_a_landxml_profile(cli: Any) -> None:
    run = cli("accel", "--vehicle", "bus", "--from", "40 km/h", "--to", "70 km/h", "--profile", DATA / "ramp-b.xml",
              "--alignment", "Ramp B", "--profile-name", "Design", "--start-station", "1000 m", "--json")  # fmt: skip
    assert run.code == 0, run.stderr
    assert run.json()["elevation_m"] == pytest.approx(103.0)


HOSTILE = """<?xml version="1.0"?>
<!DOCTYPE lolz [<!ENTITY lol "lol"><!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">]>
<LandXML><Units><Metric linearUnit="meter"/></Units><Alignments><Alignment name="A"><Profile name="P">
<ProfAlign name="P"><PVI>0 &lol2;</PVI><PVI>100 1</PVI></ProfAlign></Profile></Alignment></Alignments></LandXML>"""


@pytest.mark.parametrize(
    ("text", "alignment", "start", "where", "rule"),
    [
        (HOSTILE, "A", 0.0, "", "declares a document type"),
        ("<LandXML><Units><Metric linearUnit='meter'/></Units></LandXML>", "A", 0.0, "Alignment 'A'", "not found"),
        (None, "Ramp B", 1600.0, "Alignment 'Ramp B' / Profile 'Design'", "lies outside the profile (900 to 1500 m)"),
        (None, "Ramp X", 1000.0, "Alignment 'Ramp X'", "alignments in the file: 'Mainline', 'Ramp B'"),
        ("<LandXML><Units><Metric linearUnit='meter'/></Units><Alignments><Alignment name='A'><Profile name='P'>"
         "<ProfAlign name='P'><PVI>0 10</PVI><PVI>abc</PVI></ProfAlign></Profile></Alignment></Alignments></LandXML>",
         "A", 0.0, "PVI 2", "must hold a station and an elevation"),
        ("<not-xml", "A", 0.0, "", "not well-formed XML"),
    ],
)  # fmt: skip
def test_bad_files_name_the_element_and_the_rule(
    tmp_path: Path, text: str | None, alignment: str, start: float, where: str, rule: str
) -> None:
    path = DATA / "ramp-b.xml"
    if text is not None:
        path = tmp_path / "bad.xml"
        path.write_text(text)
    pattern = f"{re.escape(path.name)}: .*{re.escape(where)}.*{re.escape(rule)}"
    with pytest.raises(InputError, match=pattern if where else f"{re.escape(path.name)}: {re.escape(rule)}"):
        read_profile(str(path), alignment, "Design" if text is None else "P", start)


def test_a_hostile_site_file_profile_ends_cleanly(cli: Any, repo: Path, tmp_path: Path) -> None:
    site = yaml.safe_load((repo / "examples" / "larkspur-road.yaml").read_text())
    site["geometry"]["profile"] = {"landxml": "evil.xml", "alignment": "A", "profile": "P", "start_station": "0 m"}
    (tmp_path / "evil.xml").write_text(HOSTILE)
    (tmp_path / "site.yaml").write_text(yaml.safe_dump(site))
    run = cli("check", tmp_path / "site.yaml")
    assert run.code == 2 and "evil.xml: declares a document type" in run.stderr
