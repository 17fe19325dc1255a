"""Quantity-typed fields: the site file's quantities read to SI and checked against their range as the file
is validated, with the same words on every path.

A field declared ``Annotated[float, Reads("speed", SPEED_DIFFERENTIAL, "8 km/h")]`` takes a string with its
unit (refusing a bare number, arithmetic, or a unit of another kind: :func:`mergecheck.units.parse_quantity`),
holds the SI float, and is published in the JSON Schema as a string with an example. Its range is a
:class:`~mergecheck.limits.Limit`, written once in :mod:`mergecheck.limits`. Rules between fields (a merge
speed below the operating speed, a lane of length 0 only for a taper-type entrance) stay with the site.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from pydantic import GetCoreSchemaHandler, GetJsonSchemaHandler
from pydantic_core import CoreSchema, core_schema

from .errors import InputError
from .limits import Limit
from .units import parse_quantity


@dataclass(frozen=True, slots=True)
class Reads:
    """Field metadata: read text with a unit of this kind to SI, within ``limit``."""

    kind: str
    limit: Limit | None
    example: str

    def read(self, value: object) -> float:
        """The SI value, or ValueError with the rule (pydantic adds the field path)."""
        try:
            number = parse_quantity(value, self.kind, source="", field="")
        except InputError as error:
            raise ValueError(error.rule) from None
        if self.limit is not None and not self.limit.holds(number):
            raise ValueError(self.limit.rule)
        return number

    def __get_pydantic_core_schema__(self, source: Any, handler: GetCoreSchemaHandler) -> CoreSchema:
        return core_schema.no_info_before_validator_function(self.read, handler(source))

    def __get_pydantic_json_schema__(self, schema: CoreSchema, handler: GetJsonSchemaHandler) -> dict[str, Any]:
        return {"type": "string", "examples": [self.example]}


def read_option(text: str, reads: Reads, option: str) -> float:
    """A command-line option read as a site-file field of the same kind and range; InputError names the option."""
    try:
        return reads.read(text)
    except ValueError as error:
        raise InputError("command line", option, str(error)) from None
