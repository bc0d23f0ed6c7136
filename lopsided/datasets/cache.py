"""Where downloads live, how files are checksummed, and where the dataset manifests are read from.

Cache: ``$LOPSIDED_CACHE`` if set, else the user's cache folder for lopsided (platformdirs: e.g.
``~/.cache/lopsided`` on Linux). Manifests: ``lopsided/datasets/manifests/*.toml``, shipped inside the
package (read with importlib.resources, so a wheel install finds them as a source checkout does).
"""
import contextlib
import hashlib
import os
import tomllib
from contextvars import ContextVar
from importlib import resources
from pathlib import Path

import platformdirs

from ..errors import DatasetError

DOWNLOADS = ContextVar("lopsided_downloads_allowed", default=True)


@contextlib.contextmanager
def no_downloads():
    """Within this block adapters read only what is cached (commands that only describe use it)."""
    token = DOWNLOADS.set(False)
    try:
        yield
    finally:
        DOWNLOADS.reset(token)


def cache_root():
    """The cache folder, not created: ``$LOPSIDED_CACHE`` or the user cache folder."""
    return Path(os.environ.get("LOPSIDED_CACHE") or platformdirs.user_cache_dir("lopsided"))


def cache_dir(*parts):
    """A folder under the cache, created when missing."""
    path = cache_root().joinpath(*parts)
    path.mkdir(parents=True, exist_ok=True)
    return path


def file_sha256(path):
    """sha256 hex digest of a file's bytes, read in blocks."""
    with open(path, "rb") as handle:
        return hashlib.file_digest(handle, "sha256").hexdigest()


def manifest(name):
    """The parsed ``manifests/<name>.toml`` shipped with the package."""
    source = resources.files("lopsided.datasets").joinpath("manifests", f"{name}.toml")
    if not source.is_file():
        raise DatasetError(f"lopsided/datasets/manifests/{name}.toml: dataset manifest not found in the installed "
                           "package; reinstall lopsided")
    return tomllib.loads(source.read_text(encoding="utf-8"))
