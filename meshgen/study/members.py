"""A study's members: what defines one (a picklable spec and its Plan) and how a worker builds it.

A member is identified by picklable data (``member_spec``): the case as the dictionary of
the values the user set, ``--set`` style overrides, a coarsening factor and level, and the
format names; its fingerprint (the SHA-256 of that data) decides whether a re-run may skip
it. Errors travel back from a worker as text (``attempt``).
"""

from __future__ import annotations

import copy
import signal
import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .. import __version__
from ..core.errors import InputError
from .manifest import checksums, fingerprint


def load_checked(case_path, overrides: list[str], formats: list[str] | None, problems: list[str]):
    """The case and the output formats; raises one InputError with ``problems`` and every
    problem of the case and the formats (so one run lists them all)."""
    from ..case import load_case
    from ..pipeline.build import resolve_formats

    problems = list(problems)
    case = fmts = None
    try:
        case = load_case(case_path, overrides)
    except InputError as exc:
        problems += exc.problems
    try:
        fmts = resolve_formats(formats, case.output.formats if case else ["msh"])
    except InputError as exc:
        problems += exc.problems
    if problems:
        raise InputError(problems)
    return case, fmts


def member_spec(case: dict, overrides: list[str], factor: float, level: int, formats: list[str],
                counts: dict[str, int] | None = None) -> dict:
    """Picklable build inputs of one member (see the module docstring); ``counts``: the cell
    counts of a family level (``meshgen.planning.refine.block_counts`` keys)."""
    spec = {"case": case, "overrides": list(overrides), "factor": float(factor), "level": int(level),
            "formats": list(formats), "meshgen_version": __version__}
    if counts is not None:
        spec["counts"] = {k: int(n) for k, n in counts.items()}
    return spec


def plan_from_spec(spec: dict):
    """The member's Plan: the case with its overrides, resampled to the spec's ``counts``
    (a family level), else coarsened by ``factor`` when ``level`` > 0."""
    from ..case import apply_overrides, parse_case
    from ..planning.plan import make_plan
    from ..planning.refine import coarsen, resample_plan

    case = parse_case(apply_overrides(copy.deepcopy(spec["case"]), spec["overrides"]))
    plan = make_plan(case)
    if "counts" in spec:
        return resample_plan(plan, spec["counts"], level=spec["level"])
    return plan if spec["level"] == 0 else coarsen(plan, spec["factor"], level=spec["level"])


def build_member(plan, formats: list[str], folder: str) -> dict:
    """Build one member's Plan into ``folder``; return {"files": {relative path: SHA-256}}."""
    from ..pipeline.build import build_plan, resolve_formats

    out = Path(folder)
    fmts = resolve_formats(formats, plan.case.output.formats)
    written = build_plan(plan, out, fmts, force=True, pictures=False)
    return {"files": checksums(written, out)}


def _describe(exc: BaseException) -> str:
    text = "; ".join(exc.problems) if isinstance(exc, InputError) else str(exc)
    return f"{type(exc).__name__}: {text}"


def attempt(plan, formats: list[str], folder: str) -> tuple[str, Any]:
    """("ok", build_member(...)) or ("error", "Type: message"): errors travel as text."""
    try:
        return "ok", build_member(plan, formats, folder)
    except Exception as exc:  # noqa: BLE001  any failure of one member is reported; the others go on
        return "error", _describe(exc)


_BUILD_LOCK = threading.Lock()


def attempt_serialised(plan, formats: list[str], folder: str) -> tuple[str, Any]:
    """``attempt`` for a Dask worker: one gmsh build at a time per worker process."""
    with _BUILD_LOCK:
        return attempt(plan, formats, folder)


def _worker_main(conn) -> None:
    """A local worker process: build the members it is sent until it is sent None."""
    # Ctrl-C reaches the whole process group; the parent decides and terminates us.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    while True:
        try:
            task = conn.recv()
        except EOFError:  # the parent is gone
            return
        if task is None:
            return
        conn.send(attempt(*task))


@dataclass(frozen=True)
class Member:
    """One mesh of a study: its folder name, build inputs and manifest figures."""

    name: str  # folder under the study's root, e.g. "level-1"
    spec: dict  # member_spec(...): what defines the member
    plan: Any  # plan_from_spec(spec), sent to the worker as it is
    record: dict  # figures for the manifest, from ``plan``
    outputs: tuple[str, ...]  # planned files and folders, relative to the member's folder

    @property
    def fingerprint(self) -> str:
        return fingerprint(self.spec)

    def task(self, root: Path) -> tuple:
        """The arguments of ``attempt`` for this member."""
        return self.plan, self.spec["formats"], str(root / self.name)


@dataclass(frozen=True)
class Study:
    """A family or a sweep: the manifest is ``<kind>.json``, its members under ``members_key``."""

    kind: str
    members_key: str
    header: dict  # every manifest field except the member list and ``created``
    members: tuple[Member, ...]

    @property
    def manifest_name(self) -> str:
        return f"{self.kind}.json"


@dataclass
class RunReport:
    manifest: Path
    total: int
    built: list[str] = field(default_factory=list)
    skipped: list[str] = field(default_factory=list)
    failed: dict[str, str] = field(default_factory=dict)
