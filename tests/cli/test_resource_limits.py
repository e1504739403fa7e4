"""Resource limits on the command line: a structure whose estimated cost is over the limit is refused before
the heavy step (conformer generation included), with one line naming the option that raises the limit
(--memory-limit, --time-limit); nothing is written; the option overrides the environment variable and does
not outlive its run; progress lines appear on a terminal only.

The polyene is 'C=C'*30 (C60H62, 122 atoms; invented test input): its conformer generation is estimated at
about a minute (ringshift.limits.estimate_conformers), so a limit of 10 s refuses it at once. The heavy steps are
replaced by a function that fails the test, so a refusal that came too late cannot pass.
"""

from __future__ import annotations

import json

import pytest

from ringshift import limits
from ringshift.cli import main
from tests.test_resources import _Tty

POLYENE = "C=C" * 30
BUTADIENE = "C=CC=C"


def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return exc.value.code, out, err


@pytest.fixture(autouse=True)
def _clean_limits(monkeypatch):
    monkeypatch.delenv(limits.MEMORY_ENV, raising=False)
    monkeypatch.delenv(limits.TIME_ENV, raising=False)
    yield
    limits.set_limits(None, None)


def _forbid_heavy(monkeypatch):
    def boom(*a, **k):
        raise AssertionError("a heavy step ran although the estimate is over the limit")
    monkeypatch.setattr("ringshift.geometry.conformers._generate", boom)   # imported lazily by io.structures
    monkeypatch.setattr("ringshift.shifts.prediction.huckel_london_currents", boom)


def _peaks(tmp_path):
    path = tmp_path / "peaks.txt"
    path.write_text("6.3\n5.1\n")          # invented peak list
    return path


# command, extra arguments, output (relative to tmp_path), limit option, value, expected words
REFUSALS = [
    ("predict", [], "out.txt", "--time-limit", "10", "conformer generation would take"),
    ("predict", [], "out.json", "--memory-limit", "100", "conformer generation would need"),
    ("pi", [], None, "--time-limit", "10", "conformer generation would take"),
    ("map", [], "map.png", "--time-limit", "10", "conformer generation would take"),
    ("compare", ["PEAKS"], "cmp.json", "--time-limit", "10", "conformer generation would take"),
    ("report", ["PEAKS"], "rep", "--memory-limit", "100", "conformer generation would need"),
]


@pytest.mark.parametrize("command, extra, output, option, value, words", REFUSALS,
                         ids=["predict-time", "predict-memory", "pi-time", "map-time", "compare-time", "report-memory"])
def test_over_limit_polyene_is_refused_up_front_naming_the_option(command, extra, output, option, value, words,
                                                                  tmp_path, capsys, monkeypatch):
    _forbid_heavy(monkeypatch)
    args = [command, POLYENE] + [str(_peaks(tmp_path)) if a == "PEAKS" else a for a in extra] + [option, value]
    if output is not None:
        args += ["-o", tmp_path / output]
    code, out, err = run(args, capsys)
    assert code == 2
    lines = err.strip().splitlines()           # report announces its steps before the error
    errors = [x for x in lines if x.startswith("ringshift: error:")]
    assert len(errors) == 1 and errors[0] == lines[-1]
    assert words in errors[0] and f"raise it with {option} " in errors[0] and "(or RINGSHIFT_" in errors[0]
    assert out == ""
    assert sorted(p.name for p in tmp_path.iterdir()) == (["peaks.txt"] if "PEAKS" in extra else [])


def test_batch_workers_get_the_limit_option(tmp_path, capsys):
    lib = tmp_path / "lib.smi"
    lib.write_text(f"{POLYENE} polyene\n")
    code, _, err = run(["batch", lib, "-o", tmp_path / "out.jsonl", "--time-limit", "10", "--quiet"], capsys)
    records = [json.loads(x) for x in (tmp_path / "out.jsonl").read_text().splitlines() if x.strip()]
    rec = [r for r in records if r.get("name") == "polyene" or "error" in r]
    assert rec and "--time-limit SECONDS" in json.dumps(rec[0]), (code, err, records)


