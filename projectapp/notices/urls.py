from django.urls import path

from projectapp.notices import views

urlpatterns = [
    path("inbox/", views.inbox, name="inbox"),
    path("inbox/read/", views.inbox_read, name="inbox_read"),
    path("inbox/mail/", views.inbox_mail, name="inbox_mail"),
]
