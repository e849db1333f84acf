"""Pages of a list, counted and cut in the database (Django's Paginator: COUNT, then LIMIT/OFFSET on an
ordered query), with the page number read through the list's filter form, so `?page=²` is a 400 like any
other malformed filter, and a page past the end shows the last one.

Every list uses it: products, the review dashboard, the archive (and an inbox): give its filter form a
`page = page_field()`, call `paged(queryset, form)` on an ordered queryset, and include "_pager.html" with
`paged` in the context.
"""

from dataclasses import dataclass

from django import forms
from django.core.paginator import Page, Paginator

from projectapp.filters import FilterForm

PER_PAGE = 50
PAGE_MAX = 1_000_000  # beyond any list here; a larger number is refused by name rather than counted


def page_field() -> forms.IntegerField:
    message = "expected a page number (a whole number from 1)"
    return forms.IntegerField(required=False, min_value=1, max_value=PAGE_MAX, error_messages={
        "invalid": message, "min_value": message, "max_value": message})


@dataclass(frozen=True)
class Paged:
    page: Page
    query: str  # the list's valid filters as a query string, without the page: what every page link keeps

    @property
    def items(self):
        return self.page.object_list

    def url_of(self, number: int) -> str:
        return "?" + "&".join(part for part in (self.query, f"page={number}") if part)

    @property
    def previous_url(self) -> str | None:
        return self.url_of(self.page.previous_page_number()) if self.page.has_previous() else None

    @property
    def next_url(self) -> str | None:
        return self.url_of(self.page.next_page_number()) if self.page.has_next() else None


def paged(queryset, form: FilterForm, *, per_page: int | None = None) -> Paged:
    """The page the form asks for (the first by default, the last when it asks beyond the end), of `per_page`
    rows (PER_PAGE unless given)."""
    page = Paginator(queryset, per_page or PER_PAGE).get_page(form.cleaned.get("page", 1))
    return Paged(page=page, query=form.query_without())
