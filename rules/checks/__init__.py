"""The checks. Importing this package registers every rule with rules.registry."""

from rules.checks import (
    antenna_count,
    band_coverage,
    certification,
    coexistence,
    coverage,
    layout,
    measured,
    patterns,
    radiated,
    radio,
    usage,
)

__all__ = ["antenna_count", "band_coverage", "certification", "coexistence", "coverage", "layout", "measured", "patterns",
           "radiated", "radio", "usage"]
