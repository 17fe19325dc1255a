"""Acceleration models of design vehicles, and the registry that names them.

Every model is a frozen dataclass with one method,
``acceleration(speed, grade, elevation) -> m/s^2``, vectorised over numpy
arrays. Three families compete; choose one by its registry name:

``power-limited``
    The vehicle's maximum acceleration from tractive force against road
    loads (Rakha et al. 2001; :mod:`mergecheck.dynamics`). Heavy vehicles
    (trucks, buses, recreational vehicles) merge at or near full power.
``linear-decreasing``
    Driver-chosen acceleration of passenger cars, linear-decreasing in speed
    (Long 2000), reduced on upgrades, and never more than the car's physical
    capability.
``tabulated``
    Acceleration against speed measured in the field or taken from an
    agency's curves, interpolated, with a grade response.
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass, fields, is_dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .dynamics import STANDARD_GRAVITY, PowerLimitedVehicle

FloatArray = NDArray[np.float64]


class AccelerationModel(Protocol):
    """What the trajectory integrator needs from a vehicle."""

    def acceleration(self, speed: ArrayLike, grade: ArrayLike, elevation: ArrayLike = 0.0) -> FloatArray:
        """Acceleration at a speed [m/s], grade [fraction] and elevation [m]. [m/s^2]"""
        ...


@dataclass(frozen=True, slots=True)
class PowerLimited:
    """Acceleration of a power-limited vehicle, at the share of its surplus its driver uses.

    .. math::

        a_{max} = \\frac{F_t(v) - R_a(v) - R_r(v) - R_g}{\\lambda m}          (1)

        a = \\begin{cases} s\\, a_{max} & a_{max} > 0 \\\\
                           a_{max} & a_{max} \\le 0 \\end{cases}              (2)

    Eq. (1) is the vehicle's maximum (see :mod:`mergecheck.dynamics` for the
    terms and references). In Eq. (2) s is the driver's share of the
    acceleration the vehicle could give: s = 1 is full performance. When the
    vehicle is losing speed (a_max <= 0, a truck on an upgrade) the driver is
    taken to be at full power, so crawl speeds and speed-loss distances are
    those of the vehicle itself, whatever s. Typical drivers of light vehicles
    use about 0.60 of the maximum, standard deviation 0.08 (Snare 2002);
    observed starting accelerations of combination trucks fall 40 to 75 %
    below design values (Long 2000).

    Validity: the calibration range of Rakha et al. (2001), trucks of 85 to
    169 kg/kW; grades to about 8 %.

    References
    ----------
    Snare, M. (2002). Dynamics model for predicting maximum and typical
    acceleration rates of passenger vehicles. MS thesis, Virginia Tech.
    Long, G. (2000). "Acceleration characteristics of starting vehicles."
    Transportation Research Record 1737, 58-70 (abstract).
    """

    vehicle: PowerLimitedVehicle
    driver_share: float = 1.0
    """s: share of the vehicle's surplus acceleration the driver uses, Eq. (2). [-]"""

    def acceleration(self, speed: ArrayLike, grade: ArrayLike, elevation: ArrayLike = 0.0) -> FloatArray:
        maximum = self.vehicle.acceleration(speed, grade, elevation)  # Eq. (1)
        return np.asarray(np.where(maximum > 0.0, self.driver_share * maximum, maximum), dtype=float)  # Eq. (2)


