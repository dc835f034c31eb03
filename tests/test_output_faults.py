"""Outputs under interruption and concurrency (occplan.tables): SIGINT or SIGTERM while a
large table is being written leaves neither the file nor its temporary file; two writers of
the same name without --overwrite cannot both succeed; several outputs of one command appear
together or not at all."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import pytest

from occplan.errors import OutputExistsError
from occplan.tables import all_or_none, atomic_write, emit

# Writes an endless table in 1 MB pieces; says "writing" once the temporary file exists.
SLOW_WRITER = """
import sys, time
from occplan.tables import atomic_write

def write(fh):
    chunk = b"0123456789abcdef" * 65536
    fh.write(chunk)
    fh.flush()
    print("writing", flush=True)
    while True:
        fh.write(chunk)
        time.sleep(0.01)

atomic_write(sys.argv[1], write, overwrite=False)
"""


@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM], ids=["SIGINT", "SIGTERM"])
def test_a_signal_while_writing_leaves_nothing(tmp_path, sig):
    target = tmp_path / "big.csv"
    # a shell's background job ignores SIGINT and its children inherit that (POSIX): restore
    # the default so the child gets Python's usual KeyboardInterrupt wherever pytest runs
    proc = subprocess.Popen([sys.executable, "-c", SLOW_WRITER, str(target)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    try:
        assert proc.stdout.readline().strip() == "writing", proc.stderr.read()
        assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")]  # it exists
        proc.send_signal(sig)
        proc.communicate(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
        proc.communicate()
    assert proc.returncode != 0
    assert sorted(p.name for p in tmp_path.iterdir()) == []


CONCURRENT_WRITER = """
import json, sys, time
from occplan.errors import OccplanError
from occplan.tables import emit

who, start, paths = sys.argv[1], float(sys.argv[2]), sys.argv[3:]
won = []
for i, path in enumerate(paths):
    while time.time() < start + 0.05 * i:
        pass
    try:
        emit("written by " + who + "\\n" + "x" * 200000, path, False)
        won.append(path)
    except OccplanError:
        pass
print(json.dumps(won))
"""


def test_two_writers_of_the_same_name_never_both_succeed(tmp_path):
    paths = [str(tmp_path / f"same_{i}.csv") for i in range(30)]
    start = time.time() + 3.0  # both interpreters are up by then
    procs = [subprocess.Popen([sys.executable, "-c", CONCURRENT_WRITER, who, str(start), *paths],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
             for who in ("a", "b")]
    won = {}
    for who, proc in zip(("a", "b"), procs):
        out, err = proc.communicate(timeout=120)
        assert proc.returncode == 0, err
        won[who] = set(json.loads(out))
    assert not won["a"] & won["b"]
    assert won["a"] | won["b"] == set(paths)
    for who in ("a", "b"):
        for path in won[who]:
            with open(path) as fh:
                assert fh.readline() == f"written by {who}\n"
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


def test_exclusive_creation_without_overwrite(tmp_path):
    """The file appearing between the check and the move is not replaced (the race)."""
    target = tmp_path / "t.csv"
    atomic_write(target, lambda fh: fh.write(b"first"), overwrite=False)
    with pytest.raises(OutputExistsError):
        atomic_write(target, lambda fh: fh.write(b"second"), overwrite=False)
    assert target.read_bytes() == b"first"
    atomic_write(target, lambda fh: fh.write(b"third"), overwrite=True)
    assert target.read_bytes() == b"third"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["t.csv"]


def test_several_outputs_all_or_none(tmp_path):
    a, b = tmp_path / "f.json", tmp_path / "c.png"
    with pytest.raises(RuntimeError):
        with all_or_none():
            emit("{}", a, False)
            assert not a.exists()  # staged, not yet in place
            raise RuntimeError("the chart failed")
    assert sorted(p.name for p in tmp_path.iterdir()) == []
    b.write_text("someone else's")
    with pytest.raises(OutputExistsError):
        with all_or_none():
            emit("{}", a, False)
            atomic_write(b, lambda fh: fh.write(b"png"), overwrite=False)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.png"]
    assert b.read_text() == "someone else's"
    with all_or_none():
        emit("{}", a, False)
        atomic_write(b, lambda fh: fh.write(b"png"), overwrite=True)
    assert a.read_text() == "{}" and b.read_bytes() == b"png"


def test_find_with_a_bad_chart_name_writes_nothing(cli, tmp_path, monkeypatch):
    """The chart's type is checked before the search, so the table is not written either."""
    monkeypatch.chdir(tmp_path)
    res = cli("find", "--body", "saturn", "--geocentre", "--start", "2027-06-15T00:00Z",
              "--end", "2027-06-15T02:00Z", "--catalog", "stars.csv", "--out", "f.json",
              "--format", "json", "--chart", "c.jpg")
    assert res.exit_code == 2 and ".png, .pdf or .svg" in res.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_demo_interrupted_leaves_the_target_as_it_was(tmp_path, monkeypatch):
    from occplan import demo

    def half_build(out, *args):
        (out / "candidates_saturn.ecsv").write_text("half")
        raise KeyboardInterrupt

    monkeypatch.setattr(demo, "_build", half_build)
    with pytest.raises(KeyboardInterrupt):
        demo.run_demo(tmp_path / "demo", log=lambda msg: None)
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_demo_recovers_from_a_killed_run(tmp_path, monkeypatch):
    """A run killed outright (SIGKILL) leaves its temporary folder; the next run removes it
    and builds the target."""
    from occplan import demo

    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    stale = tmp_path / f".demo{demo.BUILDING}abc"
    (stale / "events").mkdir(parents=True)
    (stale / ".pid").write_text(str(dead.pid))
    alive = tmp_path / f".demo{demo.BUILDING}def"  # another run still working: kept
    alive.mkdir()
    (alive / ".pid").write_text(str(os.getpid()))

    def build(out, *args):
        (out / "report.md").write_text("report")
        return demo.DemoResult(out_dir=out, files=[out / "report.md"])

    monkeypatch.setattr(demo, "_build", build)
    res = demo.run_demo(tmp_path / "demo", log=lambda msg: None)
    assert res.files == [tmp_path / "demo" / "report.md"]
    assert sorted(p.name for p in tmp_path.iterdir()) == [alive.name, "demo"]
    assert sorted(p.name for p in (tmp_path / "demo").iterdir()) == ["events", "figures",
                                                                     "report.md"]
    # --overwrite replaces the demo's files and keeps the user's own
    (tmp_path / "demo" / "mine.txt").write_text("keep")
    (tmp_path / "demo" / "events" / "old.json").write_text("old")
    with pytest.raises(OutputExistsError):
        demo.run_demo(tmp_path / "demo", log=lambda msg: None)
    demo.run_demo(tmp_path / "demo", overwrite=True, log=lambda msg: None)
    assert sorted(p.name for p in (tmp_path / "demo").iterdir()) == ["events", "figures",
                                                                     "mine.txt", "report.md"]
    assert list((tmp_path / "demo" / "events").iterdir()) == []
    assert sorted(p.name for p in tmp_path.iterdir()) == [alive.name, "demo"]
