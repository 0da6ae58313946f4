"""Running a study's builds: failures, resume, interruption, conflicts, Dask, progress."""

import dataclasses
import io
import json
import multiprocessing
import os
import signal

import numpy as np
import pytest

from meshgen.cli.study_commands import finish_report
from meshgen.core.errors import InputError
from meshgen.meshing.gmsh_session import gmsh_session
from meshgen.study.family import family_study
from meshgen.study.runner import RunReport, Study, run_study

# A Reynolds-number case (no fluid, so no CoolProp import): 3 levels at R = 2 have about
# 9900, 2500 and 600 cells.
SMALL = ["name=small", "flow.fluid=", "flow.velocity=", "flow.reynolds=1e6"]
# A finer version of it (about 126 000 cells on level 0, 0.4 s to build, 40 times as long
# as its level 4): two members, one of them still building when the other is done.
FINE = SMALL + ["wall.growth_ratio=1.02", "streamwise.growth_ratio=1.02", "streamwise.max_spacing=0.003"]


def small_family(levels=3, overrides=SMALL):
    return family_study(None, overrides, levels, 2.0, ["msh"], ["family"])[0]


def slow_and_quick():
    st = small_family(5, FINE)
    slow, quick = st.members[0], st.members[4]
    assert slow.plan.cell_count > 100_000 and quick.plan.cell_count < 1000
    return Study(st.kind, st.members_key, st.header, (slow, quick))


def manifest(out, kind="family"):
    return json.loads((out / f"{kind}.json").read_text())


def mtimes(out, names):
    return {p: p.stat().st_mtime_ns for n in names for p in (out / n).iterdir()}


class Trap(io.StringIO):
    """A progress stream that calls ``action`` when a member is reported built."""

    def __init__(self, action):
        super().__init__()
        self.action = action

    def write(self, text):
        super().write(text)
        if " built" in text:
            self.action()
        return len(text)


def workers_alive():
    return [p for p in multiprocessing.active_children() if p.name == "meshgen-worker"]


def test_failed_member_is_reported_and_the_others_finish(tmp_path, capsys):
    st = small_family()
    bad = st.members[1]
    y = bad.plan.y.copy()
    y[[3, 4]] = y[[4, 3]]  # two wall-normal nodes swapped: the builder must refuse the level
    broken = dataclasses.replace(bad, plan=dataclasses.replace(bad.plan, y=y))
    st = dataclasses.replace(st, members=(st.members[0], broken, st.members[2]))
    stream = io.StringIO()
    report = run_study(st, tmp_path, workers=2, stream=stream)
    assert sorted(report.built) == ["level-0", "level-2"] and list(report.failed) == ["level-1"]
    assert report.failed["level-1"].startswith("MeshError:")
    assert "level-1 failed: MeshError" in stream.getvalue()
    entries = {e["name"]: e for e in manifest(tmp_path)["levels"]}
    assert entries["level-1"]["status"] == "failed" and entries["level-1"]["files"] == {}
    assert entries["level-1"]["error"] == report.failed["level-1"]
    assert all(entries[n]["status"] == "built" for n in ("level-0", "level-2"))
    assert (tmp_path / "level-2" / "small.msh").is_file()
    # the command's summary: exit code 1, the failed member named with its error
    assert finish_report(report, "family") == 1
    err = capsys.readouterr().err
    assert "1 of 3 family members failed" in err and "level-1: MeshError" in err
    assert finish_report(RunReport(report.manifest, 3, built=["a", "b", "c"]), "family") == 0


def test_resume_rebuilds_only_the_deleted_level(tmp_path):
    st = small_family()
    first = run_study(st, tmp_path, workers=2, stream=None)
    assert sorted(first.built) == ["level-0", "level-1", "level-2"]
    before = manifest(tmp_path)
    kept = mtimes(tmp_path, ["level-0", "level-2"])
    for p in (tmp_path / "level-1").iterdir():
        p.unlink()
    again = run_study(st, tmp_path, workers=2, stream=None)
    assert again.built == ["level-1"] and sorted(again.skipped) == ["level-0", "level-2"]
    assert mtimes(tmp_path, ["level-0", "level-2"]) == kept
    after = manifest(tmp_path)
    before.pop("created"), after.pop("created")
    assert after == before
    # a changed file no longer matches its checksum: that level is rebuilt, and --force rebuilds all
    (tmp_path / "level-2" / "small.msh").write_bytes(b"not a mesh")
    assert run_study(st, tmp_path, stream=None).built == ["level-2"]
    assert sorted(run_study(st, tmp_path, force=True, workers=2, stream=None).built) == \
        ["level-0", "level-1", "level-2"]


def _statuses(out):
    return {e["name"]: e["status"] for e in manifest(out)["levels"]}


