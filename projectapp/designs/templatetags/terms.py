"""Plain explanations where trade terms appear: a "what is this?" disclosure beside a question, and links from
a term, an evidence key or a table heading to its entry on the terms page. No JavaScript: a <details>
disclosure and ordinary links, both keyboard-operable; the explanation is never hover-only."""

from functools import lru_cache

from django import template
from django.urls import get_script_prefix, reverse
from django.utils.html import conditional_escape, format_html
from django.utils.safestring import SafeString

from rules.glossary import Term, term

register = template.Library()

# The term an evidence key or a table column speaks of. Keys not listed have no entry of their own.
KEY_TERMS = {
    "band": "band", "bands": "band", "measured_band": "band",
    "direction": "uplink-downlink", "limiting_direction": "uplink-downlink", "limiting_one": "uplink-downlink",
    "limiting_direction_two": "uplink-downlink", "limiting_directions": "uplink-downlink",
    "duplex": "duplex", "duplex_mode": "duplex", "tdd_pattern": "duplex",
    "wavelength_mm": "wavelength", "distance_wavelengths": "wavelength", "eighth_wave_mm": "wavelength",
    "quarter_wave_mm": "quarter-wave", "near_field_mm": "near-field",
    "polarization_angle_deg": "polarization", "polarization_known": "polarization",
    "length_mm": "ground-plane",
    "ecc": "ecc", "eccs": "ecc", "measured_ecc": "ecc", "ecc_source": "ecc",
    "isolation_db": "isolation", "measured_isolation_db": "isolation", "coupled_pct": "isolation",
    "return_loss_db": "vswr-return-loss", "vswr": "vswr-return-loss",
    "efficiency_pct": "efficiency", "efficiencies_pct": "efficiency", "measured_efficiency_pct": "efficiency",
    "best_efficiency_pct": "efficiency", "efficiency_ratio": "efficiency", "antenna_loss_db": "efficiency",
    "gain_dbi": "dbi", "peak_gain_dbi": "dbi", "limit_dbi": "regulatory-approval",
    "mean_effective_gain_db": "mean-effective-gain", "mean_effective_gains_db": "mean-effective-gain",
    "largest_singular_value": "passivity", "problem": "passivity",
    "mcl_db": "mcl", "mcl_dl_db": "mcl", "mcl_ul_db": "mcl",
    "allowed_ul_db": "link-budget", "allowed_loss_two_db": "link-budget", "allowed_loss_one_db": "link-budget",
    "limiting_two": "uplink-downlink", "single_branch_cost_range_db": "receive-branch",
    "margin_one_db": "link-budget", "margin_two_db": "link-budget", "margin_ul_db": "link-budget",
    "margin_dl_one_db": "link-budget", "margin_dl_two_db": "link-budget",
    "power_class": "power-class", "max_output_dbm": "power-class",
    "single_branch_cost_db": "receive-branch", "fading_bound_db": "diversity-mimo",
    "diversity_gain_db": "diversity-mimo", "second_antenna_gain_db": "diversity-mimo",
    "array_gain_db": "diversity-mimo",
    "ka": "electrically-small", "q": "electrically-small", "q_sphere": "electrically-small",
    "q_planar": "electrically-small", "bandwidth_efficiency_limit_pct": "electrically-small",
    "body_distance_mm": "rf-exposure",
    "method": "far-field-pattern",
    "outranked_by": "basis", "design_severity": "severity",
    "order": "harmonic", "orders": "harmonic",
    "estimate_dbm": "link-budget", "margin_db": "link-budget", "margin_without_enhancement_db": "link-budget",
    "enhancement_db": "coverage-enhancement", "legacy_mcl_db": "mcl",
    "needed_isolation_db": "isolation", "isolation_margin_db": "isolation", "harmonic_mhz": "harmonic",
    "efficiency_db": "efficiency",
}


def term_url(entry: Term) -> str:
    return f"{reverse('term_list')}#{entry.anchor}"


# What these tags print depends only on their arguments and the site's URL prefix, and the antennas section
# prints one disclosure per question and antenna: built once each (a few hundred distinct values at most).
@lru_cache(maxsize=1024)
def _term_help(term_id: str, script_prefix: str) -> SafeString:
    entry = term(term_id)
    why = format_html("<p><strong>Why it matters:</strong> {}</p>", entry.why) if entry.why else ""
    return format_html('<details class="term-help"><summary>What does “{}” mean?</summary><p>{}</p>{}'
                       '<p><a href="{}">{} on the terms page</a></p></details>',
                       entry.term, entry.plain, why, term_url(entry), entry.term)


@lru_cache(maxsize=4096)
def _term_link(term_id: str, text: str, hint: bool, script_prefix: str) -> SafeString:
    entry = term(term_id)
    if not hint:
        return format_html('<a class="term" href="{}">{}</a>', term_url(entry), text or entry.term)
    return format_html('<a class="term" href="{}">{}<span class="sr-only"> (what is this?)</span></a>',
                       term_url(entry), text or entry.term)


@register.simple_tag
def term_help(term_id: str) -> SafeString:
    """A "What does ... mean?" disclosure with the plain explanation, its why, and a link to the term's entry."""
    return _term_help(term_id, get_script_prefix())


@register.simple_tag
def term_link(term_id: str, text: str = "", hint: bool = True) -> SafeString:
    """`text` (default: the term as written) as a link to the term's entry on the terms page. `hint` adds
    "(what is this?)" for screen readers, for a link whose text is the bare term."""
    # escaped before the cache sees it, so a plain text and a safe one that read alike never share an entry
    return _term_link(term_id, conditional_escape(text), bool(hint), get_script_prefix())


@register.simple_tag
def key_term_link(key: str, text: str) -> SafeString:
    """`text` linked to the entry of the term an evidence key or a table column speaks of; plain text (escaped)
    when that key has no entry."""
    term_id = KEY_TERMS.get(key)
    return term_link(term_id, text) if term_id else format_html("{}", text)