@dataclass(frozen=True, slots=True)
class LinearDecreasing:
    """Driver-chosen acceleration, linear-decreasing in speed, with separate upgrade and downgrade responses.

    .. math::

        L(v) = \\alpha - \\beta v                                        (1)

        c(v, G) = \\begin{cases}
            \\max\\big(L(v) - \\kappa_u\\, g\\, G,\\; \\phi\\, L(v)\\big) & G \\ge 0 \\\\
            L(v) + \\kappa_d\\, g\\, |G| & G < 0 \\end{cases}            (2)

        a(v, G) = \\min\\big(c(v, G),\\; a_{max}(v, G)\\big)               (3)

    The level-grade part L(v) is the linear-decreasing model of Long (2000),
    which represents both capability and behaviour better than a constant
    rate; on level grade it integrates in closed form:

    .. math::

        v(t) = \\frac{\\alpha}{\\beta}(1 - e^{-\\beta t}) + v_0 e^{-\\beta t}   (4)

        x(v) = \\frac{1}{\\beta}\\left[(v_0 - v) + \\frac{\\alpha}{\\beta}
               \\ln\\frac{\\alpha - \\beta v_0}{\\alpha - \\beta v}\\right]     (5)

    On an upgrade kappa_u is the share of the grade force a driver does not
    make up with extra throttle, but a driver never lets the chosen
    acceleration fall below the share phi of the level-road choice: the rest
    of the grade force is made up with power as long as the car has it, so a
    grade never sets a "crawl speed" of its own below the car's physical one.
    On a downgrade the driver takes the share kappa_d of the grade force as
    extra acceleration. a_max is the car's power-limited capability
    (:mod:`mergecheck.dynamics`); when it binds, the driver uses all of it.

    The passenger-car defaults are calibrated (``scripts/calibrate_passenger_car.py``)
    to the policy acceleration lengths and all four blocks of grade factors
    (3-4 % and 5-6 % upgrades and downgrades) of the AASHTO Green Book (6th
    ed. 2011, table values transcribed from memory): alpha = 1.0690 m/s^2,
    beta = 0.02929 1/s, kappa_u = 0.4976, phi = 0.1078, kappa_d = 0.9413.
    Residuals: the 58 level-grade lengths, rms 5.5 %, largest 14.9 % (the
    70 mph / 50 mph cell); the grade factors, rms 3.4 % (3-4 % up), 7.5 %
    (5-6 % up), 3.5 % (3-4 % down), 4.1 % (5-6 % down), largest 12.8 %.
    Validity: merge speeds to about 90 km/h (the policy table's range) and
    grades within +/- 6 %; beyond them the model is an extrapolation.

    References
    ----------
    Long, G. (2000). "Acceleration characteristics of starting vehicles."
    Transportation Research Record 1737, 58-70.
    """

    alpha: float
    """Acceleration intercept at zero speed on level grade. [m/s^2]"""
    beta: float
    """Rate at which chosen acceleration falls with speed. [1/s]"""
    grade_response: float
    """kappa_u: share of an upgrade's force the driver does not compensate, Eq. (2). [-]"""
    capability: PowerLimitedVehicle | None = None
    """Physical capability that caps the chosen acceleration, Eq. (3)."""
    upgrade_floor: float = 0.0
    """phi: least share of the level-road choice kept on an upgrade, Eq. (2). [-]"""
    downgrade_response: float | None = None
    """kappa_d: share of a downgrade's force taken as extra acceleration, Eq. (2); None: kappa_u. [-]"""

    def chosen(self, speed: ArrayLike, grade: ArrayLike) -> FloatArray:
        """The driver's choice before the capability cap, Eq. (2). [m/s^2]"""
        g_grade = STANDARD_GRAVITY * np.asarray(grade, dtype=float)
        level = self.alpha - self.beta * np.asarray(speed, dtype=float)  # Eq. (1)
        down = self.grade_response if self.downgrade_response is None else self.downgrade_response
        upgrade = np.maximum(level - self.grade_response * g_grade, self.upgrade_floor * level)
        return np.asarray(np.where(g_grade >= 0.0, upgrade, level - down * g_grade), dtype=float)

    def acceleration(self, speed: ArrayLike, grade: ArrayLike, elevation: ArrayLike = 0.0) -> FloatArray:
        chosen = self.chosen(speed, grade)  # Eq. (2)
        if self.capability is None:
            return chosen
        return np.minimum(chosen, self.capability.acceleration(speed, grade, elevation))


@dataclass(frozen=True, slots=True)
class Tabulated:
    """Acceleration against speed from measurements, with a grade response.

    .. math:: a(v, G) = \\tilde a(v) - \\kappa\\, g\\, G

    with tilde-a the piecewise-linear interpolation of the table (measured
    on near-level grade) and the end values held beyond the table. kappa = 1
    (the default) treats the table as the vehicle's capability, which loses
    the whole grade force on an upgrade.
    """

    speeds: tuple[float, ...]
    """Table speeds, strictly increasing. [m/s]"""
    accelerations: tuple[float, ...]
    """Acceleration at each table speed on level grade. [m/s^2]"""
    grade_response: float = 1.0
    """kappa. [-]"""

    def acceleration(self, speed: ArrayLike, grade: ArrayLike, elevation: ArrayLike = 0.0) -> FloatArray:
        level = np.interp(np.asarray(speed, dtype=float), self.speeds, self.accelerations)
        return np.asarray(level - self.grade_response * STANDARD_GRAVITY * np.asarray(grade, dtype=float), dtype=float)


@dataclass(frozen=True, slots=True)
class ModelEntry:
    """One acceleration-model family in the registry."""

    model: type
    summary: str
    validity: str
    reference: str


ACCELERATION_MODELS: dict[str, ModelEntry] = {
    "power-limited": ModelEntry(
        PowerLimited,
        "tractive force against aerodynamic, rolling and grade resistance",
        "trucks of 85 to 169 kg/kW (calibration range of the reference); grades to about 8 %",
        "Rakha, Lucic, Demarchi, Setti and Van Aerde (2001), J. Transp. Eng. 127(5), 418-425;"
        " Rakha and Lucic (2002), J. Transp. Eng. 128(5), 412-419",
    ),
    "linear-decreasing": ModelEntry(
        LinearDecreasing,
        "driver-chosen acceleration alpha - beta*v with separate upgrade and downgrade responses, capped by capability",
        "passenger cars; merge speeds to about 90 km/h, grades within +/- 6 %",
        "Long (2000), Transportation Research Record 1737, 58-70; calibrated to AASHTO Green Book"
        " 6th ed. (2011) acceleration lengths and all four grade-factor blocks (transcribed from memory)",
    ),
    "tabulated": ModelEntry(
        Tabulated,
        "acceleration against speed from measurements, interpolated, minus kappa*g*G",
        "the speed range of the table",
        "user data",
    ),
}


