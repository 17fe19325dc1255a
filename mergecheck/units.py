"""Units at the edges: parse quantities from text, format results for display.

The package keeps one pint registry (``ureg``). Everything inside the package
is SI floats; pint is used only where files and arguments are read and where
results are shown.

The registry is taught two traffic units: ``veh`` (a vehicle, dimensionless
count) and ``pc`` (a passenger car, also a count; pint's default reads ``pc``
as a parsec, which would turn "1800 pc/h" into a speed). It is built on first
use: the units a designer writes every day are read from :data:`KNOWN_UNITS`
(exact definitions, the same values as pint's, tested), so a site file in
those units never starts pint at all.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from typing import Any, Literal


@functools.cache
def registry() -> Any:
    """The package's one pint registry (built on first use), with vehicles and passenger cars as counts."""
    import pint

    units: Any = pint.UnitRegistry()
    units.define("vehicle = [] = veh")
    units.define("passenger_car = [] = pc = pcu")
    return units


def __getattr__(name: str) -> Any:  # ``units.ureg``: the registry, built when first asked for (PEP 562)
    if name == "ureg":
        return registry()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


_MILE, _FOOT, _POUND, _HORSEPOWER = 1609.344, 0.3048, 0.45359237, 745.69987158227022
"""Exact by definition (international yard and pound, 1959; mechanical horsepower = 550 ft lbf/s). [SI]"""
KNOWN_UNITS: dict[str, tuple[str, float]] = {
    "m/s": ("speed", 1.0), "km/h": ("speed", 1 / 3.6), "mph": ("speed", _MILE / 3600), "ft/s": ("speed", _FOOT),
    "m": ("length", 1.0), "km": ("length", 1000.0), "ft": ("length", _FOOT), "mi": ("length", _MILE),
    "%": ("grade", 0.01),
    "s": ("time", 1.0), "min": ("time", 60.0), "h": ("time", 3600.0),
    "kg": ("mass", 1.0), "lb": ("mass", _POUND),
    "W": ("power", 1.0), "kW": ("power", 1000.0), "hp": ("power", _HORSEPOWER),
    "kg/kW": ("weight_to_power", 1e-3), "lb/hp": ("weight_to_power", _POUND / _HORSEPOWER),
    "m/s^2": ("acceleration", 1.0), "m/s²": ("acceleration", 1.0), "ft/s^2": ("acceleration", _FOOT),
    "veh/h": ("flow", 1 / 3600), "pc/h": ("flow", 1 / 3600),
    "veh/km": ("density", 1e-3), "veh/mi": ("density", 1 / _MILE), "pc/km": ("density", 1e-3),
    "pc/mi": ("density", 1 / _MILE),
    "1/s": ("frequency", 1.0),
    "m^2": ("area", 1.0), "m²": ("area", 1.0),
}  # fmt: skip
"""The units written every day, each with its kind and its value in SI: read without pint."""

UnitSystem = Literal["si", "us"]

# Expected dimension of each kind of quantity, and the SI unit it is stored in.
_KINDS: dict[str, tuple[str, str]] = {
    "speed": ("m/s", "a speed such as '65 mph' or '100 km/h'"),
    "length": ("m", "a length such as '1200 ft' or '350 m'"),
    "grade": ("", "a grade such as '4 %' or '-2.5 %'"),
    "time": ("s", "a time such as '4.5 s'"),
    "mass": ("kg", "a mass such as '36000 kg' or '80000 lb'"),
    "power": ("W", "a power such as '300 kW' or '400 hp'"),
    "weight_to_power": ("kg/W", "a weight-to-power ratio such as '120 kg/kW' or '200 lb/hp'"),
    "acceleration": ("m/s**2", "an acceleration such as '1.2 m/s^2'"),
    "flow": ("1/s", "a flow such as '1400 veh/h'"),
    "area": ("m**2", "an area such as '10 m^2'"),
    "density": ("1/m", "a density such as '120 veh/km' or '190 veh/mi'"),
    "frequency": ("1/s", "a rate such as '0.03 1/s'"),
}


def parse_quantity(text: object, kind: str, *, source: str, field: str) -> float:
    """Parse a string with units into an SI float.

    Parameters
    ----------
    text
        The value as written by the user, e.g. ``"65 mph"`` or ``"4 %"``. A
        bare number is refused for every kind, grades included: the unit is
        what tells "4 %" from a fraction of 4.
    kind
        One of the keys of ``_KINDS`` (speed, length, grade, ...).
    source, field
        Where the value came from, for the error message.

    Returns
    -------
    float
        The value in SI units (m, s, m/s, kg, W, kg/W, grade as a fraction).
    """
    example = _KINDS[kind][1]
    if isinstance(text, bool) or text is None:
        raise _bad(source, field, f"expected {example}, got {text!r}")
    if isinstance(text, (int, float)):
        raise _bad(source, field, f"a unit is required: {_written_with_units(text, kind)}")
    if not isinstance(text, str):
        raise _bad(source, field, f"expected {example}, got {text!r}")
    plain = _NUMBER_AND_UNIT.fullmatch(text)
    if plain is None:  # no arithmetic, no second decimal point, no stray characters: a typo is never a value
        if _BARE_NUMBER.fullmatch(text):
            raise _bad(source, field, f"a unit is required: {_written_with_units(text.strip(), kind)}")
        if _NOT_FINITE.match(text):
            raise _bad(source, field, f"{text!r} is not a finite number")
        raise _bad(source, field, f"cannot read {text!r} as a quantity: expected a plain number and a unit, {example}")
    factor = _unit_factor(plain["unit"], kind)  # pint reads the unit once; the number is a plain float
    if isinstance(factor, str):
        raise _bad(source, field, _RULES[factor].format(text=repr(text), example=example))
    value = float(plain["number"]) * factor
    if not math.isfinite(value):
        raise _bad(source, field, f"{text!r} is not a finite number")
    return value


