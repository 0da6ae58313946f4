"""Build the members of a study (family levels, sweep variants) in worker processes.

A member is identified by picklable data (``member_spec``): the case as the dictionary of
the values the user set, ``--set`` style overrides, a coarsening factor and level, and the
format names; its fingerprint (the SHA-256 of that data) decides whether a re-run may skip
it. The parent turns the spec into the member's Plan (``plan_from_spec``) to check and
describe it, and sends that Plan (plain numpy arrays and pydantic models, no gmsh object)
to the worker, which opens its own gmsh session through ``build_plan`` and returns the
SHA-256 of every file it wrote. Sending the Plan rather than rebuilding it in the worker
keeps the files exactly what the manifest describes, and spares every worker the import of
CoolProp (3.7 s alone, 8.5 s each for two at once, measured on a 2-core machine).

Backends:

- local (default): ``workers`` spawned processes, each building one member at a time and
  reused for the next (each build opens and closes its own gmsh session).
  A member that raises, or whose process dies, is reported by name; the others go on.
- Dask (``scheduler`` = address of a ``dask.distributed`` scheduler, imported lazily): the
  workers write straight into the output folder, which must be shared with this machine.
  A Dask worker runs tasks on threads and gmsh holds one model per process, so builds
  inside one worker process take turns (``attempt_serialised``); give workers one thread
  each to use every core. On Ctrl-C the tasks are cancelled; a build already running on
  a worker finishes there (Dask cannot stop a running task) and its result is dropped.

The manifest is written atomically before the first build (every member ``pending``) and
again after each member finishes, so an interrupted study resumes: a re-run skips members
whose inputs (fingerprint) are unchanged and whose files still match their checksums.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import socket
import uuid
from collections.abc import Callable
from dataclasses import dataclass
from multiprocessing.connection import wait
from pathlib import Path
from typing import Any, TextIO

from ..core.errors import InputError
from ..io.lock import folder_lock
from .manifest import CREATED, files_match, read_manifest, utc_now, write_manifest
from .members import Member, RunReport, Study, _describe, _worker_main, attempt_serialised
from .progress import ProgressBar

#: Seconds to wait for a terminated worker process before moving on.
TERMINATE_WAIT = 5.0
#: Seconds to wait for a Dask scheduler's port, then for the scheduler to answer.
PROBE_TIMEOUT = 10.0
CONNECT_TIMEOUT = "10s"


Finish = Callable[[Member, dict, str, Any], None]


@dataclass
class _Slot:
    """A local worker process, its end of the pipe and the member it is building."""

    proc: multiprocessing.process.BaseProcess
    conn: Any
    job: tuple[Member, dict] | None = None


def _run_local(todo: list[tuple[Member, dict]], root: Path, workers: int, finish: Finish) -> None:
    """Build the members in ``workers`` spawned processes, reused from member to member
    (each build opens and closes its own gmsh session); a process that dies is replaced."""
    ctx = multiprocessing.get_context("spawn")
    queue = list(reversed(todo))
    slots: list[_Slot] = []

    def drop(slot: _Slot) -> None:
        slots.remove(slot)
        slot.conn.close()
        slot.proc.join(TERMINATE_WAIT)

    def feed() -> None:
        """Give every idle process a member, starting processes up to ``workers``."""
        while queue:
            idle = next((s for s in slots if s.job is None), None)
            if idle is None and len(slots) < workers:
                here, there = ctx.Pipe()
                proc = ctx.Process(target=_worker_main, args=(there,), name="meshgen-worker", daemon=True)
                proc.start()
                there.close()  # the child holds the only other end: its death reads as EOF
                idle = _Slot(proc, here)
                slots.append(idle)
            if idle is None:
                return
            job = queue.pop()
            try:
                idle.conn.send(job[0].task(root))
                idle.job = job
            except OSError:  # the idle process died (killed from outside): replace it
                queue.append(job)
                drop(idle)

    try:
        feed()
        while any(s.job for s in slots):
            busy = {s.conn: s for s in slots if s.job}
            for conn in wait(list(busy)):
                slot = busy[conn]
                member, entry = slot.job
                slot.job = None
                try:
                    status, payload = conn.recv()
                except EOFError:
                    slot.proc.join()
                    status, payload = "error", (f"worker process ended with exit code {slot.proc.exitcode} "
                                                "before reporting (crashed or killed)")
                    drop(slot)
                finish(member, entry, status, payload)
            feed()
    except BaseException:
        for slot in slots:
            slot.proc.terminate()
        for slot in slots:
            slot.proc.join(TERMINATE_WAIT)
        raise
    while slots:
        with contextlib.suppress(OSError):  # a process already gone needs no goodbye
            slots[0].conn.send(None)
        drop(slots[0])


def connect(address: str):
    """A ``dask.distributed`` client of the scheduler at ``address`` (InputError if none)."""
    try:
        from distributed import Client
        from distributed.comm import get_address_host_port
    except ImportError:
        raise InputError(
            f"--scheduler {address}: needs the optional dependency dask.distributed "
            "(pip install 'meshgen[dask]')"
        ) from None
    # Probe the port first: a Client that fails to connect hangs the interpreter's exit
    # for its own close timeout (20 s measured with distributed 2026.8).
    try:
        host, port = get_address_host_port(address)
        socket.create_connection((host, port), timeout=PROBE_TIMEOUT).close()
    except (ValueError, OSError) as exc:
        raise InputError(f"--scheduler {address}: no Dask scheduler reachable there ({exc})") from None
    try:
        return Client(address, timeout=CONNECT_TIMEOUT, set_as_default=False)
    except Exception as exc:  # noqa: BLE001  the scheduler's address is the user's input
        raise InputError(f"--scheduler {address}: cannot connect to a Dask scheduler there ({exc})") from None


def _run_dask(client, todo: list[tuple[Member, dict]], root: Path, finish: Finish) -> None:
    from distributed import as_completed

    run = uuid.uuid4().hex[:8]  # fresh keys: the cluster may remember an earlier run's results
    futures = {
        client.submit(attempt_serialised, *m.task(root), key=f"meshgen-{m.name}-{run}"): (m, e)
        for m, e in todo
    }
    try:
        for fut in as_completed(list(futures), loop=client.loop):
            member, entry = futures[fut]
            try:
                status, payload = fut.result()
            except Exception as exc:  # noqa: BLE001  the task itself was lost (worker died, cancelled)
                status, payload = "error", _describe(exc)
            finish(member, entry, status, payload)
    except BaseException:
        client.cancel(list(futures), force=True)
        raise


def _missing_files(member: Member, payload: dict, root: Path) -> str | None:
    """A problem when the files a worker reports are not visible here (no shared folder)."""
    missing = [rel for rel in payload["files"] if not (root / member.name / rel).is_file()]
    if missing:
        return (f"{len(missing)} file(s) the worker wrote are not under {root / member.name} "
                f"(e.g. {missing[0]}): the Dask workers must write to a folder shared with this machine")
    return None


def _triage(study: Study, root: Path, force: bool) -> tuple[list[dict], list[tuple[Member, dict]], list[str]]:
    """Manifest entries, the members to build, and the names already up to date.

    Raises InputError (before anything is written) when a member to build would overwrite
    files that this study's manifest does not record as its own, unless ``force``.
    """
    manifest_path = root / study.manifest_name
    old = None if force else read_manifest(manifest_path)
    old_entries = {e.get("name"): e for e in (old or {}).get(study.members_key, []) if isinstance(e, dict)}
    entries, todo, skipped, conflicts = [], [], [], []
    for m in study.members:
        entry = {**m.record, "name": m.name, "fingerprint": m.fingerprint, "status": "pending", "files": {}}
        prev = old_entries.get(m.name)
        ours = prev is not None and prev.get("fingerprint") == m.fingerprint
        if ours and prev.get("status") == "built" and files_match(root, prev.get("files") or {}):
            entry.update(status="built", files=prev["files"])
            skipped.append(m.name)
        else:
            todo.append((m, entry))
            if not force and not ours:
                conflicts += [
                    f"{root / m.name / rel}: exists and {manifest_path.name} does not record it as "
                    f"this {study.kind}'s; use --force to overwrite"
                    for rel in m.outputs if (root / m.name / rel).exists()
                ]
        entries.append(entry)
    if conflicts:
        more = [f"... and {len(conflicts) - 5} more"] if len(conflicts) > 5 else []
        raise InputError(conflicts[:5] + more)
    return entries, todo, skipped


def run_study(study: Study, root: str | Path, workers: int = 1, force: bool = False,
              scheduler: str | None = None, stream: TextIO | None = None,
              on_start: Callable[[], object] | None = None) -> RunReport:
    """Build every member of ``study`` under ``root``, writing ``<kind>.json`` as they finish.

    Bad input raises InputError before anything is written. Progress and failures go to
    ``stream`` (e.g. sys.stderr; None is silent) and into the returned RunReport; a failed
    member does not stop the others. KeyboardInterrupt stops the workers and propagates.
    ``on_start`` is called once the run has passed its checks (e.g. to print the study's
    warnings, so that a refused run shows its errors alone).
    """
    if workers < 1:
        raise InputError(f"--workers {workers}: must be 1 or more")
    root = Path(root).resolve()  # absolute: the workers may run in another folder or machine
    with folder_lock(root):  # the whole run; each member locks its own sub-folder
        return _run_locked(study, root, workers, force, scheduler, stream, on_start)


def _run_locked(study: Study, root: Path, workers: int, force: bool, scheduler: str | None,
                stream: TextIO | None, on_start: Callable[[], object] | None) -> RunReport:
    entries, todo, skipped = _triage(study, root, force)
    # Largest first: the finest member bounds the run's time, so it starts at once and the
    # others fill the remaining workers (a stable sort keeps equal members in order).
    todo.sort(key=lambda item: -item[0].plan.cell_count)
    client = connect(scheduler) if scheduler and todo else None
    if on_start is not None:
        on_start()
    manifest_path = root / study.manifest_name
    manifest = {**study.header, "kind": study.kind, CREATED: utc_now(), study.members_key: entries}
    report = RunReport(manifest_path, len(study.members), skipped=skipped)
    bar = ProgressBar(study.kind, report.total, stream)

    def finish(member: Member, entry: dict, status: str, payload: Any) -> None:
        if status == "ok":
            problem = _missing_files(member, payload, root)
            if problem is None:
                entry.update(status="built", files={f"{member.name}/{k}": v for k, v in payload["files"].items()})
                report.built.append(member.name)
            else:
                status, payload = "error", problem
        if status != "ok":
            entry.update(status="failed", error=payload, files={})
            report.failed[member.name] = payload
            bar.message(f"{member.name} failed: {payload}")
        write_manifest(manifest_path, manifest)
        done = len(report.built) + len(report.skipped) + len(report.failed)
        bar.update(done, len(report.failed), f"{member.name} {'built' if status == 'ok' else 'failed'}")

    try:
        write_manifest(manifest_path, manifest)
        bar.update(len(skipped), 0, f"{len(skipped)} up to date" if skipped else "")
        if client is not None:
            _run_dask(client, todo, root, finish)
        elif todo:
            _run_local(todo, root, min(workers, len(todo)), finish)
    finally:
        bar.close()
        if client is not None:
            client.close()
    return report
