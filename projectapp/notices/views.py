from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.http import HttpResponseBadRequest
from django.shortcuts import redirect, render
from django.views.decorators.http import require_GET, require_POST

from projectapp import paging
from projectapp.notices import services
from projectapp.notices.forms import InboxFilterForm, MailForm, ReadForm
from projectapp.notices.models import Notice


@login_required
@require_GET
def inbox(request):
    """The person's notices, newest first, paged in the database; `?show=unread` narrows them."""
    form = InboxFilterForm(request.GET).read()
    notices = Notice.objects.filter(recipient=request.user)
    if form.cleaned.get("show") == "unread":
        notices = notices.filter(read_at__isnull=True)
    paged = paging.paged(notices.order_by("-created_at", "-id"), form)
    return render(request, "notices/inbox.html", {
        "paged": paged, "notices": paged.items, "filters": form.shown, "filter_problems": form.problems,
        "unread": services.unread_count(request.user), "mail_on": services.mail_is_on(request.user),
    }, status=form.status)


@login_required
@require_POST
def inbox_read(request):
    form = ReadForm(request.POST)
    if not form.is_valid():
        return HttpResponseBadRequest("notice: expected a notice id")
    notice_id = form.cleaned_data["notice"]
    services.notices_read(user=request.user, ids=None if notice_id is None else [notice_id])
    if notice_id is not None:
        target = Notice.objects.filter(recipient=request.user, pk=notice_id).values_list("url", flat=True).first()
        if target and target.startswith("/") and not target.startswith("//"):
            return redirect(target)
    return redirect("inbox")


@login_required
@require_POST
def inbox_mail(request):
    form = MailForm(request.POST)
    form.is_valid()
    on = bool(form.cleaned_data.get("email_notices"))
    services.mail_switch_set(user=request.user, on=on)
    messages.success(request, "E-mail notices are on." if on else "E-mail notices are off; the inbox keeps them.")
    return redirect("inbox")
