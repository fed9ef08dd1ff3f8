"""The cautions printed with every result (shell, report, spreadsheet notes)."""

from __future__ import annotations

CAUTIONS: tuple[str, ...] = (
    "Screening level only: these results are not a slope design.",
    "The infinite-slope model ignores slope curvature, layering, deep-seated and "
    "rock failures; run-out reach, where mapped, is an empirical estimate; inputs are "
    "rarely known well.",
    "Verify on site before any decision, and defer to local codes and licensed "
    "geotechnical practice.",
)


def caution_block(prefix: str = "CAUTION: ") -> str:
    """The cautions as lines of text, each starting with ``prefix``.

    >>> caution_block().splitlines()[0]
    'CAUTION: Screening level only: these results are not a slope design.'
    """
    return "\n".join(prefix + line for line in CAUTIONS)
