"""Output folders as one unit (issue 15): a kill at any moment leaves the complete old set or the
complete new set, the next run cleans up, foreign folders are refused, bad --out paths are found
before the search, and disk-full or permission errors exit 2 naming the path and lose nothing.

The kill test forks: the child writes a new set and is killed with ``os._exit`` (no clean-up
runs, as with SIGKILL) at the k-th file-system step, counted with Python's audit hooks (PEP 578:
``open`` for writing, ``os.rename``/``os.replace``, ``os.remove``, ``os.rmdir``, ``os.mkdir``,
``shutil.rmtree``, ``shutil.copyfile``, ``tempfile.mkdtemp``/``mkstemp``, the folder swap).
"""
from __future__ import annotations

import errno
import json
import os
import shutil
import sys
from pathlib import Path

import pytest

from strainline.optimizer.outputs import folder as fo
from strainline.optimizer.outputs.fileio import write_atomic

ROOT = Path(__file__).resolve().parents[1]
FRONT = ROOT / "tests" / "fixtures" / "front_small.json"
STEP_EVENTS = {"os.rename", "os.remove", "os.rmdir", "os.mkdir", "shutil.rmtree", "shutil.copyfile",
               "tempfile.mkdtemp", "tempfile.mkstemp", "strainline.exchange"}


def _set(tag: str, n_sheets: int) -> dict[str, bytes]:
    files = {"front.json": json.dumps({"candidates": [tag] * n_sheets}).encode(),
             "front.csv": f"id\n{tag}\n".encode(), "report.html": f"<p>{tag}</p>".encode()}
    files.update({f"handoff/C{i:03d}.html": f"{tag} sheet {i}".encode() for i in range(n_sheets)})
    return files


OLD, NEW = _set("old", 4), _set("new", 2)     # the new set drops two sheets: stale files must not survive


def _fill(files: dict[str, bytes]):
    def fill(stage: Path) -> list[Path]:
        return [write_atomic(stage / name, data) for name, data in files.items()]
    return fill


