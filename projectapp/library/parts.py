"""What a library entry's values may hold, checked by the design parser itself.

An entry's values are a fragment of the design file: an antenna object without what belongs to one design
(its name, role, feed position), or a modem object. Rather than restate the contract here, a fragment is put
into the smallest design that can hold it and parsed by `rules.design.parse_design`, so the library accepts
exactly what a design accepts: a field the parser learns is accepted here at once, and each problem keeps
the field's path, relative to the values (`efficiency_pct.B12`, `bands[2]`).
"""

import copy
from collections.abc import Iterable, Mapping
from typing import Any

from rules.design import FORMAT, DesignError, Problem, parse_design

ANTENNA, MODULE = "antenna", "module"
_ROOTS = {ANTENNA: "antennas[0]", MODULE: "modem"}
# Keys that describe one use of a part in one design, not the part: the design keeps its own.
DESIGN_KEYS: Mapping[str, tuple[str, ...]] = {
    ANTENNA: ("name", "role", "position_mm", "library"),
    MODULE: ("library", "operator_single_antenna_approval"),
}
# What the smallest design needs besides the fragment; none of it is ever stored with the part.
_STAND_IN_ANTENNA = {"name": "library part", "role": "main"}
_STAND_IN_MODEM = {"category": "cat-1", "bands": ["B1"]}


def _design_around(kind: str, values: Mapping[str, Any]) -> dict[str, Any]:
    document: dict[str, Any] = {"format": FORMAT, "product": {"name": "library part"},
                                "modem": dict(_STAND_IN_MODEM), "antennas": []}
    if kind == ANTENNA:
        document["antennas"] = [{**values, **_STAND_IN_ANTENNA}]
    else:
        document["modem"] = dict(values)
    return document


def _relative(kind: str, path: str) -> str | None:
    """The part-relative path of a problem the parser found in the fragment; None for one outside it."""
    root = _ROOTS[kind]
    if path == root:
        return ""
    if path.startswith(root + "."):
        return path[len(root) + 1:]
    return None


def unknown_keys(kind: str, keys: Iterable[str]) -> list[str]:
    """The keys the design parser doesn't know for this kind of part (it would list them as ignored)."""
    keys = [key for key in keys if key not in DESIGN_KEYS[kind]]
    probe = {key: None for key in keys}  # a key left out (null) is never a problem, so the parse succeeds
    if kind == MODULE:
        probe = {**probe, **_STAND_IN_MODEM}
    try:
        design = parse_design(_design_around(kind, probe))
    except DesignError:
        return []
    root = _ROOTS[kind] + "."
    return [path[len(root):] for path in design.ignored_paths if path.startswith(root)]


def part_keys(kind: str, keys: Iterable[str]) -> list[str]:
    """Of `keys`, those that describe the part: known to the parser and not a design's own."""
    keys = list(dict.fromkeys(keys))
    unknown = set(unknown_keys(kind, keys))
    return [key for key in keys if key not in DESIGN_KEYS[kind] and key not in unknown]


def part_problems(kind: str, values: Any) -> list[Problem]:
    """Every problem of a part's values, each with its path relative to them; [] when they are valid."""
    if kind not in _ROOTS:
        return [Problem("kind", f"expected {ANTENNA} or {MODULE}, got {kind!r}")]
    if not isinstance(values, dict):
        return [Problem("", "expected an object of the part's fields")]
    problems = [Problem(key, "belongs to a design, not to a part: each design gives its own")
                for key in values if key in DESIGN_KEYS[kind]]
    problems += [Problem(key, f"not a field of {'an antenna' if kind == ANTENNA else 'a modem'} in "
                              f"{FORMAT}")
                 for key in unknown_keys(kind, values)]
    fragment = {key: value for key, value in values.items() if key not in DESIGN_KEYS[kind]}
    try:
        parse_design(_design_around(kind, fragment))
    except DesignError as error:
        for problem in error.problems:
            path = _relative(kind, problem.path)
            if path is not None:
                problems.append(Problem(path, problem.message))
    return problems


def filled(kind: str, target: Mapping[str, Any], values: Mapping[str, Any], *,
           only: Iterable[str] | None = None) -> dict[str, Any]:
    """A copy of a design's antenna or modem object with the part's values in place of its own.

    Every key that describes the part is replaced: taken from the part where it has one, removed where it
    has none. The design's own keys (name, role, position, the library note) and keys other tools added stay.
    `only` limits the change to those keys."""
    result = copy.deepcopy(dict(target))
    owned = part_keys(kind, [*target, *values])
    for key in owned if only is None else [key for key in owned if key in set(only)]:
        if key in values:
            result[key] = copy.deepcopy(values[key])
        else:
            result.pop(key, None)
    return result
