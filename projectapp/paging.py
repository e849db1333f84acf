"""Pages of a list, counted and cut in the database, with the page number read through the list's filter form,
so `?page=²` is a 400 like any other malformed filter, and a page past the end shows the last one.

A page is two queries. The first carries only the filters and the ordering and returns the page's ids with the
number of rows that match (`COUNT(*) OVER ()`, a window function both SQLite and PostgreSQL have): the database
sorts short rows, however many match, and counts them in the same pass. The second reads those rows with
everything the page shows (joins, JSON). Django's Paginator would count in a query of its own and sort the whole
wide rows before cutting 50: on the review dashboard's 13,000 items that took PostgreSQL a quarter of a second
(benchmarks/lists.py).

Every list uses it: products, the review dashboard, the archive (and an inbox): give its filter form a
`page = page_field()`, call `paged(queryset, form)` on an ordered queryset, and include "_pager.html" with
`paged` in the context.
"""

from dataclasses import dataclass, field
from typing import Any

from django import forms
from django.db.models import Count, Window

from projectapp.filters import FilterForm

PER_PAGE = 50
PAGE_MAX = 1_000_000  # beyond any list here; a larger number is refused by name rather than counted


def page_field() -> forms.IntegerField:
    message = "expected a page number (a whole number from 1)"
    return forms.IntegerField(required=False, min_value=1, max_value=PAGE_MAX, error_messages={
        "invalid": message, "min_value": message, "max_value": message})


@dataclass(frozen=True)
class Paged:
    number: int  # the page shown
    count: int  # rows that match, on every page
    per_page: int
    query: str  # the list's valid filters as a query string, without the page: what every page link keeps
    items: list[Any] = field(default_factory=list)

    @property
    def num_pages(self) -> int:
        return max(1, -(-self.count // self.per_page))

    def url_of(self, number: int) -> str:
        return "?" + "&".join(part for part in (self.query, f"page={number}") if part)

    @property
    def previous_url(self) -> str | None:
        return self.url_of(self.number - 1) if self.number > 1 else None

    @property
    def next_url(self) -> str | None:
        return self.url_of(self.number + 1) if self.number < self.num_pages else None


def _ids_and_count(queryset, number: int, per_page: int) -> tuple[list[Any], int]:
    start = (number - 1) * per_page
    rows = list(queryset.annotate(paging_count=Window(Count("pk"))).values_list("pk", "paging_count")
                [start:start + per_page])
    return [pk for pk, _ in rows], rows[0][1] if rows else 0


def paged(queryset, form: FilterForm, *, per_page: int | None = None) -> Paged:
    """The page the form asks for (the first by default, the last when it asks beyond the end), of `per_page`
    rows (PER_PAGE unless given), from an ordered queryset."""
    per_page = per_page or PER_PAGE
    number = form.cleaned.get("page", 1)
    ids, count = _ids_and_count(queryset, number, per_page)
    if not ids and number > 1:  # past the end (or the list shrank since the link was made): the last page
        count = queryset.order_by().count()
        number = max(1, -(-count // per_page))
        ids, count = _ids_and_count(queryset, number, per_page)
    found = {row.pk: row for row in queryset.filter(pk__in=ids)} if ids else {}
    return Paged(number=number, count=count, per_page=per_page, query=form.query_without(),
                 items=[found[pk] for pk in ids if pk in found])
