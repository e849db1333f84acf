from django import forms

from projectapp.designs import questionnaire
from projectapp.designs.models import Product, Revision
from projectapp.filters import FilterForm, choice_field, id_field, text_field
from projectapp.library.models import Entry
from projectapp.paging import page_field
from projectapp.teams.models import Team
from rules.catalog import categories
from rules.findings import SEVERITIES

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


class LibraryActionForm(forms.Form):
    """A questionnaire button that fills a part from the team's library: `library:<row>`, `library:new` (a new
    antenna row) or `library:modem`."""

    action = forms.RegexField(r"^library:(modem|new|\d{1,4})$")

    @property
    def target(self) -> str:
        return self.cleaned_data["action"].split(":", 1)[1]


class LibraryEntryForm(forms.Form):
    """The entry picked beside that button (its select is named `library-<target>-entry`)."""

    entry = forms.ModelChoiceField(queryset=Entry.objects.none(), error_messages={
        "required": "expected a part of the team's library to fill from",
        "invalid_choice": "expected a part of the team's library (not retired) to fill from"})

    def __init__(self, *args, entries, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["entry"].queryset = entries


class LibraryTargetForm(forms.Form):
    """Which part of the draft a library change is reviewed for: the modem, or an antenna by its name."""

    part = forms.ChoiceField(choices=[("modem", "modem"), ("antenna", "antenna")])
    antenna = forms.CharField(max_length=200, required=False)

    def clean(self):
        cleaned = super().clean()
        if cleaned.get("part") == "antenna" and not cleaned.get("antenna"):
            self.add_error("antenna", "expected the name of the antenna in the draft")
        return cleaned

    @property
    def kind(self) -> str:
        return "module" if self.cleaned_data["part"] == "modem" else "antenna"

    @property
    def antenna_name(self) -> str | None:
        return None if self.cleaned_data["part"] == "modem" else self.cleaned_data["antenna"]


class LibraryApplyForm(LibraryTargetForm):
    entry_version = forms.IntegerField(min_value=1, max_value=2**31 - 1)
    apply = forms.MultipleChoiceField(required=False, choices=())
    files = forms.BooleanField(required=False)

    def __init__(self, *args, keys: list[str], **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["apply"].choices = [(key, key) for key in keys]


class PanelPartForm(forms.Form):
    """A part of the draft's page fetched on its own (`?part=figures`: the drawing, charts and coverage that a
    save's answer leaves to the next request)."""

    part = forms.ChoiceField(required=False, choices=[("", ""), ("figures", "figures")], error_messages={
        "invalid_choice": "expected figures or nothing"})


class SectionActionForm(forms.Form):
    """What a questionnaire section may post beside its answers: an antenna row action and a region preset."""

    action = forms.RegexField(
        regex=r"^(add|drop-bands|(remove|duplicate):[0-9]{1,3}|restore:[0-9]{1,18})$", required=False,
        error_messages={"invalid": "action: expected add, remove:N or duplicate:N (N an antenna's row number), "
                                   "restore:N (the change that removed it) or drop-bands"})
    preset = forms.ChoiceField(required=False, choices=(), error_messages={
        "invalid_choice": "preset: expected one of the region presets listed beside the bands"})

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["preset"].choices = [("", "")] + [(preset.slug, preset.label)
                                                      for preset in questionnaire.band_presets()]

    @property
    def verb(self) -> str:
        return self.cleaned_data["action"].partition(":")[0]

    @property
    def row(self) -> int | None:
        _, _, index = self.cleaned_data["action"].partition(":")
        return int(index) if index else None

    @property
    def restore_event(self) -> int | None:
        """restore:N: the audit event of the change whose removed antennas are to be put back."""
        return self.row if self.verb == "restore" else None


class PortMapForm(forms.Form):
    """A kept measurement file's port map: which antenna each port measured (blank: no antenna)."""

    MAX_PORTS = 64  # far beyond a Touchstone file's usual 1-8 ports; the form shows one select per port

    file = forms.CharField(max_length=120)
    port_count = forms.IntegerField(min_value=0, max_value=MAX_PORTS, error_messages={
        "invalid": f"port_count: expected a whole number from 0 to {MAX_PORTS}",
        "min_value": f"port_count: expected a whole number from 0 to {MAX_PORTS}",
        "max_value": f"port_count: expected a whole number from 0 to {MAX_PORTS}",
        "required": "port_count: expected the number of ports the form shows"})

    def __init__(self, data, *args, **kwargs):
        super().__init__(data, *args, **kwargs)
        for index in range(self.MAX_PORTS):
            if f"port-{index}" in data:
                self.fields[f"port-{index}"] = forms.CharField(max_length=120, required=False)

    @property
    def ports(self) -> list[str | None]:
        return [self.cleaned_data.get(f"port-{index}") or None for index in range(self.cleaned_data["port_count"])]

    def problems(self) -> str:
        return "; ".join(f"{error}" if str(error).startswith(f"{name}:") else f"{name}: {error}"
                         for name, errors in self.errors.items() for error in errors)


class MeasurementFileForm(forms.Form):
    """A measurement file named by a form (to remove it)."""

    file = forms.CharField(max_length=120)


class ProductFilterForm(FilterForm):
    """The product list's filters: a name, a team, the latest revision's state, category or gravest finding."""

    q = text_field()
    team = id_field("a team's number")
    state = choice_field(tuple(Revision.State.values))
    category = choice_field(tuple(categories()))
    raises = choice_field(SEVERITIES)
    page = page_field()


class DraftStartForm(forms.Form):
    """Starting a draft: from the latest revision (no `from`), or from the numbered revision."""

    from_ = id_field("a revision number")

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["from"] = self.fields.pop("from_")  # `from` is a Python keyword, and the form's name


class WithdrawForm(forms.Form):
    reason = text_field()


class PatternForm(forms.Form):
    """A far-field pattern's antenna, `absolute` tick and environment, as the upload and the change forms post
    them. The numbers are read as typed (questionnaire.read_number) and judged by the design parser, which
    names what it expects; the form only refuses what is not text of a sane length."""

    ENVIRONMENT_CHOICES = (("isotropic", "isotropic"), ("taga", "taga"))
    TAGA_FIELDS = ("mean_elevation_deg", "spread_deg", "xpr_db")

    antenna = forms.CharField(max_length=64, error_messages={
        "required": "antenna: expected the antenna this pattern belongs to",
        "max_length": "antenna: expected an antenna name of at most 64 characters"})
    absolute = forms.BooleanField(required=False)
    environment = forms.ChoiceField(choices=ENVIRONMENT_CHOICES, required=False, error_messages={
        "invalid_choice": "environment: expected isotropic (uniform 3-D) or taga (Taga's outdoor model)"})
    mean_elevation_deg = forms.CharField(max_length=40, required=False, strip=True)
    spread_deg = forms.CharField(max_length=40, required=False, strip=True)
    xpr_db = forms.CharField(max_length=40, required=False, strip=True)

    def environment_entry(self) -> dict:
        """The environment as the design file holds it: {"model": "isotropic"} or Taga's with its numbers."""
        if (self.cleaned_data.get("environment") or "isotropic") == "isotropic":
            return {"model": "isotropic"}
        return {"model": "taga", **{name: questionnaire.read_number(self.cleaned_data.get(name) or "")
                                    for name in self.TAGA_FIELDS}}

    def problems(self) -> str:
        return "; ".join(f"{error}" if str(error).startswith(f"{name}:") else f"{name}: {error}"
                         for name, errors in self.errors.items() for error in errors)


class PatternChangeForm(PatternForm):
    """The change form of a kept pattern also names its file."""

    file = forms.CharField(max_length=120)
