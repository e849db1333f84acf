"""Signing in with Django's ModelBackend, with the signed-in person read from the cache on each request.

Every page starts by loading request.user; on a page served from the cache that one query was the largest
cost left. The person is kept in the shared cache for a minute and forgotten the moment their row is saved
or deleted (a new password, a deactivation, a new name), so a changed password still ends other sessions
at once (Django compares the session's hash with the stored password's). A change that bypasses save() (a
bulk update) takes effect within the minute. With a cache of one process's own (EARSHOT_CACHE=memory) the
person is read from the database every time, as ModelBackend does.
"""

from django.conf import settings
from django.contrib.auth import get_user_model
from django.contrib.auth.backends import ModelBackend
from django.core.cache import cache
from django.db.models.signals import post_delete, post_save

USER_SECONDS = 60


def _key(user_id) -> str:
    return f"earshot:user:{user_id}"


class CachedUserBackend(ModelBackend):
    def get_user(self, user_id):
        if not settings.EARSHOT_SHARED_CACHE:  # one process's memory: others would not hear of a change
            return super().get_user(user_id)
        user = cache.get(_key(user_id))
        if user is None:
            user = super().get_user(user_id)  # None for an unknown or inactive person
            if user is not None:
                cache.set(_key(user_id), user, USER_SECONDS)
        return user if user is not None and self.user_can_authenticate(user) else None


def forget_user(sender, instance, **kwargs) -> None:
    cache.delete(_key(instance.pk))


post_save.connect(forget_user, sender=get_user_model(), dispatch_uid="earshot-forget-user-on-save")
post_delete.connect(forget_user, sender=get_user_model(), dispatch_uid="earshot-forget-user-on-delete")