def test_interrupt_stops_the_workers_and_a_rerun_resumes(tmp_path):
    st = slow_and_quick()

    def interrupt():
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_study(st, tmp_path, workers=2, stream=Trap(interrupt))
    assert workers_alive() == []
    # the first member to finish is recorded; the other was stopped before it finished
    status = _statuses(tmp_path)
    done = [n for n, s in status.items() if s == "built"]
    stopped = [n for n, s in status.items() if s == "pending"]
    assert len(done) == len(stopped) == 1
    assert not (tmp_path / stopped[0] / "plan.json").exists()  # plan.json is written last
    report = run_study(st, tmp_path, workers=2, stream=None)
    assert report.built == stopped and report.skipped == done and not report.failed


def test_a_worker_that_dies_is_reported(tmp_path):
    st = slow_and_quick()
    # gmsh.initialize() resets SIGPIPE to its default action in this process: a write to the
    # dead worker's pipe must still raise (and be handled), not kill the process (exit 141)
    with gmsh_session():
        pass

    def kill_workers():
        for p in workers_alive():
            os.kill(p.pid, signal.SIGKILL)

    report = run_study(st, tmp_path, workers=2, stream=Trap(kill_workers))
    assert len(report.built) == len(report.failed) == 1
    assert "exit code -9" in next(iter(report.failed.values()))
    assert _statuses(tmp_path)[next(iter(report.failed))] == "failed"
    assert workers_alive() == []


def test_existing_files_of_another_run_need_force(tmp_path):
    run_study(small_family(2), tmp_path, stream=None)
    (tmp_path / "family.json").unlink()
    before = mtimes(tmp_path, ["level-0", "level-1"])
    with pytest.raises(InputError) as exc:
        run_study(small_family(2), tmp_path, stream=None)
    assert "use --force" in exc.value.problems[0] and "level-0" in exc.value.problems[0]
    assert not (tmp_path / "family.json").exists() and mtimes(tmp_path, ["level-0", "level-1"]) == before
    # another case into the same folder: its levels are not this manifest's either
    run_study(small_family(2), tmp_path, force=True, stream=None)
    with pytest.raises(InputError, match="use --force"):
        run_study(small_family(2, SMALL + ["domain.height_factor=12"]), tmp_path, stream=None)
    assert sorted(run_study(small_family(2, SMALL + ["domain.height_factor=12"]), tmp_path, force=True,
                            stream=None).built) == ["level-0", "level-1"]


def test_progress_line_counts_members(tmp_path):
    stream = io.StringIO()
    run_study(small_family(), tmp_path, workers=2, stream=stream)
    lines = stream.getvalue().splitlines()
    assert lines[0].startswith("family [") and lines[0].endswith("0/3 done")
    assert [ln.split("] ")[1].split(" ")[0] for ln in lines[1:]] == ["1/3", "2/3", "3/3"]
    assert lines[-1].startswith("family [" + "#" * 24 + "]")
    stream = io.StringIO()
    run_study(small_family(), tmp_path, stream=stream)
    assert stream.getvalue().splitlines() == [f"family [{'#' * 24}] 3/3 done  3 up to date"]


def test_bad_run_arguments_write_nothing(tmp_path):
    with pytest.raises(InputError, match="--workers 0"):
        run_study(small_family(2), tmp_path / "o", workers=0, stream=None)
    with pytest.raises(InputError, match="--scheduler tcp://127.0.0.1:9: no Dask scheduler"):
        run_study(small_family(2), tmp_path / "o", scheduler="tcp://127.0.0.1:9", stream=None)
    assert not (tmp_path / "o").exists()


def test_dask_cluster_gives_the_local_checksums(tmp_path):
    distributed = pytest.importorskip("distributed")
    st = small_family()
    run_study(st, tmp_path / "local", workers=2, stream=None)
    with distributed.LocalCluster(n_workers=2, processes=True, host="127.0.0.1", dashboard_address=None,
                                  threads_per_worker=1) as cluster:
        report = run_study(st, tmp_path / "dask", scheduler=cluster.scheduler_address, stream=None)
    assert sorted(report.built) == ["level-0", "level-1", "level-2"]
    local, dask = manifest(tmp_path / "local"), manifest(tmp_path / "dask")
    assert [e["files"] for e in dask["levels"]] == [e["files"] for e in local["levels"]]
    assert all(len(e["files"]) >= 2 for e in local["levels"])
    local.pop("created"), dask.pop("created")
    assert dask == local
    # and the files themselves, byte for byte
    for rel in local["levels"][0]["files"]:
        assert np.array_equal(np.fromfile(tmp_path / "dask" / rel, np.uint8),
                              np.fromfile(tmp_path / "local" / rel, np.uint8))


def test_largest_member_is_built_first(tmp_path):
    """With one worker the build order is the dispatch order: the largest member goes
    first, so with more workers it never waits behind the small ones."""
    st = small_family(3)
    smallest_first = Study(st.kind, st.members_key, st.header, tuple(reversed(st.members)))
    run_study(smallest_first, tmp_path / "out", workers=1)
    built = sorted(st.members, key=lambda m: (tmp_path / "out" / m.name / "plan.json").stat().st_mtime_ns)
    assert [m.name for m in built] == [m.name for m in st.members]  # level-0 (the largest) first
    assert [m.plan.cell_count for m in built] == sorted((m.plan.cell_count for m in st.members), reverse=True)
