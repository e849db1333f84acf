from django import forms

from projectapp.filters import FilterForm, choice_field, date_field, id_field, text_field
from projectapp.paging import page_field
from rules.catalog import categories

MAX_VERIFY_BYTES = 30_000_000


class SignForm(forms.Form):
    role = forms.ChoiceField(choices=())
    password = forms.CharField(widget=forms.PasswordInput(attrs={"autocomplete": "current-password"}),
                               help_text="Re-enter your password to sign.")

    def __init__(self, *args, roles, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["role"].choices = [(role, role) for role in roles]


class VerifyForm(forms.Form):
    pdf = forms.FileField(label="PDF to check", help_text=f"At most {MAX_VERIFY_BYTES // 1_000_000} MB.")

    def clean_pdf(self):
        upload = self.cleaned_data["pdf"]
        if upload.size > MAX_VERIFY_BYTES:
            raise forms.ValidationError(f"pdf: expected at most {MAX_VERIFY_BYTES // 1_000_000} MB, "
                                        f"got {upload.size / 1_000_000:.1f} MB")
        return upload


class ArchiveFilterForm(FilterForm):
    q = text_field()
    product = id_field("a product's number")
    category = choice_field(tuple(categories()))
    signer = id_field("a signer's number")
    since = date_field()
    until = date_field()
    state = choice_field(("current", "superseded"))
    page = page_field()
