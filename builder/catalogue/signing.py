"""The user's own key, which signs what the verification cache keeps (builder.catalogue.cache).

A cache folder from elsewhere (one committed to a repository by a contributor, say) is never trusted:
its rows fail the signature of this user's key and are checked again.
"""

from __future__ import annotations

import os
import secrets
from pathlib import Path

__all__ = ["key_file", "signing_key"]


def key_file() -> Path:
    """Where the user's signing key is kept."""
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "periplus" / "cache-key"


def signing_key() -> bytes | None:
    """The user's signing key, made on first use; None when it can be neither read nor made."""
    path = key_file()
    for _ in range(2):
        try:
            key = path.read_bytes()
            if len(key) == 32:
                return key
            path.unlink()  # not a key this code wrote: replaced
        except FileNotFoundError:
            pass
        except OSError:
            return None
        try:
            path.parent.mkdir(parents=True, exist_ok=True, mode=0o700)
            fresh = path.with_name(f".{path.name}.{secrets.token_hex(8)}")
            fd = os.open(fresh, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
            try:
                os.write(fd, secrets.token_bytes(32))
            finally:
                os.close(fd)
            try:
                os.link(fresh, path)  # the first of two runs making a key at once wins; the other reads it
            except FileExistsError:
                pass
            finally:
                fresh.unlink()
        except OSError:
            return None
    return None
