from django import forms

from projectapp.filters import FilterForm, choice_field, id_field
from projectapp.paging import page_field
from projectapp.reviews.models import Disposition, StepStatus
from rules.findings import SEVERITIES, TOPICS


class DecisionForm(forms.Form):
    disposition = forms.ChoiceField(choices=Disposition.choices)
    justification = forms.CharField(widget=forms.Textarea(attrs={"rows": 2}), required=False, max_length=4000,
                                    help_text="Required for a waiver or 'not applicable': why the team accepts it.")
    version = forms.IntegerField(widget=forms.HiddenInput)


class AssignForm(forms.Form):
    assignee = forms.ModelChoiceField(queryset=None, required=False, empty_label="nobody")
    version = forms.IntegerField(widget=forms.HiddenInput)

    def __init__(self, *args, people, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["assignee"].queryset = people


class StepForm(forms.Form):
    owner = forms.ModelChoiceField(queryset=None, required=False, empty_label="nobody")
    planned_on = forms.DateField(required=False, label="Planned date",
                                 widget=forms.DateInput(attrs={"type": "date"}),
                                 error_messages={"invalid": "expected a date as YYYY-MM-DD"})
    status = forms.ChoiceField(choices=StepStatus.choices)
    reference = forms.CharField(required=False, max_length=200, label="Lab's or operator's reference")
    version = forms.IntegerField(widget=forms.HiddenInput)

    def __init__(self, *args, people, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["owner"].queryset = people


class TopicReviewersForm(forms.Form):
    """A default reviewer per topic (a field per topic, named by it); nobody leaves the topic's items unassigned."""

    def __init__(self, *args, people, **kwargs):
        super().__init__(*args, **kwargs)
        for topic in TOPICS:
            self.fields[topic] = forms.ModelChoiceField(queryset=people, required=False, empty_label="nobody",
                                                        label=topic)  # the topic as the checklist and dashboard name it


class ConfirmForm(forms.Form):
    version = forms.IntegerField(widget=forms.HiddenInput)


class CommentForm(forms.Form):
    text = forms.CharField(widget=forms.Textarea(attrs={"rows": 2}), max_length=4000, label="Comment")


class DashboardFilterForm(FilterForm):
    product = id_field("a product's number")
    severity = choice_field(SEVERITIES)
    topic = choice_field(TOPICS)
    assignee = forms.RegexField(regex=r"^(me|nobody|[0-9]{1,18})$", required=False, error_messages={
        "invalid": "expected me, nobody or a person's number from the list"})
    state = choice_field(("open", "all"))
    page = page_field()


class CompareForm(FilterForm):
    from_ = id_field("a revision number")
    to = id_field("a revision number")

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["from"] = self.fields.pop("from_")  # `from` is a Python keyword, and the query's name
