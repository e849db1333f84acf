from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

from projectapp.health import healthz
from projectapp.teams.logout import LogOutView
from projectapp.teams.password_checks import CheckedPasswordChangeView

urlpatterns = [
    path("accounts/login/", auth_views.LoginView.as_view(), name="login"),
    path("accounts/logout/", LogOutView.as_view(), name="logout"),
    path("accounts/password/", CheckedPasswordChangeView.as_view(), name="password_change"),
    path("accounts/password/done/", auth_views.PasswordChangeDoneView.as_view(), name="password_change_done"),
    path("admin/", admin.site.urls),
    path("healthz/", healthz, name="healthz"),
    # Reviews first: submitting a draft (products/<id>/draft/submit/) is the review's to start, and the
    # questionnaire's products/<id>/draft/<section>/ would otherwise take "submit" for a section.
    path("", include("projectapp.reviews.urls")),
    path("", include("projectapp.designs.urls")),
    path("", include("projectapp.library.urls")),
    path("", include("projectapp.signoff.urls")),
    path("", include("projectapp.notices.urls")),
]
