"""What the measurements card lists of a kept far-field pattern: its frequencies and grid, read from the file
once per content (kept in the cache by SHA-256), and its environment in words."""

from typing import Any

from django.core.cache import cache

from projectapp import fragments
from projectapp.designs.models import MeasurementFile
from rules.design import FieldEnvironment
from rules.farfield import FarFieldError, environment_text, parse_far_field

MAX_FREQUENCIES_LISTED = 12


def pattern_facts(measurement: MeasurementFile) -> dict[str, Any]:
    """{"frequencies_mhz", "theta_step_deg", "phi_step_deg", "theta_points", "phi_points"}, or {"error": why}
    for a file that no longer reads (kept files were read before they were kept, so that means a defect)."""
    key = fragments.cache_key("pattern-facts", measurement.sha256)
    facts = cache.get(key)
    if facts is None:
        try:
            pattern = parse_far_field(measurement.read_text(), source=measurement.name)
        except FarFieldError as error:
            return {"error": str(error)}
        frequencies = [float(value) for value in pattern.frequencies_mhz]
        facts = {"frequencies_mhz": frequencies[:MAX_FREQUENCIES_LISTED],
                 "more_frequencies": max(0, len(frequencies) - MAX_FREQUENCIES_LISTED),
                 "frequency_count": len(frequencies),
                 "theta_step_deg": pattern.theta_step_deg, "phi_step_deg": pattern.phi_step_deg,
                 "theta_points": int(pattern.theta_deg.size), "phi_points": int(pattern.phi_deg.size)}
        cache.set(key, facts, timeout=30 * 24 * 3600)
    return facts


def environment_words(entry: dict[str, Any]) -> str:
    """A far-field entry's environment in words (rules.farfield's), or what it holds if it can't be read."""
    raw = entry.get("environment")
    if raw is None:
        return environment_text(FieldEnvironment())
    if isinstance(raw, dict) and raw.get("model") == "isotropic":
        return environment_text(FieldEnvironment())
    if isinstance(raw, dict) and raw.get("model") == "taga":
        numbers = [raw.get(key) for key in ("mean_elevation_deg", "spread_deg", "xpr_db")]
        if all(isinstance(number, (int, float)) and not isinstance(number, bool) for number in numbers):
            return environment_text(FieldEnvironment("taga", *(float(number) for number in numbers)))
    return f"not readable as given ({raw!r:.80})"