def _state(out: Path) -> dict[str, bytes] | None:
    """The folder's files without the manifest, after checking the manifest lists exactly them."""
    if not out.is_dir():
        return None
    got = {p.relative_to(out).as_posix(): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    listed = json.loads(got.pop(fo.MANIFEST))["files"]
    assert sorted(listed) == sorted(got)
    return got


def _leftovers(out: Path) -> list[str]:
    return sorted(p.name for p in out.parent.iterdir() if p.name != out.name)


def _killed_child(out: Path, k: int, portable: bool) -> int:
    """Fork; the child replaces ``out`` with NEW and dies at step ``k``. Returns its exit status."""
    pid = os.fork()
    if pid == 0:                                    # child: never returns into pytest
        try:
            count = [0]

            def hook(event, args):
                step = event in STEP_EVENTS or (event == "open" and _writes(args))
                if step:
                    if count[0] == k:
                        os._exit(137)               # killed: no finally, no clean-up
                    count[0] += 1

            if portable:
                fo._exchange = lambda a, b: False
            sys.addaudithook(hook)
            fo.replace_folder(out, _fill(NEW))
            os._exit(0)
        except BaseException:                       # noqa: BLE001
            os._exit(3)
    _, status = os.waitpid(pid, 0)
    return os.waitstatus_to_exitcode(status)


def _writes(args) -> bool:
    mode, flags = (args[1], args[2]) if len(args) >= 3 else (None, 0)
    if isinstance(mode, str):
        return any(c in mode for c in "wax+")
    return bool((flags or 0) & (os.O_WRONLY | os.O_RDWR | os.O_CREAT))


@pytest.mark.skipif(not hasattr(os, "fork"), reason="needs fork")
@pytest.mark.parametrize("portable", [False, True], ids=["atomic-exchange", "two-renames"])
def test_a_kill_at_every_step_leaves_one_complete_set_and_the_next_run_cleans_up(tmp_path, portable):
    k = 0
    while True:
        base = tmp_path / f"k{k}"
        out = base / "out"
        base.mkdir()
        fo.replace_folder(out, _fill(OLD))
        assert _state(out) == OLD and _leftovers(out) == []
        code = _killed_child(out, k, portable)
        assert code in (0, 137), code
        state = _state(out) if out.exists() else None
        if portable and state is None:
            # killed between the two renames: both complete sets lie beside the path; the next run
            # puts one back
            pass
        else:
            assert state in (OLD, NEW), (k, sorted(state or {}))
        fo.recover(out)                             # what the next run does first
        after = _state(out)
        assert after in (OLD, NEW) and (state is None or after == state), k
        assert _leftovers(out) == [], (k, _leftovers(out))
        fo.replace_folder(out, _fill(NEW))           # and the next run completes
        assert _state(out) == NEW and _leftovers(out) == []
        if code == 0:
            break
        k += 1
    assert k >= 10                                    # the kill really hit the writes, renames and removals


def test_stale_leftovers_of_killed_runs_are_removed(tmp_path):
    out = tmp_path / "out"
    fo.replace_folder(out, _fill(OLD))
    for name in (".out.strainline-new-x1", ".out.strainline-old-x2"):
        (tmp_path / name / "handoff").mkdir(parents=True)
        (tmp_path / name / "front.json").write_text("{}")
    (tmp_path / "unrelated").mkdir()
    fo.replace_folder(out, _fill(NEW))
    assert _state(out) == NEW and sorted(p.name for p in tmp_path.iterdir()) == ["out", "unrelated"]


def test_recover_puts_a_complete_set_back_when_the_folder_is_missing(tmp_path):
    out = tmp_path / "out"
    fo.replace_folder(out, _fill(NEW))
    os.rename(out, tmp_path / ".out.strainline-new-abc")       # as after a kill between the renames
    fo.replace_folder(tmp_path / "half", _fill(OLD))
    os.rename(tmp_path / "half", tmp_path / ".out.strainline-old-abc")
    fo.recover(out)
    assert _state(out) == NEW and _leftovers(out) == []


def test_unrelated_folder_is_refused_unless_force(tmp_path):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("my notes")
    (out / "report.html").write_text("my own report")
    with pytest.raises(fo.OutputError, match=r"notes\.txt.*--force"):
        fo.replace_folder(out, _fill(NEW))
    assert (out / "notes.txt").read_text() == "my notes" and (out / "report.html").read_text() == "my own report"
    fo.replace_folder(out, _fill(NEW), force=True)
    assert _state(out) == NEW
    # a folder with only our file names but no strainline front.json is not ours either
    other = tmp_path / "other"
    (other / "handoff").mkdir(parents=True)
    (other / "report.html").write_text("x")
    with pytest.raises(fo.OutputError, match="not strainline output"):
        fo.check_out(other)
    # ours: listed by the manifest, or (from before manifests) only our names around a front.json
    legacy = tmp_path / "legacy"
    legacy.mkdir()
    shutil.copy(FRONT, legacy / "front.json")
    (legacy / "report.html").write_text("x")
    assert fo.check_out(legacy) == legacy


@pytest.mark.parametrize("exc", [OSError(errno.ENOSPC, "No space left on device"),
                                 PermissionError(errno.EACCES, "Permission denied")], ids=["disk-full", "permission"])
def test_os_errors_while_writing_exit_2_name_the_path_and_lose_nothing(tmp_path, run_cli, monkeypatch, exc):
    out = tmp_path / "run"
    out.mkdir()
    shutil.copy(FRONT, out / "front.json")
    code, _, err = run_cli("report", out)
    assert code == 0, err
    before = {p.relative_to(out).as_posix(): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    calls = {"n": 0}
    real_replace = os.replace

    def failing_replace(src, dst, *a, **kw):
        calls["n"] += 1
        if calls["n"] == 3:                        # the third file of the new set
            raise type(exc)(exc.errno, exc.strerror, str(dst))
        return real_replace(src, dst, *a, **kw)

    monkeypatch.setattr(os, "replace", failing_replace)
    code, out_text, err = run_cli("report", out)
    assert code == 2 and err.count("\n") == 1 and "Traceback" not in err
    assert exc.strerror in err and str(out) in err and ".strainline-new-" not in err
    after = {p.relative_to(out).as_posix(): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    assert after == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run"]


def test_report_failing_halfway_replaces_nothing(tmp_path, run_cli, monkeypatch):
    out = tmp_path / "run"
    out.mkdir()
    shutil.copy(FRONT, out / "front.json")
    assert run_cli("report", out)[0] == 0
    before = {p.relative_to(out).as_posix(): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    from strainline.optimizer.outputs import report

    def half(front, stage, *a, **kw):
        write_atomic(Path(stage) / "handoff" / "C999.html", "partial")
        raise RuntimeError("renderer crashed")

    monkeypatch.setattr(report, "write_all", half)
    code, _, err = run_cli("report", out)
    assert code == 1 and "renderer crashed" in err
    after = {p.relative_to(out).as_posix(): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    assert after == before and sorted(p.name for p in tmp_path.iterdir()) == ["run"]


def test_report_keeps_front_json_byte_for_byte_and_marks_the_folder(tmp_path, run_cli):
    out = tmp_path / "run"
    out.mkdir()
    shutil.copy(FRONT, out / "front.json")
    assert run_cli("report", out, "--quiet")[0] == 0
    assert (out / "front.json").read_bytes() == FRONT.read_bytes()
    listed = json.loads((out / fo.MANIFEST).read_text())["files"]
    assert "front.json" in listed and "report.html" in listed and any(f.startswith("handoff/") for f in listed)
    (out / "mine.txt").write_text("x")                            # now the folder holds something else
    code, _, err = run_cli("report", out)
    assert code == 2 and "mine.txt" in err and "--force" in err


def test_unwritable_parent_is_refused_before_the_search(tmp_path, monkeypatch):
    # running as root, file modes do not stop writes: the refusal of the probe folder is simulated
    import tempfile

    def refuse(*a, **kw):
        raise PermissionError(errno.EACCES, "Permission denied", kw.get("dir"))

    monkeypatch.setattr(tempfile, "mkdtemp", refuse)
    with pytest.raises(fo.OutputError, match="Permission denied") as info:
        fo.check_out(tmp_path / "out")
    assert str(tmp_path / "out") in str(info.value)
