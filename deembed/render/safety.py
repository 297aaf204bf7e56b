"""The safety cautions, written once: the report's Safety section and the command line's help both use them."""
from __future__ import annotations

SAFETY_ITEMS = (
    ("Static on the line",
     "bleed static off the feed line (short centre to shield) before connecting an analyzer",
     "A feed line can hold a dangerous static charge, especially from a tall or long antenna. Bleed it off "
     "(briefly short the centre conductor to the shield, or to ground) before connecting an analyzer."),
    ("Never transmit into an analyzer",
     "never transmit into an analyzer",
     "Disconnect the analyzer before any transmitter on the line is keyed, and make sure nobody else can key "
     "it while you measure. Nearby transmitters can also couple enough power to damage the analyzer."),
    ("RF exposure",
     "keep clear of RF exposure from nearby transmitters",
     "Keep clear of antennas that are transmitting, including other stations' antennas on a shared site or "
     "tower; follow the exposure limits that apply where you are."),
    ("Tower and roof work",
     "tower work only by trained, equipped crews",
     "Climbing, rigging and work at height are for trained, equipped and insured crews only, never alone."),
    ("Lightning",
     "no antenna work with lightning about",
     "Do no antenna or feed-line work when thunderstorms are about; disconnect and ground lines as your "
     "installation requires."),
)
"""Each caution as (heading, short form for one line of help, full text for the report)."""

SAFETY_FOOT = ("These notes do not replace local electrical and building codes, site rules or licensed practice; "
               "where they differ, those come first.")
SAFETY_FOOT_SHORT = "Local codes and licensed practice come first."


def safety_line() -> str:
    """All the cautions in one paragraph, for ``deembed --help``."""
    return "Safety: " + "; ".join(short for _, short, _ in SAFETY_ITEMS) + ". " + SAFETY_FOOT_SHORT


__all__ = ["SAFETY_FOOT", "SAFETY_FOOT_SHORT", "SAFETY_ITEMS", "safety_line"]
