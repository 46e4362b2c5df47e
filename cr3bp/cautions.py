"""The one caution every human-facing output carries (CLI footer, report, plot caption, file header)."""

CAUTION = (
    "CAUTION: preliminary design in the circular restricted three-body model. "
    "Verify every result in a high-fidelity model, and have it reviewed by qualified, "
    "licensed mission analysts under the applicable agency and range-safety rules, "
    "before any flight decision."
)

#: Short form for plot captions, where space is scarce. Same meaning, same words.
CAUTION_SHORT = (
    "Preliminary CR3BP design: verify in a high-fidelity model and have it reviewed by "
    "qualified, licensed mission analysts under agency and range-safety rules before any flight decision."
)


def caution_lines(prefix="", width=88):
    """The caution wrapped to ``width`` columns, each line starting with ``prefix``."""
    import textwrap

    return [prefix + line for line in textwrap.wrap(CAUTION, width - len(prefix))]
