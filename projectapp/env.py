"""Typed readers for settings that come from environment variables.

Each reader fails loudly on a value it cannot understand, so a typo in a
deployment shows up at start-up rather than as odd behaviour later. Secrets may
also come from a file named by ``<NAME>_FILE`` (the usual way containers pass them).
"""

import os

from django.core.exceptions import ImproperlyConfigured

TRUE_WORDS = {"1", "true", "yes", "on"}
FALSE_WORDS = {"0", "false", "no", "off", ""}


def env_str(name: str, default: str = "") -> str:
    file_name = os.environ.get(f"{name}_FILE")
    if file_name:
        try:
            with open(file_name, encoding="utf-8") as handle:
                return handle.read().strip()
        except OSError as error:
            raise ImproperlyConfigured(f"{name}_FILE: cannot read {file_name}: {error}") from error
    return os.environ.get(name, default)


def env_bool(name: str, default: bool) -> bool:
    raw = os.environ.get(name)
    if raw is None:
        return default
    word = raw.strip().lower()
    if word in TRUE_WORDS:
        return True
    if word in FALSE_WORDS:
        return False
    raise ImproperlyConfigured(f"{name}: expected one of {sorted(TRUE_WORDS | FALSE_WORDS)}, got {raw!r}")


def env_int(name: str, default: int) -> int:
    raw = os.environ.get(name)
    if raw is None or raw.strip() == "":
        return default
    try:
        return int(raw)
    except ValueError as error:
        raise ImproperlyConfigured(f"{name}: expected a whole number, got {raw!r}") from error


def env_list(name: str, default: list[str]) -> list[str]:
    raw = os.environ.get(name)
    if raw is None:
        return default
    return [item.strip() for item in raw.split(",") if item.strip()]
