"""What changed between two versions of a design document, as a compact list of paths with before and after.

Objects are compared key by key; lists of objects (antennas, measurements) are lined up by each entry's
name (or file), so removing the first antenna reads as one antenna removed, not as every row changed.
Anything else (numbers, text, lists of numbers such as a position) is one value. The paths are the
parser's (`antennas[1].position_mm`), the same that name the questionnaire's inputs.
"""

import json
from difflib import SequenceMatcher
from typing import Any

Changes = dict[str, list[Any]]  # path -> [before, after]; None where the path did not exist


def document_changes(before: Any, after: Any) -> Changes:
    changes: Changes = {}
    _compare(before, after, "", changes)
    return changes


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


def _identity(entry: Any) -> str:
    if isinstance(entry, dict):
        for key in ("name", "file"):
            if isinstance(entry.get(key), str):
                return f"{key}:{entry[key]}"
    return json.dumps(entry, sort_keys=True, default=str)


def _compare(before: Any, after: Any, path: str, changes: Changes) -> None:
    if before == after and type(before) is type(after):
        return
    if isinstance(before, dict) and isinstance(after, dict):
        for key in [*before, *(key for key in after if key not in before)]:
            _compare(before.get(key), after.get(key), _join(path, str(key)), changes)
        return
    if (isinstance(before, list) and isinstance(after, list) and before and after
            and all(isinstance(entry, dict) for entry in [*before, *after])):
        _compare_rows(before, after, path, changes)
        return
    _put(changes, path or "(document)", before, after)


def _put(changes: Changes, path: str, before: Any, after: Any) -> None:
    if path in changes:  # a row removed at index i and another added at index i: one entry, both sides
        earlier_before, earlier_after = changes[path]
        before = earlier_before if earlier_before is not None else before
        after = after if after is not None else earlier_after
    changes[path] = [before, after]


def _compare_rows(before: list[Any], after: list[Any], path: str, changes: Changes) -> None:
    matcher = SequenceMatcher(a=[_identity(entry) for entry in before], b=[_identity(entry) for entry in after],
                              autojunk=False)
    for tag, old_start, old_end, new_start, new_end in matcher.get_opcodes():
        paired = min(old_end - old_start, new_end - new_start) if tag in ("equal", "replace") else 0
        for offset in range(paired):
            _compare(before[old_start + offset], after[new_start + offset], f"{path}[{new_start + offset}]",
                     changes)
        for index in range(old_start + paired, old_end):
            _put(changes, f"{path}[{index}]", before[index], None)
        for index in range(new_start + paired, new_end):
            _put(changes, f"{path}[{index}]", None, after[index])
