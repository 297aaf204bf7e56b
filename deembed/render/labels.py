"""Words for people: the labels pages and text use for the keys of the JSON outputs."""
from __future__ import annotations

LIMIT_LABELS = {
    "max_shift_hz": "Resonance shift",
    "max_swr_rise": "Rise of the lowest SWR",
    "max_gamma_change": "Change of |\u0393| at any frequency",
    "max_bw_loss_percent": "Loss of 2:1 bandwidth",
    "max_loss_change_db": "Change of the line's matched loss",
}
"""Each limit (by its JSON name) as the compare page and the site index name it."""

CAUSE_LABELS = {
    "unchanged": "Nothing changed",
    "antenna": "The antenna",
    "line": "The line",
    "both": "The antenna and the line",
    "unclear": "Cannot tell",
}
"""Each cause code of a comparison, as a heading."""


def label(table: dict, key) -> str:
    """``table[key]``, or the key itself made readable (``max_foo_hz`` -> ``max foo hz``)."""
    return table.get(key) or str(key).replace("_", " ")


__all__ = ["CAUSE_LABELS", "LIMIT_LABELS", "label"]