_LIKELY_UNITS: dict[str, tuple[str, str]] = {
    "speed": ("km/h", "mph"), "length": ("m", "ft"), "grade": ("%", "%"), "time": ("s", "s"),
    "mass": ("kg", "lb"), "power": ("kW", "hp"), "weight_to_power": ("kg/kW", "lb/hp"),
    "acceleration": ("m/s^2", "ft/s^2"), "flow": ("veh/h", "pc/h"), "area": ("m^2", "m^2"),
    "density": ("veh/km", "veh/mi"), "frequency": ("1/s", "1/s"),
}  # fmt: skip
"""The units a number of each kind is most likely written in (metric, US customary), for a suggestion."""


def _written_with_units(number: object, kind: str) -> str:
    """A suggestion for a number given without its unit, e.g. "write '300 m' or '300 ft'"."""
    first, second = _LIKELY_UNITS[kind]
    if first == second:
        return f"write '{number} {first}'"
    return f"write '{number} {first}' or '{number} {second}', as the value was meant"


_RULES = {
    "unreadable": "cannot read {text} as a quantity: expected {example}",
    "no unit": "a unit is required: expected {example}, got {text}",
    "wrong kind": "wrong kind of quantity {text}: expected {example}",
    "not finite": "{text} is not a finite number",
}


def _si_factor(unit: str, kind: str) -> float | str:
    """The SI value of one ``unit`` of this kind of quantity, or the key of the rule it breaks in ``_RULES``."""
    known = KNOWN_UNITS.get(unit)
    if known is not None and known[0] == kind:
        return known[1]
    import pint

    ureg = registry()
    try:
        quantity: Any = ureg.Quantity(f"1 {unit}")
    except Exception:  # pint's parser raises many kinds (tokenize, assertion, pint, value errors) on odd text
        return "unreadable"
    if not isinstance(quantity, pint.Quantity) or (quantity.dimensionless and quantity.units == ureg.dimensionless):
        return "no unit"
    try:
        value = float(quantity.to(_KINDS[kind][0] or "dimensionless").magnitude)
    except pint.errors.DimensionalityError:
        return "wrong kind"
    counts = [name for name, _ in quantity.unit_items() if _is_count(name)]
    if counts not in _COUNTS_OF.get(kind, ([],)):
        return "wrong kind"  # '5 rpm' is no flow, '3 deg' and '0.03 pc' no grade, '2 veh*m' no length
    return value if math.isfinite(value) else "not finite"


_COUNTED = (["vehicle"], ["passenger_car"])
_COUNTS_OF: dict[str, tuple[list[str], ...]] = {"grade": (["percent"],), "flow": _COUNTED, "density": _COUNTED}
"""The pure-number units each kind is written with: a grade in percent, flows and densities in vehicles or
passenger cars. Every other kind takes none (pint reads angles, revolutions and counts as pure numbers)."""


@functools.lru_cache(maxsize=256)
def _is_count(name: str) -> bool:
    """Whether a unit name is a pure number to pint (percent, vehicle, radian, degree, revolution, ...)."""
    return bool(registry().Quantity(1, name).dimensionless)


_BARE_NUMBER = re.compile(r"\s*[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\s*")  # one way to read each digit
_NOT_FINITE = re.compile(r"\s*[-+]?(?:nan|inf)", re.IGNORECASE)
_UNIT_TOKEN = r"(?:[A-Za-z%°]+(?:\s*(?:\^|\*\*)\s*-?[1-3]|[²³])?)"
_NUMBER_AND_UNIT = re.compile(
    r"\s*(?P<number>[-+]?(?:\d{1,17}(?:\.\d{0,24})?|\.\d{1,24})(?:[eE][-+]?\d{1,3})?)\s*"
    rf"(?P<unit>(?:1\s*/\s*)?{_UNIT_TOKEN}(?:(?:\s*[/*·]\s*|\s+){_UNIT_TOKEN})*)\s*"
)
"""A plain number (at most 17 digits before the point and 24 after, an exponent of at most 3 digits) and a unit
made of names joined by '/', '*', '·' or a space, each with at most a small power (m/s^2, veh/km, 1/s). The join
is required: were it optional, a run of letters could be cut into names in exponentially many ways before a
stray character refused it (a long run of letters then took minutes)."""


