"""The caution that goes with every thermodynamic result: one text, used by every output."""

from __future__ import annotations

__all__ = ["CAUTION", "caution_comment"]

#: Short caution shown with every summary, CSV file, JSON document and plot.
CAUTION = (
    "Caution: cubic equations of state are approximate, least accurate near the critical point and for "
    "liquid densities. Results are not a substitute for measured data, for the applicable design codes, "
    "or for review by a qualified engineer where equipment, pipelines or people depend on them."
)


def caution_comment(prefix: str = "# ") -> str:
    """The caution as comment lines (``# caution: ...``) for the head of a CSV file, ending in a newline."""
    words = CAUTION.split()
    lines: list[str] = []
    line = ""
    for word in words:
        if line and len(line) + 1 + len(word) > 96:
            lines.append(line)
            line = word
        else:
            line = f"{line} {word}" if line else word
    lines.append(line)
    return "".join(f"{prefix}{text}\n" for text in lines)
