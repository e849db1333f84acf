"""Pages of a team's parts library: the list with search, an entry (read, edit, files, history), new entries,
duplicates, retirement, and the library's import and export.

Everyone in the team reads; authors and reviewers change (403 for other members); another team's library is a
404. Every parameter is read through a form of library/forms.py, every write through library/services.py.
"""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import Q
from django.http import FileResponse, Http404, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.views.decorators.http import require_GET, require_http_methods, require_POST

from projectapp.audit.services import audit_trail
from projectapp.library import services
from projectapp.library.access import can_edit, get_entry_for_user, get_team_for_user, require_editor
from projectapp.library.forms import (
    PART_FIELDS,
    DuplicateForm,
    EntryCreateForm,
    FileAddForm,
    FileRemoveForm,
    LibraryImportForm,
    PartValuesForm,
    RetireForm,
    SearchForm,
    VersionForm,
)
from projectapp.library.models import Entry, EntryFile
from projectapp.library.parts import ANTENNA, MODULE
from projectapp.teams.access import teams_of

SHOWN_PROBLEMS = 200  # an import can carry thousands; the first ones say what is wrong


@login_required
@require_GET
def library_index(request):
    teams = list(teams_of(request.user))
    if len(teams) == 1:
        return redirect("library_list", teams[0].pk)
    return render(request, "library/index.html", {"teams": teams})


def _no_role(request, team, status=403):
    return render(request, "library/no_role.html", {"team": team}, status=status)


@login_required
@require_GET
def library_list(request, team_id: int):
    team = get_team_for_user(request.user, team_id)
    search = SearchForm(request.GET or None)
    entries = Entry.objects.filter(team=team).prefetch_related("files").select_related("updated_by")
    query, show_retired = "", False
    if search.is_valid():
        query, show_retired = search.cleaned_data["q"].strip(), search.cleaned_data["retired"]
    if query:
        entries = entries.filter(Q(name__icontains=query) | Q(description__icontains=query))
    if not show_retired:
        entries = entries.filter(retired_at__isnull=True)
    listed = list(entries.order_by("name"))
    return render(request, "library/list.html", {
        "team": team, "search": search, "query": query, "show_retired": show_retired,
        "antennas": [entry for entry in listed if entry.kind == ANTENNA],
        "modules": [entry for entry in listed if entry.kind == MODULE],
        "can_edit": can_edit(request.user, team)}, status=200 if search.is_valid() or not request.GET else 400)


@login_required
@require_http_methods(["GET", "POST"])
def entry_create(request, team_id: int, kind: str):
    team = get_team_for_user(request.user, team_id)
    if not can_edit(request.user, team):
        return _no_role(request, team)
    form = EntryCreateForm(request.POST or None, kind=kind)
    if request.method == "POST" and form.is_valid():
        try:
            entry = services.entry_create(team=team, kind=kind, name=form.cleaned_data["name"],
                                          description=form.cleaned_data["description"], values=form.values(),
                                          user=request.user)
        except services.PartInvalid as error:
            form.add_problems(error.problems)
            if any(problem.path == "name" for problem in error.problems):
                form.add_error("name", next(p.message for p in error.problems if p.path == "name"))
        else:
            messages.success(request, f"{entry.name} added to {team.name}'s library (version 1).")
            return redirect(entry)
    return render(request, "library/entry_form.html", {"team": team, "kind": kind, "form": form},
                  status=400 if form.errors else 200)


def _history(entry: Entry):
    return audit_trail(team=entry.team, subject=entry.audit_subject)


