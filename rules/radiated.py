"""Radiated estimates from conducted figures: total radiated power (TRP) and total isotropic sensitivity (TIS).

Over the sphere an antenna's gain averages to its total efficiency, so what the module does at its connector
reaches the air scaled by that efficiency and by the feed cable's loss:

    TRP = conducted output (the power class's maximum) + 10 log10(efficiency) - cable loss
    TIS = conducted sensitivity - 10 log10(efficiency) + cable loss

Both are budgetary: they leave out what only a chamber sees (the module's own noise coupling into the antenna,
the hand and head, the power the module actually delivers below its class maximum). The operator's over-the-air
test decides. Powers in dBm, efficiency in percent, losses in dB.
"""

import math

TRP = "trp"
TIS = "tis"
QUANTITIES = (TRP, TIS)


def efficiency_db(efficiency_pct: float) -> float | None:
    """10 log10(efficiency); None for 0 %, which radiates nothing (no finite figure)."""
    if not 0.0 <= efficiency_pct <= 100.0:
        raise ValueError(f"efficiency should be 0 to 100 %; got {efficiency_pct:g}")
    return 10.0 * math.log10(efficiency_pct / 100.0) if efficiency_pct > 0 else None


def trp_estimate_dbm(conducted_dbm: float, efficiency_pct: float, cable_loss_db: float) -> float | None:
    """Estimated total radiated power; None for an antenna of 0 % efficiency."""
    gain_db = efficiency_db(efficiency_pct)
    return None if gain_db is None else conducted_dbm + gain_db - cable_loss_db


def tis_estimate_dbm(sensitivity_dbm: float, efficiency_pct: float, cable_loss_db: float) -> float | None:
    """Estimated total isotropic sensitivity (lower is better); None for an antenna of 0 % efficiency."""
    gain_db = efficiency_db(efficiency_pct)
    return None if gain_db is None else sensitivity_dbm - gain_db + cable_loss_db


def shortfall_db(quantity: str, estimate_dbm: float | None, target_dbm: float) -> float | None:
    """How far the estimate misses its target (positive: missed), for TRP (at least the target) and TIS (at most);
    None when nothing is radiated."""
    if estimate_dbm is None:
        return None
    if quantity == TRP:
        return target_dbm - estimate_dbm
    if quantity == TIS:
        return estimate_dbm - target_dbm
    raise ValueError(f"quantity should be one of {QUANTITIES}; got {quantity!r}")
