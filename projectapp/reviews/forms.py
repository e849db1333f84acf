from django import forms

from projectapp.reviews.models import Disposition


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


class ConfirmForm(forms.Form):
    version = forms.IntegerField(widget=forms.HiddenInput)


class CommentForm(forms.Form):
    text = forms.CharField(widget=forms.Textarea(attrs={"rows": 2}), max_length=4000, label="Comment")