# environment variable, its value, option, its value, expected exit code
PRECEDENCE = [
    ("RINGSHIFT_TIME_LIMIT_S", "1", None, None, 2),            # the variable alone refuses (estimate ~4.5 s)
    ("RINGSHIFT_TIME_LIMIT_S", "1", "--time-limit", "100", 0),  # the option raises it
    ("RINGSHIFT_MEMORY_MB", "100", "--memory-limit", "4000", 0),
    ("RINGSHIFT_TIME_LIMIT_S", "10000", "--time-limit", "1", 2),  # and lowers it
]


@pytest.mark.parametrize("env, env_value, option, value, code", PRECEDENCE,
                         ids=["env-refuses", "option-raises-time", "option-raises-memory", "option-lowers-time"])
def test_option_overrides_the_environment(env, env_value, option, value, code, capsys, monkeypatch):
    monkeypatch.setenv(env, env_value)
    args = ["predict", BUTADIENE] + ([option, value] if option else [])
    got, out, err = run(args, capsys)
    assert got == code, err
    if code:
        assert (option or "--time-limit") in err and env in err
    else:
        assert "H in" in out


def test_option_does_not_outlive_its_run(capsys):
    assert run(["predict", BUTADIENE, "--time-limit", "1"], capsys)[0] == 2
    assert run(["predict", BUTADIENE], capsys)[0] == 0        # default 900 s again


@pytest.mark.parametrize("value", ["0", "-5", "nan"], ids=["zero", "negative", "not-a-number"])
def test_bad_limit_value_is_one_line(value, capsys):
    code, _, err = run(["predict", BUTADIENE, "--memory-limit", value], capsys)
    assert code == 2 and err.count("\n") == 1 and "--memory-limit" in err and "positive number" in err


@pytest.mark.parametrize("tty", [True, False], ids=["terminal-shows-progress", "not-a-terminal-quiet"])
def test_conformer_progress_only_on_a_terminal(tty, monkeypatch, capsys):
    stream = _Tty(tty)
    monkeypatch.setattr(limits, "PROGRESS_AFTER_S", 0.0)   # show even this short step
    monkeypatch.setattr(limits, "PROGRESS_TICK_S", 0.02)
    monkeypatch.setattr("sys.stderr", stream)
    from ringshift.io.structures import load_structure

    load_structure("C1=CC=CC=CC=CC=CC=C1", conformers=8)   # [12]annulene: a search, 8 embeddings
    text = stream.getvalue()
    assert ("ringshift: conformer generation (" in text) is tty
    if not tty:
        assert text == ""


# (id, arguments): inputs of the resource complaint itself, at the default limits (4000 MB, 900 s), refused
# before any heavy step; 'C=C'*800 is C1600H1602, 3202 atoms, inside the 5000-atom input limit (invented input)
DEFAULT_LIMIT_REFUSALS = [
    ("polyene-3202-atoms", ["predict", "C=C" * 800]),
    ("polyene-3202-atoms-one-conformer", ["predict", "C=C" * 800, "--conformers", "1"]),
    ("polyene-3202-atoms-pi", ["pi", "C=C" * 800]),
]


@pytest.mark.parametrize("args", [c[1] for c in DEFAULT_LIMIT_REFUSALS], ids=[c[0] for c in DEFAULT_LIMIT_REFUSALS])
def test_the_reported_giant_polyene_is_refused_at_the_default_limits(args, tmp_path, capsys, monkeypatch):
    _forbid_heavy(monkeypatch)
    monkeypatch.chdir(tmp_path)
    code, out, err = run(args, capsys)
    assert code == 2 and out == "" and list(tmp_path.iterdir()) == []
    assert len(err.strip().splitlines()) == 1 and "3202 atoms" in err and "raise it with --memory-limit MB" in err
