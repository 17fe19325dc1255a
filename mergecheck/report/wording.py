"""Words shared by the document renderers (Markdown and HTML)."""

from __future__ import annotations

from ..exception import Mitigation
from ..merge_operations import MergeOperations
from ..units import UnitSystem, show


def mitigation_change(mitigation: Mitigation, system: UnitSystem) -> str:
    """What a mitigation changed, in the report's units."""
    match mitigation.change:
        case "lane_length":
            return f"lane length {show(mitigation.after, 'length', system)} (was {show(mitigation.before, 'length', system)})"
        case "flatten":
            return f"upgrades steeper than {100 * (mitigation.after or 0):.0f} % cut to it (steepest was {100 * (mitigation.before or 0):.1f} %)"
        case "controlling_speed":
            return f"controlling speed {show(mitigation.after, 'speed', system)} (was {show(mitigation.before, 'speed', system)})"
        case "metering":
            return "vehicles start from a stop at the end of the ramp (station 0)"
    return "no change"


def clearing(operations: MergeOperations) -> str:
    """When the queue of a broken-down merge clears, in words."""
    if operations.history is None or operations.history.clears_at is None:
        return "not within the demand profile"
    return f"{operations.history.clears_at / 60:.0f} min after the peak begins"