def _entry_page(request, entry: Entry, *, form=None, conflict=None, status=200, duplicate=None, upload=None):
    editable = can_edit(request.user, entry.team)
    if form is None and editable:
        form = PartValuesForm(kind=entry.kind, values=entry.values, initial={"description": entry.description})
    shown = [(spec, entry.values.get(spec.key)) for spec in PART_FIELDS[entry.kind] if spec.key in entry.values]
    known = {spec.key for spec in PART_FIELDS[entry.kind]}
    return render(request, "library/entry_detail.html", {
        "entry": entry, "team": entry.team, "form": form, "can_edit": editable, "conflict": conflict,
        "shown": shown, "extra": {key: value for key, value in entry.values.items() if key not in known},
        "files": list(entry.files.all()), "events": _history(entry),
        "duplicate": duplicate or DuplicateForm(initial={"name": f"{entry.name} copy"}),
        "upload": upload or FileAddForm(), "read_version": entry.version}, status=status)


@login_required
@require_http_methods(["GET", "POST"])
def entry_detail(request, entry_id: int):
    """The entry; for authors and reviewers also its edit form (a POST saves it, naming the version read)."""
    entry = get_entry_for_user(request.user, entry_id)
    if request.method == "GET":
        return _entry_page(request, entry)
    if not can_edit(request.user, entry.team):
        return _no_role(request, entry.team)
    version = VersionForm(request.POST)
    form = PartValuesForm(request.POST, kind=entry.kind, values=entry.values)
    if not version.is_valid():
        form.is_valid()
        form.add_error(None, "version: expected the entry version this page showed; reload the page and make "
                             "the change again")
        return _entry_page(request, entry, form=form, status=400)
    if not form.is_valid():
        return _entry_page(request, entry, form=form, status=400)
    try:
        updated = services.entry_update(entry=entry, values=form.values(),
                                        description=form.cleaned_data["description"],
                                        read_version=version.cleaned_data["version"], user=request.user)
    except services.EntryConflict as conflict:
        return _entry_page(request, conflict.entry, form=form, conflict=conflict, status=409)
    except services.PartInvalid as error:
        form.add_problems(error.problems)
        return _entry_page(request, entry, form=form, status=400)
    if updated.version != version.cleaned_data["version"]:
        messages.success(request, f"{updated.name} saved as version {updated.version}.")
    else:
        messages.info(request, "Nothing changed: the entry stays as it was.")
    return redirect(updated)


@login_required
@require_POST
def entry_duplicate(request, entry_id: int):
    entry = get_entry_for_user(request.user, entry_id)
    require_editor(request.user, entry.team)
    form = DuplicateForm(request.POST)
    if form.is_valid():
        try:
            copy = services.entry_duplicate(entry=entry, name=form.cleaned_data["name"], user=request.user)
        except services.PartInvalid as error:
            form.add_error("name", "; ".join(problem.message for problem in error.problems))
        else:
            messages.success(request, f"{copy.name} added as a copy of {entry.name} version {entry.version}.")
            return redirect(copy)
    return _entry_page(request, entry, duplicate=form, status=400)


@login_required
@require_POST
def entry_retire(request, entry_id: int):
    entry = get_entry_for_user(request.user, entry_id)
    require_editor(request.user, entry.team)
    form = RetireForm(request.POST)
    if not form.is_valid():
        messages.error(request, "retired: expected retire or restore; nothing changed")
        return redirect(entry)
    entry = services.entry_retire(entry=entry, retired=form.cleaned_data["retired"], user=request.user)
    messages.success(request, f"{entry.name} " + ("retired: it is no longer offered in the questionnaire; designs "
                                                  "that used it keep their values." if entry.is_retired
                                                  else "restored: the questionnaire offers it again."))
    return redirect(entry)


