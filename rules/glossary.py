"""The trade terms the pages use, each explained for a product manager: read once from data/terms.toml.

Loading validates the file (ids well formed and unique, every text present, groups known, a source beside
every number), so a bad edit fails at import time in tests rather than as a broken link or an unsourced
figure on a page. The web app links to a term by its id (`term-<id>` on the terms page).
"""

import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from pathlib import Path

TERMS_FILE = Path(__file__).parent / "data" / "terms.toml"
TERM_ID_PATTERN = re.compile(r"^[a-z0-9]+(-[a-z0-9]+)*$")
_DIGIT = re.compile(r"\d")
_FIELDS = {"id", "term", "group", "plain", "why", "also", "source"}


class GlossaryError(ValueError):
    """The terms file breaks its own rules."""


@dataclass(frozen=True)
class Term:
    id: str
    term: str  # as the pages write it
    group: str
    plain: str  # one to three sentences a product manager understands
    why: str = ""  # why it matters for the product (may be empty)
    also: tuple[str, ...] = ()  # other ways it is written
    source: str = ""  # where a number in the text comes from

    @property
    def anchor(self) -> str:
        return f"term-{self.id}"


@dataclass(frozen=True)
class Group:
    id: str
    title: str
    terms: tuple[Term, ...]


def _text(where: str, table: Mapping[str, object], name: str, *, required: bool = True) -> str:
    value = table.get(name, "")
    if not isinstance(value, str):
        raise GlossaryError(f"{where}: {name} should be text, got {type(value).__name__}")
    value = " ".join(value.split())
    if required and not value:
        raise GlossaryError(f"{where}: {name} is empty")
    return value


def _term(index: int, table: Mapping[str, object], groups: Mapping[str, str]) -> Term:
    where = f"terms.toml term {index + 1}"
    unknown = set(table) - _FIELDS
    if unknown:
        raise GlossaryError(f"{where}: unknown field(s) {sorted(unknown)}; expected some of {sorted(_FIELDS)}")
    term_id = _text(where, table, "id")
    where = f"terms.toml term {term_id!r}"
    if not TERM_ID_PATTERN.match(term_id):
        raise GlossaryError(f"{where}: an id is lowercase words joined by hyphens")
    group = _text(where, table, "group")
    if group not in groups:
        raise GlossaryError(f"{where}: group {group!r} is not one of {sorted(groups)}")
    also = table.get("also", [])
    if not isinstance(also, list) or not all(isinstance(item, str) and item.strip() for item in also):
        raise GlossaryError(f"{where}: also should be a list of non-empty texts")
    term = Term(id=term_id, term=_text(where, table, "term"), group=group, plain=_text(where, table, "plain"),
                why=_text(where, table, "why", required=False), also=tuple(item.strip() for item in also),
                source=_text(where, table, "source", required=False))
    sentences = len(re.findall(r"[.!?](\s|$)", term.plain))
    if not 1 <= sentences <= 3:
        raise GlossaryError(f"{where}: plain should be one to three sentences, got {sentences}")
    if not term.source and (_DIGIT.search(term.plain) or _DIGIT.search(term.why)):
        raise GlossaryError(f"{where}: the text gives a number, so it names its source "
                            "('common practice' for a rule of thumb)")
    return term


def read_glossary(data: Mapping[str, object]) -> tuple[Group, ...]:
    """The terms of a parsed terms file by group, in the file's order of groups and, within a group, of terms."""
    groups = data.get("groups")
    if not isinstance(groups, dict) or not groups or not all(isinstance(title, str) for title in groups.values()):
        raise GlossaryError("terms.toml: [groups] should map each group's id to its title")
    tables = data.get("term")
    if not isinstance(tables, list) or not tables or not all(isinstance(table, dict) for table in tables):
        raise GlossaryError("terms.toml: no [[term]] entries")
    terms = [_term(index, table, groups) for index, table in enumerate(tables)]
    seen: set[str] = set()
    for term in terms:
        if term.id in seen:
            raise GlossaryError(f"terms.toml: id {term.id!r} is used twice")
        seen.add(term.id)
    empty = [title for group_id, title in groups.items() if not any(term.group == group_id for term in terms)]
    if empty:
        raise GlossaryError(f"terms.toml: group(s) without terms: {', '.join(empty)}")
    return tuple(Group(group_id, title, tuple(term for term in terms if term.group == group_id))
                 for group_id, title in groups.items())


@cache
def glossary() -> tuple[Group, ...]:
    """The terms by group, read from data/terms.toml once."""
    with TERMS_FILE.open("rb") as handle:
        return read_glossary(tomllib.load(handle))


@cache
def terms() -> Mapping[str, Term]:
    """Every term by id."""
    return {term.id: term for group in glossary() for term in group.terms}


def term(term_id: str) -> Term:
    """The term with this id; a KeyError names the ids that exist (a typo in a template shows at once)."""
    try:
        return terms()[term_id]
    except KeyError:
        raise KeyError(f"no term {term_id!r} in terms.toml; known: {', '.join(sorted(terms()))}") from None
