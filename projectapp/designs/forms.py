from django import forms

from projectapp.designs.models import Product
from projectapp.teams.models import Team

MAX_DESIGN_FILE_BYTES = 1_000_000


class ProductForm(forms.Form):
    team = forms.ModelChoiceField(queryset=Team.objects.none(), help_text="The team that owns the product.")
    name = forms.CharField(max_length=120, help_text="The product's name as the team uses it.")
    description = forms.CharField(max_length=300, required=False,
                                  help_text="One line: what the product does and where it goes.")

    def __init__(self, *args, teams, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["team"].queryset = teams
        if teams.count() == 1:
            self.fields["team"].initial = teams.first()

    def clean(self):
        cleaned = super().clean()
        team, name = cleaned.get("team"), cleaned.get("name")
        if team and name and Product.objects.filter(team=team, name=name).exists():
            self.add_error("name", f"{team} already has a product named {name!r}.")
        return cleaned


class ImportForm(forms.Form):
    design_file = forms.FileField(
        label="Design file",
        help_text=f"An earshot-design/1 JSON file, at most {MAX_DESIGN_FILE_BYTES // 1000} kB.",
    )

    def clean_design_file(self):
        upload = self.cleaned_data["design_file"]
        if upload.size > MAX_DESIGN_FILE_BYTES:
            raise forms.ValidationError(
                f"design_file: expected at most {MAX_DESIGN_FILE_BYTES // 1000} kB, got {upload.size // 1000} kB.")
        return upload


class DraftVersionForm(forms.Form):
    """The draft version a page was read at, posted by every form that changes a draft; `overwrite` is the
    version a person saw in a conflict message when they chose to save their entries over the other change.

    A post that names no version is taken as having read none (0): it may change only what nobody has
    changed in this draft yet, so it can never overwrite an edit unseen."""

    version = forms.IntegerField(min_value=0, max_value=2**31 - 1, required=False)
    overwrite = forms.IntegerField(min_value=0, max_value=2**31 - 1, required=False)

    @property
    def read_version(self) -> int:
        overwrite = self.cleaned_data.get("overwrite")
        if overwrite is not None:
            return overwrite
        return self.cleaned_data.get("version") or 0


VERSION_MESSAGE = ("version: expected the draft version this page was read at (a whole number); reload the page "
                   "and make the change again")
