"""A page's filters, read from its query string through a Django form.

Every filter and action parameter goes through a form field, so a malformed value (`²` passes isdigit() but
not int(), a date of 2026-13-45, a NUL character, a 400-digit number) is named and left out, and the page
answers 400 with the reason instead of failing. The valid filters still apply.
"""

from typing import Any
from urllib.parse import urlencode

from django import forms

ID_MAX = 2**63 - 1  # the largest id any database here stores (a 64-bit key); beyond it nothing matches
# A filter's select lists at most this many objects (a team with thousands of products would make every page
# carry thousands of options); past it the page offers a name search and shows the chosen one.
CHOICES_SHOWN = 100


def id_field(what: str) -> forms.IntegerField:
    message = f"expected {what} (a whole number from the list)"
    return forms.IntegerField(required=False, min_value=1, max_value=ID_MAX, error_messages={
        "invalid": message, "min_value": message, "max_value": message})


def choice_field(choices: list[str] | tuple[str, ...]) -> forms.ChoiceField:
    return forms.ChoiceField(required=False, choices=[("", "")] + [(choice, choice) for choice in choices],
                             error_messages={"invalid_choice": f"expected one of {', '.join(choices)}"})


def text_field(max_length: int = 200) -> forms.CharField:
    return forms.CharField(required=False, max_length=max_length, error_messages={
        "max_length": "expected at most %(limit_value)d characters",
        "null_characters_not_allowed": "control character U+0000 not allowed"})


def date_field() -> forms.DateField:
    return forms.DateField(required=False, error_messages={"invalid": "expected a date as YYYY-MM-DD"})


class FilterForm(forms.Form):
    """Bound to request.GET. After `read()`: `cleaned` holds the valid filters, `shown` what the page puts back
    in its inputs (as typed; blank for one left out) and `problems` one line per parameter left out."""

    def read(self) -> "FilterForm":
        self.is_valid()
        self.cleaned: dict[str, Any] = {name: value for name, value in self.cleaned_data.items()
                                        if value not in (None, "")}
        self.shown = {name: (str(self.data.get(name, "")).strip() if name in self.cleaned_data else "")
                      for name in self.fields}
        self.problems = [f"{name}: {error}; this filter was left out"
                         for name, errors in self.errors.items() for error in errors]
        return self

    @property
    def status(self) -> int:
        return 400 if self.problems else 200

    def query_without(self, *names: str) -> str:
        """The valid filters as a query string, less `names` (and the page): a link that drops a filter."""
        kept = [(name, value) for name, value in self.shown.items()
                if value and name in self.cleaned and name not in names and name != "page"]
        return urlencode(kept)

    def apply(self, queryset, lookups: dict[str, str]):
        """`queryset` narrowed by each valid filter named in `lookups` (filter name -> ORM lookup)."""
        return queryset.filter(**{lookup: self.cleaned[name] for name, lookup in lookups.items()
                                  if name in self.cleaned})


def capped_choices(queryset) -> tuple[list, bool]:
    """At most CHOICES_SHOWN objects of `queryset` for a select, and whether there are more."""
    found = list(queryset[:CHOICES_SHOWN + 1])
    return found[:CHOICES_SHOWN], len(found) > CHOICES_SHOWN
