"""Library runs (ringshift.runners.batch): completeness, order, failures, resume, parallel workers, Dask."""

from __future__ import annotations

import importlib.util
import json
import sys

import pytest
from numpy.testing import assert_allclose
from rdkit import Chem
from rdkit.Chem import rdDistGeom

from ringshift.errors import InputError, OutputError, OutputWarning
from ringshift.io.libraries import iter_library
from ringshift.io.structures import load_structure
from ringshift.reporting.json import prediction_to_dict
from ringshift.runners.batch import run_batch
from ringshift.shifts.prediction import predict

LOAD = {"conformers": 1}
LIBRARY = """# invented test library (names are labels only)
c1ccccc1 benzene
C1=CC=CC=C1C#N benzonitrile
not_a_smiles broken entry

c1ccc2ccccc2c1 naphthalene
C#C
c1ccc[nH]1 pyrrole
"""
NAMES = ["benzene", "benzonitrile", "broken entry", "naphthalene", "C#C", "pyrrole"]


@pytest.fixture()
def library(tmp_path):
    path = tmp_path / "lib.smi"
    path.write_text(LIBRARY)
    return path


def _records(path):
    return [json.loads(line) for line in path.read_text().splitlines()]


def test_library_reader_skips_comments_and_blank_lines(library):
    items = list(iter_library(library))
    assert [it.name for it in items] == NAMES and [it.index for it in items] == list(range(6))
    assert items[4].text == "C#C" and items[2].source.endswith(":4")   # '#' inside a SMILES is a bond


def test_batch_is_complete_ordered_and_survives_a_bad_molecule(library, tmp_path, capsys):
    out = tmp_path / "out.jsonl"
    summary = run_batch(library, out, load_kwargs=LOAD, progress=False)
    recs = _records(out)
    assert [r["index"] for r in recs] == list(range(6)) and [r["name"] for r in recs] == NAMES
    assert [r["ok"] for r in recs] == [True, True, False, True, True, True]
    assert "not_a_smiles" in recs[2]["error"] and "\n" not in recs[2]["error"]
    assert (summary.n_total, summary.n_computed, summary.n_failed, summary.n_skipped) == (6, 6, 1, 0)
    assert capsys.readouterr().err == ""
    # each result is the single-molecule pipeline's JSON (common practice, no source)
    want = prediction_to_dict(predict(load_structure("c1ccc2ccccc2c1", **LOAD)))
    got = recs[3]["result"]
    assert_allclose([p["ring_current_ppm"] for p in got["protons"]], [p["ring_current_ppm"] for p in want["protons"]])
    assert got["name"] == "naphthalene"


def test_parallel_workers_give_the_same_file(library, tmp_path):
    one, two = tmp_path / "one.jsonl", tmp_path / "two.jsonl"
    run_batch(library, one, load_kwargs=LOAD, progress=False)
    run_batch(library, two, jobs=2, load_kwargs=LOAD, progress=False)
    assert one.read_text() == two.read_text()


@pytest.mark.parametrize("jobs", [1, 2], ids=["serial", "two-workers"])
def test_resume_recomputes_only_the_missing_molecules(library, tmp_path, jobs):
    out = tmp_path / "out.jsonl"
    run_batch(library, out, load_kwargs=LOAD, progress=False)
    full = out.read_text()
    lines = full.splitlines(keepends=True)
    out.write_text("".join(lines[:2]) + lines[2][:25])     # interrupted while writing molecule 3
    with pytest.warns(OutputWarning, match="removed a cut-off last line"):
        summary = run_batch(library, out, jobs=jobs, load_kwargs=LOAD, progress=False)
    assert (summary.n_skipped, summary.n_computed) == (2, 4)
    assert out.read_text() == full
    again = run_batch(library, out, load_kwargs=LOAD, progress=False)
    assert (again.n_skipped, again.n_computed) == (6, 0) and out.read_text() == full


def test_resume_refuses_the_output_of_another_library(library, tmp_path):
    out = tmp_path / "out.jsonl"
    out.write_text(json.dumps({"ringshift_result": "batch_record", "index": 0, "name": "toluene", "ok": True}) + "\n")
    with pytest.raises(InputError, match="belongs to another library"):
        run_batch(library, out, load_kwargs=LOAD, progress=False)
    with pytest.raises(OutputError, match="already exists"):
        run_batch(library, out, resume=False, progress=False)
    summary = run_batch(library, out, resume=False, overwrite=True, load_kwargs=LOAD, progress=False)
    assert summary.n_computed == 6 and len(_records(out)) == 6


def test_sd_library_reports_a_broken_record_by_number(tmp_path):
    path = tmp_path / "lib.sdf"
    blocks = []
    for smi, name in (("c1ccccc1", "benzene"), ("c1ccncc1", "pyridine")):
        m = Chem.AddHs(Chem.MolFromSmiles(smi))
        rdDistGeom.EmbedMolecule(m, randomSeed=3)
        m.SetProp("_Name", name)
        blocks.append(Chem.MolToMolBlock(m) + "$$$$\n")
    path.write_text(blocks[0] + "garbled\n  not a counts line\n\nM  END\n$$$$\n" + blocks[1])
    out = tmp_path / "out.jsonl"
    run_batch(path, out, progress=False)
    recs = _records(out)
    assert [(r["index"], r["name"], r["ok"]) for r in recs] == [(0, "benzene", True), (1, "garbled", False),
                                                                (2, "pyridine", True)]
    assert "record 1" in recs[1]["error"] and recs[1]["source"].endswith(":" + str(blocks[0].count("\n") + 1))


def test_bad_batch_options(library, tmp_path):
    with pytest.raises(InputError, match="jobs"):
        run_batch(library, tmp_path / "o.jsonl", jobs=0)
    with pytest.raises(InputError, match="library file not found"):
        run_batch(tmp_path / "missing.smi", tmp_path / "o.jsonl")
    with pytest.raises(OutputError, match="does not exist"):
        run_batch(library, tmp_path / "no" / "o.jsonl")


def test_scheduler_without_dask_says_how_to_install(library, tmp_path, monkeypatch):
    # a None entry in sys.modules makes the import fail as if Dask were not installed
    monkeypatch.setitem(sys.modules, "dask.distributed", None)
    with pytest.raises(InputError, match=r"pip install ringshift\[dask\]"):
        run_batch(library, tmp_path / "o.jsonl", scheduler="tcp://127.0.0.1:8786", progress=False)


@pytest.mark.skipif(importlib.util.find_spec("distributed") is None,
                    reason="dask.distributed not installed (optional extra ringshift[dask]; make test installs it)")
def test_local_dask_cluster_gives_the_same_file(library, tmp_path):
    from dask.distributed import LocalCluster

    one, dask_out = tmp_path / "one.jsonl", tmp_path / "dask.jsonl"
    run_batch(library, one, load_kwargs=LOAD, progress=False)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        run_batch(library, dask_out, scheduler=cluster.scheduler_address, load_kwargs=LOAD, progress=False)
    assert one.read_text() == dask_out.read_text()
