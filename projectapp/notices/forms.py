from django import forms

from projectapp.filters import FilterForm
from projectapp.paging import page_field


class InboxFilterForm(FilterForm):
    show = forms.ChoiceField(choices=[("all", "all"), ("unread", "unread")], required=False)
    page = page_field()


class ReadForm(forms.Form):
    """Marks one notice read (`notice`), or every unread one without it."""

    notice = forms.IntegerField(required=False, min_value=1, error_messages={"invalid": "expected a notice id"})


class MailForm(forms.Form):
    email_notices = forms.BooleanField(required=False)
