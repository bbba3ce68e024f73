"""Fitting table columns into a width: drop the least needed first, cut text with "…"."""
from __future__ import annotations

__all__ = ["fit_columns", "ellipsize"]


def ellipsize(text: str, width: int) -> str:
    """``text`` cut to ``width`` cells, ending in "…" when it was cut."""
    if width <= 0:
        return ""
    return text if len(text) <= width else text[: width - 1] + "…"


def fit_columns(widths: list[int], drop_order: list[int], avail: int, first_min: int = 6,
                gap: int = 2) -> tuple[list[int], int]:
    """Which columns fit in ``avail`` cells: column 0 (names) is flexible down to
    ``first_min``; columns in ``drop_order`` go first to last.  Returns the kept column
    indices (in order) and the width left for column 0."""
    keep = list(range(len(widths)))
    order = list(drop_order)

    def need(cols: list[int]) -> int:
        return sum(widths[c] + gap for c in cols if c != 0) + gap

    while order and need(keep) + first_min > avail:
        keep.remove(order.pop(0))
    name_w = max(first_min, min(widths[0], avail - need(keep)))
    return keep, name_w
