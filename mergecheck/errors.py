"""The one error type a user can cause, and how it names what went wrong."""

from __future__ import annotations


class InputError(ValueError):
    """Bad input from a file or the command line.

    The message always names where the value came from (file or option), the
    field path inside it, and the rule that was broken, so that a user can fix
    it without reading a traceback.
    """

    def __init__(self, source: str, field: str, rule: str) -> None:
        self.source = source
        self.field = field
        self.rule = rule
        where = f"{source}: {field}" if field else source
        super().__init__(f"{where}: {rule}")