@login_required
@require_POST
def entry_file_add(request, entry_id: int):
    entry = get_entry_for_user(request.user, entry_id)
    require_editor(request.user, entry.team)
    form = FileAddForm(request.POST, request.FILES)
    if not form.is_valid():
        return _entry_page(request, entry, upload=form, status=400)
    upload = form.cleaned_data["file"]
    if upload.size > services.MAX_FILE_BYTES:
        form.add_error("file", f"{upload.name}: expected at most {services.MAX_FILE_BYTES // 1_000_000} MB, got "
                               f"{upload.size / 1_000_000:.1f} MB; nothing was stored")
        return _entry_page(request, entry, upload=form, status=400)
    try:
        stored = services.entry_file_add(entry=entry, name=upload.name, content=upload.read(),
                                         read_version=form.cleaned_data["version"], user=request.user,
                                         absolute=form.cleaned_data["absolute"])
    except services.EntryConflict as conflict:
        return _entry_page(request, conflict.entry, conflict=conflict, status=409)
    except services.PartInvalid as error:
        for problem in error.problems:
            form.add_error(problem.path if problem.path in form.fields else "file",
                           f"{problem.message} — nothing was stored")
        return _entry_page(request, entry, upload=form, status=400)
    messages.success(request, f"{stored.name} kept with {entry.name} as {_file_words(stored)}.")
    return redirect(entry)


def _file_words(stored: EntryFile) -> str:
    if stored.kind == EntryFile.Kind.FAR_FIELD:
        return "an absolute far-field pattern" if stored.absolute else "a relative far-field pattern"
    return "a Touchstone file"


@login_required
@require_POST
def entry_file_remove(request, entry_id: int):
    entry = get_entry_for_user(request.user, entry_id)
    require_editor(request.user, entry.team)
    form = FileRemoveForm(request.POST)
    if not form.is_valid():
        messages.error(request, "name, version: expected the file to remove and the entry version; nothing changed")
        return redirect(entry)
    try:
        services.entry_file_remove(entry=entry, name=form.cleaned_data["name"],
                                   read_version=form.cleaned_data["version"], user=request.user)
    except services.EntryConflict as conflict:
        return _entry_page(request, conflict.entry, conflict=conflict, status=409)
    except services.PartInvalid as error:
        messages.error(request, str(error))
        return redirect(entry)
    messages.success(request, f"{form.cleaned_data['name']} removed from {entry.name}.")
    return redirect(entry)


@login_required
@require_GET
def entry_file_download(request, entry_id: int, file_id: int):
    entry = get_entry_for_user(request.user, entry_id)
    stored = get_object_or_404(entry.files, pk=file_id)
    try:
        handle = stored.file.open("rb")
    except OSError as error:
        raise Http404("The file is missing from storage.") from error
    return FileResponse(handle, as_attachment=True, filename=stored.name, content_type="text/plain")


@login_required
@require_GET
def library_export(request, team_id: int):
    team = get_team_for_user(request.user, team_id)
    response = HttpResponse(services.library_export_text(team=team), content_type="application/json; charset=utf-8")
    slug = "".join(ch if ch.isalnum() else "-" for ch in team.name.lower()).strip("-")
    response["Content-Disposition"] = f'attachment; filename="{slug}-library.json"'
    return response


@login_required
@require_http_methods(["GET", "POST"])
def library_import(request, team_id: int):
    team = get_team_for_user(request.user, team_id)
    if not can_edit(request.user, team):
        return _no_role(request, team)
    form = LibraryImportForm(request.POST or None, request.FILES or None)
    problems: list[str] = []
    if request.method == "POST" and form.is_valid():
        upload = form.cleaned_data["library_file"]
        try:
            summary = services.library_import(team=team, text=upload.read(), source=upload.name, user=request.user)
        except services.PartInvalid as error:
            problems = [str(problem) for problem in error.problems[:SHOWN_PROBLEMS]]
            if len(error.problems) > SHOWN_PROBLEMS:
                problems.append(f"... and {len(error.problems) - SHOWN_PROBLEMS} more problems like these")
        except PermissionDenied:
            raise
        else:
            messages.success(request, f"{upload.name} imported: {len(summary.created)} added, "
                                      f"{len(summary.changed)} changed, {len(summary.unchanged)} unchanged.")
            return redirect("library_list", team.pk)
    return render(request, "library/import.html", {"team": team, "form": form, "problems": problems},
                  status=400 if problems or form.errors else 200)
