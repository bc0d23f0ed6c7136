"""Where downloads live and where the dataset manifests are read from.

Cache: ``$LOPSIDED_CACHE`` if set, else ``datasets/cache`` under the current folder (git-ignored).
Manifests: the ``datasets/*.toml`` files of the lopsided source checkout (installed with ``pip install -e .``).
"""
import os
import tomllib
from pathlib import Path

from ..errors import DatasetError

MANIFESTS = Path(__file__).resolve().parents[2] / "datasets"


def cache_dir(*parts):
    path = Path(os.environ.get("LOPSIDED_CACHE", "datasets/cache")).joinpath(*parts)
    path.mkdir(parents=True, exist_ok=True)
    return path


def manifest(name):
    """The parsed ``datasets/<name>.toml``."""
    path = MANIFESTS / f"{name}.toml"
    if not path.is_file():
        raise DatasetError(f"{path}: dataset manifest not found; install lopsided from its source checkout "
                           "(pip install -e .)")
    return tomllib.loads(path.read_text(encoding="utf-8"))
