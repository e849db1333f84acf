"""The library's forms: every query and form parameter is read through one of these.

A part's values are edited field by field (`PartValuesForm`): each field reads what was typed as a design
value (projectapp.typed_values), the fragment is then checked by the design parser, and its problems are put
beside the fields their paths name. A field shows only while the parser knows its key, so the form follows
the contract.
"""

from dataclasses import dataclass
from typing import Any

from django import forms

from projectapp import typed_values
from projectapp.library.parts import ANTENNA, MODULE, part_keys
from projectapp.library.services import DESCRIPTION_MAX, NAME_MAX
from rules.catalog import categories, power_classes
from rules.design import MOUNTINGS, Problem

MAX_LIBRARY_FILE_BYTES = 25_000_000
VERSION_MAX = 2**31 - 1


@dataclass(frozen=True)
class PartField:
    key: str
    label: str
    reads: str  # number, numbers, ranges, band_numbers, number_or_band_numbers, bands, choice, bool
    help: str
    choices: tuple[tuple[str, str], ...] = ()


ANTENNA_FIELDS = (
    PartField("mounting", "Mounting", "choice", "'internal' inside the enclosure (chip, flex, PCB trace); "
              "'external' outside on a connector or cable.", tuple((m, m) for m in MOUNTINGS)),
    PartField("ranges_mhz", "Rated frequency ranges (MHz)", "ranges",
              "As on the datasheet, separated by commas: 698-960, 1710-2690."),
    PartField("peak_gain_dbi", "Peak gain (dBi)", "number_or_band_numbers",
              "One figure for every band (2.5), or per band: B12: 1.8, B2: 3.1."),
    PartField("efficiency_pct", "Total efficiency per band (%)", "band_numbers", "Per band: B12: 38, B2: 55."),
    PartField("efficiency_source", "Efficiency figures are", "choice",
              "'datasheet': the maker's figures on its reference board; 'measured': measured in a product.",
              (("datasheet", "datasheet"), ("measured", "measured"))),
    PartField("polarization", "Polarization axis (x, y, z)", "numbers",
              "The main electric field's direction as mounted usually: 1, 0, 0 along the length."),
    PartField("size_mm", "Element size (mm)", "numbers", "Length, width, height of the element: 40, 8, 3."),
    PartField("cable_loss_db", "Cable loss (dB)", "number", "Loss of the cable that comes with the part."),
)

MODULE_FIELDS = (
    PartField("category", "UE category", "choice", "On the first page of the module's datasheet.",
              tuple((category.id, category.label) for category in categories().values())),
    PartField("bands", "Supported bands", "bands", "The module's bands, separated by commas: B1, B3, B20."),
    PartField("rx_ports", "Receive antenna ports", "number", "Connectors or pads for receiving, main included."),
    PartField("gain_limits_dbi", "Approved antenna gain limits (dBi)", "band_numbers",
              "From the module's regulatory approval, per band: B2: 6, B12: 4.5."),
    PartField("power_class", "UE power class", "choice", "From the datasheet; class 3 (23 dBm) if not given.",
              tuple((str(number), f"class {number}") for number in power_classes())),
    PartField("conducted_sensitivity_dbm", "Conducted sensitivity (dBm)", "band_numbers",
              "From the datasheet, per band: B3: -101, B20: -102."),
    PartField("full_duplex", "LTE-M full duplex (FD-FDD)", "bool", "Tick if the module runs LTE-M full duplex."),
    PartField("ntn", "Satellite (NTN) access", "bool", "Tick if the module supports non-terrestrial networks."),
)

PART_FIELDS = {ANTENNA: ANTENNA_FIELDS, MODULE: MODULE_FIELDS}


def _read(spec: PartField, raw: Any) -> Any:
    if spec.reads == "bool":
        return True if raw else None
    text = str(raw or "")
    if spec.reads == "choice":
        return (int(text) if spec.key == "power_class" and text.isdecimal() else text) or None
    if spec.reads == "number":
        return typed_values.read_number(text)
    if spec.reads == "numbers":
        return typed_values.read_numbers(text)
    if spec.reads == "ranges":
        return typed_values.read_ranges(text)
    if spec.reads == "band_numbers":
        return typed_values.read_band_numbers(text)
    if spec.reads == "number_or_band_numbers":
        return typed_values.read_band_numbers(text) if ":" in text else typed_values.read_number(text)
    if spec.reads == "bands":
        return typed_values.read_band_list(text)
    raise ValueError(f"unknown reader {spec.reads}")


