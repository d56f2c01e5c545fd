"""Time zones from the pinned ``tzdata`` package, never from the machine's own database.

The system database can be older or newer than the one we test against; reading zones from the
``tzdata`` wheel makes every machine agree; :func:`tz_database_version` names the release.
"""

from __future__ import annotations

import importlib.resources
import zoneinfo
from functools import cache

import tzdata

from reconcile.errors import ConfigError


@cache
def zone(name: str) -> zoneinfo.ZoneInfo:
    """The IANA zone ``name`` (e.g. ``America/New_York``) from the pinned database."""
    if name.upper() == "UTC":
        name = "UTC"
    parts = name.split("/")
    if not name or any(part in ("", ".", "..") for part in parts):
        raise ConfigError(
            f"time zone: expected an IANA name such as 'Europe/London', found {name!r}"
        )
    resource = importlib.resources.files("tzdata.zoneinfo").joinpath(*parts)
    try:
        with resource.open("rb") as handle:
            return zoneinfo.ZoneInfo.from_file(handle, key=name)
    except (OSError, ValueError) as exc:
        raise ConfigError(
            f"time zone: expected an IANA name such as 'Europe/London', found {name!r}"
        ) from exc


def tz_database_version() -> str:
    """The IANA release of the time-zone database in use, e.g. ``2026f``."""
    return str(tzdata.IANA_VERSION)
