"""The cautions every report carries, word for word."""

CAUTIONS: tuple[str, ...] = (
    "These results support, and never replace, the governing agency's design standards and the judgment "
    "of the licensed engineer responsible for the design.",
    "Vehicle and driver parameters are assumptions: check them against local fleet and field data before "
    "relying on the results.",
    "This assessment does not establish that a design is safe. A lane that is too short for the vehicles "
    "that use it leads to slow, forced merges and stops at the end of the lane.",
    "Policy values shown here were transcribed from memory where so labelled: verify them against the "
    "edition of the standard in force for the project.",
)

CAUTION_LINE = (
    "Caution: these results support, and never replace, the governing agency's design standards and the judgment of"
    " the licensed engineer responsible for the design; vehicle and driver parameters are assumptions; nothing here"
    " establishes that a design is safe."
)
"""The cautions in one line, for a terminal view that points to where they are in full."""