def _show(spec: PartField, value: Any) -> Any:
    if spec.reads == "bool":
        return bool(value)
    if value is None:
        return ""
    if spec.reads == "ranges":
        return typed_values.show_ranges(value)
    if spec.reads in ("numbers", "bands"):
        return typed_values.show_numbers(value)
    if isinstance(value, dict):
        return typed_values.show_band_numbers(value)
    return typed_values.show_number(value)


class PartValuesForm(forms.Form):
    """A part's fields; `values()` gives the fragment, `add_problems()` puts the parser's problems beside them."""

    description = forms.CharField(max_length=DESCRIPTION_MAX, required=False,
                                  help_text="One line: what the part is (maker's type, where the team uses it).")

    def __init__(self, *args, kind: str, values: dict[str, Any] | None = None, **kwargs):
        super().__init__(*args, **kwargs)
        self.kind = kind
        self.stored = dict(values or {})
        self.specs = [spec for spec in PART_FIELDS[kind] if part_keys(kind, [spec.key])]
        for spec in self.specs:
            if spec.reads == "bool":
                form_field: forms.Field = forms.BooleanField(required=False)
            elif spec.reads == "choice":
                form_field = forms.ChoiceField(choices=[("", "not given"), *spec.choices], required=False)
            else:
                form_field = forms.CharField(max_length=2000, required=False, strip=False)
            form_field.label, form_field.help_text = spec.label, spec.help
            form_field.initial = _show(spec, self.stored.get(spec.key))
            self.fields[spec.key] = form_field

    @property
    def extra_keys(self) -> list[str]:
        """Stored keys no field edits (kept as they are): fields added by import that the form doesn't show."""
        shown = {spec.key for spec in self.specs}
        return [key for key in self.stored if key not in shown]

    def values(self) -> dict[str, Any]:
        values = {key: self.stored[key] for key in self.extra_keys}
        for spec in self.specs:
            value = _read(spec, self.cleaned_data.get(spec.key))
            if value is not None:
                values[spec.key] = value
        return values

    def add_problems(self, problems: list[Problem]) -> None:
        for problem in problems:
            path = problem.path.removeprefix("values.").removeprefix("values")
            key = path.split(".")[0].split("[")[0]
            if key in self.fields and key != "description":
                self.add_error(key, f"{path}: {problem.message}" if path != key else problem.message)
            elif problem.path == "description":
                self.add_error("description", problem.message)
            else:
                self.add_error(None, str(problem))


class EntryCreateForm(PartValuesForm):
    name = forms.CharField(max_length=NAME_MAX, help_text="Unique in the team, fixed once created; designs note "
                                                          "it beside the values they copy.")
    field_order = ["name"]


class VersionForm(forms.Form):
    version = forms.IntegerField(min_value=1, max_value=VERSION_MAX,
                                 error_messages={"required": "version: expected the entry version this page showed"})


class SearchForm(forms.Form):
    q = forms.CharField(max_length=120, required=False, label="Search",
                        help_text="Part of a name or description.")
    retired = forms.BooleanField(required=False, label="Show retired parts")


class DuplicateForm(forms.Form):
    name = forms.CharField(max_length=NAME_MAX, label="Name of the copy")


class RetireForm(forms.Form):
    retired = forms.TypedChoiceField(choices=[("1", "retire"), ("0", "restore")], coerce=lambda value: value == "1")


class FileAddForm(VersionForm):
    file = forms.FileField(label="Touchstone or far-field file",
                           help_text="A Touchstone file (.s1p to .s8p, .ts) or a far-field pattern (.csv with the "
                                     "columns frequency_mhz, theta_deg, phi_deg, e_theta_re, e_theta_im, e_phi_re, "
                                     "e_phi_im); the name's ending says which. At most 20 MB.")
    absolute = forms.BooleanField(required=False, label="Absolute pattern",
                                  help_text="Far-field patterns only: tick if |Eθ|² + |Eφ|² is the realized gain "
                                            "(then the checklist also shows efficiency and mean effective gain).")


class FileRemoveForm(VersionForm):
    name = forms.CharField(max_length=NAME_MAX)


class LibraryImportForm(forms.Form):
    library_file = forms.FileField(label="Library file",
                                   help_text=f"An earshot-library/1 JSON file, at most "
                                             f"{MAX_LIBRARY_FILE_BYTES // 1_000_000} MB.")

    def clean_library_file(self):
        upload = self.cleaned_data["library_file"]
        if upload.size > MAX_LIBRARY_FILE_BYTES:
            raise forms.ValidationError(f"library_file: expected at most {MAX_LIBRARY_FILE_BYTES // 1_000_000} MB, "
                                        f"got {upload.size / 1_000_000:.1f} MB")
        return upload
