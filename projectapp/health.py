"""`/healthz/`: answers "ok" while the process can serve requests. Open to anyone, so it says nothing else:
no version, no database, no data. A load balancer polls it; the load benchmark uses it as its floor."""

from django.http import HttpResponse
from django.views.decorators.cache import never_cache
from django.views.decorators.http import require_GET


@never_cache
@require_GET
def healthz(request):
    return HttpResponse("ok", content_type="text/plain; charset=utf-8")