def model_entry(name: str) -> ModelEntry:
    """The registry entry for a model name; an unknown name lists the valid ones."""
    try:
        return ACCELERATION_MODELS[name]
    except KeyError:
        valid = ", ".join(sorted(ACCELERATION_MODELS))
        raise KeyError(f"unknown acceleration model {name!r}; valid models: {valid}") from None


@dataclass(frozen=True, slots=True)
class ModelStack:
    """Many vehicles' models side by side, for integrating them at once.

    Models of the same family and shape (e.g. every linear-decreasing car
    with a power-limited capability) are merged into one instance of their
    class whose numeric fields hold arrays, one value per vehicle; the
    model's own ``acceleration`` then runs element by element over numpy
    arrays. Each group covers a contiguous run of columns, so a vehicle's
    value never depends on which other vehicles share the stack.
    """

    bounds: tuple[tuple[int, int], ...]
    """Column range of each group."""
    models: tuple[AccelerationModel, ...]
    """One stacked model per group."""

    @classmethod
    def of(cls, models: Sequence[AccelerationModel]) -> tuple[NDArray[np.intp], ModelStack]:
        """Stack models; returns the column order (indices into ``models``) and the stack."""
        groups: dict[Hashable, list[int]] = {}
        shapes: dict[int, Hashable] = {}  # models are often shared objects: work out each one's shape once
        for i, model in enumerate(models):
            if id(model) not in shapes:
                shapes[id(model)] = _shape(model)
            groups.setdefault(shapes[id(model)], []).append(i)
        order = np.array([i for members in groups.values() for i in members], dtype=np.intp)
        bounds, stacked, start = [], [], 0
        for members in groups.values():
            bounds.append((start, start + len(members)))
            stacked.append(_stack([models[i] for i in members]))
            start += len(members)
        return order, cls(tuple(bounds), tuple(stacked))

    def take(self, columns: NDArray[np.intp]) -> ModelStack:
        """The stack restricted to some columns (sorted)."""
        bounds, stacked, start = [], [], 0
        for (lo, hi), model in zip(self.bounds, self.models, strict=True):
            first, last = (int(i) for i in np.searchsorted(columns, [lo, hi]))
            if last > first:
                bounds.append((start, start + last - first))
                stacked.append(_take(model, columns[first:last] - lo))
                start += last - first
        return ModelStack(tuple(bounds), tuple(stacked))

    def acceleration(self, speed: FloatArray, grade: FloatArray, elevation: FloatArray) -> FloatArray:
        """Acceleration of every column; speed may carry leading axes (e.g. a grid of speeds). [m/s^2]"""
        out = np.empty(np.broadcast_shapes(speed.shape, grade.shape))
        for (lo, hi), model in zip(self.bounds, self.models, strict=True):
            out[..., lo:hi] = model.acceleration(speed[..., lo:hi], grade[lo:hi], elevation[lo:hi])
        return out


def _shape(model: Any) -> Hashable:
    """What must be equal for models to share a stack: family and non-numeric fields."""
    if not is_dataclass(model):
        return ("object", id(model))
    parts: list[Hashable] = [type(model).__qualname__, id(type(model))]
    for f in fields(model):
        value = getattr(model, f.name)
        if isinstance(value, int | float) and not isinstance(value, bool):
            continue
        if is_dataclass(value):
            parts.append(_shape(value))
        elif isinstance(value, Hashable):
            parts.append(value)
        else:
            return ("object", id(model))
    return tuple(parts)


def _stack(models: list[Any]) -> Any:
    first = models[0]
    if not is_dataclass(first):
        return first
    values: dict[str, Any] = {}
    for f in fields(first):
        value = getattr(first, f.name)
        if isinstance(value, int | float) and not isinstance(value, bool):
            values[f.name] = np.array([getattr(m, f.name) for m in models], dtype=float)
        elif is_dataclass(value):
            values[f.name] = _stack([getattr(m, f.name) for m in models])
        else:
            values[f.name] = value
    kind: Any = type(first)
    return kind(**values)


def _take(model: Any, columns: NDArray[np.intp]) -> Any:
    if not is_dataclass(model):
        return model
    values: dict[str, Any] = {}
    for f in fields(model):
        value = getattr(model, f.name)
        if isinstance(value, np.ndarray):
            values[f.name] = value[columns]
        elif is_dataclass(value):
            values[f.name] = _take(value, columns)
        else:
            values[f.name] = value
    kind: Any = type(model)
    return kind(**values)
