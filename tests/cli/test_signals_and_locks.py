"""Real signals and real concurrent runs, on `python -m ringshift` subprocesses: Ctrl-C (SIGINT) and SIGTERM stop
every command with exit 130 / 143, one line and no output left; batch workers die with their parent; a second
run on an output that a first run is writing refuses at once and nothing is written twice.

The slow molecule is (CH)24, [24]annulene from SMILES (about 40 s of conformer search here, measured), so a
signal 1.5 s after the run has locked its output lands inside the computation. Every run is in tmp_path.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from ringshift.io.locks import lock_path

pytestmark = pytest.mark.skipif(os.name != "posix" or not hasattr(os, "sched_getaffinity"),
                                reason="POSIX signals and Linux process handling")

ROOT = Path(__file__).resolve().parents[2]
SLOW = "C1=CC=CC=CC=CC=CC=CC=CC=CC=CC=CC=CC=C1"          # [24]annulene
LIBRARY = f"{SLOW} a24\n{SLOW} a24-again\n"


def start(args, cwd: Path) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(ROOT))

    def default_signals():        # a child of a background job may inherit an ignored SIGINT
        signal.signal(signal.SIGINT, signal.SIG_DFL)

    return subprocess.Popen([sys.executable, "-m", "ringshift", *args], cwd=cwd, env=env, text=True,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, preexec_fn=default_signals)


def wait_for(path: Path, proc: subprocess.Popen, timeout: float = 60.0) -> None:
    t0 = time.monotonic()
    while not path.exists():
        assert proc.poll() is None, proc.communicate()
        assert time.monotonic() - t0 < timeout, f"{path} never appeared"
        time.sleep(0.05)


def finish(proc: subprocess.Popen, timeout: float = 30.0):
    out, err = proc.communicate(timeout=timeout)
    return proc.returncode, out, err


CASES = [
    ("predict-sigint", ["predict", SLOW, "-o", "out.txt"], "out.txt", signal.SIGINT, 130),
    ("predict-sigterm", ["predict", SLOW, "-o", "out.txt"], "out.txt", signal.SIGTERM, 143),
    ("report-sigint", ["report", SLOW, "-o", "rep", "--quiet"], "rep", signal.SIGINT, 130),
    ("report-sigterm", ["report", SLOW, "-o", "rep", "--quiet"], "rep", signal.SIGTERM, 143),
    ("map-sigterm", ["map", SLOW, "-o", "map.png"], "map.png", signal.SIGTERM, 143),
    ("batch-jobs-1-sigint", ["batch", "L.smi", "-o", "out.jsonl", "--jobs", "1", "--quiet"], "out.jsonl",
     signal.SIGINT, 130),
    ("batch-jobs-2-sigterm", ["batch", "L.smi", "-o", "out.jsonl", "--jobs", "2", "--quiet"], "out.jsonl",
     signal.SIGTERM, 143),
]


@pytest.mark.parametrize("args, output, sig, code", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_a_signal_stops_the_run_promptly_and_leaves_no_output(tmp_path, args, output, sig, code):
    (tmp_path / "L.smi").write_text(LIBRARY)
    proc = start(args, tmp_path)
    wait_for(lock_path(tmp_path / output), proc)
    time.sleep(1.5)
    workers = _children(proc.pid)
    proc.send_signal(sig)
    t0 = time.monotonic()
    rc, out, err = finish(proc)
    elapsed = time.monotonic() - t0
    assert rc == code, err
    assert elapsed < 10.0                       # the watchdog forces the exit 3 s after the signal at the latest
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("ringshift: stopped by"), err
    left = sorted(p.name for p in tmp_path.iterdir())
    assert left == ["L.smi"]                    # no output (a new batch output with no record yet), no lock file
    _assert_gone(workers)


def test_a_stopped_resumed_batch_keeps_its_complete_records(tmp_path):
    (tmp_path / "L.smi").write_text("c1ccccc1 benzene\n")
    assert finish(start(["batch", "L.smi", "-o", "out.jsonl", "--conformers", "1", "--quiet"], tmp_path), 60)[0] == 0
    kept = (tmp_path / "out.jsonl").read_text()
    (tmp_path / "L.smi").write_text(f"c1ccccc1 benzene\n{SLOW} a24\n")
    proc = start(["batch", "L.smi", "-o", "out.jsonl", "--quiet"], tmp_path)
    wait_for(lock_path(tmp_path / "out.jsonl"), proc)
    time.sleep(1.5)
    proc.send_signal(signal.SIGINT)
    rc, _, err = finish(proc)
    assert rc == 130 and "keeps the 1 complete records" in err and "run the same command again to resume" in err
    assert (tmp_path / "out.jsonl").read_text() == kept           # the record of benzene, nothing partial
    assert sorted(p.name for p in tmp_path.iterdir()) == ["L.smi", "out.jsonl"]


def _children(pid: int) -> list[int]:
    try:
        text = Path(f"/proc/{pid}/task/{pid}/children").read_text()
    except OSError:
        return []
    return [int(x) for x in text.split()]


def _assert_gone(pids: list[int], timeout: float = 10.0) -> None:
    t0 = time.monotonic()
    for pid in pids:
        while True:
            try:
                state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
            except OSError:
                break                           # gone
            if state in ("Z", "X"):
                break                           # dead, waiting to be reaped
            assert time.monotonic() - t0 < timeout, f"worker {pid} still running"
            time.sleep(0.1)


def test_batch_workers_die_with_a_killed_parent(tmp_path):
    (tmp_path / "L.smi").write_text(LIBRARY)
    proc = start(["batch", "L.smi", "-o", "out.jsonl", "--jobs", "2", "--quiet"], tmp_path)
    wait_for(lock_path(tmp_path / "out.jsonl"), proc)
    t0 = time.monotonic()
    while not _children(proc.pid) and time.monotonic() - t0 < 30:
        time.sleep(0.1)
    workers = _children(proc.pid)
    assert workers
    proc.kill()                                  # SIGKILL: no cleanup of ours can run
    proc.communicate()
    _assert_gone(workers)


def test_a_second_batch_on_the_same_output_refuses_and_nothing_is_written_twice(tmp_path):
    (tmp_path / "L.smi").write_text(f"c1ccccc1 benzene\n{SLOW} a24\n")
    first = start(["batch", "L.smi", "-o", "out.jsonl", "--quiet"], tmp_path)
    out = tmp_path / "out.jsonl"
    t0 = time.monotonic()
    while not (out.exists() and out.read_text().endswith("\n")):      # benzene's record is written
        assert first.poll() is None and time.monotonic() - t0 < 60, first.communicate()
        time.sleep(0.05)
    second = start(["batch", "L.smi", "-o", "out.jsonl", "--quiet"], tmp_path)
    rc, _, err = finish(second)
    assert rc == 2 and "another ringshift run" in err and len(err.strip().splitlines()) == 1
    first.send_signal(signal.SIGTERM)
    assert finish(first)[0] == 143
    records = [json.loads(line) for line in out.read_text().splitlines()]
    assert [r["index"] for r in records] == [0]                 # benzene once; [24]annulene was stopped


def test_a_second_report_to_the_same_folder_refuses_and_the_first_one_stands(tmp_path):
    first = start(["report", "c1ccccc1", "--conformers", "1", "-o", "rep", "--quiet"], tmp_path)
    wait_for(lock_path(tmp_path / "rep"), first)
    second = start(["report", "c1ccccc1", "--conformers", "1", "-o", "rep", "--quiet"], tmp_path)
    rc2, _, err2 = finish(second, 120)
    rc1, _, err1 = finish(first, 120)
    assert rc1 == 0, err1
    assert rc2 == 2 and ("another ringshift run" in err2 or "already exists" in err2), err2
    assert (tmp_path / "rep" / "report.html").is_file()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]


def test_files_written_respect_the_umask(tmp_path):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    cmd = (f"umask 027 && {sys.executable} -m ringshift predict c1ccccc1 --conformers 1 -o out.txt && "
           f"{sys.executable} -m ringshift batch L.smi -o out.jsonl --conformers 1 --quiet")
    (tmp_path / "L.smi").write_text("c1ccccc1 benzene\n")
    subprocess.run(["sh", "-c", cmd], cwd=tmp_path, env=env, check=True, capture_output=True)
    for name in ("out.txt", "out.jsonl"):
        assert oct(os.stat(tmp_path / name).st_mode & 0o777) == oct(0o640), name


def _raise_on_enter(signum):
    from contextlib import contextmanager

    from ringshift._signals import Stopped

    @contextmanager
    def cm():
        raise Stopped(signum)
        yield                                    # pragma: no cover

    return cm


def _raise_on_exit(signum):
    from contextlib import contextmanager

    from ringshift._signals import Stopped

    @contextmanager
    def cm():
        yield
        raise Stopped(signum)

    return cm


# (id, where the signal lands, the signal, exit code, output kept): the moments outside a command's own handling
# that a real signal can only hit by chance (measured before the fix: exit 1 with a traceback)
WINDOWS = [
    ("entry-before-blocking", "entry", signal.SIGINT, 130, False),
    ("watchdog-starting", "enter", signal.SIGINT, 130, False),
    ("watchdog-starting-sigterm", "enter", signal.SIGTERM, 143, False),
    ("inside-the-command", "command", signal.SIGTERM, 143, False),
    ("after-the-command-ended", "exit", signal.SIGINT, 0, True),
]


@pytest.mark.parametrize("where, sig, code, kept", [c[1:] for c in WINDOWS], ids=[c[0] for c in WINDOWS])
def test_a_signal_at_any_moment_is_one_line_and_its_exit_code(where, sig, code, kept, tmp_path, monkeypatch,
                                                               capsys, request):
    from ringshift import _entry, cli
    from ringshift._signals import Stopped

    monkeypatch.chdir(tmp_path)
    mask = signal.pthread_sigmask(signal.SIG_BLOCK, [])          # the entry point blocks SIGINT/SIGTERM: undo
    request.addfinalizer(lambda: signal.pthread_sigmask(signal.SIG_SETMASK, mask))
    if where == "entry":
        def interrupted():
            raise KeyboardInterrupt
        monkeypatch.setattr(_entry, "pin_threads", interrupted)
    elif where == "enter":
        monkeypatch.setattr(cli._signals, "stop_on_signals", _raise_on_enter(sig))
    elif where == "exit":
        monkeypatch.setattr(cli._signals, "stop_on_signals", _raise_on_exit(sig))
    else:
        def stopped(*args, **kwargs):
            raise Stopped(sig)
        monkeypatch.setattr(cli.cli, "make_context", stopped)
    with pytest.raises(SystemExit) as exc:
        _entry.main(["predict", "c1ccccc1", "--conformers", "1", "-o", "out.txt"])
    out, err = capsys.readouterr()
    assert exc.value.code == code
    assert "Traceback" not in err and out == ""
    if kept:                                     # the command had finished: its complete output stays
        assert (tmp_path / "out.txt").read_text().startswith("c1ccccc1")
    else:
        assert err.strip().splitlines() == [err.strip()] and err.startswith("ringshift: stopped by")
        assert list(tmp_path.iterdir()) == []


def _file_size_limit(limit_bytes: int):
    import resource

    def limit():                                 # a real EFBIG from the kernel, as a full disk would give
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit_bytes, limit_bytes))
    return limit


# (id, arguments, the output the message names, what is left besides L.smi): 2 KB is less than one record,
# one JSON prediction or one report figure of benzene (measured: 2.2 KB, 5 KB, > 20 KB)
FILE_TOO_LARGE = [
    ("predict-json", ["predict", "c1ccccc1", "--conformers", "1", "--format", "json", "-o", "out.json"], "out.json"),
    ("report", ["report", "c1ccccc1", "--conformers", "1", "-o", "rep", "--quiet"], "rep"),
    ("batch-new-output", ["batch", "L.smi", "-o", "out.jsonl", "--conformers", "1", "--quiet"], "out.jsonl"),
]


@pytest.mark.parametrize("args, output", [c[1:] for c in FILE_TOO_LARGE], ids=[c[0] for c in FILE_TOO_LARGE])
def test_a_write_the_kernel_refuses_is_exit_2_naming_the_output_and_leaves_nothing(tmp_path, args, output):
    (tmp_path / "L.smi").write_text("c1ccccc1 benzene\nc1ccncc1 pyridine\n")
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.run([sys.executable, "-m", "ringshift", *args], cwd=tmp_path, env=env, text=True,
                          capture_output=True, preexec_fn=_file_size_limit(2048), timeout=120)
    assert proc.returncode == 2, proc.stderr
    assert proc.stderr.startswith(f"ringshift: error: {output}: ")
    assert "File too large" in proc.stderr and len(proc.stderr.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["L.smi"]


def test_a_batch_record_that_cannot_be_written_whole_is_cut_off_again(tmp_path):
    (tmp_path / "L.smi").write_text("c1ccccc1 benzene\n")
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    run = ["batch", "L.smi", "-o", "out.jsonl", "--conformers", "1", "--quiet"]
    subprocess.run([sys.executable, "-m", "ringshift", *run], cwd=tmp_path, env=env, check=True, capture_output=True)
    kept = (tmp_path / "out.jsonl").read_bytes()
    (tmp_path / "L.smi").write_text("c1ccccc1 benzene\nc1ccncc1 pyridine\n")
    proc = subprocess.run([sys.executable, "-m", "ringshift", *run], cwd=tmp_path, env=env, text=True,
                          capture_output=True, preexec_fn=_file_size_limit(len(kept) + 100), timeout=120)
    assert proc.returncode == 2 and "out.jsonl: cannot write it (File too large)" in proc.stderr, proc.stderr
    assert (tmp_path / "out.jsonl").read_bytes() == kept          # benzene's record only, no cut-off line
