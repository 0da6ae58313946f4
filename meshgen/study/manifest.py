"""Study manifests (``family.json``, ``sweep.json``): checksums and reproducible JSON.

A manifest is written with sorted keys, two-space indentation and every float rounded to
``FLOAT_DIGITS`` significant digits, so two identical runs give byte-identical files apart
from the one timestamp field ``created`` (UTC, ISO 8601, the start of the run that wrote
the file). Rounding also hides last-bit differences between machines (e.g. a Dask worker
with another libm). Non-finite floats become ``null`` (JSON has no NaN).

Files are named by POSIX paths relative to the manifest's folder, each with the SHA-256
of its bytes (FIPS 180-4) in lowercase hex.

Fields common to ``family.json`` and ``sweep.json``: ``kind`` ("family" or "sweep"),
``created``, ``meshgen_version``, ``arguments`` (the command line of the arguments that
decide the meshes), ``case_toml`` (the resolved case, ``case_to_toml``), ``case_input``
(the values the user set, which rebuild the case exactly) and the member list (``levels``
or ``variants``). Every member has ``name`` (its folder), ``status`` ("built", "failed"
with an ``error``, or "pending" while a run is under way), ``files`` ({path: SHA-256}),
``fingerprint`` (SHA-256 of its build inputs; a re-run skips a member whose fingerprint
and files still match), ``cells``, ``nodes``, ``first_cell_height`` [m], ``growth_ratio``
at the wall, ``y_plus_range`` and ``cells_in_delta99``; family.py and sweep.py list the
rest.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from ..core import jsontext
from ..core.errors import InputError
from ..io.atomic import write_text

#: Significant digits kept for every float in a manifest.
FLOAT_DIGITS = 12
#: The only field allowed to differ between two identical runs.
CREATED = "created"
_CHUNK = 1 << 20  # bytes read at a time when hashing


def sha256_file(path: str | Path) -> str:
    """SHA-256 of a file's bytes, lowercase hex."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(_CHUNK), b""):
            h.update(chunk)
    return h.hexdigest()


def expand_files(paths: Iterable[Path]) -> list[Path]:
    """The files of ``paths``, with folders (e.g. a polyMesh) replaced by the files inside."""
    out: list[Path] = []
    for p in paths:
        p = Path(p)
        out += sorted(f for f in p.rglob("*") if f.is_file()) if p.is_dir() else [p]
    return out


def checksums(paths: Iterable[Path], root: Path) -> dict[str, str]:
    """{path relative to ``root`` (POSIX): SHA-256} of every file in ``paths``."""
    root = Path(root)
    return {f.relative_to(root).as_posix(): sha256_file(f) for f in expand_files(paths)}


def files_match(root: Path, files: Mapping[str, str]) -> bool:
    """True when every listed file exists under ``root`` with the listed SHA-256."""
    if not files:
        return False
    return all((Path(root) / rel).is_file() and sha256_file(Path(root) / rel) == sha
               for rel, sha in files.items())


def canonical(obj: Any) -> Any:
    """``obj`` as plain JSON types with floats rounded to ``FLOAT_DIGITS`` digits."""
    if isinstance(obj, bool) or obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        v = float(obj)
        return float(f"{v:.{FLOAT_DIGITS}g}") if math.isfinite(v) else None
    if isinstance(obj, Mapping):
        return {str(k): canonical(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple, np.ndarray)):
        return [canonical(v) for v in obj]
    raise TypeError(f"cannot put a {type(obj).__name__} into a manifest")


def dumps(obj: Any) -> str:
    """Reproducible JSON text: canonical values, sorted keys, a final newline."""
    return jsontext.dumps(canonical(obj), sort_keys=True) + "\n"


def fingerprint(obj: Any) -> str:
    """SHA-256 of the reproducible JSON of ``obj``: identifies a member's build inputs."""
    return hashlib.sha256(dumps(obj).encode("utf-8")).hexdigest()


def utc_now() -> str:
    """The ``created`` timestamp: UTC, ISO 8601 to the second, e.g. 2026-01-31T12:00:00Z."""
    return _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def write_manifest(path: Path, data: Mapping[str, Any]) -> Path:
    """Write a manifest atomically (temporary name, then rename)."""
    return write_text(Path(path), dumps(data))


def load_json(path: Path, missing: str) -> Any:
    """A manifest the user points to, as parsed JSON; ``missing`` says what was looked for."""
    try:
        return json.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"{path}: {missing}") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"{path}: not a readable JSON manifest ({exc})") from None


def read_manifest(path: Path) -> dict[str, Any] | None:
    """A manifest written earlier, or None when there is none."""
    path = Path(path)
    if not path.exists():
        return None
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(
            f"{path}: not a readable manifest ({exc}); remove it or use --force to rebuild everything"
        ) from None
    if not isinstance(data, dict):
        raise InputError(f"{path}: not a manifest (expected a JSON object); remove it or use --force")
    return data