@functools.lru_cache(maxsize=1024)
def _unit_factor(unit: str, kind: str) -> float | str:
    """:func:`_si_factor`, each unit read once."""
    return _si_factor(unit, kind)


def si_unit(kind: str) -> str:
    """The SI unit a kind of quantity is stored in, e.g. 'kg/W' for a weight-to-power ratio."""
    return _KINDS[kind][0]


def counts_passenger_cars(text: str) -> bool:
    """Whether a flow was written in passenger cars (pc, pcu) rather than vehicles; call after parse_quantity."""
    quick = _NUMBER_AND_UNIT.fullmatch(text)
    return _names_passenger_cars(quick["unit"] if quick else text.strip())


@functools.lru_cache(maxsize=256)
def written_in_us_customary(text: str) -> bool:
    """Whether a speed was written in miles per hour or feet per second (US customary units); call after
    parse_quantity. Used to pick the policy table that matches the units a designer works in."""
    quick = _NUMBER_AND_UNIT.fullmatch(text)
    if quick is None:
        return False
    factor = _unit_factor(quick["unit"], "speed")
    return isinstance(factor, float) and any(math.isclose(factor, us, rel_tol=1e-9) for us in _US_SPEEDS)


_US_SPEEDS = (0.44704, 0.3048)
"""One mile per hour and one foot per second, in m/s (exact by definition of the international foot)."""


def _names_passenger_cars(text: str) -> bool:
    if text in KNOWN_UNITS:
        return text.startswith("pc")
    return "passenger_car" in str(registry().Quantity(text).units)


def number(si_value: float | None, kind: str, system: UnitSystem) -> str:
    """A value in the display unit without its symbol, lengths to the unit and others to one decimal; '-' for none."""
    if si_value is None:
        return "-"
    return f"{convert(si_value, kind, system):.{0 if kind == 'length' else 1}f}"


def _bad(source: str, field: str, rule: str) -> Exception:
    from .errors import InputError

    return InputError(source, field, rule)


@dataclass(frozen=True, slots=True)
class DisplayUnit:
    """How one kind of quantity is shown: unit symbol and factor from SI."""

    symbol: str
    per_si: float
    digits: int

    def value(self, si_value: float) -> float:
        return si_value * self.per_si

    def text(self, si_value: float | None) -> str:
        if si_value is None or not math.isfinite(si_value):
            return "-"
        return f"{si_value * self.per_si:.{self.digits}f} {self.symbol}".strip()


def _factor(unit: str, si_unit: str) -> float:
    """Display units per SI unit (``si_unit`` names the kind's SI unit, kept for reading)."""
    return 1.0 / KNOWN_UNITS[unit][1]


DISPLAY: dict[UnitSystem, dict[str, DisplayUnit]] = {
    "si": {
        "speed": DisplayUnit("km/h", _factor("km/h", "m/s"), 1),
        "length": DisplayUnit("m", 1.0, 0),
        "time": DisplayUnit("s", 1.0, 1),
        "grade": DisplayUnit("%", 100.0, 1),
        "acceleration": DisplayUnit("m/s²", 1.0, 2),
        "weight_to_power": DisplayUnit("kg/kW", _factor("kg/kW", "kg/W"), 0),
        "mass": DisplayUnit("kg", 1.0, 0),
        "power": DisplayUnit("kW", 1e-3, 0),
        "flow": DisplayUnit("veh/h", 3600.0, 0),
        "density": DisplayUnit("veh/km", 1000.0, 1),
        "distance": DisplayUnit("km", 1e-3, 2),
    },
    "us": {
        "speed": DisplayUnit("mph", _factor("mph", "m/s"), 1),
        "length": DisplayUnit("ft", _factor("ft", "m"), 0),
        "time": DisplayUnit("s", 1.0, 1),
        "grade": DisplayUnit("%", 100.0, 1),
        "acceleration": DisplayUnit("ft/s²", _factor("ft/s^2", "m/s**2"), 2),
        "weight_to_power": DisplayUnit("lb/hp", _factor("lb/hp", "kg/W"), 0),
        "mass": DisplayUnit("lb", _factor("lb", "kg"), 0),
        "power": DisplayUnit("hp", _factor("hp", "W"), 0),
        "flow": DisplayUnit("veh/h", 3600.0, 0),
        "density": DisplayUnit("veh/mi", _MILE, 1),
        "distance": DisplayUnit("mi", 1 / _MILE, 2),
    },
}


def show(si_value: float | None, kind: str, system: UnitSystem) -> str:
    """Format an SI value in the chosen unit system, e.g. ``show(25, 'speed', 'us')``."""
    return DISPLAY[system][kind].text(si_value)


def convert(si_value: float, kind: str, system: UnitSystem) -> float:
    """An SI value expressed in the chosen system's display unit."""
    return DISPLAY[system][kind].value(si_value)


def unit_symbol(kind: str, system: UnitSystem) -> str:
    return DISPLAY[system][kind].symbol
