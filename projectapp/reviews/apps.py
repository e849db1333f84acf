from django.apps import AppConfig


class ReviewsConfig(AppConfig):
    name = "projectapp.reviews"
    label = "reviews"
    verbose_name = "Engineering review"
